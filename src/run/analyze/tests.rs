//! Unit tests of what only the library can be asked: samples in memory, typed setters,
//! the unit of samples, labels, the interrupt flag.

use std::path::PathBuf;
use std::sync::atomic::AtomicBool;

use super::*;
use crate::Generator;

/// A white 4 nV/√Hz floor, 10 Hz – 20 kHz at 48 kHz.
const WHITE: &str = "sample_rate = \"48 kHz\"\n[band]\nlow = \"10 Hz\"\nhigh = \"20 kHz\"\n\
                     [[floor]]\ndensity = \"4 nV/rtHz\"\n";

fn white() -> Profile {
    Profile::from_toml_str(WHITE, "white.toml").unwrap()
}

/// Two seconds of the profile's noise, in volts.
fn noise(p: &Profile, seed: u64) -> Vec<f64> {
    let mut x = vec![0.0; 96_000];
    Generator::new(p, seed).unwrap().fill(&mut x);
    x
}

fn scratch(tag: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("nw-analysis-{}-{tag}", std::process::id()));
    std::fs::create_dir_all(&d).unwrap();
    d
}

/// The object without the facts about the container, which differ between a file and
/// samples in memory.
fn measured_part(mut json: serde_json::Value) -> serde_json::Value {
    json.as_object_mut().unwrap().remove("file");
    json
}

#[test]
fn samples_in_memory_measure_as_their_raw_file() {
    let p = white();
    let x = noise(&p, 3);
    let d = scratch("raw");
    let path = d.join("x.f64");
    let bytes: Vec<u8> = x.iter().flat_map(|v| v.to_le_bytes()).collect();
    std::fs::write(&path, bytes).unwrap();
    let from_file = Analysis::of_path(&path)
        .rate_hz(48_000.0)
        .profile(&p)
        .run()
        .unwrap();
    let from_memory = Analysis::of_samples(&x, 48_000.0)
        .profile(&p)
        .run()
        .unwrap();
    // The same values in the same blocks: every number is the same bit for bit.
    assert_eq!(
        measured_part(from_file.json.clone()),
        measured_part(from_memory.json.clone())
    );
    assert!(from_file.verdict.passed() && from_memory.verdict.passed());
    assert_eq!(from_memory.json["file"]["format"], "memory");
    assert_eq!(from_memory.json["file"]["name"], "samples");
    assert_eq!(from_file.json["file"]["format"], "raw");
    assert!(
        from_memory
            .summary
            .contains("analyze samples (memory f64, 96000 samples")
    );
    std::fs::remove_dir_all(&d).unwrap();
}

#[test]
fn typed_setters_read_as_their_text() {
    let p = white();
    let x = noise(&p, 4);
    let typed = Analysis::of_samples(&x, 48_000.0)
        .profile(&p)
        .resolution_hz(25.0)
        .tolerance_db(0.5)
        .full_scale(1e-6)
        .run()
        .unwrap();
    let text = Analysis::of_samples(&x, 48_000.0)
        .profile(&p)
        .text(Setting::Resolution, "25 Hz")
        .unwrap()
        .text(Setting::Tolerance, "0.5dB")
        .unwrap()
        .text(Setting::FullScale, "1 uV")
        .unwrap()
        .run()
        .unwrap();
    assert_eq!(typed.json, text.json);
    assert_eq!(typed.json["density"]["segment_length"], 1920); // 48 kHz / 25 Hz
    assert_eq!(typed.json["comparison"]["tolerance_db"], 0.5);
    assert_eq!(typed.json["file"]["full_scale"], 1e-6);
    assert_eq!(typed.json["file"]["scale_origin"], "--full-scale");
}

