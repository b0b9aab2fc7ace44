//! Every input the fuzz targets (fuzz/fuzz_targets/) ever crashed on, run through the same
//! entry point: each must give a clean result or an error naming the file, never a panic.
//!
//! Fixtures: tests/fuzz_regressions/profile/* (profile text; an accepted profile then goes
//! through the engine as in fuzz_targets/profile_structured.rs), capture/* (first byte selects
//! the reader exactly as in fuzz_targets/capture.rs, the rest is the file, read in the same
//! chunks) and quantity/* (one quantity string per line, parsed as every dimension).

use std::fs;
use std::io::Read;
use std::path::{Path, PathBuf};

use noisewright::io::sink::{Format, SampleFormat};
use noisewright::io::source::{SideManifest, SourceOptions, open_source};
use noisewright::model::budget::{budget, to_json, write_text};
use noisewright::model::burst::BurstModel;
use noisewright::model::density::target_psd;
use noisewright::profile::{Dimension, Profile, parse_profile, parse_quantity};
use noisewright::synth::{BurstChain, ChannelGenerator, MAX_START, WhiteStreams, mixing_matrix};

fn fixtures(kind: &str) -> Vec<PathBuf> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fuzz_regressions")
        .join(kind);
    let mut v: Vec<PathBuf> = fs::read_dir(&dir)
        .unwrap_or_else(|e| panic!("{}: {e}", dir.display()))
        .map(|e| e.expect("directory entry").path())
        .filter(|p| p.file_name().is_some_and(|n| n != ".gitkeep"))
        .collect();
    v.sort();
    v
}

/// Runs `f` on every fixture of `kind`, failing with the fixture's name if one panics.
fn each(kind: &str, f: impl Fn(&[u8]) + std::panic::RefUnwindSafe) {
    for path in fixtures(kind) {
        let data = fs::read(&path).expect("fixture readable");
        if std::panic::catch_unwind(|| f(&data)).is_err() {
            panic!("fixture {} panics", path.display());
        }
    }
}

#[test]
fn profile_fixtures_give_errors_not_panics() {
    each("profile", |data| {
        let text = String::from_utf8_lossy(data);
        match parse_profile(&text, "fuzz.toml") {
            Ok(p) => exercise(&p, 42, 1000),
            Err(e) => assert!(
                e.to_string().contains("fuzz.toml"),
                "error does not name the file: {e}"
            ),
        }
    });
}

/// What fuzz_targets/profile_structured.rs does with an accepted profile (the same calls and
/// sizes): JSON, target density, budget, burst models and chains, tones, mixing, and the
/// engine when it has at most two pyramid levels and two channels.
fn exercise(p: &Profile, seed: u64, start: u64) {
    let _ = p.to_json();
    let fs = p.sample_rate_hz;
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
    let levels = (p.band.low_hz / fs / 0.06).log(0.25).ceil().max(0.0) + 1.0;
    if levels <= 2.0 && p.channels <= 2 {
        if let Ok(mut g) = ChannelGenerator::starting_at(p, seed, start % 256) {
            let mut frames = vec![0.0; 16 * p.channels];
            g.fill_frames(&mut frames);
        }
    }
}

/// A reader that hands out at most `chunk` bytes per call, as in fuzz_targets/capture.rs.
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

#[test]
fn quantity_fixtures_give_errors_not_panics() {
    each("quantity", |data| {
        for line in String::from_utf8_lossy(data).lines() {
            for dim in [
                Dimension::Frequency,
                Dimension::Time,
                Dimension::Temperature,
                Dimension::Resistance,
                Dimension::Density,
                Dimension::Amplitude,
            ] {
                if let Ok(v) = parse_quantity(line, dim, "V") {
                    assert!(v.is_finite(), "{line:?} parsed to {v}");
                }
            }
        }
    });
}

#[test]
fn capture_fixtures_give_errors_not_panics() {
    const FORMATS: [SampleFormat; 5] = [
        SampleFormat::F32,
        SampleFormat::F64,
        SampleFormat::I16,
        SampleFormat::I24,
        SampleFormat::I32,
    ];
    each("capture", |data| {
        let Some((&sel, file)) = data.split_first() else {
            return;
        };
        let (format, sample_format) = match sel % 8 {
            0 | 1 => (Format::Wav, None),
            2 | 3 => (Format::Csv, None),
            4 if sel & 8 == 0 => {
                if let Err(e) = SideManifest::parse(&String::from_utf8_lossy(file), "fuzz.json") {
                    assert!(e.to_string().contains("fuzz.json"), "{e}");
                }
                return;
            }
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
            fallback_rate_hz: (format == Format::Raw || sel & 8 == 0).then_some(1000.0),
            name: "fuzz.capture".into(),
        };
        let input = Chunked {
            data: file,
            chunk: [usize::MAX, 1, 7][data.len() % 3],
        };
        let mut source = match open_source(input, &options) {
            Ok(s) => s,
            Err(e) => {
                assert!(e.to_string().contains("fuzz.capture"), "{e}");
                return;
            }
        };
        let mut out = Vec::new();
        let max = 1 + (sel as usize % 7) * 97;
        loop {
            match source.read_block(&mut out, max) {
                Ok(0) => break,
                Ok(n) => assert!(n <= max && n == out.len()),
                Err(e) => {
                    assert!(e.to_string().contains("fuzz.capture"), "{e}");
                    break;
                }
            }
        }
    });
}
