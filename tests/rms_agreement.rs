//! One meaning per number: `generate`, `budget` and `analyze --profile` give the same band
//! RMS, file RMS of the noise and tone SNR for every bundled profile (docs/methods.md, "Three
//! RMS figures"), and the band RMS meets its closed form where there is one.

mod common;

use common::{Scratch, manifest, run_ok};
use serde_json::Value;

fn json(out: &std::process::Output) -> Value {
    serde_json::from_slice(&out.stdout).expect("the command prints JSON")
}

fn close(what: &str, profile: &str, a: f64, b: f64) {
    assert!(
        a.is_finite() && b.is_finite() && ((a - b) / b).abs() <= 1e-6,
        "{profile}: {what} differs: {a:e} against {b:e}"
    );
}

#[test]
fn generate_budget_and_analyze_print_the_same_figures_for_every_bundled_profile() {
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR"));
    let dir = Scratch::new("rms-agreement");
    let mut names: Vec<_> = std::fs::read_dir(root.join("profiles"))
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|e| e == "toml"))
        .collect();
    names.sort();
    assert!(names.len() >= 8, "the bundled profiles are found");
    for path in &names {
        let name = path.file_stem().unwrap().to_string_lossy().into_owned();
        let p = path.to_str().unwrap();
        let out = dir.path(&format!("{name}.raw"));
        let o = out.to_str().unwrap();
        // Seed 1, printed here for a failure's sake; the figures do not depend on it.
        run_ok(
            &["generate", p, "-o", o, "--samples", "65536", "--seed", "1"],
            root,
        );
        let g = manifest(&out)["extra"].clone();
        let b = json(&run_ok(&["budget", p, "--json"], root));
        let a = json(&run_ok(&["analyze", o, "--profile", p, "--json"], root));
        let band = b["bands"][0]["band_rms"].as_f64().unwrap();
        let file = b["file_noise_rms"].as_f64().unwrap();
        close(
            "band RMS (generate)",
            &name,
            g["band_rms"].as_f64().unwrap(),
            band,
        );
        close(
            "file RMS (generate)",
            &name,
            g["file_noise_rms"].as_f64().unwrap(),
            file,
        );
        let pr = &a["profile_rms"];
        close(
            "band RMS (analyze)",
            &name,
            pr["band_rms"].as_f64().unwrap(),
            band,
        );
        close(
            "file RMS (analyze)",
            &name,
            pr["file_noise_rms"].as_f64().unwrap(),
            file,
        );
        // Every tone's SNR is quoted against the band RMS by all three (a float capture has no
        // quantisation noise to add in analyze).
        if let Some(tones) = g.get("tones").and_then(Value::as_array) {
            for (i, t) in tones.iter().enumerate() {
                let want = b["bands"][0]["tones"][i]["snr_db"].as_f64().unwrap();
                close(
                    "tone SNR (generate)",
                    &name,
                    t["snr_db"].as_f64().unwrap(),
                    want,
                );
                let got = a["tones"][i]["expected_snr_db"].as_f64().unwrap();
                close("tone SNR (analyze)", &name, got, want);
            }
        }
    }
}

// Closed form: a white floor e over a brick-wall band [low, high] has band RMS
// e·√(high − low) (one-sided density integrated over the band, REFERENCES §6).
#[test]
fn the_band_rms_of_a_brick_wall_white_band_is_its_closed_form() {
    let dir = Scratch::new("rms-closed-form");
    let p = dir.file(
        "w.toml",
        "sample_rate = \"48 kHz\"\n[band]\nlow = \"10 Hz\"\nhigh = \"20 kHz\"\norder = 0\n\
         [[floor]]\ndensity = \"10 nV/rtHz\"\n",
    );
    let b = json(&run_ok(
        &["budget", p.to_str().unwrap(), "--json"],
        dir.path("").as_path(),
    ));
    let want = 10e-9 * (20_000.0f64 - 10.0).sqrt();
    close(
        "band RMS",
        "w.toml",
        b["bands"][0]["band_rms"].as_f64().unwrap(),
        want,
    );
    // The analog total of a brick wall is the same integral.
    close(
        "analog total",
        "w.toml",
        b["bands"][0]["rms"].as_f64().unwrap(),
        want,
    );
}
