//! `analyze` on captures the project did not make: a bench's offset, drift, mains hum and
//! spurs on noise of a known density, made by numpy (`tests/python/bench_capture.py make`:
//! white Gaussian noise shaped to 50 nV/√Hz with a 1/f rise below 2 Hz in one FFT over the
//! record, plus a 2.5 mV offset, a 4 µV/s drift, hum at 50 Hz or 60 Hz with harmonics 2 and 3,
//! and spurs at 73.3 Hz and 211.7 Hz; invented scenario), and the windowed peak-to-peak against
//! a direct SciPy computation of the same windows (`bench_capture.py pp`).
//!
//! Every capture is made from a fixed seed, printed in failure messages.

mod common;

use std::ffi::OsString;
use std::path::Path;

use common::{Scratch, python_script, run, run_ok, text};
use serde_json::Value;

/// The profile the captures are made to: the same floor, corner and slope as the script, its
/// band wide enough that its edges lie outside every band checked (0.01 Hz, far below the
/// estimate's third bin at 0.09 Hz; a brick wall at fs/2).
const TRUE_PROFILE: &str = r#"
name = "bench front end"
unit = "V"
sample_rate = "1 kHz"
[band]
low = "0.01 Hz"
high = "500 Hz"
order = 0
[[floor]]
name = "front end"
density = "50 nV/rtHz"
corner = "2 Hz"
slope = 1.0
"#;

/// Seed of the 50 Hz capture.
const SEED_50: u64 = 17;
/// Seed of the 60 Hz capture.
const SEED_60: u64 = 18;
/// Two-sided normal quantile at a false-failure probability of 1.2e−7 per comparison.
const Z: f64 = 5.3;

/// Makes the capture with hum at `mains` Hz from `seed` in `s` (`None` when the reference is
/// skipped): its path and what the script injected.
fn capture(s: &Scratch, mains: f64, seed: u64) -> Option<(std::path::PathBuf, Value)> {
    let path = s.path(&format!("bench{mains}.f64"));
    let args: Vec<OsString> = vec![
        "make".into(),
        path.clone().into(),
        format!("{mains}").into(),
        seed.to_string().into(),
    ];
    let out = python_script("bench_capture.py", &args, &format!("seed {seed}"))?;
    Some((
        path,
        serde_json::from_str(&out).expect("the script prints JSON"),
    ))
}

/// `analyze --json` of `cap` at 1 kHz with `extra` arguments: its exit code and JSON.
fn analyze(cap: &Path, dir: &Path, extra: &[&str]) -> (i32, Value) {
    let mut args: Vec<OsString> = vec![
        "analyze".into(),
        cap.into(),
        "--rate".into(),
        "1kHz".into(),
        "--json".into(),
    ];
    args.extend(extra.iter().map(OsString::from));
    let o = run(&args, dir);
    let code = o.status.code().unwrap_or(-1);
    assert!(code == 0 || code == 1, "exit {code}: {}", text(&o.stderr));
    (
        code,
        serde_json::from_slice(&o.stdout).expect("analyze prints JSON"),
    )
}

/// Every injected line is listed once, within one bin of its frequency, with an RMS within
/// Z of its stated standard error, named as mains (family and harmonic) exactly when it is
/// hum; nothing else is listed (a false alarm has probability ≤ 1e−4).
fn check_spurs(j: &Value, truth: &Value, mains: f64, seed: u64) {
    let found = j["spurs"]["found"].as_array().expect("spurs listed");
    let lines = truth["lines"].as_array().expect("lines");
    let bin = j["density"]["resolution_hz"].as_f64().unwrap();
    assert_eq!(found.len(), lines.len(), "seed {seed}: {found:#?}");
    for line in lines {
        let f = line["frequency_hz"].as_f64().unwrap();
        let rms = line["rms"].as_f64().unwrap();
        let s = found
            .iter()
            .find(|s| (s["frequency_hz"].as_f64().unwrap() - f).abs() < bin)
            .unwrap_or_else(|| panic!("seed {seed}: no spur within a bin of {f} Hz"));
        let (m, se) = (s["rms"].as_f64().unwrap(), s["rms_se"].as_f64().unwrap());
        assert!(
            (m - rms).abs() < Z * se,
            "seed {seed}: {f} Hz measured {m} ± {se}, injected {rms}"
        );
        match line["mains"].as_u64() {
            Some(h) => {
                assert_eq!(s["mains"]["family_hz"].as_f64(), Some(mains), "seed {seed}");
                assert_eq!(s["mains"]["harmonic"].as_u64(), Some(h), "seed {seed}");
            }
            None => assert!(
                s["mains"].is_null(),
                "seed {seed}: {f} Hz named {}",
                s["mains"]
            ),
        }
    }
}

