//! Statistical checks of correlated channels ([`ChannelGenerator`]): each channel's density,
//! each pair's correlation coefficient and coherence, and channel 0 against the mono engine.
//!
//! Tolerances come from the sampling distributions named beside each check, at a false-failure
//! probability of 1e−6 or less per test; seeds are fixed and printed on failure.

mod common;

use common::{Scratch, check_bands_against, profile, read_f64, write_f64};
use noisewright::analysis::compare::expected_band_psd;
use noisewright::analysis::welch::Welch;
use noisewright::synth::{ChannelGenerator, Generator};

/// z for a two-sided normal tail probability of 1e−7 (|z| > 5.327 has p = 1e−7).
const Z_1E7: f64 = 5.327;

/// An effectively white profile: a flat floor from 0.5 Hz to fs/2 with a brick wall, so
/// samples a lag apart are correlated by less than 1e−4 (the band misses 1e−5 of the
/// spectrum) and Fisher's z holds with N_eff = N.
const WHITE3: &str = r#"
sample_rate = "48 kHz"
channels = 3
correlation = [[1, 0.6, -0.3], [0.6, 1, 0.1], [-0.3, 0.1, 1]]
[band]
low = "0.5 Hz"
high = "24 kHz"
order = 0
[[floor]]
density = "10 nV/rtHz"
"#;

fn frames(g: &mut ChannelGenerator, n: usize) -> Vec<f64> {
    let mut x = vec![0.0; n * g.channels()];
    for chunk in x.chunks_mut(3 << 14) {
        let whole = chunk.len() / g.channels() * g.channels();
        g.fill_frames(&mut chunk[..whole]);
    }
    x
}

fn channel(x: &[f64], ch: usize, k: usize) -> Vec<f64> {
    x.iter().skip(k).step_by(ch).copied().collect()
}

fn pearson(a: &[f64], b: &[f64]) -> f64 {
    let n = a.len() as f64;
    let (ma, mb) = (a.iter().sum::<f64>() / n, b.iter().sum::<f64>() / n);
    let (mut sab, mut saa, mut sbb) = (0.0, 0.0, 0.0);
    for (x, y) in a.iter().zip(b) {
        sab += (x - ma) * (y - mb);
        saa += (x - ma) * (x - ma);
        sbb += (y - mb) * (y - mb);
    }
    sab / (saa * sbb).sqrt()
}

/// Each pair's sample correlation r against its coefficient ρ with Fisher's z-transform:
/// atanh(r) ≈ N(atanh ρ, 1/(N − 3)) for Gaussian pairs (R. A. Fisher, *Metron* 1, 3–32, 1921;
/// from memory). Bound: 5.327 SD, p = 1e−7 per pair; a coefficient 0.02 away must fail.
#[test]
fn each_pair_has_its_correlation_coefficient_within_fishers_bound() {
    const SEED: u64 = 21;
    let p = profile(WHITE3);
    let mut g = ChannelGenerator::new(&p, SEED).unwrap();
    let n = 1usize << 18;
    let x = frames(&mut g, n);
    let cols: Vec<Vec<f64>> = (0..3).map(|k| channel(&x, 3, k)).collect();
    let sd = 1.0 / (n as f64 - 3.0).sqrt();
    for i in 0..3 {
        for j in i + 1..3 {
            let r = pearson(&cols[i], &cols[j]);
            let rho = p.correlation[i][j];
            let z = (r.atanh() - rho.atanh()) / sd;
            assert!(
                z.abs() < Z_1E7,
                "pair ({i},{j}): r = {r:.5}, ρ = {rho}, z = {z:.2} (seed {SEED})"
            );
            let z_off = (r.atanh() - (rho + 0.02).atanh()) / sd;
            assert!(z_off.abs() > Z_1E7, "the bound must reject ρ + 0.02");
        }
    }
}

/// Every channel follows the profile's density: Welch χ² bands against the design (P. D.
/// Welch 1967; REFERENCES §3; Bonferroni over bands and channels, §11), on a coloured (1/f)
/// profile, where mixing must keep the shape.
#[test]
fn every_channel_follows_the_profile_density() {
    const SEED: u64 = 5;
    let p = profile(
        r#"
        sample_rate = "20 kHz"
        channels = 2
        correlation = 0.8
        [band]
        low = "1 Hz"
        high = "8 kHz"
        order = 2
        [[floor]]
        density = "20 nV/rtHz"
        corner = "200 Hz"
        "#,
    );
    let mut g = ChannelGenerator::new(&p, SEED).unwrap();
    let seg = 1usize << 14;
    let segments = 64;
    let n = seg / 2 * (segments + 1);
    let x = frames(&mut g, n);
    for k in 0..2 {
        let mut welch = Welch::new(seg, seg / 2, p.sample_rate_hz);
        welch.push(&channel(&x, 2, k));
        let spec = welch.finish();
        let bands = spec.log_bands(3, 10);
        let design = g.generator().design();
        let expected = |lo: f64, _hi: f64| {
            let b = bands.iter().find(|b| b.f_lo_hz == lo).unwrap();
            expected_band_psd(&|f| design.density(f), &spec, b.bins.clone())
        };
        check_bands_against(&bands, &expected, 0.5e-6, SEED)
            .unwrap_or_else(|e| panic!("channel {k}: {e}"));
        let off = |lo: f64, hi: f64| expected(lo, hi) * 10f64.powf(0.1);
        assert!(check_bands_against(&bands, &off, 0.5e-6, SEED).is_err());
    }
}

