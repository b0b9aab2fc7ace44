//! Every input the fuzz targets (fuzz/fuzz_targets/) ever crashed on, run through the same
//! steps, from the harness the targets use (fuzz/harness.rs): each must give a clean result
//! or an error naming the file, never a panic.
//!
//! Fixtures: tests/fuzz_regressions/profile/* (profile text; an accepted profile then goes
//! through the engine as in fuzz_targets/profile_structured.rs), capture/* (first byte selects
//! the reader as in fuzz_targets/capture.rs, the rest is the file, read in the same chunks)
//! and quantity/* (one quantity string per line, parsed as every dimension as in
//! fuzz_targets/quantity.rs).

#[path = "../fuzz/harness.rs"]
mod harness;

use std::fs;
use std::path::{Path, PathBuf};

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
    each("profile", |data| match harness::profile_text(data) {
        Ok(p) => harness::exercise(&p, 42, 1000),
        Err(e) => assert!(
            e.to_string().contains(harness::PROFILE_FILE),
            "error does not name the file: {e}"
        ),
    });
}

#[test]
fn quantity_fixtures_give_errors_not_panics() {
    each("quantity", |data| {
        for line in String::from_utf8_lossy(data).lines() {
            harness::quantity(line);
        }
    });
}

#[test]
fn capture_fixtures_give_errors_not_panics() {
    each("capture", |data| {
        if let Err(r) = harness::capture(data) {
            assert!(r.error.to_string().contains(r.file), "{}", r.error);
        }
    });
}
