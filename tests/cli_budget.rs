//! CLI tests of `noisewright budget`: the text report, the JSON keys and the SVG chart. Bad
//! input is in tests/error_classes.rs.

mod common;

use std::path::Path;

use common::{Scratch, run_ok, text};

fn bundled(name: &str) -> String {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("profiles")
        .join(name)
        .display()
        .to_string()
}

/// The worked stage of REFERENCES §7 in a white 10 Hz – 10.01 kHz brick-wall band.
const WORKED: &str = r#"name = "worked"
sample_rate = "48 kHz"
[band]
low = "10 Hz"
high = "10010 Hz"
[[amplifier]]
name = "s"
topology = "non-inverting"
voltage_density = "5 nV/rtHz"
current_density = "1 pA/rtHz"
source_resistance = "1 kOhm"
feedback_resistance = "9 kOhm"
gain_resistance = "1 kOhm"
temperature = "25 C"
"#;

#[test]
fn text_report_shows_every_part_the_total_and_the_notes() {
    let dir = Scratch::new("text");
    let o = run_ok(&["budget", &bundled("line-receiver.toml")], &dir);
    let out = text(&o.stdout);
    for needle in [
        "band 10 Hz .. 40 kHz (Butterworth order 2 at 40 kHz, ENBW 1.1107",
        "receiver: voltage noise",
        "receiver: i_n+ \u{d7} Rp (6.8 k\u{3a9})",
        "receiver: Rs thermal (600 \u{3a9})",
        "total",
        "peak-to-peak",
        "RMS per decade",
        "above 40 kHz (roll-off)",
        "density (V/\u{221a}Hz)",
        "white floor",
    ] {
        assert!(out.contains(needle), "no {needle:?} in\n{out}");
    }
    // REFERENCES §7 worked stage: 10 kHz of 76.22 nV/√Hz is 7.622 µV RMS; resistors
    // (40.58, 12.17, 36.52) outweigh the amplifier (50, 10, 9): the note fires.
    let dir = Scratch::new("worked");
    let p = dir.join("w.toml");
    std::fs::write(&p, WORKED).unwrap();
    let o = run_ok(&["budget", p.to_str().unwrap()], &dir);
    let out = text(&o.stdout);
    assert!(out.contains("  total"), "{out}");
    assert!(out.contains("7.62199 \u{b5}V"), "{out}");
    assert!(out.contains("76.2199 nV/\u{221a}Hz"), "{out}");
    assert!(out.contains("note: resistor thermal noise"), "{out}");
}

#[test]
fn json_has_the_stable_keys_for_every_band() {
    let dir = Scratch::new("json");
    let p = dir.join("w.toml");
    std::fs::write(&p, WORKED).unwrap();
    let o = run_ok(
        &[
            "budget",
            p.to_str().unwrap(),
            "--band",
            "10Hz..10010Hz",
            "--band",
            "0.1 Hz .. 10 Hz",
            "--json",
        ],
        &dir,
    );
    let j: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let bands = j["bands"].as_array().unwrap();
    assert_eq!(bands.len(), 2);
    for b in bands {
        for key in ["low_hz", "high_hz", "rms", "p2p_6sigma", "p2p_6_6sigma"] {
            assert!(b[key].is_number(), "{key} in {b}");
        }
        let sources = b["sources"].as_array().unwrap();
        assert_eq!(sources.len(), 6);
        for s in sources {
            assert!(s["name"].is_string() && s["rms"].is_number() && s["share"].is_number());
        }
        let shares: f64 = sources.iter().map(|s| s["share"].as_f64().unwrap()).sum();
        assert!((shares - 1.0).abs() < 1e-9);
    }
    let b = &bands[0];
    assert_eq!(
        (b["low_hz"].as_f64(), b["high_hz"].as_f64()),
        (Some(10.0), Some(10010.0))
    );
    // REFERENCES §7: 76.22 nV/√Hz over 10 kHz → 7.622 µV; 6σ and 6.6σ of it (§8).
    let rms = b["rms"].as_f64().unwrap();
    assert!((rms * 1e6 - 7.622).abs() <= 0.0005, "{rms}");
    assert_eq!(b["p2p_6sigma"].as_f64().unwrap(), 6.0 * rms);
    assert_eq!(b["p2p_6_6sigma"].as_f64().unwrap(), 6.6 * rms);
    assert_eq!(b["sources"][0]["name"], "s: voltage noise");
    // 50² of 76.22² nV²/Hz is the voltage noise's share (REFERENCES §7 numbers).
    let share = b["sources"][0]["share"].as_f64().unwrap();
    assert!(
        (share - (50.0f64 / 76.2199).powi(2)).abs() < 1e-5,
        "{share}"
    );
    assert_eq!(bands[1]["low_hz"].as_f64(), Some(0.1));
}

#[test]
fn plot_writes_an_svg_with_every_source_and_the_band_edges() {
    let dir = Scratch::new("plot");
    let svg = dir.join("budget.svg");
    run_ok(
        &[
            "budget",
            &bundled("line-receiver.toml"),
            "--plot",
            svg.to_str().unwrap(),
        ],
        &dir,
    );
    let s = std::fs::read_to_string(&svg).unwrap();
    assert!(s.starts_with("<svg"));
    for needle in [
        ">receiver: voltage noise<",
        ">receiver: Rf thermal (20 k\u{3a9})<",
        ">total<",
        ">band edges<",
        ">integrated noise<",
    ] {
        assert!(s.contains(needle), "no {needle:?} in the chart");
    }
    // Both edges drawn in both figures (layout is checked in tests/figures.rs).
    assert_eq!(s.matches("data-name=\"band edges\"").count(), 4);
    let left: Vec<_> = std::fs::read_dir(&dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    assert_eq!(left, ["budget.svg"]);
}
