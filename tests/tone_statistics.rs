//! Statistics of the deterministic parts (tones and offset) on top of the noise, through the
//! library's pull API: fitted amplitude and phase, SNR, the offset as the mean, and starts at
//! a later sample index.

mod common;

use noisewright::analysis::tones::ToneFit;
use noisewright::model::density;
use noisewright::model::tone::{enob, snr_db};
use noisewright::profile::parse_profile;
use noisewright::synth::Generator;

const SEED: u64 = 1241;

/// A nearly white profile (floor to fs/2, brick wall) so σ_A ≈ σ·√(2/N) holds, with a tone
/// of 2 µV peak at 30 deg, a second at 100 µV RMS and an offset of 1.65 V.
const PROFILE: &str = r#"sample_rate = "48 kHz"
offset = "1.65 V"
[band]
low = "1 Hz"
high = "24 kHz"
[[floor]]
density = "10 nV/rtHz"
[[tone]]
name = "small"
frequency = "1234.5 Hz"
peak = "2 uV"
phase = "30 deg"
[[tone]]
name = "big"
frequency = "7 kHz"
rms = "100 uV"
"#;

const N: usize = 1 << 20;

/// The generator of [`PROFILE`] at `SEED` and its first `N` samples.
fn generated() -> (Generator, Vec<f64>) {
    let p = parse_profile(PROFILE, "tones.toml").unwrap();
    let mut g = Generator::new(&p, SEED).unwrap();
    let mut x = vec![0.0; N];
    g.fill(&mut x);
    (g, x)
}

/// Least-squares sine fit at the known frequencies (IEEE Std 1057 / 1241 sine fit): for white
/// noise of variance σ² each amplitude has σ_A = σ·√(2/N) and each phase σ_φ = σ_A/A (common
/// least-squares result [from memory]); 5σ bounds fail with probability 5.7e−7 each
/// (Gaussian tail, REFERENCES §8).
#[test]
fn fitted_amplitudes_and_phases_match_the_profile() {
    let (g, x) = generated();
    let sigma = g.noise_variance().sqrt();
    let sigma_a = sigma * (2.0 / N as f64).sqrt();
    let mut fit = ToneFit::new(&[1234.5, 7000.0], 48e3);
    fit.push(&x);
    let (t, dc) = fit.finish().unwrap();
    for (i, (want, phase)) in [(2e-6, 30f64.to_radians()), (100e-6 * 2f64.sqrt(), 0.0)]
        .iter()
        .enumerate()
    {
        assert!(
            (t[i].peak - want).abs() < 5.0 * sigma_a,
            "tone {i}: peak {} vs {want} ± {} (seed {SEED})",
            t[i].peak,
            5.0 * sigma_a
        );
        let dphi = (t[i].phase_rad - phase + std::f64::consts::PI)
            .rem_euclid(std::f64::consts::TAU)
            - std::f64::consts::PI;
        assert!(
            dphi.abs() < 5.0 * sigma_a / want,
            "tone {i}: phase off by {dphi} (seed {SEED})"
        );
    }
    // The fitted DC is the mean: offset within the bound of the next test.
    assert!((dc - 1.65).abs() < 1e-6, "dc {dc} (seed {SEED})");
}

/// The expected SNR is the tone power over the designed in-band noise power; for a white floor
/// e over a brick-wall band that is A²/2 / (e²·(f_H − f_L)) (REFERENCES §6, white case) — the
/// designed density falls off below band.low, so the design integral is a little less. The
/// measured SNR (fitted power over the residual variance) agrees within the χ² bound on the
/// variance (REFERENCES §8, n ≈ N for white noise) and the amplitude's 5σ_A.
#[test]
fn snr_and_enob_match_the_design_and_the_measurement() {
    let (g, x) = generated();
    let snr = g.tone_snr(1.0, 24e3, 0.0);
    let closed = 10.0 * ((2e-6f64).powi(2) / 2.0 / (1e-16 * (24e3 - 1.0))).log10();
    assert!((snr[0].0 - closed).abs() < 0.01, "{} vs {closed}", snr[0].0);
    assert!((snr[1].0 - (closed + 20.0 * (100.0 * 2f64.sqrt() / 2.0).log10())).abs() < 0.01);
    assert!((snr[0].1 - (snr[0].0 - 1.76) / 6.02).abs() < 1e-12);
    let mut fit = ToneFit::new(&[1234.5, 7000.0], 48e3);
    fit.push(&x);
    let (t, dc) = fit.finish().unwrap();
    let residual: f64 = x
        .iter()
        .enumerate()
        .map(|(n, &v)| {
            let tones: f64 = [(1234.5, t[0]), (7000.0, t[1])]
                .iter()
                .map(|(f, ft)| {
                    ft.peak * (std::f64::consts::TAU * f * n as f64 / 48e3 + ft.phase_rad).sin()
                })
                .sum();
            (v - dc - tones).powi(2)
        })
        .sum::<f64>()
        / N as f64;
    let (lo, hi) = common::variance_bounds(N as f64, 1e-6);
    let noise = g.band_noise_power(1.0, 24e3);
    let ratio = residual / g.design().variance();
    assert!(
        ratio > lo && ratio < hi,
        "residual/design {ratio} not in [{lo}, {hi}] (seed {SEED})"
    );
    let measured = snr_db(0.5 * t[1].peak * t[1].peak, residual, 0.0);
    let sigma_a = g.noise_variance().sqrt() * (2.0 / N as f64).sqrt();
    let tol_db = 10.0 * (hi / lo).log10() + 20.0 * (1.0 + 5.0 * sigma_a / t[1].peak).log10();
    assert!(
        (measured - snr_db(g.tones()[1].power(), noise, 0.0)).abs() < tol_db,
        "SNR {measured} dB vs designed {} ± {tol_db} (seed {SEED})",
        snr[1].0
    );
    assert!((enob(measured) - (measured - 1.76) / 6.02).abs() < 1e-12);
}

