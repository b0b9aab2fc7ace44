//! The Allan deviation of generated inertial noise against the closed forms of IEEE Std
//! 952-1997 Annex C (also IEEE Std 1554-2005), each τ within its interval from the equivalent
//! degrees of freedom (W. J. Riley, NIST SP 1065, 2008) at a false-failure probability of
//! 1e-6 per test split over the τ (Bonferroni); and the fit of N, B and K within its stated
//! uncertainty. Seeds are fixed and printed on failure.

mod common;

use noisewright::analysis::allan::{AllanDeviation, AllanStream, octave_ms};
use noisewright::model::allan::bias_instability_factor;
use noisewright::{Generator, Profile};

/// False-failure probability of one test, split over its averaging times.
const P_TEST: f64 = 1e-6;

/// `samples` of `profile` drawn with `seed`, measured at octave τ.
fn measure(profile: &Profile, seed: u64, samples: usize) -> AllanDeviation {
    let mut g = Generator::new(profile, seed).unwrap();
    let mut s = AllanStream::new(&octave_ms(samples as u64));
    let mut block = vec![0.0; 1 << 16];
    let mut left = samples;
    while left > 0 {
        let n = left.min(block.len());
        g.fill(&mut block[..n]);
        s.push(&block[..n]);
        left -= n;
    }
    s.finish(1.0 / profile.sample_rate_hz)
}

/// Asserts the closed form `law(τ)` within each interval for the τ that `keep` selects.
fn within(
    dev: &AllanDeviation,
    keep: impl Fn(f64) -> bool,
    law: impl Fn(f64) -> f64,
    what: &str,
    seed: u64,
) -> usize {
    let idx: Vec<usize> = (0..dev.tau_s.len())
        .filter(|&i| keep(dev.tau_s[i]))
        .collect();
    let confidence = 1.0 - P_TEST / idx.len() as f64;
    for &i in &idx {
        let (lo, hi) = dev.interval(i, confidence);
        let want = law(dev.tau_s[i]);
        assert!(
            lo <= want && want <= hi,
            "{what}, seed {seed}: at τ = {} s σ = {:.5e}, interval [{lo:.5e}, {hi:.5e}] \
             (edf {:.1}) misses the closed form {want:.5e}",
            dev.tau_s[i],
            dev.adev[i],
            dev.edf[i]
        );
    }
    idx.len()
}

fn gyro(terms: &str) -> Profile {
    common::profile(&format!(
        "unit = \"deg/s\"\nsample_rate = \"10 Hz\"\n[band]\nlow = \"100 nHz\"\nhigh = \"5 Hz\"\n\
         [[inertial]]\n{terms}\n"
    ))
}

// A white rate of one-sided density e (unit/√Hz) over 0 … fs/2: samples have variance
// e²·fs/2 and are independent, so the mean of m of them has variance e²·fs/(2m) = e²/(2τ)
// with τ = m/fs; the Allan variance, half the mean square difference of two adjacent
// independent means, is that same variance: σ(τ) = e/√(2τ). With G = e² = 2N² this is N/√τ
// (IEEE Std 952-1997 Annex C).
#[test]
fn white_rate_follows_e_over_root_two_tau() {
    const SEED: u64 = 1801;
    let n = 0.2 / 60.0; // 0.2 °/√h in (°/s)/√Hz
    let p = gyro("random_walk = \"0.2 deg/rth\"");
    let dev = measure(&p, SEED, 2_000_000);
    let e = (2.0f64).sqrt() * n;
    let checked = within(&dev, |_| true, |t| e / (2.0 * t).sqrt(), "white", SEED);
    assert!(checked >= 18, "{checked} averaging times");
}

// Bias instability: G = B²/(πf) gives σ² = (2B²/π)∫ sin⁴x/x³ dx = (2 ln 2/π)B² when the band
// spans x = πfτ from ≪ 1 to ≫ 1 (IEEE Std 952-1997 Annex C). Kept: τ ≥ 1 s (X = π·5 Hz·τ ≥
// 15.7: the missing tail ≈ 3/(16X²) of ln 2, < 0.2 %) and τ ≤ 10 ks (x = π·100 nHz·τ ≤
// 3.1e-3: the missing start ≈ x²/2, < 1e-5).
#[test]
fn bias_instability_flattens_at_0_664_b() {
    const SEED: u64 = 1802;
    let b = 3.0 / 3600.0; // 3 °/h in °/s
    let p = gyro("bias_instability = \"3 deg/h\"");
    let dev = measure(&p, SEED, 2_000_000);
    let plateau = b * bias_instability_factor();
    assert!((bias_instability_factor() - 0.6643).abs() < 1e-4);
    let checked = within(
        &dev,
        |t| (1.0..=1e4).contains(&t),
        |_| plateau,
        "flicker",
        SEED,
    );
    assert!(checked >= 12, "{checked} averaging times");
}

// Rate random walk: G = K²/(2π²f²) gives σ² = (K²τ/π)∫ sin⁴x/x⁴ dx = K²τ/3 (IEEE Std 952-1997
// Annex C, ∫₀^∞ sin⁴x/x⁴ dx = π/3). Kept: τ ≥ 1 s (the sampled average differs from the
// continuous one by O(1/m²)) and τ ≤ 10 ks (the band's low edge at 100 nHz removes about
// 3·f_L·τ/π² … < 1e-3 of σ² there).
#[test]
fn rate_random_walk_rises_as_k_root_tau_over_three() {
    const SEED: u64 = 1803;
    let k = 3.0 / 216_000.0; // 3 °/h/√h in °/s^1.5
    let p = gyro("rate_random_walk = \"3 deg/h/rth\"");
    let dev = measure(&p, SEED, 2_000_000);
    let checked = within(
        &dev,
        |t| (1.0..=1e4).contains(&t),
        |t| k * (t / 3.0).sqrt(),
        "random walk",
        SEED,
    );
    assert!(checked >= 12, "{checked} averaging times");
}

// The fit of σ² = N²/τ + (2 ln 2/π)B² + K²τ/3 to the measured points recovers the terms the
// profile was written with, each within 5.1 of its stated standard uncertainties: a normal
// deviate exceeds ±5.1 with probability 3.4e-7, so 1e-6 split over the three terms (z for a
// two-sided 1e-6 is 4.89, references §11).
#[test]
fn fit_recovers_n_b_and_k_within_their_uncertainty() {
    const SEED: u64 = 1804;
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/profiles/gyro-axis.toml"
    ))
    .unwrap();
    let p = Profile::from_toml_str(&text, "gyro-axis.toml").unwrap();
    let dev = measure(&p, SEED, 2_000_000);
    let fit = dev.fit();
    let want = [0.2 / 60.0, 3.0 / 3600.0, 3.0 / 216_000.0];
    let got = [fit.random_walk, fit.bias_instability, fit.rate_random_walk];
    for k in 0..3 {
        let u = fit.uncertainty[k].expect("every term is present");
        assert!(
            (got[k] - want[k]).abs() <= 5.1 * u,
            "seed {SEED}: term {k} fitted {:.5e} ± {u:.3e}, written {:.5e} ({fit:?})",
            got[k],
            want[k]
        );
        // The stated uncertainty is informative: a fifth of the value or less.
        assert!(
            u < 0.2 * want[k],
            "seed {SEED}: term {k} ± {u:.3e} ({fit:?})"
        );
    }
}
