//! What the fuzz targets (`fuzz/fuzz_targets/`) do with an input, in one place: the targets
//! and the regression test of their findings (`tests/fuzz_regressions.rs`) both include this
//! file with `#[path = …] mod harness;`, so a fixture replays the very steps of its target.
//! It uses only `noisewright` and std, which both crates have.
//!
//! Every function must return (a value or an error) and never panic; the assertions here are
//! the targets' own properties, so a violation is a crash under the fuzzer and a failure in
//! the test.
#![allow(dead_code)]

use std::io::Read;

use noisewright::Error;
use noisewright::io::manifest::SideManifest;
use noisewright::io::sink::{Format, SampleFormat};
use noisewright::io::source::{SourceOptions, open_source};
use noisewright::model::budget::{budget, to_json, write_text};
use noisewright::model::burst::BurstModel;
use noisewright::model::density::target_psd;
use noisewright::profile::{Dimension, Profile, parse_profile, parse_quantity};
use noisewright::synth::{BurstChain, ChannelGenerator, MAX_START, WhiteStreams, mixing_matrix};

/// The file name a fuzzed profile is parsed under; its errors must name it.
pub const PROFILE_FILE: &str = "fuzz.toml";
/// The file name a fuzzed capture is read under; its errors must name it.
pub const CAPTURE_FILE: &str = "fuzz.capture";
/// The file name a fuzzed manifest is parsed under; its errors must name it.
pub const MANIFEST_FILE: &str = "fuzz.json";

/// Every dimension a quantity string can have.
pub const DIMENSIONS: [Dimension; 6] = [
    Dimension::Frequency,
    Dimension::Time,
    Dimension::Temperature,
    Dimension::Resistance,
    Dimension::Density,
    Dimension::Amplitude,
];

/// The raw sample formats a capture selector byte picks from.
const SAMPLE_FORMATS: [SampleFormat; 5] = [
    SampleFormat::F32,
    SampleFormat::F64,
    SampleFormat::I16,
    SampleFormat::I24,
    SampleFormat::I32,
];

/// Arbitrary bytes as profile text (invalid UTF-8 replaced), parsed under [`PROFILE_FILE`].
pub fn profile_text(data: &[u8]) -> Result<Profile, Error> {
    parse_profile(&String::from_utf8_lossy(data), PROFILE_FILE)
}

/// What `generate` and `budget` do with an accepted profile, kept small: its JSON, the
/// target density from far below the band to Nyquist, the budget (text and JSON), each
/// burst's model and chain, the tones at `start`, the channel mixing matrix, and the whole
/// engine for a few frames when the design is small (at most two pyramid levels and two
/// channels). Each may return an error; none may panic or hang.
pub fn exercise(p: &Profile, seed: u64, start: u64) {
    let _ = p.to_json();
    let fs = p.sample_rate_hz;
    // The target density from far below the band to Nyquist (what the design samples).
    for i in 0..=32 {
        let f = p.band.low_hz * 1e-4 * (fs / 2.0 / (p.band.low_hz * 1e-4)).powf(i as f64 / 32.0);
        let _ = target_psd(p, f);
    }
    let _ = target_psd(p, 0.0);
    let b = budget(p, &[]);
    let _ = to_json(&b);
    let _ = write_text(&b, &mut Vec::new());
    let streams = WhiteStreams::new(seed);
    let mut block = vec![0.0; 64];
    for (i, burst) in p.bursts.iter().enumerate() {
        let Ok(model) = BurstModel::new(burst, fs) else {
            continue;
        };
        let _ = (
            model.density(fs / 4.0),
            model.variance(),
            model.corners_hz(),
        );
        let mut chain = BurstChain::new(&model, &streams, i as u64);
        chain.fill(&mut block);
        chain.skip(start % 256);
        chain.fill(&mut block);
    }
    let start = start % MAX_START;
    noisewright::synth::tone::add_deterministic(&p.tones, p.offset, fs, start, &mut block);
    let _ = mixing_matrix(&p.correlation);
    // The whole engine only when it is small: each pyramid level costs an FFT design, and
    // every channel has its own engine.
    let levels = (p.band.low_hz / fs / 0.06).log(0.25).ceil().max(0.0) + 1.0;
    if levels <= 2.0 && p.channels <= 2 {
        if let Ok(mut g) = ChannelGenerator::starting_at(p, seed, start % 256) {
            let mut frames = vec![0.0; 16 * p.channels];
            g.fill_frames(&mut frames);
        }
    }
}

