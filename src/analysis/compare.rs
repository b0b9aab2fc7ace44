//! A measured density against a designed one, band by band, with χ² intervals and an
//! engineering tolerance.
//!
//! For each band the ratio r = measured/expected of mean densities (power, unit²/Hz) is
//! distributed as χ²_ν/ν for Gaussian noise with exactly the expected density (P. D. Welch
//! 1967; ν from [`Spectrum::band_dof`], REFERENCES §3). The **statistical interval** of a band
//! is `[χ²_ν(p/2)/ν, χ²_ν(1 − p/2)/ν]` with `p = false_alarm / bands` (Bonferroni over the
//! bands checked, REFERENCES §11), so a capture whose density is exactly the designed one
//! fails anywhere with probability at most `false_alarm`.
//!
//! The **tolerance** T (dB, ≥ 0) widens that interval on both sides: a band passes when
//! `10·log10(r)` lies in `[10·log10(lo) − T, 10·log10(hi) + T]`. It is the deviation of the
//! real density a user accepts (a DAC's response, a rig's gain error) on top of what chance
//! explains. The overall verdict passes when every band passes.

use std::ops::Range;

use statrs::distribution::{ChiSquared, ContinuousCDF};

use super::welch::{BandEstimate, Spectrum};
use crate::profile::Band;

/// χ²_ν quantiles as a two-sided interval for `ratio = estimate/truth`:
/// `[χ²_ν(p/2)/ν, χ²_ν(1 − p/2)/ν]`, dimensionless. `dof` > 0, 0 < `p_two_sided` < 1.
pub fn chi2_interval(dof: f64, p_two_sided: f64) -> (f64, f64) {
    let c = ChiSquared::new(dof).expect("positive degrees of freedom");
    (
        c.inverse_cdf(p_two_sided / 2.0) / dof,
        c.inverse_cdf(1.0 - p_two_sided / 2.0) / dof,
    )
}

/// Continuous spectral kernel of the Hann window in bins, `(sinc(x)/(1 − x²))²` (the
/// transform of the continuous Hann window, F. J. Harris 1978, REFERENCES §3), sampled every
/// 1/8 bin over ±16 bins and normalised to unit sum; used for the expectation of low bins.
fn hann_kernel() -> &'static [(f64, f64)] {
    static K: std::sync::OnceLock<Vec<(f64, f64)>> = std::sync::OnceLock::new();
    K.get_or_init(|| {
        let mut k: Vec<(f64, f64)> = (-128i32..=128)
            .map(|i| {
                let x = f64::from(i) / 8.0;
                let v = if i == 0 {
                    1.0
                } else if i.abs() == 8 {
                    0.5
                } else {
                    let px = std::f64::consts::PI * x;
                    px.sin() / px / (1.0 - x * x)
                };
                (x, v * v)
            })
            .collect();
        let s: f64 = k.iter().map(|p| p.1).sum();
        k.iter_mut().for_each(|p| p.1 /= s);
        k
    })
}

/// Expected mean Welch density (unit²/Hz) over `bins` of `spectrum` for a one-sided density
/// `psd(f)` (unit²/Hz): below bin 64 each bin is the density smoothed by the Hann kernel
/// (where the density curves over a few bins), above it the density at 256 points evenly
/// spread over the band (many ripple periods wide there).
pub fn expected_band_psd(psd: &dyn Fn(f64) -> f64, spectrum: &Spectrum, bins: Range<usize>) -> f64 {
    let df = spectrum.bin_width_hz();
    if bins.start < 64 || bins.len() <= 64 {
        let n = bins.len() as f64;
        bins.map(|k| {
            if k < 64 {
                hann_kernel()
                    .iter()
                    .map(|(x, w)| w * psd(((k as f64 + x) * df).abs()))
                    .sum::<f64>()
            } else {
                psd(k as f64 * df)
            }
        })
        .sum::<f64>()
            / n
    } else {
        let (a, b) = (bins.start as f64, (bins.end - 1) as f64);
        let m = 256;
        (0..m)
            .map(|i| psd((a + (b - a) * (f64::from(i) + 0.5) / f64::from(m)) * df))
            .sum::<f64>()
            / f64::from(m)
    }
}

/// One band of a comparison.
#[derive(Debug, Clone, PartialEq)]
pub struct BandCheck {
    /// The measured band (edges in Hz, mean density in unit²/Hz, ν).
    pub band: BandEstimate,
    /// Expected mean density over the band, unit²/Hz.
    pub expected_psd: f64,
    /// 10·log10(measured/expected), dB.
    pub ratio_db: f64,
    /// Statistical interval of the ratio, dB (lower, upper).
    pub stat_db: (f64, f64),
    /// Pass limits: the statistical interval widened by the tolerance, dB.
    pub limit_db: (f64, f64),
    /// True when `ratio_db` is within `limit_db`.
    pub pass: bool,
}

/// A band-by-band comparison and its verdict.
#[derive(Debug, Clone, PartialEq)]
pub struct Comparison {
    /// Every band checked, in frequency order.
    pub bands: Vec<BandCheck>,
    /// Engineering tolerance T in dB added on both sides.
    pub tolerance_db: f64,
    /// Total false-failure probability of the statistical intervals (split over the bands).
    pub false_alarm: f64,
    /// True when every band passes (false when no band could be checked).
    pub pass: bool,
}

impl Comparison {
    /// Number of bands outside their limits.
    pub fn failed(&self) -> usize {
        self.bands.iter().filter(|b| !b.pass).count()
    }