/// Channel 0 is the mono output for the same seed, bit for bit, bursts included (so the
/// pinned mono hash in engine_statistics.rs also pins channel 0).
#[test]
fn channel_zero_equals_the_mono_output() {
    let text = r#"
        sample_rate = "10 kHz"
        channels = 4
        correlation = 0.4
        [band]
        low = "2 Hz"
        high = "4 kHz"
        [[floor]]
        density = "5 nV/rtHz"
        [[burst]]
        levels = ["0 V", "2 uV"]
        dwell = ["5 ms", "2 ms"]
        "#;
    let p = profile(text);
    let mut multi = ChannelGenerator::new(&p, 7).unwrap();
    let mut mono = Generator::new(&p, 7).unwrap();
    let x = frames(&mut multi, 50_000);
    let mut y = vec![0.0; 50_000];
    mono.fill(&mut y);
    assert_eq!(channel(&x, 4, 0), y);
    assert_ne!(channel(&x, 4, 1), y);
}

/// Magnitude-squared coherence of each pair against ρ² at every frequency, cross-checked with
/// scipy.signal.coherence. Bound: over a band of M bins averaged from K = 2·segments − 1
/// Hann segments at 50 % overlap, the estimate's SD is about √2·γ(1 − γ²)/√(K_eff·M/2)
/// (G. C. Carter, C. H. Knapp, A. H. Nuttall, *IEEE Trans. Audio Electroacoust.* 21, 1973;
/// from memory; half the bins counted as independent for the Hann window's overlap) and its
/// bias (1 − γ²)²/K_eff; K_eff = segments (overlap counted as no gain). Checked at 6 SD plus
/// the bias, per decade band.
#[test]
fn coherence_of_each_pair_is_the_coefficient_squared_and_matches_scipy() {
    const SEED: u64 = 33;
    let p = profile(WHITE3);
    let mut g = ChannelGenerator::new(&p, SEED).unwrap();
    let seg = 1usize << 10;
    let segments = 256;
    let n = seg / 2 * (segments + 1);
    let x = frames(&mut g, n);
    let dir = Scratch::new("white3");
    let inp = dir.path("x.f64");
    let out = dir.path("c.f64");
    write_f64(&inp, &x);
    let args = [
        inp.clone().into_os_string(),
        out.clone().into_os_string(),
        p.sample_rate_hz.to_string().into(),
        "3".into(),
        seg.to_string().into(),
    ];
    let Some(stdout) = common::python_script("coherence_ref.py", &args, &format!("seed {SEED}"))
    else {
        return;
    };
    println!("{}", stdout.trim());
    let v = read_f64(&out);
    let bins = seg / 2 + 1;
    assert_eq!(v.len(), 4 * bins);
    let freqs = &v[..bins];
    let mut pair = 0;
    for i in 0..3 {
        for j in i + 1..3 {
            pair += 1;
            let c = &v[pair * bins..(pair + 1) * bins];
            let g2 = p.correlation[i][j].powi(2);
            // Decade bands from 100 Hz up, below the brick wall.
            for (lo, hi) in [(100.0, 1e3), (1e3, 1e4), (1e4, 2e4)] {
                let idx: Vec<usize> = (0..bins)
                    .filter(|&k| freqs[k] >= lo && freqs[k] < hi)
                    .collect();
                let m = idx.len() as f64;
                let mean = idx.iter().map(|&k| c[k]).sum::<f64>() / m;
                let k_eff = segments as f64;
                let sd = (2.0f64).sqrt() * g2.sqrt() * (1.0 - g2) / (k_eff * m / 2.0).sqrt();
                let bias = (1.0 - g2).powi(2) / k_eff;
                let tol = 6.0 * sd.max(1.0 / k_eff / (m / 2.0).sqrt()) + bias;
                assert!(
                    (mean - g2).abs() < tol,
                    "pair ({i},{j}) {lo}..{hi} Hz: coherence {mean:.4} vs ρ² = {g2:.4} ± {tol:.4} \
                     (seed {SEED})"
                );
            }
        }
    }
}