/// 6.02 dB above the design. A band whose upper limit is below +2 dB has a statistical
/// interval (χ² at its Bonferroni share of 10⁻³, z ≈ 4) narrower than 1 dB, so its ratio's
/// σ is under 0.25 dB: it measures 6.02 dB within 1 dB (4σ) and fails.
#[test]
fn a_capture_twice_the_design_fails_its_profile() {
    let p = white();
    let x: Vec<f64> = noise(&p, 5).iter().map(|v| 2.0 * v).collect();
    let report = Analysis::of_samples(&x, 48_000.0)
        .profile(&p)
        .label("doubled")
        .run()
        .unwrap();
    assert_eq!(report.json["pass"], false);
    let bands = report.json["comparison"]["bands"].as_array().unwrap();
    let narrow: Vec<_> = bands
        .iter()
        .filter(|b| b["limit_hi_db"].as_f64().unwrap() < 2.0)
        .collect();
    assert!(narrow.len() >= 10, "{} narrow bands", narrow.len());
    for b in narrow {
        let ratio = b["ratio_db"].as_f64().unwrap();
        assert!((ratio - 20.0 * 2f64.log10()).abs() < 1.0, "{b}");
        assert_eq!(b["pass"], false);
    }
    assert!(report.summary.contains("verdict         FAIL"));
    let Verdict::Fail(e) = report.verdict else {
        panic!("expected a failure");
    };
    assert_eq!(e.exit_code(), 1);
    assert!(
        e.to_string()
            .starts_with("doubled does not match white.toml: "),
        "{e}"
    );
}

#[test]
fn refusals_name_their_setting() {
    let p = white();
    let x = noise(&p, 6);
    let setting_of = |r: Result<AnalysisReport>| match r {
        Err(Error::Setting { setting, .. }) => setting,
        other => panic!("expected a setting's error, got {other:?}"),
    };
    let amperes = Analysis::of_samples(&x, 48_000.0)
        .profile(&p)
        .unit(Unit::Ampere)
        .run();
    assert_eq!(setting_of(amperes), Setting::Unit);
    assert_eq!(
        setting_of(Analysis::of_samples(&x, 0.0).run()),
        Setting::Rate
    );
    assert_eq!(
        setting_of(Analysis::of_samples(&x, 48_000.0).tolerance_db(-1.0).run()),
        Setting::Tolerance
    );
    assert_eq!(
        setting_of(Analysis::of_samples(&x, 48_000.0).resolution_hz(0.0).run()),
        Setting::Resolution
    );
    let e = Analysis::of_samples(&x, 48_000.0)
        .text(Setting::Plot, "p.svg")
        .unwrap_err();
    assert!(e.to_string().starts_with("setting plot: "), "{e}");
    let few = Analysis::of_samples(&x[..10], 48_000.0).run().unwrap_err();
    assert_eq!(few.exit_code(), 2);
    let mut bad = x.clone();
    bad[70_000] = f64::NAN;
    let e = Analysis::of_samples(&bad, 48_000.0).run().unwrap_err();
    assert!(e.to_string().contains("sample 70000 is NaN"), "{e}");
}

#[test]
fn an_interruption_leaves_none_of_the_files() {
    let p = white();
    let x = noise(&p, 7);
    let d = scratch("interrupt");
    let stop = AtomicBool::new(true);
    let r = Analysis::of_samples(&x, 48_000.0)
        .plot(d.join("p.svg"))
        .fit(d.join("f.toml"))
        .interrupt_on(&stop)
        .run();
    assert!(matches!(r, Err(Error::Interrupted)));
    assert_eq!(std::fs::read_dir(&d).unwrap().count(), 0);
    // Not interrupted, both land; the fitted profile reads back.
    let report = Analysis::of_samples(&x, 48_000.0)
        .plot(d.join("p.svg"))
        .fit(d.join("f.toml"))
        .run()
        .unwrap();
    assert!(
        std::fs::read_to_string(d.join("p.svg"))
            .unwrap()
            .starts_with("<svg")
    );
    Profile::from_path(d.join("f.toml")).unwrap();
    assert_eq!(
        report.json["fit"]["profile_file"],
        d.join("f.toml").display().to_string()
    );
    std::fs::remove_dir_all(&d).unwrap();
}

