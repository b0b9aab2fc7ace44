//! The floor for the benchmark in `benches/run.sh`: draw N(0, 1) samples the way the engine
//! does (ChaCha8 + `StandardNormal`, one stream per chunk, via [`WhiteStreams`]) and write them
//! as raw little-endian f32, with no shaping at all. Whatever the engine costs above this is
//! shaping, scaling and bookkeeping.
//!
//! Usage: `cargo run --release --example floor -- SAMPLES OUT` (`OUT` = `-` for standard
//! output). Prints the wall time of the draw-and-write loop to standard error.

use std::fs::File;
use std::io::{self, BufWriter, Write};
use std::time::Instant;

use noisewright::synth::{Domain, WHITE_CHUNK, WhiteStreams};

/// Samples drawn and written per step (the CLI's step too).
const CHUNK: usize = 1 << 16;

fn main() -> io::Result<()> {
    let mut args = std::env::args().skip(1);
    let usage = || io::Error::other("usage: floor SAMPLES OUT   (OUT = - for standard output)");
    let samples: u64 = args.next().and_then(|s| s.parse().ok()).ok_or_else(usage)?;
    let out = args.next().ok_or_else(usage)?;
    let sink: Box<dyn Write> = if out == "-" {
        Box::new(io::stdout().lock())
    } else {
        Box::new(File::create(&out)?)
    };
    // Same buffer size as the CLI's writer.
    let mut sink = BufWriter::with_capacity(1 << 20, sink);

    let white = WhiteStreams::new(1);
    let mut x = vec![0.0f64; CHUNK];
    let mut bytes = Vec::with_capacity(4 * CHUNK);
    let mut stream: u64 = 0;
    let mut done: u64 = 0;
    let t = Instant::now();
    while done < samples {
        let n = ((samples - done) as usize).min(CHUNK);
        // One stream per chunk, as the engine's levels draw their input.
        for part in x[..n].chunks_mut(WHITE_CHUNK) {
            white.fill(WhiteStreams::stream_id(Domain::Shaper, 0, stream), part);
            stream += 1;
        }
        bytes.clear();
        for &v in &x[..n] {
            bytes.extend_from_slice(&(v as f32).to_le_bytes());
        }
        sink.write_all(&bytes)?;
        done += n as u64;
    }
    sink.flush()?;
    let dt = t.elapsed().as_secs_f64();
    eprintln!(
        "floor: {samples} samples in {dt:.3} s = {:.1} M samples/s",
        samples as f64 / dt / 1e6
    );
    Ok(())
}
