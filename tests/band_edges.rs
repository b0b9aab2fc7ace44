//! Band edges as declared: a brick-wall edge (order 0, low_order 0) holds the profile's density
//! up to the edge and falls at least 60 dB within 1/24 octave beyond it, at the low edge as
//! well as the high one; a declared low-edge order is a Butterworth high-pass; and the file
//! holds the band integral to within 0.5 % in RMS when both edges are brick walls.
//!
//! The designed density is exactly what the engine synthesises (its FIRs' responses, images
//! included; `engine_statistics.rs` checks generated samples against it with Welch χ² bands),
//! so these checks are deterministic: closed forms of the target, no sampling.

mod common;

use common::profile;
use noisewright::model::density::target_psd;
use noisewright::profile::Profile;
use noisewright::synth::design_profile;

/// The deviation of the designed density from the target in dB, worst over `n` log-spaced
/// points of [lo, hi] Hz (both ends included).
fn worst_in_band_db(p: &Profile, lo: f64, hi: f64, n: usize) -> (f64, f64) {
    let d = design_profile(p).unwrap();
    let mut worst = (0.0f64, lo);
    for i in 0..=n {
        let f = lo * (hi / lo).powf(i as f64 / n as f64);
        let dev = 10.0 * (d.density(f) / target_psd(p, f)).log10();
        if dev.abs() > worst.0.abs() {
            worst = (dev, f);
        }
    }
    worst
}

/// The highest designed density over `n` points of [lo, hi] Hz, in dB relative to `reference`.
fn highest_db(p: &Profile, lo: f64, hi: f64, n: usize, reference: f64) -> (f64, f64) {
    let d = design_profile(p).unwrap();
    let mut worst = (f64::NEG_INFINITY, lo);
    for i in 0..=n {
        let f = lo + (hi - lo) * i as f64 / n as f64;
        let level = 10.0 * (d.density(f) / reference).log10();
        if level > worst.0 {
            worst = (level, f);
        }
    }
    worst
}

/// Invented: a white 1 nV/√Hz channel sampled at 96 kHz with brick walls at 20 Hz and 30 kHz.
const WIDE: &str = r#"
    sample_rate = "96 kHz"
    [band]
    low = "20 Hz"
    high = "30 kHz"
    order = 0
    [[floor]]
    density = "1 nV/rtHz"
    "#;

#[test]
fn a_brick_wall_high_edge_is_exact_up_to_the_edge_and_60_db_down_within_a_24th_octave() {
    let p = profile(WIDE);
    let (dev, at) = worst_in_band_db(&p, 20.0, 30e3, 4000);
    assert!(dev.abs() < 0.1, "{dev} dB at {at} Hz");
    let edge = 30e3;
    let in_band = target_psd(&p, edge);
    let (level, at) = highest_db(&p, edge * 2f64.powf(1.0 / 24.0), 48e3, 20_000, in_band);
    assert!(level <= -60.0, "{level} dB at {at} Hz");
    // And the low edge of the same profile.
    let (level, at) = highest_db(&p, 0.0, 20.0 * 2f64.powf(-1.0 / 24.0), 2000, in_band);
    assert!(level <= -60.0, "{level} dB at {at} Hz");
}

#[test]
fn with_both_edges_brick_walls_the_file_holds_the_band_integral_within_half_a_percent() {
    let p = profile(WIDE);
    // Exact math: a white density d² over [20 Hz, 30 kHz] integrates to d²·29 980 Hz.
    let band = (1e-9f64 * 1e-9 * (30e3 - 20.0)).sqrt();
    let file = design_profile(&p).unwrap().variance().sqrt();
    let rel = file / band - 1.0;
    assert!(
        (0.0..0.005).contains(&rel),
        "file RMS / band RMS − 1 = {rel}"
    );
}

