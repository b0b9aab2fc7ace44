//! `analyze --allan`, `budget`'s Allan prediction and sensor profiles through the binary,
//! cross-checked with numpy (tests/python/allan_ref.py): the overlapping Allan deviation of
//! generated gyro data computed independently, a numpy random walk against its closed form,
//! and an accelerometer's 16-bit codes through its sensitivity. Seeds are fixed and printed.

mod common;

use common::{Scratch, python_script, run_ok};
use noisewright::model::allan::inertial_adev;
use statrs::distribution::{ChiSquared, ContinuousCDF};

fn bundled(name: &str) -> String {
    format!("{}/profiles/{name}", env!("CARGO_MANIFEST_DIR"))
}

fn json_of(out: &std::process::Output) -> serde_json::Value {
    serde_json::from_slice(&out.stdout).expect("analyze --json prints JSON")
}

fn floats(v: &serde_json::Value) -> Vec<f64> {
    v.as_array()
        .expect("an array")
        .iter()
        .map(|x| x.as_f64().expect("a number"))
        .collect()
}

/// The two-sided interval at `confidence` of the true σ about a measured `adev` with `edf`
/// degrees of freedom (Riley, NIST SP 1065, 2008, §5.3).
fn interval(adev: f64, edf: f64, confidence: f64) -> (f64, f64) {
    let chi = ChiSquared::new(edf).unwrap();
    let a = 1.0 - confidence;
    (
        adev * (edf / chi.inverse_cdf(1.0 - a / 2.0)).sqrt(),
        adev * (edf / chi.inverse_cdf(a / 2.0)).sqrt(),
    )
}

// The "done when" of the sensor work: the bundled gyro profile (written in °/s with N, B and
// K) generates data whose Allan deviation, from analyze --allan and from numpy, follows the
// closed form √(N²/τ + (2 ln 2/π)B² + K²τ/3) (IEEE Std 952-1997 Annex C) within the intervals
// at 1e-6 split over the τ, for 1 s ≤ τ ≤ 10 ks (inside the band's reach, see
// tests/allan_statistics.rs); the profile check passes and the picture is drawn.
#[test]
fn gyro_data_follows_the_closed_forms_by_analyze_and_by_numpy() {
    const SEED: u64 = 7;
    let dir = Scratch::new("gyro");
    let data = dir.join("gyro.f64");
    let seed = SEED.to_string();
    run_ok(
        &[
            "generate",
            &bundled("gyro-axis.toml"),
            "--duration",
            "200000s",
            "--format",
            "raw",
            "--sample-format",
            "f64",
            "--seed",
            &seed,
            "-o",
            data.to_str().unwrap(),
        ],
        &dir,
    );
    let out = run_ok(
        &[
            "analyze",
            data.to_str().unwrap(),
            "--allan",
            "--json",
            "--profile",
            &bundled("gyro-axis.toml"),
            "--allan-plot",
            dir.join("a.svg").to_str().unwrap(),
        ],
        &dir,
    );
    let j = json_of(&out);
    assert_eq!(j["unit"], "\u{b0}/s");
    let a = &j["allan"];
    assert_eq!(a["profile"]["pass"], true, "seed {SEED}: {}", a["profile"]);
    let (tau, adev, edf) = (floats(&a["tau_s"]), floats(&a["adev"]), floats(&a["edf"]));
    assert_eq!(floats(&a["adev_low"]).len(), tau.len());
    assert_eq!(floats(&a["adev_high"]).len(), tau.len());
    let (n, b, k) = (0.2 / 60.0, 3.0 / 3600.0, 3.0 / 216_000.0);
    let keep: Vec<usize> = (0..tau.len())
        .filter(|&i| (1.0..=1e4).contains(&tau[i]))
        .collect();
    let confidence = 1.0 - 1e-6 / keep.len() as f64;
    for &i in &keep {
        let (lo, hi) = interval(adev[i], edf[i], confidence);
        let want = inertial_adev(n, b, k, tau[i]);
        assert!(
            lo <= want && want <= hi,
            "seed {SEED}, τ {}: [{lo:e}, {hi:e}] misses {want:e}",
            tau[i]
        );
    }
    let svg = std::fs::read_to_string(dir.join("a.svg")).unwrap();
    for label in ["Allan deviation", "profile", "fit N/", "fit 0.664", "fit K"] {
        assert!(svg.contains(label), "the picture lacks {label:?}");
    }
    // numpy's own overlapping ADEV of the same file, term by term from the definition: the
    // two computations agree to rounding (1e-9 relative).
    let ms: Vec<String> = tau
        .iter()
        .map(|t| format!("{}", (t * 10.0).round() as u64))
        .collect();
    let Some(text) = python_script(
        "allan_ref.py",
        &[
            "adev".into(),
            data.clone().into_os_string(),
            ms.join(",").into(),
        ],
        &format!("seed {SEED}"),
    ) else {
        return;
    };
    let reference: serde_json::Value = serde_json::from_str(text.trim()).unwrap();
    let numpy = floats(&reference["adev"]);
    for i in 0..tau.len() {
        assert!(
            (adev[i] / numpy[i] - 1.0).abs() < 1e-9,
            "τ {}: {} vs numpy {}",
            tau[i],
            adev[i],
            numpy[i]
        );
    }
}

