//! Arbitrary bytes as a capture for every reader `analyze` has (WAV incl. RF64/BW64, CSV,
//! raw in each sample format), as the JSON manifest beside it, and as the `.npy` and `.h`
//! files `analyze` refuses. The first byte picks the reader and its options; the rest is the
//! file, handed over in reads of one size (whole, 1 byte or 7 bytes, by the input's length,
//! as a file or a pipe may). Every reader must return values or an error, never panic, and
//! never yield more values than asked for.
#![no_main]

use std::io::Read;

use libfuzzer_sys::fuzz_target;
use noisewright::io::sink::{Format, SampleFormat};
use noisewright::io::source::{SideManifest, SourceOptions, open_source};

const FORMATS: [SampleFormat; 5] = [
    SampleFormat::F32,
    SampleFormat::F64,
    SampleFormat::I16,
    SampleFormat::I24,
    SampleFormat::I32,
];

fuzz_target!(|data: &[u8]| {
    let Some((&sel, file)) = data.split_first() else {
        return;
    };
    let (format, sample_format) = match sel % 8 {
        0 | 1 => (Format::Wav, None),
        2 | 3 => (Format::Csv, None),
        4 if sel & 8 == 0 => {
            // The manifest parser reads the same untrusted directory.
            let _ = SideManifest::parse(&String::from_utf8_lossy(file), "fuzz.json");
            return;
        }
        // Containers analyze names but does not read: refused before any byte is read.
        4 if sel & 16 == 0 => (Format::Npy, None),
        4 => (Format::C, None),
        _ => (
            Format::Raw,
            Some(FORMATS[(sel as usize / 8) % FORMATS.len()]),
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
        name: "fuzz.capture".into(),
    };
    let input = Chunked {
        data: file,
        chunk: [usize::MAX, 1, 7][data.len() % 3],
    };
    let Ok(mut source) = open_source(input, &options) else {
        return;
    };
    let mut out = Vec::new();
    let max = 1 + (sel as usize % 7) * 97;
    loop {
        match source.read_block(&mut out, max) {
            Ok(0) | Err(_) => break,
            Ok(n) => assert!(
                n <= max && n == out.len(),
                "read_block returned {n} of {max}"
            ),
        }
    }
});

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