/// Invented: a sensor's 1/f-dominated 0.1 Hz .. 10 Hz band at 1 kHz, where the low edge falls
/// to the engine's deepest level and the high edge to a middle one.
const SLOW: &str = r#"
    sample_rate = "1 kHz"
    [band]
    low = "0.1 Hz"
    high = "10 Hz"
    order = 0
    [[floor]]
    density = "20 nV/rtHz"
    corner = "30 Hz"
    "#;

#[test]
fn a_brick_wall_low_edge_is_exact_too_at_the_deepest_level() {
    let p = profile(SLOW);
    let (dev, at) = worst_in_band_db(&p, 0.1, 10.0, 4000);
    assert!(dev.abs() < 0.1, "{dev} dB at {at} Hz");
    let low_level = target_psd(&p, 0.1);
    let below = 0.1 * 2f64.powf(-1.0 / 24.0);
    let (level, at) = highest_db(&p, 1e-4, below, 4000, low_level);
    assert!(level <= -60.0, "{level} dB below the low edge at {at} Hz");
    let high_level = target_psd(&p, 10.0);
    let above = 10.0 * 2f64.powf(1.0 / 24.0);
    let (level, at) = highest_db(&p, above, 500.0, 40_000, high_level);
    assert!(level <= -60.0, "{level} dB above the high edge at {at} Hz");
}

#[test]
fn a_declared_low_edge_order_is_a_butterworth_high_pass() {
    for order in [1u32, 2, 4] {
        let mut p = profile(SLOW);
        p.band.low_order = order;
        // Exact math: 1/(1 + (low/f)^(2n)) is 1/2 at low (−3.01 dB) and 1/(1 + 4^n) an
        // octave below; the design follows it within 0.1 dB down to where it is 40 dB down.
        let lowest = 0.1 * 0.01f64.powf(1.0 / order as f64);
        let (dev, at) = worst_in_band_db(&p, lowest, 10.0, 4000);
        assert!(dev.abs() < 0.1, "low_order {order}: {dev} dB at {at} Hz");
        // At the edge itself the sources' density is halved (−3.01 dB); the high edge is
        // 40 octaves away, so its factor is 1.
        let sources = 20e-9f64.powi(2) * (1.0 + 30.0 / 0.1);
        let at_edge = design_profile(&p).unwrap().density(0.1);
        let dev = 10.0 * (at_edge / (0.5 * sources)).log10();
        assert!(dev.abs() < 0.01, "low_order {order}: {dev} dB at the edge");
    }
}

#[test]
fn low_order_is_read_from_the_profile_and_checked() {
    let p = profile(&SLOW.replace("order = 0", "order = 0\nlow_order = 3"));
    assert_eq!(p.band.low_order, 3);
    let err = noisewright::profile::parse_profile(
        &SLOW.replace("order = 0", "order = 0\nlow_order = 9"),
        "slow.toml",
    )
    .unwrap_err()
    .to_string();
    assert!(
        err.contains("slow.toml")
            && err.contains("band.low_order")
            && err.contains("0 (brick wall) to 8"),
        "{err}"
    );
}

/// Every bundled profile's designed density is within 0.01 dB of its target over its whole
/// band, edges included (the design holds each level's share to 0.005 dB; two levels share
/// any frequency).
#[test]
fn every_bundled_profile_is_designed_within_a_hundredth_of_a_db_in_band() {
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("profiles");
    let mut seen = 0;
    for entry in std::fs::read_dir(&dir).unwrap() {
        let path = entry.unwrap().path();
        if path.extension().and_then(|e| e.to_str()) != Some("toml") {
            continue;
        }
        let p = Profile::from_path(&path).unwrap();
        let high = p.band.high_hz.min(p.sample_rate_hz / 2.0);
        let (dev, at) = worst_in_band_db(&p, p.band.low_hz, high, 2000);
        assert!(dev.abs() < 0.01, "{}: {dev} dB at {at} Hz", path.display());
        seen += 1;
    }
    assert!(seen >= 12, "{seen} bundled profiles");
}
