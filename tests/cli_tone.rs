//! CLI tests of tones and the offset: the manifest's tone keys, `--loop` refusing tones that
//! do not complete whole cycles, per-source CSV columns, and `analyze` judging a tone-bearing
//! capture fairly. Bad tone input is in tests/error_classes.rs.

mod common;

use common::{Scratch, manifest, run, run_ok, text};

const HEAD: &str = "name = \"cli tones\"\nsample_rate = \"10 kHz\"\noffset = \"0.5 mV\"\n\
                    [band]\nlow = \"1 Hz\"\nhigh = \"5 kHz\"\n[[floor]]\ndensity = \"1 uV/rtHz\"\n";

const TONES: &str = "[[tone]]\nname = \"pilot\"\nfrequency = \"1 kHz\"\npeak = \"1 mV\"\n\
                     phase = \"90 deg\"\n[[tone]]\nfrequency = \"2.5 kHz\"\nrms = \"0.2 mV\"\n";

#[test]
fn manifest_lists_each_tone_with_its_snr_and_enob() {
    let s = Scratch::new("manifest");
    let p = s.file("t.toml", &format!("{HEAD}{TONES}"));
    let o = run_ok(
        &[
            "generate",
            p.to_str().unwrap(),
            "-o",
            "t.wav",
            "--duration",
            "1s",
        ],
        &s.dir,
    );
    let out = text(&o.stdout);
    assert!(
        out.contains("tone            pilot: 1 kHz, 1 mV peak"),
        "{out}"
    );
    assert!(out.contains("offset          500 µV"), "{out}");
    let m = manifest(&s.path("t.wav"));
    let x = &m["extra"];
    assert_eq!(x["offset"], 5e-4);
    // In-band noise of a white floor over a brick-wall band: e·√(f_H − f_L) (REFERENCES §6);
    // the designed density falls off below band.low, so the design is slightly less.
    let noise = 1e-6 * (5000.0f64 - 1.0).sqrt();
    let got = x["noise_band_rms"].as_f64().unwrap();
    assert!((got / noise - 1.0).abs() < 1e-3, "{got} vs {noise}");
    let t = &x["tones"];
    assert_eq!(t[0]["name"], "pilot");
    assert_eq!(t[0]["peak"], 1e-3);
    assert_eq!(t[0]["phase_deg"], 90.0);
    let snr0 = 10.0 * (0.5e-6f64 / (got * got)).log10();
    assert!((t[0]["snr_db"].as_f64().unwrap() - snr0).abs() < 1e-9);
    let e0 = t[0]["enob_bits"].as_f64().unwrap();
    assert!((e0 - (snr0 - 1.76) / 6.02).abs() < 1e-9);
    assert!((t[1]["rms"].as_f64().unwrap() - 2e-4).abs() < 1e-15);
    assert_eq!(m["profile"]["tones"][1]["given_as"], "rms");
}

#[test]
fn loop_refuses_a_tone_without_whole_cycles_and_names_the_nearest() {
    let s = Scratch::new("loop");
    let p = s.file("t.toml", &format!("{HEAD}{TONES}"));
    let o = run(
        &[
            "generate",
            p.to_str().unwrap(),
            "-o",
            "l.wav",
            "--samples",
            "10001",
            "--loop",
        ],
        &s.dir,
    );
    assert_eq!(o.status.code(), Some(2), "{}", text(&o.stdout));
    let e = text(&o.stderr);
    // 1 kHz in 10001 samples at 10 kHz: 1000.1 cycles; the nearest whole count 1000 is at
    // 1000·10000/10001 Hz.
    assert!(e.contains("--loop") && e.contains("pilot"), "{e}");
    assert!(
        e.contains(&format!("{} Hz", 1000.0 * 10000.0 / 10001.0)),
        "{e}"
    );
    assert!(!s.path("l.wav").exists() && !s.path("l.wav.json").exists());
    run_ok(
        &[
            "generate",
            p.to_str().unwrap(),
            "-o",
            "l.csv",
            "--samples",
            "10000",
            "--loop",
        ],
        &s.dir,
    );
}