/// The 50 Hz capture: offset and drift found (the slope within Z of the exact standard
/// deviation of the noise's least-squares slope, which the script computes from its shaping),
/// every spur listed, the verdict passes against the true profile, and `--fit` recovers the
/// floor within Z of its standard error.
#[test]
fn hum_drift_and_spurs_pass_against_the_true_profile() {
    let s = Scratch::new("bench50");
    let Some((cap, truth)) = capture(&s, 50.0, SEED_50) else {
        return;
    };
    let p = s.file("true.toml", TRUE_PROFILE);
    let fit = s.path("fit.toml");
    let (code, j) = analyze(
        &cap,
        &s,
        &[
            "--profile",
            p.to_str().unwrap(),
            "--fit",
            fit.to_str().unwrap(),
        ],
    );
    assert_eq!(code, 0, "seed {SEED_50}: {:#?}", j["comparison"]);
    assert_eq!(j["pass"], true);
    let offset = j["dc"]["offset"].as_f64().unwrap();
    // The shaped noise has no mean (its DC bin is zero); the lines add < 1e−10 V over 400 s.
    assert!(
        (offset - 2.5e-3).abs() < 1e-9,
        "seed {SEED_50}: offset {offset}"
    );
    let slope = j["drift"]["slope_per_s"].as_f64().unwrap();
    let sigma = truth["noise_slope_sigma"].as_f64().unwrap();
    assert!(
        (slope - 4e-6).abs() < Z * sigma,
        "seed {SEED_50}: slope {slope} V/s, σ {sigma}"
    );
    assert_eq!(j["drift"]["removed"], true);
    check_spurs(&j, &truth, 50.0, SEED_50);
    let d = j["fit"]["floor_density"].as_f64().unwrap();
    let se = j["fit"]["floor_rel_se"].as_f64().unwrap();
    assert!(
        (d / 50e-9).ln().abs() < Z * se,
        "seed {SEED_50}: floor {d} V/√Hz, relative σ {se}"
    );
    assert!(fit.exists());
}

/// Negative controls on the same capture: against a profile whose floor is twice as high the
/// verdict fails (6 dB, far outside every band's limits); with the drift kept, the ramp's
/// leakage fails the low bands.
#[test]
fn the_same_capture_fails_a_wrong_profile_and_with_its_drift_kept() {
    let s = Scratch::new("bench50wrong");
    let Some((cap, _)) = capture(&s, 50.0, SEED_50) else {
        return;
    };
    let wrong = s.file(
        "wrong.toml",
        &TRUE_PROFILE.replace("50 nV/rtHz", "100 nV/rtHz"),
    );
    let (code, j) = analyze(&cap, &s, &["--profile", wrong.to_str().unwrap()]);
    assert_eq!(
        (code, &j["pass"]),
        (1, &Value::Bool(false)),
        "seed {SEED_50}"
    );
    let p = s.file("true.toml", TRUE_PROFILE);
    let (code, j) = analyze(
        &cap,
        &s,
        &["--profile", p.to_str().unwrap(), "--keep-drift"],
    );
    assert_eq!(
        (code, &j["pass"]),
        (1, &Value::Bool(false)),
        "seed {SEED_50}"
    );
    assert_eq!(j["drift"]["removed"], false);
}

/// The 60 Hz capture: the hum is named as the 60 Hz family, and the verdict passes.
#[test]
fn hum_at_60_hz_is_named_as_its_family() {
    let s = Scratch::new("bench60");
    let Some((cap, truth)) = capture(&s, 60.0, SEED_60) else {
        return;
    };
    let p = s.file("true.toml", TRUE_PROFILE);
    let (code, j) = analyze(&cap, &s, &["--profile", p.to_str().unwrap()]);
    assert_eq!(code, 0, "seed {SEED_60}: {:#?}", j["comparison"]);
    check_spurs(&j, &truth, 60.0, SEED_60);
}

