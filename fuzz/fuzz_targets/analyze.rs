//! The whole analysis (`Analysis`, what `analyze` runs) on a hostile capture: the reader, the statistics, the Welch
//! density, the burst-level detector, and by the options byte the comparison with a small
//! profile (with a tone), the floor fit and the SVG/HTML pictures. The file (and, by the
//! options byte, a manifest beside it) is written to a private directory under the system's
//! temporary directory, as `analyze` reads paths. `Analysis::run` must return a report or an
//! error, never panic.
//!
//! Input: byte 0 picks the extension (`.wav`, `.csv`, `.i16`, `.f32`, `.f64`, `.i24`, `.i32`)
//! and `--rate`; byte 1 the options; the rest is the file. Byte 1's bit 6 splits the rest at
//! its first `\n\n`: the part before is the manifest `FILE.json`.
#![no_main]

use std::path::PathBuf;
use std::sync::OnceLock;

use libfuzzer_sys::fuzz_target;
use noisewright::{Analysis, Setting};

const EXTENSIONS: [&str; 7] = ["wav", "csv", "i16", "f32", "f64", "i24", "i32"];
/// A small profile: one pyramid level at 1 kHz (so the design stays cheap), a floor with a
/// corner, a burst and a tone.
const PROFILE: &str = "sample_rate = 1000\n[band]\nlow = 70\nhigh = 400\norder = 2\n\
    [[floor]]\ndensity = 1e-3\ncorner = 100\n[[burst]]\nlevels = [0, 0.01]\n\
    dwell = [0.05, 0.02]\n[[tone]]\nfrequency = 125\npeak = 0.01\n";

fn dir() -> &'static PathBuf {
    static DIR: OnceLock<PathBuf> = OnceLock::new();
    DIR.get_or_init(|| {
        let d = std::env::temp_dir().join(format!("noisewright-fuzz-{}", std::process::id()));
        std::fs::create_dir_all(&d).expect("temporary directory");
        std::fs::write(d.join("p.toml"), PROFILE).expect("profile written");
        d
    })
}

fuzz_target!(|data: &[u8]| {
    let [sel, opts, rest @ ..] = data else {
        return;
    };
    let d = dir();
    let ext = EXTENSIONS[*sel as usize % EXTENSIONS.len()];
    let file = d.join(format!("capture.{ext}"));
    let manifest = d.join(format!("capture.{ext}.json"));
    let body = match rest.windows(2).position(|w| w == b"\n\n") {
        Some(i) if opts & 64 != 0 => {
            std::fs::write(&manifest, &rest[..i]).expect("manifest written");
            &rest[i + 2..]
        }
        _ => {
            let _ = std::fs::remove_file(&manifest);
            rest
        }
    };
    std::fs::write(&file, body).expect("capture written");
    let with_profile = opts & 1 != 0;
    let full_scale = (opts & 2 != 0).then(|| ["2V", "1e-300V", "1e300 V"][*sel as usize / 7 % 3]);
    // With the profile, the rate is the profile's so the design stays one level deep.
    let rate = match (with_profile, (sel >> 5) & 3) {
        (true, _) => Some("1 kHz"),
        (false, 0) => None,
        (false, 1) => Some("48 kHz"),
        (false, 2) => Some("1e-3 Hz"),
        (false, _) => Some("1 THz"),
    };
    let resolution = (opts & 4 != 0).then(|| {
        ["10 Hz", "1e-9 Hz", "1e9 Hz"][(*opts as usize >> 7) + usize::from(opts & 32 != 0)]
    });
    let tolerance = (opts & 8 != 0).then_some("0.5 dB");
    let mut analysis = Analysis::of_path(&file);
    if with_profile {
        analysis = analysis.profile_path(d.join("p.toml"));
    }
    let texts = [
        (Setting::FullScale, full_scale),
        (Setting::Rate, rate),
        (Setting::Resolution, resolution),
        (Setting::Tolerance, tolerance),
    ];
    for (setting, text) in texts {
        if let Some(t) = text {
            analysis = analysis.text(setting, t).expect("a setting given as text");
        }
    }
    if opts & 16 != 0 {
        analysis = analysis.plot(d.join("plot.svg"));
    }
    if opts & 16 != 0 && opts & 32 != 0 {
        analysis = analysis.report(d.join("report.html"));
    }
    if opts & 128 != 0 {
        analysis = analysis.fit(d.join("fit.toml"));
    }
    // The summary and the JSON object are made on every run; bit 5 (`--json`) also writes
    // the object out as text.
    if let Ok(report) = analysis.run() {
        if opts & 32 != 0 {
            let _ = report.json_text();
        }
    }
});