// A random walk y_k = q·Σ_{j≤k} w_j (w ~ N(0,1), numpy's generator) has, for means of m
// samples, Allan variance q²(2m² + 1)/(6m) exactly: the difference of two adjacent means
// weighs the increments inside the first block by i/m and inside the second by (m − i)/m, and
// Σ (i/m)² + Σ ((m − i)/m)² = (2m² + 1)/(3m); half of q² times that is the Allan variance.
// For τ = mτ₀ this is K²τ/3 + K²τ₀²/(6τ) with K = q/√τ₀ (IEEE Std 952-1997 Annex C's rate
// random walk plus the sampling term).
#[test]
fn a_numpy_random_walk_follows_its_closed_form() {
    const SEED: u64 = 952;
    let dir = Scratch::new("walk");
    let data = dir.join("walk.f64");
    let q = 1e-3;
    let Some(_) = python_script(
        "allan_ref.py",
        &[
            "walk".into(),
            data.clone().into_os_string(),
            "1000000".into(),
            format!("{q}").into(),
            SEED.to_string().into(),
        ],
        &format!("seed {SEED}"),
    ) else {
        return;
    };
    let out = run_ok(
        &[
            "analyze",
            data.to_str().unwrap(),
            "--rate",
            "1Hz",
            "--allan",
            "--json",
        ],
        &dir,
    );
    let a = &json_of(&out)["allan"];
    let (tau, adev, edf) = (floats(&a["tau_s"]), floats(&a["adev"]), floats(&a["edf"]));
    let confidence = 1.0 - 1e-6 / tau.len() as f64;
    for i in 0..tau.len() {
        let m = tau[i];
        let want = (q * q * (2.0 * m * m + 1.0) / (6.0 * m)).sqrt();
        let (lo, hi) = interval(adev[i], edf[i], confidence);
        assert!(
            lo <= want && want <= hi,
            "seed {SEED}, m {m}: [{lo:e}, {hi:e}] misses {want:e}"
        );
    }
    // The fit finds the rate random walk K = q/√τ₀ within 5.1 of its stated uncertainty.
    let k = a["fit"]["rate_random_walk"].as_f64().unwrap();
    let u = a["fit"]["uncertainty"]["rate_random_walk"]
        .as_f64()
        .unwrap();
    assert!(
        (k - q).abs() <= 5.1 * u,
        "seed {SEED}: K {k:e} ± {u:e}, want {q:e}"
    );
}