/// The mean of N samples is the offset within 5 standard deviations of the sample mean, whose
/// variance is ∫ S(f)·F_N(f) df with the Fejér kernel F_N(f) = sin²(πfN/fs)/(N² sin²(πf/fs))
/// (D. B. Percival, A. T. Walden 1993, ch. 6 [from memory]); here bounded by the kernel's
/// envelope min(1, 1/(N² sin²(πf/fs))), which near DC is S(0)·fs/(2N) for a density flat at DC.
#[test]
fn the_mean_is_the_offset() {
    let (g, x) = generated();
    let mean = x.iter().sum::<f64>() / N as f64;
    let nf = N as f64;
    let env = |f: f64| {
        let s = (std::f64::consts::PI * f / 48e3).sin();
        (1.0 / (nf * nf * s * s)).min(1.0)
    };
    let var_mean = density::integrate(&|f| g.density(f) * env(f), 1e-3, 24e3);
    assert!(var_mean > 0.0);
    // The two tones average to at most 2A/(N·2 sin(πf/fs)) over N samples (geometric sum).
    let tone_bias: f64 = g
        .tones()
        .iter()
        .map(|t| t.peak / (nf * (std::f64::consts::PI * t.frequency_hz / 48e3).sin()))
        .sum();
    assert!(
        (mean - 1.65).abs() < 5.0 * var_mean.sqrt() + tone_bias,
        "mean {mean} vs 1.65 ± {} (seed {SEED})",
        5.0 * var_mean.sqrt() + tone_bias
    );
    assert_eq!(g.mean(), 1.65);
    assert!(
        (g.expected_rms().powi(2) - (g.noise_variance() + 2e-12 + 1e-8 + 1.65 * 1.65)).abs()
            < 1e-14
    );
}

/// The parts at sample 0: each tone is A·sin φ there, and a generator moved to n0 gives the
/// same tone and offset parts a run from 0 gives from n0 on, byte for byte.
#[test]
fn tone_parts_start_at_their_phase_and_follow_the_absolute_index() {
    let p = parse_profile(PROFILE, "tones.toml").unwrap();
    let mut a = Generator::new(&p, SEED).unwrap();
    let mut parts = vec![Vec::new(); a.part_count()];
    assert_eq!(parts.len(), 4); // gaussian, small, big, offset
    let mut total = vec![0.0; 5000];
    a.fill_sources(&mut total, &mut parts);
    assert!((parts[1][0] - 2e-6 * 0.5).abs() < 1e-21, "{}", parts[1][0]);
    assert_eq!(parts[2][0], 0.0);
    assert!(parts[3].iter().all(|&v| v == 1.65));
    for n in 0..5000 {
        let sum = ((parts[0][n] + parts[1][n]) + parts[2][n]) + parts[3][n];
        assert_eq!(total[n].to_bits(), sum.to_bits());
    }
    let mut b = Generator::new(&p, SEED + 1).unwrap();
    b.set_deterministic_start(3210);
    let mut parts_b = vec![Vec::new(); b.part_count()];
    let mut total_b = vec![0.0; 1790];
    b.fill_sources(&mut total_b, &mut parts_b);
    for k in 1..4 {
        assert_eq!(parts_b[k][..], parts[k][3210..], "part {k}");
    }
    assert_eq!(b.deterministic_index(), 5000);
}