    /// The band furthest outside its limits (in dB beyond the nearer limit), if any failed.
    pub fn worst(&self) -> Option<&BandCheck> {
        let excess = |b: &BandCheck| (b.limit_db.0 - b.ratio_db).max(b.ratio_db - b.limit_db.1);
        self.bands
            .iter()
            .filter(|b| !b.pass)
            .max_by(|a, b| excess(a).total_cmp(&excess(b)))
    }

    /// One line on the failed bands, `None` when none failed: how many of how many, and the
    /// worst one's edges (Hz), its 10·log10(measured/expected) and its limits (dB), e.g.
    /// `2 of 31 bands outside their limits; worst 10.0000..12.5000 Hz at +1.92 dB (limits
    /// -1.71 .. +1.52 dB)`.
    pub fn failure_line(&self) -> Option<String> {
        let w = self.worst()?;
        Some(format!(
            "{} of {} bands outside their limits; worst {:.4}..{:.4} Hz at {:+.2} dB (limits \
             {:+.2} .. {:+.2} dB)",
            self.failed(),
            self.bands.len(),
            w.band.f_lo_hz,
            w.band.f_hi_hz,
            w.ratio_db,
            w.limit_db.0,
            w.limit_db.1
        ))
    }
}

/// Compares `bands` (from `spectrum`) with `expected(band)` (mean density over the band,
/// unit²/Hz) as the module docs describe. Bands with ν = 0 or a non-positive expectation
/// are left out.
pub fn compare(
    bands: &[BandEstimate],
    expected: &dyn Fn(&BandEstimate) -> f64,
    false_alarm: f64,
    tolerance_db: f64,
) -> Comparison {
    let usable: Vec<(&BandEstimate, f64)> = bands
        .iter()
        .map(|b| (b, expected(b)))
        .filter(|(b, e)| b.dof > 0.0 && *e > 0.0 && e.is_finite())
        .collect();
    let p = false_alarm / usable.len().max(1) as f64;
    let db = |x: f64| 10.0 * x.log10();
    let checks: Vec<BandCheck> = usable
        .into_iter()
        .map(|(b, e)| {
            let (lo, hi) = chi2_interval(b.dof, p);
            let stat_db = (db(lo), db(hi));
            let limit_db = (stat_db.0 - tolerance_db, stat_db.1 + tolerance_db);
            let ratio_db = db(b.psd_mean / e);
            BandCheck {
                band: b.clone(),
                expected_psd: e,
                ratio_db,
                stat_db,
                limit_db,
                pass: ratio_db >= limit_db.0 && ratio_db <= limit_db.1,
            }
        })
        .collect();
    Comparison {
        pass: !checks.is_empty() && checks.iter().all(|c| c.pass),
        bands: checks,
        tolerance_db,
        false_alarm,
    }
}

/// The bands of `bands` that lie wholly inside `band` (edges in Hz): the ones a comparison
/// with a profile checks.
pub fn bands_inside(bands: &[BandEstimate], band: &Band) -> Vec<BandEstimate> {
    bands
        .iter()
        .filter(|b| b.f_lo_hz >= band.low_hz && b.f_hi_hz <= band.high_hz)
        .cloned()
        .collect()
}

/// Compares a capture's estimate with a profile's designed density, as `analyze` does: the
/// bands of `bands` (from `spectrum`) inside `band` ([`bands_inside`]) against the expected
/// mean of `density(f)` (f in Hz, one-sided, unit²/Hz) over each band's bins
/// ([`expected_band_psd`]), with χ² intervals for a total false-failure probability
/// `false_alarm` and a tolerance of `tolerance_db` dB on both sides ([`compare`]).
pub fn compare_with_design(
    bands: &[BandEstimate],
    spectrum: &Spectrum,
    band: &Band,
    density: &dyn Fn(f64) -> f64,
    false_alarm: f64,
    tolerance_db: f64,
) -> Comparison {
    compare(
        &bands_inside(bands, band),
        &|b| expected_band_psd(density, spectrum, b.bins.clone()),
        false_alarm,
        tolerance_db,
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::welch::welch;

    /// References §3 table: K = 16 (ν = 36K²/(19K − 1) ≈ 30.4), p = 1e−6 → −7.0 / +4.5 dB.
    #[test]
    fn interval_matches_the_reference_table() {
        let (lo, hi) = chi2_interval(36.0 * 256.0 / 303.0, 1e-6);
        assert!((10.0 * lo.log10() + 7.0).abs() < 0.05);
        assert!((10.0 * hi.log10() - 4.5).abs() < 0.05);
    }

    /// A white density: the kernel expectation equals the density (unit-sum kernel), and the
    /// tolerance moves the verdict exactly at its edge.
    #[test]
    fn tolerance_widens_the_interval_by_its_value() {
        let x: Vec<f64> = (0..1 << 14)
            .map(|i| ((i * 7919) % 1013) as f64 - 506.0)
            .collect();
        let s = welch(&x, 256, 1000.0);
        let e = expected_band_psd(&|_| 2.0, &s, 3..9);
        assert!((e - 2.0).abs() < 1e-12);
        let bands = s.log_bands(3, 5);
        let mean: f64 = bands.iter().map(|b| b.psd_mean).sum::<f64>() / bands.len() as f64;
        let c = compare(&bands, &|_| mean, 1e-3, 0.0);
        let c_far = compare(&bands, &|_| mean * 100.0, 1e-3, 0.0);
        assert!(!c_far.pass && c_far.failed() == c_far.bands.len());
        let need = c_far
            .bands
            .iter()
            .map(|b| b.limit_db.0 - b.ratio_db)
            .fold(0.0, f64::max);
        assert!(compare(&bands, &|_| mean * 100.0, 1e-3, need + 1e-9).pass);
        assert!(!compare(&bands, &|_| mean * 100.0, 1e-3, need - 1e-6).pass);
        assert_eq!(c.bands.len(), bands.len());
    }
}
