//! The Allan deviation a one-sided density gives, and the closed forms of the inertial terms.
//!
//! For a rate y(t) with one-sided density G(f) (unit²/Hz), the Allan variance at averaging
//! time τ (s) is σ²(τ) = 2∫₀^∞ G(f)·sin⁴(πfτ)/(πfτ)² df (IEEE Std 952-1997 Annex C, written
//! there with the two-sided S = G/2 and a factor 4; W. J. Riley, NIST SP 1065, 2008).
//!
//! Samples y_i taken every τ₀ and averaged over m samples (τ = mτ₀), as the overlapping
//! estimator does, see the same density through the average's response: (πfτ)² becomes
//! m²·sin²(πfτ₀), so σ²(mτ₀) = 2∫₀^{fs/2} G(f)·sin⁴(πfτ)/(m sin(πfτ₀))² df (derived: the
//! difference of two adjacent m-sample means has power response
//! 4 sin⁴(πfmτ₀)/(m sin(πfτ₀))², and the Allan variance is half its variance). The two agree
//! when G ends well below 1/τ; for white noise up to fs/2 only the sampled form gives the
//! exact N²/τ of m-sample means at small m.

use std::f64::consts::{LN_2, PI};

use crate::model::density::{band_support, integrate_pieces, source_kinks, target_psd};
use crate::profile::Profile;

/// Allan deviation of the bias-instability plateau per unit B: √(2 ln 2/π) ≈ 0.6643
/// (IEEE Std 952-1997 Annex C).
pub fn bias_instability_factor() -> f64 {
    (2.0 * LN_2 / PI).sqrt()
}

/// The closed-form Allan deviation (unit) at τ s of the three inertial terms together,
/// N (unit·s^½), B (unit), K (unit·s^−½): √(N²/τ + (2 ln 2/π)B² + K²τ/3) (IEEE Std 952-1997
/// Annex C; the B plateau holds within the band, the K rise for τ ≪ 1/(2π·band.low)).
pub fn inertial_adev(n: f64, b: f64, k: f64, tau_s: f64) -> f64 {
    let f = bias_instability_factor();
    (n * n / tau_s + f * f * b * b + k * k * tau_s / 3.0).sqrt()
}

/// Half-periods of sin²(πfτ) integrated panel by panel before the oscillating factor is
/// replaced by its mean; the cut sits at a zero of sin(πfτ), where the first correction
/// (∝ sin 2πfτ) vanishes.
const RESOLVED_PERIODS: usize = 64;

/// The Allan deviation (unit) at `tau_s` of a rate with one-sided density `psd` (unit²/Hz),
/// zero outside `[lo, hi]` Hz, with `kinks` (Hz) as extra panel edges. With `tau0_s` the rate
/// is sampled every τ₀ and averaged over τ/τ₀ samples (see the module docs); without it the
/// continuous form is used.
///
/// Below f = 64/τ the integrand is integrated panel by panel between the zeros of
/// sin(πfτ); above, sin⁴ is replaced by its mean 3/8 (the cut at a zero makes the first
/// neglected term vanish; the rest is below 1e-4 of the total for the densities here).
pub fn adev_of_density(
    psd: &dyn Fn(f64) -> f64,
    lo: f64,
    hi: f64,
    kinks: &[f64],
    tau_s: f64,
    tau0_s: Option<f64>,
) -> f64 {
    let m = tau0_s.map(|t0| tau_s / t0);
    let denominator = |f: f64| match (m, tau0_s) {
        (Some(m), Some(t0)) => (m * (PI * f * t0).sin()).powi(2),
        _ => (PI * f * tau_s).powi(2),
    };
    let kernel = |f: f64| {
        let s = (PI * f * tau_s).sin();
        let s2 = s * s;
        psd(f) * s2 * s2 / denominator(f)
    };
    let cut = RESOLVED_PERIODS as f64 / tau_s;
    let breaks = |a: f64, b: f64, zeros: bool| {
        let mut v: Vec<f64> = vec![a, b];
        v.extend(kinks.iter().copied().filter(|&k| k > a && k < b));
        if zeros {
            let half = 0.5 / tau_s;
            let first = (a / half).ceil() as usize;
            let last = (b / half).floor() as usize;
            v.extend((first.max(1)..=last).map(|k| k as f64 * half));
        }
        v.retain(|&x| x >= a && x <= b);
        v.sort_by(f64::total_cmp);
        v.dedup();
        v
    };
    let mut var = 0.0;
    if lo < cut.min(hi) {
        var += integrate_pieces(&kernel, &breaks(lo, cut.min(hi), true));
    }
    let tail_lo = cut.max(lo);
    if tail_lo < hi {
        let mean = |f: f64| 0.375 * psd(f) / denominator(f);
        var += integrate_pieces(&mean, &breaks(tail_lo, hi, false));
    }
    (2.0 * var).sqrt()
}

