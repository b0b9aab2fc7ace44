//! Arbitrary bytes as a capture for every reader `analyze` has (WAV incl. RF64/BW64, CSV,
//! raw in each sample format) and as the JSON manifest beside it. The first byte picks the
//! reader and its options; the rest is the file. Every reader must return values or an
//! error, never panic, and never yield more values than asked for.
#![no_main]

use libfuzzer_sys::fuzz_target;
use noisewright::sink::{Format, SampleFormat};
use noisewright::source::{SideManifest, SourceOptions, open_source};

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
        4 => {
            // The manifest parser reads the same untrusted directory.
            let _ = SideManifest::parse(&String::from_utf8_lossy(file), "fuzz.json");
            return;
        }
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
        fallback_rate_hz: Some(1000.0),
        name: "fuzz.capture".into(),
    };
    let Ok(mut source) = open_source(file, &options) else {
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