/// The per-source CSV: a column per tone and one for the offset; the tone columns are the
/// exact sines from sample 0 (pilot starts at its peak, 90 deg), the offset column constant.
#[test]
fn source_columns_hold_each_tone_and_the_offset() {
    let s = Scratch::new("columns");
    let p = s.file("t.toml", &format!("{HEAD}{TONES}"));
    run_ok(
        &[
            "generate",
            p.to_str().unwrap(),
            "-o",
            "c.csv",
            "--samples",
            "40",
            "--columns",
            "sources",
        ],
        &s.dir,
    );
    let csv = std::fs::read_to_string(s.path("c.csv")).unwrap();
    let mut lines = csv.lines();
    assert_eq!(
        lines.next().unwrap(),
        "time_s,value_V,gaussian_V,pilot_V,tone_2_V,offset_V"
    );
    for (n, l) in lines.enumerate() {
        let v: Vec<f64> = l.split(',').map(|c| c.parse().unwrap()).collect();
        let pilot = 1e-3
            * (std::f64::consts::TAU * 1000.0 * n as f64 / 1e4 + 0.5 * std::f64::consts::PI).sin();
        assert!((v[3] - pilot).abs() < 1e-15, "row {n}: {} vs {pilot}", v[3]);
        assert_eq!(v[5], 5e-4);
        assert!((v[1] - (v[2] + v[3] + v[4] + v[5])).abs() < 1e-15);
    }
}

/// analyze of a capture with a strong tone (SNR ≈ 37 dB) and an offset: the leakage bins are
/// left out, so the verdict passes, and the tone's fitted amplitude lies within 5σ_A of its
/// design, σ_A = σ·√(2/N) for white noise (least-squares sine fit, IEEE Std 1057/1241).
#[test]
fn analyze_passes_a_tone_bearing_capture_and_reports_the_amplitude() {
    let s = Scratch::new("analyze");
    let p = s.file("t.toml", &format!("{HEAD}{TONES}"));
    run_ok(
        &[
            "generate",
            p.to_str().unwrap(),
            "-o",
            "a.f64",
            "--duration",
            "20s",
            "--seed",
            "6",
        ],
        &s.dir,
    );
    let o = run(
        &[
            "analyze",
            "a.f64",
            "--profile",
            p.to_str().unwrap(),
            "--json",
        ],
        &s.dir,
    );
    assert!(
        o.status.success(),
        "seed 6: {}{}",
        text(&o.stdout),
        text(&o.stderr)
    );
    let j: serde_json::Value = serde_json::from_str(&text(&o.stdout)).unwrap();
    let t = &j["tones"][0];
    let sigma_a = t["peak_std_white"].as_f64().unwrap();
    let n = 200_000f64;
    let sigma = 1e-6 * (5000.0f64 - 1.0).sqrt();
    assert!((sigma_a / (sigma * (2.0 / n).sqrt()) - 1.0).abs() < 1e-2);
    let peak = t["measured_peak"].as_f64().unwrap();
    assert!(
        (peak - 1e-3).abs() < 5.0 * sigma_a,
        "seed 6: {peak} ± {sigma_a}"
    );
    let snr = t["measured_snr_db"].as_f64().unwrap();
    let want = t["expected_snr_db"].as_f64().unwrap();
    // The measured in-band noise power sums nearly every Welch bin of 200 000 nearly white
    // samples: relative σ ≈ √(2/N) = 0.32 % (REFERENCES §8) → 0.014 dB, the amplitude's
    // σ_A/A → 0.002 dB; 0.1 dB is beyond 5σ.
    assert!((snr - want).abs() < 0.1, "seed 6: SNR {snr} vs {want}");
    let ex = t["excluded_bins"].as_array().unwrap();
    assert!(ex[1].as_u64().unwrap() > ex[0].as_u64().unwrap() + 4);
    // The same capture judged against the noise alone: the tones it does not expect are
    // found as spurs (neither named as mains), each within 5.3 of its stated 1σ of its RMS,
    // and left out of the verdict, which passes.
    let q = s.file("noise.toml", HEAD);
    let o = run(
        &[
            "analyze",
            "a.f64",
            "--profile",
            q.to_str().unwrap(),
            "--json",
        ],
        &s.dir,
    );
    assert_eq!(o.status.code(), Some(0), "{}", text(&o.stdout));
    let j: serde_json::Value = serde_json::from_str(&text(&o.stdout)).unwrap();
    let found = j["spurs"]["found"].as_array().unwrap();
    assert_eq!(found.len(), 2, "seed 6: {found:#?}");
    for (sp, (f, rms)) in found
        .iter()
        .zip([(1000.0, 1e-3 / 2f64.sqrt()), (2500.0, 0.2e-3)])
    {
        assert!(
            (sp["frequency_hz"].as_f64().unwrap() - f).abs() < 1.0,
            "{sp}"
        );
        let (m, se) = (sp["rms"].as_f64().unwrap(), sp["rms_se"].as_f64().unwrap());
        assert!(
            (m - rms).abs() < 5.3 * se,
            "seed 6: {f} Hz: {m} ± {se} vs {rms}"
        );
        assert!(sp["mains"].is_null(), "{sp}");
    }
    // The noise itself is still judged: against a floor 2 dB higher the capture fails.
    let hi = s.file(
        "noise-hi.toml",
        &HEAD.replace("1 uV/rtHz", "1.2589254 uV/rtHz"),
    );
    let o = run(
        &["analyze", "a.f64", "--profile", hi.to_str().unwrap()],
        &s.dir,
    );
    assert_eq!(o.status.code(), Some(1), "{}", text(&o.stdout));
}

