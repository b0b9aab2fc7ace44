//! CLI tests of `noisewright analyze`: readers of every format, the density and statistics
//! against numpy/SciPy, the verdict against a profile, the fit round trip, burst levels,
//! pictures. Malformed captures are rows of tests/error_classes.rs.

mod common;

use std::ffi::OsString;
use std::path::Path;

use common::{Scratch, manifest, read_f64, run, text, write_f64};
use noisewright::profile::parse_profile;
use noisewright::synth::Generator;
use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;

/// Fixed seed of every generated record in this file (printed in failure messages).
const SEED: u64 = 20_261_204;

/// z for a two-sided normal tail probability of 1e−6 (REFERENCES §11).
const Z_1E6: f64 = 4.8916;

/// Invented demo scenario: a white 10 nV/√Hz floor, 10 Hz – 20 kHz, order 2.
const WHITE: &str = r#"
name = "analyze white"
unit = "V"
sample_rate = "48 kHz"
[band]
low = "10 Hz"
high = "20 kHz"
order = 2
[[floor]]
density = "10 nV/rtHz"
"#;

/// Invented demo scenario: a 10 nV/√Hz floor with a 1/f^1.4 rise below 300 Hz, 1 Hz – 20 kHz.
const FLICKER: &str = r#"
name = "analyze flicker"
unit = "V"
sample_rate = "48 kHz"
[band]
low = "1 Hz"
high = "20 kHz"
order = 2
[[floor]]
name = "amplifier"
density = "10 nV/rtHz"
corner = "300 Hz"
slope = 1.4
"#;

fn os(s: &str) -> OsString {
    OsString::from(s)
}

/// `generate PROFILE -o OUT --seed SEED -q EXTRA…` in OUT's folder, which must succeed.
fn generate(profile: &Path, out: &Path, extra: &[&str]) {
    common::generate_seeded(profile, out, SEED, extra);
}

/// `analyze FILE --json EXTRA…` in FILE's folder → (exit code, JSON, stderr).
fn analyze(file: &Path, extra: &[&str]) -> (i32, serde_json::Value, String) {
    let mut a: Vec<OsString> = vec![os("analyze"), file.into(), os("--json")];
    a.extend(extra.iter().map(|s| os(s)));
    let o = run(&a, file.parent().expect("FILE is in a folder"));
    let code = o.status.code().unwrap_or(-1);
    let v = serde_json::from_slice(&o.stdout).unwrap_or(serde_json::Value::Null);
    (code, v, text(&o.stderr))
}

fn num(v: &serde_json::Value, key: &str) -> f64 {
    v[key]
        .as_f64()
        .unwrap_or_else(|| panic!("key {key} missing or not a number in {v}"))
}

fn rel(a: f64, b: f64) -> f64 {
    ((a - b) / b).abs()
}

fn engine_noise(profile: &str, n: usize, seed: u64) -> Vec<f64> {
    let p = parse_profile(profile, "inline").unwrap();
    let mut g = Generator::new(&p, seed).unwrap();
    let mut x = vec![0.0; n];
    g.fill(&mut x);
    x
}

// ---------------------------------------------------------------------------------------------
// Against numpy and SciPy (reference libraries).

