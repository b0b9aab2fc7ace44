//! CLI tests of burst sources in `noisewright generate`: per-source CSV columns, the manifest's
//! burst keys and the summary. Bad burst input is in tests/error_classes.rs.

mod common;

use std::path::{Path, PathBuf};
use std::process::Output;

use common::{Scratch, manifest, read_f64, run, text};

/// `noisewright generate PROFILE ARGS…` in `dir`, which must succeed.
fn generate(dir: &Path, profile: &Path, args: &[&str]) -> Output {
    let mut a = vec!["generate", profile.to_str().unwrap()];
    a.extend_from_slice(args);
    let o = run(&a, dir);
    assert!(o.status.success(), "{args:?}: {}", text(&o.stderr));
    o
}

const HEAD: &str =
    "name = \"cli bursts\"\nsample_rate = \"10 kHz\"\n[band]\nlow = \"1 Hz\"\nhigh = \"4 kHz\"\n";

const MIXED: &str = r#"[[floor]]
density = "20 nV/rtHz"
[[burst]]
name = "input trap"
levels = ["0 uV", "3 uV", "7 uV"]
dwell = ["20 ms", "5 ms", "2 ms"]
next = [[0, 0.7, 0.3], [1, 0, 0], [0.5, 0.5, 0]]
[[burst]]
levels = ["-1 uV", "1 uV"]
dwell = ["10 ms", "30 ms"]
"#;

fn write(dir: &Path, name: &str, body: &str) -> PathBuf {
    let p = dir.join(name);
    std::fs::write(&p, format!("{HEAD}{body}")).unwrap();
    p
}

#[test]
fn csv_with_source_columns_shows_the_truth_behind_every_sample() {
    let dir = Scratch::new("columns");
    let p = write(&dir, "mixed.toml", MIXED);
    generate(
        &dir,
        &p,
        &["-o", "m.csv", "--samples", "40000", "--columns", "sources"],
    );
    let csv = std::fs::read_to_string(dir.join("m.csv")).unwrap();
    let mut lines = csv.lines();
    assert_eq!(
        lines.next().unwrap(),
        "time_s,value_V,gaussian_V,input_trap_V,burst_2_V"
    );
    let mut rows = 0;
    for l in lines {
        let v: Vec<f64> = l.split(',').map(|x| x.parse().unwrap()).collect();
        assert_eq!(v.len(), 5);
        // Physical output: the total is the f64 sum of the parts, left to right.
        assert_eq!((v[2] + v[3] + v[4]).to_bits(), v[1].to_bits(), "row {rows}");
        assert!([0.0, 3e-6, 7e-6].contains(&v[3]), "row {rows}: {}", v[3]);
        assert!([-1e-6, 1e-6].contains(&v[4]), "row {rows}: {}", v[4]);
        rows += 1;
    }
    assert_eq!(rows, 40_000);
    // The same run without the columns writes the same totals.
    generate(&dir, &p, &["-o", "t.csv", "--samples", "40000"]);
    let totals: Vec<String> = std::fs::read_to_string(dir.join("t.csv"))
        .unwrap()
        .lines()
        .map(str::to_string)
        .collect();
    assert_eq!(totals[0], "time_s,value_V");
    for (a, b) in csv.lines().zip(&totals).skip(1) {
        let prefix: Vec<&str> = a.split(',').take(2).collect();
        assert_eq!(prefix.join(","), *b);
    }
}

#[test]
fn manifest_and_summary_list_each_burst() {
    let dir = Scratch::new("manifest");
    let p = write(&dir, "mixed.toml", MIXED);
    let o = generate(
        &dir,
        &p,
        &["-o", "m.csv", "--samples", "20000", "--columns", "sources"],
    );
    let m = manifest(&dir.join("m.csv"));
    let bursts = m["extra"]["bursts"].as_array().unwrap();
    assert_eq!(bursts.len(), 2);
    assert_eq!(bursts[0]["name"], "input trap");
    assert_eq!(bursts[1]["name"], "burst 2");
    // Two levels, τ = 10 ms and 30 ms, ±1 µV: occupancy 0.25 / 0.75, variance
    // Δ²·p(1−p) = (2 µV)²·0.1875 (REFERENCES §4 check values scaled by Δ = 2 µV).
    let occ = bursts[1]["occupancy"].as_array().unwrap();
    assert!((occ[0].as_f64().unwrap() - 0.25).abs() < 1e-12);
    assert!((occ[1].as_f64().unwrap() - 0.75).abs() < 1e-12);
    let var = bursts[1]["variance"].as_f64().unwrap();
    assert!((var / (4e-12 * 0.1875) - 1.0).abs() < 1e-12, "{var:e}");
    let mean = bursts[1]["mean"].as_f64().unwrap();
    assert!((mean - 0.5e-6).abs() < 1e-18, "{mean:e}");
    let corner = bursts[1]["corner_hz"][0].as_f64().unwrap();
    assert!((corner - 21.22).abs() < 0.005, "{corner}");
    for b in bursts {
        let o = b["occupancy"].as_array().unwrap();
        let s: f64 = o.iter().map(|x| x.as_f64().unwrap()).sum();
        assert!((s - 1.0).abs() < 1e-12);
        assert_eq!(b["measured_occupancy"].as_array().unwrap().len(), o.len());
        assert_eq!(b["sampling"], "instant");
    }
    assert_eq!(
        m["extra"]["source_columns"],
        serde_json::json!(["gaussian_V", "input_trap_V", "burst_2_V"])
    );
    // Expected RMS is AC + DC: √(std² + mean²), with the mean the bursts' DC levels.
    let std = m["extra"]["expected_std"].as_f64().unwrap();
    let dc = m["extra"]["expected_mean"].as_f64().unwrap();
    let rms = m["expected_rms"].as_f64().unwrap();
    assert!((rms - (std * std + dc * dc).sqrt()).abs() <= 1e-12 * rms);
    assert!(dc > 0.5e-6, "{dc:e}");
    assert_eq!(m["profile"]["bursts"][0]["levels"][2], 7e-6);
    let summary = text(&o.stdout);
    for needle in [
        "burst           input trap (instant sampling): levels 0 V / 3 µV / 7 µV",
        "burst           burst 2",
        "occupancy 0.2500 / 0.7500",
        "corner 21.2207 Hz",
        "AC+DC",
    ] {
        assert!(
            summary.contains(needle),
            "{needle:?} missing from\n{summary}"
        );
    }
}

#[test]
fn a_burst_only_profile_writes_exact_levels() {
    let dir = Scratch::new("only");
    let p = write(
        &dir,
        "only.toml",
        "[[burst]]\nlevels = [\"-2 mV\", \"5 mV\"]\ndwell = [\"3 ms\", \"1 ms\"]\n",
    );
    for args in [
        &["--samples", "30000"][..],
        &["--samples", "30000", "--seed", "9"],
    ] {
        let mut a = vec!["-o", "b.f64"];
        a.extend_from_slice(args);
        generate(&dir, &p, &a);
        let x = read_f64(&dir.join("b.f64"));
        assert_eq!(x.len(), 30_000);
        assert!(x.iter().all(|v| *v == -2e-3 || *v == 5e-3));
        assert!(x.contains(&-2e-3) && x.contains(&5e-3));
    }
    // A WAV of a burst-only profile is scaled like any other (no quantisation note: there is
    // no Gaussian floor to compare it with).
    let o = generate(
        &dir,
        &p,
        &["-o", "b.wav", "--samples", "1000", "--sample-format", "i16"],
    );
    assert!(
        !text(&o.stdout).contains("quantisation"),
        "{}",
        text(&o.stdout)
    );
}