/// The windowed peak-to-peak (default band 0.1–10 Hz, 10 s windows, and a band and window
/// given) against SciPy's Butterworth sections run over the same windows of the same
/// detrended record: equal to 1e−9 relative (only rounding differs). With a profile, its 6σ
/// and 6.6σ are 6 and 6.6 times the band's σ, which is √(∫ S df) over the band for the
/// profile's S(f) = d²(1 + f_c/f): d²·(f_hi − f_lo + f_c·ln(f_hi/f_lo)).
#[test]
fn windowed_peak_to_peak_matches_a_direct_computation() {
    let s = Scratch::new("benchpp");
    let Some((cap, _)) = capture(&s, 50.0, SEED_50) else {
        return;
    };
    let p = s.file("true.toml", TRUE_PROFILE);
    for (band, window, extra) in [
        ((0.1, 10.0), 10.0, vec![]),
        (
            (0.5, 20.0),
            4.0,
            vec!["--pp-band", "0.5Hz..20Hz", "--pp-window", "4s"],
        ),
    ] {
        let mut args = vec!["--profile", p.to_str().unwrap()];
        args.extend(extra);
        let (_, j) = analyze(&cap, &s, &args);
        let pp = &j["window_peak_to_peak"];
        let args: Vec<OsString> = ["pp".into(), cap.clone().into_os_string()]
            .into_iter()
            .chain(
                [1000.0, band.0, band.1, window]
                    .iter()
                    .map(|v| OsString::from(format!("{v}"))),
            )
            .collect();
        let Some(out) = python_script("bench_capture.py", &args, &format!("seed {SEED_50}")) else {
            return;
        };
        let r: Value = serde_json::from_str(&out).unwrap();
        assert_eq!(pp["windows"], r["windows"], "band {band:?}");
        for k in ["median", "max"] {
            let (a, b) = (pp[k].as_f64().unwrap(), r[k].as_f64().unwrap());
            assert!(
                (a / b - 1.0).abs() < 1e-9,
                "band {band:?} {k}: {a} vs SciPy {b}"
            );
        }
        let (lo, hi): (f64, f64) = band;
        let sigma = (2.5e-15 * (hi - lo + 2.0 * (hi / lo).ln())).sqrt();
        let six = pp["expected_p2p_6sigma"].as_f64().unwrap();
        assert!(
            (six / (6.0 * sigma) - 1.0).abs() < 1e-6,
            "{six} vs {}",
            6.0 * sigma
        );
        let more = pp["expected_p2p_6_6sigma"].as_f64().unwrap();
        assert!((more / six - 1.1).abs() < 1e-12);
    }
}

/// Frequencies left out by the user are listed, and no band of the estimate keeps their bins;
/// a record too short for the window asked for is refused (exit 2), while the default window
/// is only left out.
#[test]
fn exclusions_and_the_window_asked_for() {
    let s = Scratch::new("benchexcl");
    let Some((cap, _)) = capture(&s, 50.0, SEED_50) else {
        return;
    };
    let (code, j) = analyze(&cap, &s, &["--exclude", "30Hz", "--exclude", "40Hz..41Hz"]);
    assert_eq!(code, 0);
    let ex = j["excluded"].as_array().unwrap();
    assert_eq!(ex.len(), 2);
    let ranges: Vec<(u64, u64)> = ex
        .iter()
        .map(|e| {
            let b = &e["excluded_bins"];
            (b[0].as_u64().unwrap(), b[1].as_u64().unwrap())
        })
        .collect();
    // 30 Hz at 1000/32768 Hz per bin is bin 983.04: bins 981 ..= 986.
    assert_eq!(ranges[0], (981, 987));
    // A band's edges lie half a bin outside its first and last bins.
    let df = 1000.0 / 32768.0;
    let (gap_lo, gap_hi) = (980.5 * df, 986.5 * df);
    for b in j["density"]["bands"].as_array().unwrap() {
        let (lo, hi) = (
            b["low_hz"].as_f64().unwrap(),
            b["high_hz"].as_f64().unwrap(),
        );
        assert!(
            hi <= gap_lo + 1e-9 || lo >= gap_hi - 1e-9,
            "band {lo}..{hi} keeps a bin of 30 Hz"
        );
    }
    let o = run(
        &[
            OsString::from("analyze"),
            cap.clone().into(),
            "--rate".into(),
            "1kHz".into(),
            "--pp-window".into(),
            "1000s".into(),
        ],
        &s,
    );
    assert_eq!(o.status.code(), Some(2), "{}", text(&o.stderr));
    assert!(
        text(&o.stderr).contains("option --pp-window"),
        "{}",
        text(&o.stderr)
    );
    let short = s.path("short.f64");
    std::fs::write(&short, &std::fs::read(&cap).unwrap()[..8 * 20_000]).unwrap();
    let o = run_ok(
        &[
            OsString::from("analyze"),
            short.into(),
            "--rate".into(),
            "1kHz".into(),
        ],
        &s,
    );
    assert!(!text(&o.stdout).contains("window p-p"));
}