/// The band densities of `analyze` equal the same bands formed from scipy.signal.welch's
/// bins (periodic Hann, 50 % overlap, no detrending of segments, density scaling) of the same
/// samples, to 1e−9 relative: with `--keep-drift` of the samples as they are, and by default of
/// the samples less the least-squares line `analyze` reports (`dc`, `drift`); mean, RMS and std
/// equal numpy's to 1e−12 relative; and RMS² = σ² + μ² (REFERENCES §8, common practice) holds
/// with a DC offset of 3σ.
#[test]
fn density_and_statistics_equal_scipy_and_numpy() {
    let s = Scratch::new("ref");
    let mut x = engine_noise(FLICKER, 1 << 18, SEED);
    let dc = 3.0 * 1.5e-6;
    x.iter_mut().for_each(|v| *v += dc);
    let raw = s.path("rec.f64");
    write_f64(&raw, &x);
    let (code, j, err) = analyze(
        &raw,
        &["--rate", "48kHz", "--resolution", "10Hz", "--keep-drift"],
    );
    assert_eq!(code, 0, "{err}");
    let l = j["density"]["segment_length"].as_u64().unwrap() as usize;
    assert_eq!(l, 4800);
    // numpy.
    let Some(out) = common::python_script(
        "stats_ref.py",
        &[raw.clone().into()],
        &format!("seed {SEED}"),
    ) else {
        return;
    };
    let r: serde_json::Value = serde_json::from_str(out.lines().next().unwrap()).unwrap();
    for k in ["mean", "rms", "std"] {
        assert!(
            rel(num(&j, k), num(&r, k)) < 1e-12,
            "{k}: {} vs numpy {} (seed {SEED})",
            j[k],
            r[k]
        );
    }
    assert_eq!(num(&j, "peak_to_peak"), num(&r, "max") - num(&r, "min"));
    let counts = j["histogram"]["counts"].as_array().unwrap();
    let total: u64 = counts.iter().map(|c| c.as_u64().unwrap()).sum();
    assert_eq!(total, 1 << 18, "every sample is in the histogram");
    let (rms, sd, mean) = (num(&j, "rms"), num(&j, "std"), num(&j, "mean"));
    assert!(mean > 2.0 * sd, "the record carries a DC offset");
    assert!(
        rel(rms * rms, sd * sd + mean * mean) < 1e-14,
        "RMS² = σ² + μ² (seed {SEED})"
    );
    if !bands_equal_scipy(&s, &raw, &j, l) {
        return;
    }
    // By default the line is taken out first: the same bands of SciPy's estimate of the
    // samples less the reported line.
    let (_, d, err) = analyze(&raw, &["--rate", "48kHz", "--resolution", "10Hz"]);
    assert_eq!(d["drift"]["removed"], true, "{err}");
    let (offset, slope) = (
        num(&d["dc"], "offset"),
        num(&d["drift"], "slope_per_s") / 48e3,
    );
    let centre = ((1u64 << 18) - 1) as f64 / 2.0;
    let detrended: Vec<f64> = x
        .iter()
        .enumerate()
        .map(|(n, v)| v - (offset + slope * (n as f64 - centre)))
        .collect();
    let raw_d = s.path("rec-detrended.f64");
    write_f64(&raw_d, &detrended);
    bands_equal_scipy(&s, &raw_d, &d, l);
}

/// The bands of `j` against scipy.signal.welch's bins of `raw` (segments of `l`), grouped the
/// same way, to 1e−9 relative; false when the reference is skipped.
fn bands_equal_scipy(s: &Scratch, raw: &Path, j: &serde_json::Value, l: usize) -> bool {
    let out_path = s.path("welch.f64");
    let args: Vec<OsString> = vec![
        raw.into(),
        out_path.clone().into(),
        os("48000"),
        os(&l.to_string()),
    ];
    if common::python_script("welch_ref.py", &args, &format!("seed {SEED}")).is_none() {
        return false;
    }
    let v = read_f64(&out_path);
    let psd = &v[v.len() / 2..];
    let mut start = 3; // analyze's bands start at bin 3
    let bands = j["density"]["bands"].as_array().unwrap();
    assert!(bands.len() > 20);
    let nyquist = psd.len() - 1;
    for b in bands {
        let m = b["bins"].as_u64().unwrap() as usize;
        let width = m as f64 - if start + m > nyquist { 0.5 } else { 0.0 };
        let want = psd[start..start + m].iter().sum::<f64>() / width;
        let got = num(b, "psd");
        assert!(
            rel(got, want) < 1e-9,
            "band at bin {start}: {got} vs SciPy {want} (seed {SEED})"
        );
        start += m;
    }
    assert_eq!(start, psd.len());
    true
}

// ---------------------------------------------------------------------------------------------
// The verdict.