/// budget: each tone's SNR against the band's noise; a white floor e over a brick-wall band
/// carries e²·(f_H − f_L) (REFERENCES §6), so 1 mV peak against 1 µV/√Hz over 1 Hz..5 kHz is
/// 10·log10(0.5e−6 / 4.999e−9) dB.
#[test]
fn budget_lists_each_tone_with_its_snr_and_enob() {
    let s = Scratch::new("budget");
    let p = s.file("t.toml", &format!("{HEAD}{TONES}"));
    let o = run_ok(&["budget", p.to_str().unwrap(), "--json"], &s.dir);
    let j: serde_json::Value = serde_json::from_str(&text(&o.stdout)).unwrap();
    let t = &j["bands"][0]["tones"][0];
    let want = 10.0 * (0.5e-6f64 / (1e-12 * 4999.0)).log10();
    let snr = t["snr_db"].as_f64().unwrap();
    assert!((snr - want).abs() < 1e-6, "{snr} vs {want}");
    assert!((t["enob_bits"].as_f64().unwrap() - (want - 1.76) / 6.02).abs() < 1e-6);
    assert_eq!(t["in_band"], true);
    let o = run(&["budget", p.to_str().unwrap()], &s.dir);
    assert!(
        text(&o.stdout).contains("tone pilot at 1 kHz"),
        "{}",
        text(&o.stdout)
    );
}

/// With ADC codes the manifest adds each tone's SNR with the converter's quantisation noise in
/// the band: Q²/12 spread evenly over 0…fs/2 (REFERENCES §9, uniform error model), Q = 3.3 V /
/// 2^12 here, so the in-band part is Q²/12·(f_H − f_L)/(fs/2).
#[test]
fn adc_codes_add_the_quantisation_noise_to_the_snr() {
    let s = Scratch::new("adc");
    let body = format!("{HEAD}{TONES}").replace("offset = \"0.5 mV\"", "offset = \"1.65 V\"");
    let p = s.file("t.toml", &body);
    run_ok(
        &[
            "generate",
            p.to_str().unwrap(),
            "-o",
            "a.csv",
            "--samples",
            "1000",
            "--bits",
            "12",
            "--range",
            "0V..3.3V",
        ],
        &s.dir,
    );
    let m = manifest(&s.path("a.csv"));
    let x = &m["extra"];
    let noise = x["noise_band_rms"].as_f64().unwrap().powi(2);
    let q = 3.3 / 4096.0;
    let quant = q * q / 12.0 * (5000.0 - 1.0) / 5000.0;
    let want = 10.0 * (0.5e-6 / (noise + quant)).log10();
    let got = x["tones"][0]["snr_with_adc_db"].as_f64().unwrap();
    assert!((got - want).abs() < 1e-9, "{got} vs {want}");
    let e = x["tones"][0]["enob_with_adc_bits"].as_f64().unwrap();
    assert!((e - (want - 1.76) / 6.02).abs() < 1e-9);
}
