//! Every input the fuzz targets (fuzz/fuzz_targets/) ever crashed on, run through the same
//! entry point: each must give a clean result or an error naming the file, never a panic.
//!
//! Fixtures: tests/fuzz_regressions/profile/* (profile text), capture/* (first byte selects
//! the reader exactly as in fuzz_targets/capture.rs, the rest is the file) and quantity/*
//! (one quantity string per line, parsed as every dimension).

use std::fs;
use std::path::{Path, PathBuf};

use noisewright::profile::{Dimension, parse_profile, parse_quantity};
use noisewright::sink::{Format, SampleFormat};
use noisewright::source::{SideManifest, SourceOptions, open_source};

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
        if let Err(e) = parse_profile(&text, "fuzz.toml") {
            assert!(
                e.to_string().contains("fuzz.toml"),
                "error does not name the file: {e}"
            );
        }
    });
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
            4 => {
                if let Err(e) = SideManifest::parse(&String::from_utf8_lossy(file), "fuzz.json") {
                    assert!(e.to_string().contains("fuzz.json"), "{e}");
                }
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
        let mut source = match open_source(file, &options) {
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