// The accelerometer scenario writes 16-bit codes through its sensitivity: the range given in
// volts (±1.65 V at 400 mV/g is ±4.125 g), the manifest holding both, and each code the
// nearest level to the same seed's samples in g (LSB = 8.25 g / 65 536).
#[test]
fn accelerometer_writes_16_bit_codes_through_its_sensitivity() {
    const SEED: u64 = 3;
    let dir = Scratch::new("accel");
    let p = bundled("accelerometer-16bit.toml");
    let seed = SEED.to_string();
    let codes = dir.join("a.i16");
    let phys = dir.join("a.f64");
    run_ok(
        &[
            "generate",
            &p,
            "--range",
            "-1.65V..1.65V",
            "--bits",
            "16",
            "--duration",
            "10s",
            "--seed",
            &seed,
            "-o",
            codes.to_str().unwrap(),
        ],
        &dir,
    );
    run_ok(
        &[
            "generate",
            &p,
            "--format",
            "raw",
            "--sample-format",
            "f64",
            "--duration",
            "10s",
            "--seed",
            &seed,
            "-o",
            phys.to_str().unwrap(),
        ],
        &dir,
    );
    let m = common::manifest(&codes);
    let sensor = &m["extra"]["sensor"];
    assert_eq!(sensor["unit"], "g");
    assert_eq!(sensor["sensitivity_v_per_unit"], 0.4);
    assert_eq!(floats(&sensor["range"]), [-4.125, 4.125]);
    assert_eq!(floats(&sensor["range_v"]), [-1.65, 1.65]);
    // A full scale in volts reads through the sensitivity the same way.
    let scaled = dir.join("a.f32");
    run_ok(
        &[
            "generate",
            &p,
            "--full-scale",
            "1.65V",
            "--format",
            "raw",
            "--sample-format",
            "f32",
            "--duration",
            "1s",
            "-o",
            scaled.to_str().unwrap(),
        ],
        &dir,
    );
    let fsm = common::manifest(&scaled);
    assert_eq!(fsm["extra"]["sensor"]["full_scale"], 4.125);
    assert_eq!(fsm["extra"]["sensor"]["full_scale_v"], 1.65);
    let x = common::read_f64(&phys);
    let bytes = std::fs::read(&codes).unwrap();
    let c: Vec<i16> = bytes
        .chunks_exact(2)
        .map(|b| i16::from_le_bytes([b[0], b[1]]))
        .collect();
    assert_eq!(c.len(), x.len());
    let lsb = 8.25 / 65536.0;
    for (i, (&code, &g)) in c.iter().zip(&x).enumerate() {
        let level = f64::from(code) * lsb;
        assert!(
            (level - g).abs() <= 0.5 * lsb * (1.0 + 1e-9),
            "sample {i}: code {code} for {g} g"
        );
    }
}

// budget predicts the Allan deviation at decades of τ for a sensor profile (JSON `allan`), and
// its values are the closed form within the band's reach.
#[test]
fn budget_predicts_the_gyro_allan_deviation() {
    let dir = Scratch::new("budget");
    let out = run_ok(&["budget", &bundled("gyro-axis.toml"), "--json"], &dir);
    let j: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let (tau, adev) = (floats(&j["allan"]["tau_s"]), floats(&j["allan"]["adev"]));
    assert_eq!(tau, [1.0, 10.0, 100.0, 1e3, 1e4, 1e5, 1e6]);
    let (n, b, k) = (0.2 / 60.0, 3.0 / 3600.0, 3.0 / 216_000.0);
    // The gyro's band ends at 5 Hz = fs/2 and starts at 1 µHz: within 1 s ≤ τ ≤ 1 ks the
    // edges move σ by under 1 % (the B tail ≈ 3/(16(π·5·τ)²) of ln 2, the K deficit ≈
    // 3·f_L·τ/π²·…), so the prediction is the closed form to 1 %.
    for i in 0..4 {
        let want = inertial_adev(n, b, k, tau[i]);
        assert!(
            (adev[i] / want - 1.0).abs() < 0.01,
            "τ {}: {} vs {want}",
            tau[i],
            adev[i]
        );
    }
    let text = common::text(&run_ok(&["budget", &bundled("gyro-axis.toml")], &dir).stdout);
    assert!(text.contains("Allan deviation predicted"), "{text}");
}