/// Files `generate` writes pass against their own profile (exit 0, `pass` true) and fail,
/// exit 1, against the same profile 2 dB higher (the negative control): with the default
/// 1 dB tolerance and the high bands' χ² intervals near ±0.1 dB (ν in the thousands there,
/// REFERENCES §3), −2 dB is outside them.
#[test]
fn generated_files_pass_their_profile_and_fail_one_2_db_higher() {
    let s = Scratch::new("verdict");
    for (name, body) in [("white", WHITE), ("flicker", FLICKER)] {
        let prof = s.file(&format!("{name}.toml"), body);
        let higher = body.replace(
            "density = \"10 nV/rtHz\"",
            "density = \"12.589254 nV/rtHz\"",
        );
        assert_ne!(higher, body);
        let prof_hi = s.file(&format!("{name}-hi.toml"), &higher);
        let wav = s.path(&format!("{name}.wav"));
        generate(
            &prof,
            &wav,
            &["--duration", "20s", "--sample-format", "i24"],
        );
        let (code, j, err) = analyze(&wav, &["--profile", prof.to_str().unwrap()]);
        assert_eq!(code, 0, "{name}: {err} {} (seed {SEED})", j["comparison"]);
        assert_eq!(j["pass"], true);
        let checked = j["comparison"]["bands_checked"].as_u64().unwrap();
        assert!(checked >= 25, "{name}: {checked} bands checked");
        let (code, j, err) = analyze(&wav, &["--profile", prof_hi.to_str().unwrap()]);
        assert_eq!(
            code, 1,
            "{name}: a 2 dB higher profile must fail (seed {SEED})"
        );
        assert_eq!(j["pass"], false);
        assert!(
            err.contains("does not match") && err.contains("bands outside"),
            "{err}"
        );
        // The tolerance widens every band's limits by its value on each side: 3 dB holds a
        // 2 dB offset (plus chance), 1.5 dB does not hold it in the narrow high bands.
        let hi_path = prof_hi.to_str().unwrap();
        let (code, j, err) = analyze(&wav, &["--profile", hi_path, "--tolerance", "3dB"]);
        assert_eq!(code, 0, "{name}: 3 dB tolerance: {err} (seed {SEED})");
        assert_eq!(j["comparison"]["tolerance_db"], 3.0);
        let (code, _, _) = analyze(&wav, &["--profile", hi_path, "--tolerance", "1.5 dB"]);
        assert_eq!(code, 1, "{name}: 1.5 dB tolerance (seed {SEED})");
        // The text form says the same.
        let o = run(
            &[os("analyze"), wav.into(), os("--profile"), prof.into()],
            &s,
        );
        assert!(o.status.success());
        assert!(
            text(&o.stdout).contains("verdict         PASS"),
            "{}",
            text(&o.stdout)
        );
    }
}

/// A profile with a burst: the capture of its generated file passes against the whole
/// design (Gaussian part plus the burst's sampled Lorentzian density, REFERENCES §4) and fails
/// against the same profile without the burst (negative control).
#[test]
fn a_burst_profile_is_judged_against_its_whole_design() {
    let s = Scratch::new("burst-verdict");
    let body = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/profiles/popcorn-opamp.toml"
    ))
    .unwrap();
    let prof = s.file("popcorn.toml", &body);
    let cut = body.find("[[burst]]").expect("the scenario has a burst");
    let gaussian_only = s.file("gaussian.toml", &body[..cut]);
    let wav = s.path("popcorn.wav");
    generate(&prof, &wav, &["--duration", "30s"]);
    let (code, j, err) = analyze(&wav, &["--profile", prof.to_str().unwrap()]);
    assert_eq!(code, 0, "{err} {} (seed {SEED})", j["comparison"]);
    let (code, _, _) = analyze(&wav, &["--profile", gaussian_only.to_str().unwrap()]);
    assert_eq!(
        code, 1,
        "leaving the burst out of the design must fail (seed {SEED})"
    );
}

/// A white floor under clear burst steps: once the detected chain's own density (REFERENCES
/// §4) is taken out, the fit finds the floor within z·SE (z = 4.89, 1e−6 two-sided,
/// REFERENCES §11) and no 1/f rise — without that step the burst's Lorentzian reads as a
/// corner near 1 kHz.
#[test]
fn the_fit_sees_the_floor_under_detected_bursts() {
    let s = Scratch::new("fit-burst");
    let prof = s.file(
        "bb.toml",
        "sample_rate = \"10 kHz\"\n[band]\nlow = 1\nhigh = 4000\n[[floor]]\n\
         density = \"10 nV/rtHz\"\n[[burst]]\nlevels = [\"0 uV\", \"5 uV\"]\n\
         dwell = [\"20 ms\", \"8 ms\"]\n",
    );
    let wav = s.path("bb.wav");
    generate(&prof, &wav, &["--duration", "60s"]);
    let fit = s.path("fit.toml");
    let (_, j, err) = analyze(&wav, &["--fit", fit.to_str().unwrap()]);
    let f = &j["fit"];
    assert!(f["burst"].is_object(), "levels not detected: {err} {f}");
    let d = num(f, "floor_density");
    let se = num(f, "floor_rel_se");
    assert!(se < 0.02, "floor SE {se}");
    assert!(
        (d / 10e-9).ln().abs() < 4.89 * se,
        "floor {d} ± {se} (seed {SEED})"
    );
    assert!(f["corner_hz"].is_null(), "spurious rise: {f} (seed {SEED})");
}

// ---------------------------------------------------------------------------------------------
// The fit.