/// The profile's Allan deviation (unit) at each of `taus_s`, from its target density
/// ([`target_psd`]: every Gaussian source, band-shaped), for samples every `tau0_s` s
/// averaged over τ/τ₀ samples, or the continuous form without `tau0_s`. Bursts and tones are
/// left out.
pub fn profile_adev(profile: &Profile, taus_s: &[f64], tau0_s: Option<f64>) -> Vec<f64> {
    let (lo, hi) = band_support(&profile.band, profile.sample_rate_hz);
    let mut kinks = vec![profile.band.low_hz, profile.band.high_hz];
    for s in &profile.sources {
        kinks.extend(source_kinks(s));
    }
    let psd = |f: f64| target_psd(profile, f);
    taus_s
        .iter()
        .map(|&tau| adev_of_density(&psd, lo, hi, &kinks, tau, tau0_s))
        .collect()
}

/// The averaging times (s) at which `budget` predicts the Allan deviation: the decades from
/// the first at or above two sample intervals to the last at or below 1/band.low, at most
/// 12 of them.
pub fn decade_taus(profile: &Profile) -> Vec<f64> {
    let first = (2.0 / profile.sample_rate_hz).log10().ceil() as i32;
    let last = (1.0 / profile.band.low_hz).log10().floor() as i32;
    (first..=last).take(12).map(|k| 10f64.powi(k)).collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::density::inertial_psd;
    use crate::profile::InertialTerm;

    fn rel(a: f64, b: f64) -> f64 {
        (a / b - 1.0).abs()
    }

    // The three closed forms of IEEE Std 952-1997 Annex C from their one-sided densities
    // (G = 2N², B²/(πf), K²/(2π²f²)), integrated numerically over a band wide enough that
    // its edges change σ by < 1e-3: for B the missing parts are ≈ x²/2 of ln 2 below
    // x = π·lo·τ and ≈ 3/(16 X²) above X = π·hi·τ; for K the low edge removes ≈ 3·lo·τ/π²...
    // bounded here by lo·τ ≤ 1e-6.
    #[test]
    fn continuous_form_gives_the_three_closed_forms() {
        let (lo, hi) = (1e-9, 1e5);
        let (n, b, k) = (3e-3, 8e-4, 1.4e-5);
        for tau in [0.1, 1.0, 10.0, 100.0, 1000.0] {
            let g = |t: InertialTerm, c: f64| move |f: f64| inertial_psd(t, c, f);
            let sn = adev_of_density(&g(InertialTerm::RandomWalk, n), lo, hi, &[], tau, None);
            assert!(rel(sn, n / tau.sqrt()) < 2e-3, "N at {tau}: {sn}");
            let sb = adev_of_density(&g(InertialTerm::BiasInstability, b), lo, hi, &[], tau, None);
            assert!(rel(sb, 0.6643 * b) < 1e-3, "B at {tau}: {sb}");
            let sk = adev_of_density(&g(InertialTerm::RateRandomWalk, k), lo, hi, &[], tau, None);
            assert!(rel(sk, k * (tau / 3.0).sqrt()) < 1e-3, "K at {tau}: {sk}");
        }
        assert!(rel(bias_instability_factor(), 0.664_282_4) < 1e-6);
    }

    // Sampled white noise of one-sided density e up to fs/2 has variance e²·fs/2 per sample;
    // the mean of m independent samples has variance e²·fs/(2m), and the Allan variance of
    // adjacent means is that variance: σ² = e²/(2τ) with τ = m/fs, exactly for every m.
    #[test]
    fn sampled_form_gives_white_noise_exactly_at_every_m() {
        let (e, fs) = (2e-3, 100.0);
        let psd = |_f: f64| e * e;
        for m in [1.0, 2.0, 3.0, 8.0, 100.0, 1000.0] {
            let tau = m / fs;
            let s = adev_of_density(&psd, 1e-12, fs / 2.0, &[], tau, Some(1.0 / fs));
            assert!(rel(s, e / (2.0 * tau).sqrt()) < 1e-6, "m = {m}: {s}");
        }
    }
}