/// `text` parsed as every dimension, in a volt and in an ampere profile: a value it gives is
/// finite.
pub fn quantity(text: &str) {
    for dim in DIMENSIONS {
        for unit in ["V", "A"] {
            if let Ok(v) = parse_quantity(text, dim, unit) {
                assert!(v.is_finite(), "{text:?} parsed to {v}");
            }
        }
    }
}

/// An input file or manifest refused with an error, and the file name the error must name.
#[derive(Debug)]
pub struct Refusal {
    /// [`CAPTURE_FILE`] or [`MANIFEST_FILE`].
    pub file: &'static str,
    /// What the reader said.
    pub error: Error,
}

/// Arbitrary bytes as a capture for every reader `analyze` has (WAV incl. RF64/BW64, CSV,
/// raw in each sample format), as the JSON manifest beside it, and as the `.npy` and `.h`
/// files `analyze` refuses. The first byte picks the reader and its options; the rest is the
/// file, handed over in reads of one size (whole, 1 byte or 7 bytes, by the input's length,
/// as a file or a pipe may). Every reader returns values or an error and never yields more
/// values than asked for; the first error is returned.
pub fn capture(data: &[u8]) -> Result<(), Refusal> {
    let Some((&sel, file)) = data.split_first() else {
        return Ok(());
    };
    let (format, sample_format) = match sel % 8 {
        0 | 1 => (Format::Wav, None),
        2 | 3 => (Format::Csv, None),
        4 if sel & 8 == 0 => {
            // The manifest parser reads the same untrusted directory.
            return SideManifest::parse(&String::from_utf8_lossy(file), MANIFEST_FILE)
                .map(|_| ())
                .map_err(|error| Refusal {
                    file: MANIFEST_FILE,
                    error,
                });
        }
        // Containers analyze names but does not read: refused before any byte is read.
        4 if sel & 16 == 0 => (Format::Npy, None),
        4 => (Format::C, None),
        _ => (
            Format::Raw,
            Some(SAMPLE_FORMATS[(sel as usize / 8) % SAMPLE_FORMATS.len()]),
        ),
    };
    let rate_hz = match (sel >> 5) & 3 {
        0 => None,
        1 => Some(48_000.0),
        2 => Some(1e-3),
        _ => Some(1e12),
    };
    let options = SourceOptions {
        format,
        sample_format,
        rate_hz,
        // Bit 3 of a WAV or CSV selector: no manifest rate to fall back on.
        fallback_rate_hz: (format == Format::Raw || sel & 8 == 0).then_some(1000.0),
        name: CAPTURE_FILE.into(),
        // Bit 7: the length is known, as for a regular file, or not, as for a stream.
        length_bytes: (sel & 128 == 0).then_some(file.len() as u64),
        // Bit 4 of a raw selector: two interleaved channels.
        channels: (format == Format::Raw && sel & 16 != 0).then_some(2),
    };
    let input = Chunked {
        data: file,
        chunk: [usize::MAX, 1, 7][data.len() % 3],
    };
    let refused = |error| Refusal {
        file: CAPTURE_FILE,
        error,
    };
    let mut source = open_source(input, &options).map_err(refused)?;
    let mut out = Vec::new();
    let max = 1 + (sel as usize % 7) * 97;
    loop {
        match source.read_block(&mut out, max) {
            Ok(0) => return Ok(()),
            Ok(n) => assert!(
                n <= max * usize::from(source.info().channels) && n == out.len(),
                "read_block returned {n} of {max}"
            ),
            Err(e) => return Err(refused(e)),
        }
    }
}

/// A reader that hands out at most `chunk` bytes per call.
struct Chunked<'a> {
    data: &'a [u8],
    chunk: usize,
}

impl Read for Chunked<'_> {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        let n = buf.len().min(self.chunk).min(self.data.len());
        buf[..n].copy_from_slice(&self.data[..n]);
        self.data = &self.data[n..];
        Ok(n)
    }
}