/// generate → analyze --fit → generate: the fitted floor, corner and slope are within
/// z·SE of the profile's (z = 4.89, 1e−6 two-sided, REFERENCES §11; SE from the weighted
/// least-squares covariance, which the fit derives from each band's ν, REFERENCES §3), the
/// errors are small enough that the check means something (floor ±1 %, corner ±10 %, slope
/// ±0.05 at 1σ), a corner 1.5× off is rejected by the same bound (negative control), and
/// `generate` accepts the written profile.
#[test]
fn fit_recovers_floor_corner_and_slope_and_generate_accepts_it() {
    let s = Scratch::new("fit");
    let prof = s.file("flicker.toml", FLICKER);
    let rec = s.path("rec.f32");
    generate(&prof, &rec, &["--samples", "4194304", "--format", "raw"]);
    let fit_path = s.path("fit.toml");
    let (code, j, err) = analyze(
        &rec,
        &[
            "--profile",
            prof.to_str().unwrap(),
            "--fit",
            fit_path.to_str().unwrap(),
        ],
    );
    assert_eq!(code, 0, "{err}");
    let f = &j["fit"];
    let (d, d_se) = (num(f, "floor_density"), num(f, "floor_rel_se"));
    let (fc, fc_se) = (num(f, "corner_hz"), num(f, "corner_rel_se"));
    let (a, a_se) = (num(f, "slope"), num(f, "slope_se"));
    let ctx = format!("fit {f} (seed {SEED})");
    assert!(
        d_se < 0.01 && fc_se < 0.10 && a_se < 0.05,
        "errors too wide to test: {ctx}"
    );
    assert!((d / 10e-9).ln().abs() <= Z_1E6 * d_se, "floor: {ctx}");
    assert!((fc / 300.0).ln().abs() <= Z_1E6 * fc_se, "corner: {ctx}");
    assert!((a - 1.4).abs() <= Z_1E6 * a_se, "slope: {ctx}");
    assert!(
        (fc / 450.0).ln().abs() > Z_1E6 * fc_se,
        "a 1.5× corner must be rejected: {ctx}"
    );
    let toml = std::fs::read_to_string(&fit_path).unwrap();
    assert!(
        !toml.contains("[[burst]]"),
        "no levels in Gaussian noise: {toml}"
    );
    let again = s.path("again.wav");
    generate(&fit_path, &again, &["--samples", "48000"]);
    assert!(again.is_file());

    // White noise, no --profile: the band comes from the manifest, the 1/f rise is not
    // significant, so the fit is a white floor within z·SE of 10 nV/√Hz.
    let white = s.file("white.toml", WHITE);
    let rec = s.path("white.f32");
    generate(&white, &rec, &["--samples", "2097152", "--format", "raw"]);
    let fit_path = s.path("white-fit.toml");
    let (code, j, err) = analyze(&rec, &["--fit", fit_path.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
    let f = &j["fit"];
    let ctx = format!("fit {f} (seed {SEED})");
    assert!(f["corner_hz"].is_null(), "white noise has no corner: {ctx}");
    let (d, d_se) = (num(f, "floor_density"), num(f, "floor_rel_se"));
    assert!(
        d_se < 0.01 && (d / 10e-9).ln().abs() <= Z_1E6 * d_se,
        "{ctx}"
    );
    assert!(
        f["range_hz"][0].as_f64().unwrap() >= 10.0,
        "inside the band: {ctx}"
    );
    let toml = std::fs::read_to_string(&fit_path).unwrap();
    assert!(!toml.contains("corner"), "{toml}");
    generate(
        &fit_path,
        &s.path("white-again.wav"),
        &["--samples", "48000"],
    );
}

// ---------------------------------------------------------------------------------------------
// Burst levels.

/// A continuous-time Markov chain sampled at `fs`: `levels` (unit), mean dwell `tau_s` per
/// level, next level drawn from `next` (birth–death: up or down with equal odds in the middle).
fn markov_chain(n: usize, fs: f64, levels: &[f64], tau_s: &[f64], seed: u64) -> Vec<f64> {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let k = levels.len();
    let mut state = 0usize;
    let mut t_next = -tau_s[0] * (1.0 - rng.random::<f64>()).ln();
    (0..n)
        .map(|i| {
            let t = i as f64 / fs;
            while t >= t_next {
                state = if state == 0 {
                    1
                } else if state == k - 1 {
                    k - 2
                } else if rng.random::<f64>() < 0.5 {
                    state - 1
                } else {
                    state + 1
                };
                t_next += -tau_s[state] * (1.0 - rng.random::<f64>()).ln();
            }
            levels[state]
        })
        .collect()
}

/// Two- and three-level chains plus the engine's white noise: `analyze` finds the levels
/// within z·spread/√n of the truth (z = 4.89, n the points averaged; REFERENCES §11) and the
/// mean dwell times within z·τ/√dwells (exponential dwell, REFERENCES §4) plus two time
/// steps of the classified trace (a dwell is measured to ± one step at each end). `--fit`
/// writes them as a `[[burst]]` source. Negative controls: white and 1/f noise have none.
#[test]
fn burst_levels_and_dwell_times_are_recovered() {
    let s = Scratch::new("burst");
    let fs = 48_000.0;
    let n = 1 << 22;
    let cases: [(&[f64], &[f64]); 2] = [
        (&[0.0, 10e-6], &[5e-3, 15e-3]),
        (&[-8e-6, 2e-6, 12e-6], &[8e-3, 4e-3, 6e-3]),
    ];
    for (c, (levels, tau)) in cases.iter().enumerate() {
        let chain = markov_chain(n, fs, levels, tau, SEED + c as u64);
        let noise = engine_noise(WHITE, n, SEED + 10 + c as u64);
        let x: Vec<f64> = chain.iter().zip(&noise).map(|(a, b)| a + b).collect();
        let raw = s.path(&format!("burst{c}.f64"));
        write_f64(&raw, &x);
        let fit = s.path(&format!("burst{c}.toml"));
        let (code, j, err) = analyze(&raw, &["--rate", "48kHz", "--fit", fit.to_str().unwrap()]);
        assert_eq!(code, 0, "{err}");
        let l = &j["levels"];
        let ctx = format!("case {c}: {l} (seed {SEED})");
        let got: Vec<f64> = l["levels"]
            .as_array()
            .expect(&ctx)
            .iter()
            .map(|v| v.as_f64().unwrap())
            .collect();
        assert_eq!(got.len(), levels.len(), "{ctx}");
        let step = num(l, "resolution_s");
        let occupancy: Vec<f64> = l["occupancy"]
            .as_array()
            .unwrap()
            .iter()
            .map(|v| v.as_f64().unwrap())
            .collect();
        for i in 0..levels.len() {
            let spread = l["spread"][i].as_f64().unwrap();
            let points = occupancy[i] * n as f64 * 48_000.0f64.recip() / step;
            let tol = Z_1E6 * spread / points.sqrt();
            assert!(
                (got[i] - levels[i]).abs() <= tol,
                "level {i}: tolerance {tol}: {ctx}"
            );
            let dwells = l["dwells"][i].as_f64().unwrap();
            assert!(dwells > 1000.0, "{ctx}");
            let dwell = l["dwell_s"][i].as_f64().unwrap();
            let tol = Z_1E6 * tau[i] / dwells.sqrt() + 2.0 * step;
            assert!(
                (dwell - tau[i]).abs() <= tol,
                "dwell {i}: tolerance {tol}: {ctx}"
            );
        }
        let toml = std::fs::read_to_string(&fit).unwrap();
        assert!(
            toml.contains("[[burst]]") && toml.contains("levels = [") && toml.contains("dwell = ["),
            "{toml}"
        );
    }
    for (name, body) in [("white", WHITE), ("flicker", FLICKER)] {
        let raw = s.path(&format!("{name}.f64"));
        write_f64(&raw, &engine_noise(body, n, SEED + 20));
        let (code, j, err) = analyze(&raw, &["--rate", "48kHz"]);
        assert_eq!(code, 0, "{err}");
        assert!(
            j["levels"].is_null(),
            "{name} noise has no levels: {} (seed {SEED})",
            j["levels"]
        );
    }
}

// ---------------------------------------------------------------------------------------------
// Readers.

/// Statistics of values decoded independently of the library (hound for WAV; the bytes or
/// the text by hand for raw and CSV), scaled to physical units.
fn stats(x: &[f64]) -> (f64, f64, usize) {
    let n = x.len() as f64;
    let mean = x.iter().sum::<f64>() / n;
    let rms = (x.iter().map(|v| v * v).sum::<f64>() / n).sqrt();
    (mean, rms, x.len())
}

fn check_stats(what: &str, j: &serde_json::Value, want: (f64, f64, usize)) {
    assert_eq!(j["samples"].as_u64().unwrap() as usize, want.2, "{what}");
    assert!(
        rel(num(j, "rms"), want.1) < 1e-12,
        "{what}: rms {} vs {}",
        j["rms"],
        want.1
    );
    assert!(
        (num(j, "mean") - want.0).abs() < 1e-12 * want.1,
        "{what}: mean {} vs {}",
        j["mean"],
        want.0
    );
}

/// Every format `generate` writes reads back: WAV i16/i24/i32/f32 (checked against hound as
/// an independent reader), raw in every sample format and CSV physical, digital and code
/// columns (checked against the bytes and text decoded here), all scaled by the manifest.
#[test]
fn every_generated_format_reads_back() {
    let s = Scratch::new("formats");
    let prof = s.file("white.toml", WHITE);
    let n = 20_000usize;
    let ns = n.to_string();
    for sf in ["i16", "i24", "i32", "f32"] {
        let wav = s.path(&format!("w-{sf}.wav"));
        generate(&prof, &wav, &["--samples", &ns, "--sample-format", sf]);
        let m = manifest(&wav);
        let fsc = num(&m, "full_scale");
        let mut r = hound::WavReader::open(&wav).unwrap();
        let x: Vec<f64> = if sf == "f32" {
            r.samples::<f32>()
                .map(|v| f64::from(v.unwrap()) * fsc)
                .collect()
        } else {
            let max = match sf {
                "i16" => 32767.0,
                "i24" => 8388607.0,
                _ => 2147483647.0,
            };
            r.samples::<i32>()
                .map(|v| f64::from(v.unwrap()) / max * fsc)
                .collect()
        };
        let (code, j, err) = analyze(&wav, &[]);
        assert_eq!(code, 0, "{sf}: {err}");
        assert_eq!(j["unit"], "V");
        assert_eq!(j["file"]["scale_origin"], "manifest");
        check_stats(&format!("wav {sf}"), &j, stats(&x));
        // The physical statistics match what generate measured before quantisation, within
        // the quantisation error (≤ half an LSB per sample, so the RMS within half an LSB).
        let lsb = fsc / if sf == "i16" { 32767.0 } else { 8388607.0 };
        assert!(
            (num(&j, "rms") - num(&m, "measured_rms")).abs()
                <= 0.5 * lsb + 1e-6 * num(&m, "measured_rms")
        );
    }
    for sf in ["f32", "f64", "i16", "i24", "i32"] {
        let raw = s.path(&format!("r.{sf}"));
        let mut extra = vec!["--samples", ns.as_str()];
        if sf.starts_with('i') {
            extra.extend(["--level", "-20dBFS"]);
        }
        generate(&prof, &raw, &extra);
        let m = manifest(&raw);
        let fsc = m["full_scale"].as_f64().unwrap_or(1.0);
        let b = std::fs::read(&raw).unwrap();
        let x: Vec<f64> = match sf {
            "f32" => b
                .chunks_exact(4)
                .map(|c| f64::from(f32::from_le_bytes(c.try_into().unwrap())) * fsc)
                .collect(),
            "f64" => b
                .chunks_exact(8)
                .map(|c| f64::from_le_bytes(c.try_into().unwrap()) * fsc)
                .collect(),
            "i16" => b
                .chunks_exact(2)
                .map(|c| f64::from(i16::from_le_bytes(c.try_into().unwrap())) / 32767.0 * fsc)
                .collect(),
            "i24" => b
                .chunks_exact(3)
                .map(|c| {
                    f64::from(i32::from_le_bytes([0, c[0], c[1], c[2]]) >> 8) / 8388607.0 * fsc
                })
                .collect(),
            _ => b
                .chunks_exact(4)
                .map(|c| f64::from(i32::from_le_bytes(c.try_into().unwrap())) / 2147483647.0 * fsc)
                .collect(),
        };
        let (code, j, err) = analyze(&raw, &[]);
        assert_eq!(code, 0, "raw {sf}: {err}");
        check_stats(&format!("raw {sf}"), &j, stats(&x));
    }
    for (tag, extra) in [
        ("phys", vec![]),
        ("fs", vec!["--full-scale", "10uV"]),
        ("code", vec!["--sample-format", "i24", "--level", "-20dBFS"]),
    ] {
        let csv = s.path(&format!("c-{tag}.csv"));
        let mut e = vec!["--samples", ns.as_str()];
        e.extend(extra.iter().copied());
        generate(&prof, &csv, &e);
        let m = manifest(&csv);
        let fsc = m["full_scale"].as_f64().unwrap_or(1.0);
        let body = std::fs::read_to_string(&csv).unwrap();
        let div = if tag == "code" { 8388607.0 } else { 1.0 };
        let x: Vec<f64> = body
            .lines()
            .skip(1)
            .map(|l| l.split(',').nth(1).unwrap().parse::<f64>().unwrap() / div * fsc)
            .collect();
        // Without the manifest the rate comes from the time column.
        std::fs::remove_file(format!("{}.json", csv.display())).unwrap();
        let fs_arg = format!("{fsc}V");
        let scale_args: Vec<&str> = if tag == "phys" {
            vec![]
        } else {
            vec!["--full-scale", fs_arg.as_str()]
        };
        let (code, j, err) = analyze(&csv, &scale_args);
        assert_eq!(code, 0, "csv {tag}: {err}");
        assert!(
            rel(num(&j, "sample_rate_hz"), 48_000.0) < 1e-9,
            "csv {tag}: {}",
            j["sample_rate_hz"]
        );
        check_stats(&format!("csv {tag}"), &j, stats(&x));
    }
}

/// A 64-bit float WAV (which neither `generate` nor hound writes), built here field by field
/// from the RIFF/WAVE Rev. 3 layout (REFERENCES §10) with a plain IEEE-float header and with a
/// WAVE_FORMAT_EXTENSIBLE header (float SubFormat GUID), with a `LIST` chunk to skip: both
/// read back bit for bit (mean and RMS of the values exactly as computed here).
#[test]
fn hand_written_64_bit_float_wav_reads_back() {
    let s = Scratch::new("f64wav");
    let x: Vec<f64> = (0..5000)
        .map(|i| 0.3 * ((i as f64) * 0.37).sin() + 0.01)
        .collect();
    for extensible in [false, true] {
        let data: Vec<u8> = x.iter().flat_map(|v| v.to_le_bytes()).collect();
        let mut fmt = Vec::new();
        fmt.extend_from_slice(&(if extensible { 0xFFFEu16 } else { 3 }).to_le_bytes());
        fmt.extend_from_slice(&1u16.to_le_bytes()); // channels
        fmt.extend_from_slice(&8000u32.to_le_bytes()); // rate
        fmt.extend_from_slice(&64000u32.to_le_bytes()); // byte rate
        fmt.extend_from_slice(&8u16.to_le_bytes()); // block align
        fmt.extend_from_slice(&64u16.to_le_bytes()); // bits
        if extensible {
            fmt.extend_from_slice(&22u16.to_le_bytes());
            fmt.extend_from_slice(&64u16.to_le_bytes()); // valid bits
            fmt.extend_from_slice(&4u32.to_le_bytes()); // channel mask
            fmt.extend_from_slice(&[
                3, 0, 0, 0, 0, 0, 0x10, 0, 0x80, 0, 0, 0xAA, 0, 0x38, 0x9B, 0x71,
            ]);
        } else {
            fmt.extend_from_slice(&0u16.to_le_bytes());
        }
        let mut chunks = Vec::new();
        for (id, body) in [
            (&b"fmt "[..], fmt),
            (&b"LIST"[..], b"abc".to_vec()),
            (&b"fact"[..], 5000u32.to_le_bytes().to_vec()),
        ] {
            chunks.extend_from_slice(id);
            chunks.extend_from_slice(&(body.len() as u32).to_le_bytes());
            chunks.extend_from_slice(&body);
            if body.len() % 2 == 1 {
                chunks.push(0);
            }
        }
        chunks.extend_from_slice(b"data");
        chunks.extend_from_slice(&(data.len() as u32).to_le_bytes());
        chunks.extend_from_slice(&data);
        let mut file = b"RIFF".to_vec();
        file.extend_from_slice(&((chunks.len() + 4) as u32).to_le_bytes());
        file.extend_from_slice(b"WAVE");
        file.extend_from_slice(&chunks);
        let path = s.path(&format!("f64-{extensible}.wav"));
        std::fs::write(&path, &file).unwrap();
        let (code, j, err) = analyze(&path, &["--full-scale", "1V"]);
        assert_eq!(code, 0, "{err}");
        assert_eq!(j["file"]["sample_format"], "f64");
        assert_eq!(num(&j, "sample_rate_hz"), 8000.0);
        check_stats(&format!("f64 wav, extensible {extensible}"), &j, stats(&x));
        // Truncated inside the data: exit 2, named.
        std::fs::write(&path, &file[..file.len() - 100]).unwrap();
        let (code, _, err) = analyze(&path, &["--full-scale", "1V"]);
        assert_eq!(code, 2);
        assert!(
            err.contains(path.to_str().unwrap()) && err.contains("truncated"),
            "{err}"
        );
    }
}

/// `--plot` writes an SVG with the density; `--report` one HTML page with three inline SVGs,
/// the tables and no scripts or external files (readable offline).
#[test]
fn plot_and_report_are_self_contained() {
    let s = Scratch::new("pictures");
    let prof = s.file("flicker.toml", FLICKER);
    let wav = s.path("f.wav");
    generate(&prof, &wav, &["--duration", "5s"]);
    let (svg, html) = (s.path("d.svg"), s.path("r.html"));
    let (code, _, err) = analyze(
        &wav,
        &[
            "--profile",
            prof.to_str().unwrap(),
            "--plot",
            svg.to_str().unwrap(),
            "--report",
            html.to_str().unwrap(),
        ],
    );
    assert_eq!(code, 0, "{err}");
    let svg = std::fs::read_to_string(svg).unwrap();
    assert!(
        svg.starts_with("<svg") && svg.contains("designed") && svg.contains("amplifier"),
        "{svg}"
    );
    assert!(svg.contains("<polyline") || svg.contains("<path"));
    let html = std::fs::read_to_string(html).unwrap();
    // Density, integrated noise, histogram and trace.
    assert_eq!(html.matches("<svg").count(), 4);
    assert!(html.contains("PASS") && html.contains("<table>"));
    for bad in ["<script", "src=", "href=", "@import"] {
        assert!(
            !html.contains(bad),
            "the report must not load anything: {bad}"
        );
    }
}

/// A WAV whose `data` chunk is followed by another chunk is read up to the end of its samples
/// only, with a note saying how many bytes after them were not read (RIFF/WAVE layout: 12 +
/// 24 header bytes, the 8000 bytes of samples at 44..8044, an 18-byte `LIST` chunk after).
#[test]
fn bytes_after_the_samples_are_noted() {
    let s = Scratch::new("trail");
    let codes: Vec<i16> = (0..4000).map(|i| ((i * 37) % 2001 - 1000) as i16).collect();
    let data: Vec<u8> = codes.iter().flat_map(|c| c.to_le_bytes()).collect();
    let mut chunks = b"fmt ".to_vec();
    chunks.extend_from_slice(&16u32.to_le_bytes());
    for v in [1u16, 1] {
        chunks.extend_from_slice(&v.to_le_bytes()); // PCM, mono
    }
    chunks.extend_from_slice(&8000u32.to_le_bytes());
    chunks.extend_from_slice(&16000u32.to_le_bytes());
    chunks.extend_from_slice(&2u16.to_le_bytes());
    chunks.extend_from_slice(&16u16.to_le_bytes());
    chunks.extend_from_slice(b"data");
    chunks.extend_from_slice(&(data.len() as u32).to_le_bytes());
    chunks.extend_from_slice(&data);
    chunks.extend_from_slice(b"LIST\x0a\0\0\0INFOabcdef");
    let mut file = b"RIFF".to_vec();
    file.extend_from_slice(&((chunks.len() + 4) as u32).to_le_bytes());
    file.extend_from_slice(b"WAVE");
    file.extend_from_slice(&chunks);
    assert_eq!(file.len(), 8062);
    let path = s.path("trail.wav");
    std::fs::write(&path, &file).unwrap();
    let (code, j, err) = analyze(&path, &["--full-scale", "1V"]);
    assert_eq!(code, 0, "{err}");
    let x: Vec<f64> = codes.iter().map(|&c| f64::from(c) / 32767.0).collect();
    check_stats("wav with a trailing chunk", &j, stats(&x));
    assert_eq!(
        j["notes"],
        serde_json::json!([
            "18 bytes after the \"data\" chunk (byte 8044 to 8062) are not read as samples"
        ])
    );
}

/// A named pipe is refused before it is read (analyze reads a capture twice), exit 2, naming
/// the file and what to do; the same bytes in a file, opened as /dev/stdin, are read.
#[cfg(unix)]
#[test]
fn a_pipe_is_refused_and_a_file_on_standard_input_is_read() {
    let s = Scratch::new("pipe");
    let fifo = s.path("cap.wav");
    let made = std::process::Command::new("mkfifo").arg(&fifo).status();
    if !made.is_ok_and(|st| st.success()) {
        println!("skipped: mkfifo is not available");
        return;
    }
    let (code, _, err) = analyze(&fifo, &[]);
    assert_eq!(code, 2, "{err}");
    assert!(
        err.contains("cap.wav: is a pipe, device or socket, not a file")
            && err.contains("cannot be read twice; write it to a file first"),
        "{err}"
    );
    std::fs::remove_file(&fifo).unwrap();
    let raw = s.path("cap.raw");
    let x: Vec<f64> = (0..3000)
        .map(|i| ((i * 7919) % 1000) as f64 * 1e-3)
        .collect();
    write_f64(&raw, &x);
    let o = std::process::Command::new(env!("CARGO_BIN_EXE_noisewright"))
        .args(["analyze", "/dev/stdin", "--json", "--sample-format", "f64"])
        .args(["--rate", "1kHz"])
        .stdin(std::fs::File::open(&raw).unwrap())
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", text(&o.stderr));
    let j: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    check_stats("/dev/stdin from a file", &j, stats(&x));
}