/// The bench setters give what their text gives, and the drift kept or taken out: 2 s of the
/// white profile plus a 1 mV/s ramp and a 10 µV line at 1 kHz (invented). With the drift
/// taken out the capture passes and the line is the one spur listed; kept, the ramp's leakage
/// fails the low bands (its 2 mV swing is 10⁵ times the noise).
#[test]
fn bench_setters_match_their_text() {
    let p = white();
    let mut x = noise(&p, 5);
    for (i, v) in x.iter_mut().enumerate() {
        let t = i as f64 / 48_000.0;
        *v += 1e-3 * t + 10e-6 * (std::f64::consts::TAU * 1000.0 * t).sin();
    }
    let typed = Analysis::of_samples(&x, 48_000.0)
        .profile(&p)
        .exclude_hz(&[(3000.0, 3000.0), (5000.0, 5100.0)])
        .pp_band_hz(5.0, 20.0)
        .pp_window_s(0.5)
        .run()
        .unwrap();
    let text = Analysis::of_samples(&x, 48_000.0)
        .profile(&p)
        .text(Setting::Exclude, "3kHz,5kHz..5.1kHz")
        .and_then(|a| a.text(Setting::PpBand, "5Hz..20Hz"))
        .and_then(|a| a.text(Setting::PpWindow, "500ms"))
        .unwrap()
        .run()
        .unwrap();
    assert_eq!(typed.json, text.json);
    assert!(typed.verdict.passed(), "{}", typed.summary);
    let spurs = typed.json["spurs"]["found"].as_array().unwrap();
    assert_eq!(spurs.len(), 1, "{spurs:?}");
    assert!((spurs[0]["frequency_hz"].as_f64().unwrap() - 1000.0).abs() < 10.0);
    assert_eq!(typed.json["excluded"].as_array().unwrap().len(), 2);
    assert!(
        typed.json["window_peak_to_peak"]["windows"]
            .as_u64()
            .unwrap()
            >= 1
    );
    let kept = Analysis::of_samples(&x, 48_000.0)
        .profile(&p)
        .keep_drift(true)
        .run()
        .unwrap();
    assert!(!kept.verdict.passed());
    assert_eq!(kept.json["drift"]["removed"], false);
    let slope = kept.json["drift"]["slope_per_s"].as_f64().unwrap();
    assert!((slope - 1e-3).abs() < 1e-6, "{slope}");
}

/// Burst levels on a drifting capture: 20 s of a trap switching between 0 and 5 µV (dwells
/// 20 ms and 10 ms) on a 10 nV/√Hz floor (invented), plus a drift of 5 µV/s, one level spacing
/// per second. With the drift taken out the two levels are found 5 µV apart to within 0.1 µV
/// (their block means carry the floor's noise, ~0.03 µV over a 100 µs block) with their
/// dwells within 15 % (~650 dwells each: a relative σ of ~4 %), and the capture passes its
/// profile; with the drift kept the levels are lost in the ramp.
#[test]
fn burst_levels_survive_a_drift() {
    let p = Profile::from_toml_str(
        "sample_rate = \"10 kHz\"\n[band]\nlow = \"1 Hz\"\nhigh = \"4 kHz\"\norder = 2\n\
         [[floor]]\ndensity = \"10 nV/rtHz\"\n[[burst]]\nname = \"trap\"\n\
         levels = [\"0 uV\", \"5 uV\"]\ndwell = [\"20 ms\", \"10 ms\"]\n",
        "trap.toml",
    )
    .unwrap();
    let mut x = vec![0.0; 200_000];
    Generator::new(&p, 9).unwrap().fill(&mut x);
    for (i, v) in x.iter_mut().enumerate() {
        *v += 5e-6 * i as f64 / 10_000.0;
    }
    let r = Analysis::of_samples(&x, 10_000.0)
        .profile(&p)
        .run()
        .unwrap();
    let lv = &r.json["levels"];
    let levels = lv["levels"].as_array().expect("levels found");
    assert_eq!(levels.len(), 2, "seed 9");
    let gap = levels[1].as_f64().unwrap() - levels[0].as_f64().unwrap();
    assert!((gap - 5e-6).abs() < 0.1e-6, "seed 9: levels {levels:?}");
    for (d, want) in lv["dwell_s"].as_array().unwrap().iter().zip([0.02, 0.01]) {
        assert!(
            (d.as_f64().unwrap() / want - 1.0).abs() < 0.15,
            "seed 9: {lv}"
        );
    }
    assert!(r.verdict.passed(), "seed 9: {}", r.summary);
    let kept = Analysis::of_samples(&x, 10_000.0)
        .profile(&p)
        .keep_drift(true)
        .run()
        .unwrap();
    assert!(
        kept.json["levels"].is_null(),
        "seed 9: {}",
        kept.json["levels"]
    );
}
