//! Fitting a floor with a 1/f^α rise, S(f) = d²·(1 + (f_c/f)^α), to a measured density by
//! weighted least squares on the log density, and writing it as a profile.
//!
//! * Data: the log-spaced bands of the Welch estimate (from bin 3), inside the profile's band
//!   when a profile is given, otherwise up to fs/4 (above it anti-alias filters usually bend a
//!   capture's density).
//! * Model per band: the expected Welch mean of `g(f)·(A + B·f^−α)` over the band's bins
//!   ([`expected_band_psd`], Hann kernel at low bins), with `A = d²`, `B = d²·f_c^α` and `g`
//!   the profile's band gain (1 without a profile).
//! * Residuals: `y_i = ln Ŝ_i − E[ln(χ²_ν/ν)]` with `E[ln(χ²_ν/ν)] = ψ(ν/2) − ln(ν/2)`, weights
//!   `1/Var[ln(χ²_ν/ν)] = 1/ψ'(ν/2)` (exact for a χ²_ν/ν estimate; ν from the band,
//!   REFERENCES §3). Parameters `(ln A, ln B, α)`, 0 < α ≤ 2, found by a grid over (α, f_c)
//!   then Levenberg–Marquardt.
//! * Uncertainty: covariance `(JᵀWJ)⁻¹`, scaled by the reduced χ² when that exceeds 1 (a
//!   model that does not fit widens its own errors); standard errors of ln d, ln f_c and α
//!   by the delta method.
//! * The rise is kept only when it lowers the weighted sum of squares by more than
//!   χ²₂(1 − 10⁻³) = 13.8 against a white floor alone (a likelihood-ratio test for the two
//!   extra parameters); otherwise the fit is a white floor.

use serde_json::{Value, json};
use statrs::distribution::{ChiSquared, ContinuousCDF};
use statrs::function::gamma::digamma;

use super::capture::CaptureReport;
use super::compare::expected_band_psd;
use super::welch::BandEstimate;
use crate::error::{Error, Result};
use crate::model::density::band_gain;
use crate::profile::{Band, format_quantity};

/// What the fit may know beyond the measurement.
#[derive(Debug, Clone, Default)]
pub struct FitOptions {
    /// The band of a profile: limits the fitted range and shapes the model.
    pub band: Option<Band>,
}

/// A fitted floor with its uncertainties.
#[derive(Debug, Clone, PartialEq)]
pub struct FloorFit {
    /// White density d, unit/√Hz.
    pub floor_density: f64,
    /// Standard error of ln d (relative error of d).
    pub floor_rel_se: f64,
    /// Corner f_c in Hz where the rise equals the floor; `None` for a white floor.
    pub corner_hz: Option<f64>,
    /// Standard error of ln f_c.
    pub corner_rel_se: f64,
    /// Power-density exponent α of the rise (0 < α ≤ 2); 0 for a white floor.
    pub slope: f64,
    /// Standard error of α.
    pub slope_se: f64,
    /// Weighted sum of squared residuals (≈ χ²_{n−p} for a right model).
    pub chi2: f64,
    /// Bands used.
    pub bands: usize,
    /// Fitted frequency range in Hz.
    pub range_hz: (f64, f64),
    /// The band written into the profile.
    pub band: Band,
    /// Sample rate of the capture, Hz.
    pub sample_rate_hz: f64,
    /// Levels and dwell times written as a `[[burst]]` source, when clearly present.
    pub burst: Option<(Vec<f64>, Vec<f64>)>,
}

/// Trigamma ψ'(x) for x > 0: recurrence ψ'(x) = ψ'(x + 1) + 1/x² up to x ≥ 10, then the
/// asymptotic series 1/x + 1/(2x²) + 1/(6x³) − 1/(30x⁵) + 1/(42x⁷) − 1/(30x⁹)
/// (M. Abramowitz, I. A. Stegun, *Handbook of Mathematical Functions*, 6.4.12, from memory);
/// the first omitted term, 5/(66x¹¹), is below 1e−12 there.
pub fn trigamma(mut x: f64) -> f64 {
    let mut acc = 0.0;
    while x < 10.0 {
        acc += 1.0 / (x * x);
        x += 1.0;
    }
    let i = 1.0 / x;
    let i2 = i * i;
    acc + i + 0.5 * i2 + i * i2 * (1.0 / 6.0 - i2 * (1.0 / 30.0 - i2 * (1.0 / 42.0 - i2 / 30.0)))
}

struct Data<'a> {
    bands: Vec<&'a BandEstimate>,
    y: Vec<f64>,
    w: Vec<f64>,
}

/// Parameters (ln A, ln B, α).
type Theta = [f64; 3];

impl Data<'_> {
    fn model(&self, r: &CaptureReport, band: Option<&Band>, t: &Theta, white: bool) -> Vec<f64> {
        let (a, b, alpha) = (t[0].exp(), t[1].exp(), t[2]);
        let fs = r.sample_rate_hz;
        let psd = |f: f64| {
            let g = band.map_or(1.0, |bd| band_gain(bd, fs, f));
            let rise = if white || f <= 0.0 {
                0.0
            } else {
                b * f.powf(-alpha)
            };
            g * (a + rise)
        };
        self.bands
            .iter()
            .map(|bd| {
                expected_band_psd(&psd, &r.spectrum, bd.bins.clone())
                    .max(1e-300)
                    .ln()
            })
            .collect()
    }

    fn sse(&self, m: &[f64]) -> f64 {
        self.y
            .iter()
            .zip(m)
            .zip(&self.w)
            .map(|((y, m), w)| w * (y - m) * (y - m))
            .sum()
    }
}

/// Solves the 3×3 (or smaller, `n`) symmetric system `a·x = b` by Gaussian elimination with
/// partial pivoting; `None` when singular.
fn solve(mut a: [[f64; 3]; 3], mut b: [f64; 3], n: usize) -> Option<[f64; 3]> {
    for c in 0..n {
        let p = (c..n).max_by(|&i, &j| a[i][c].abs().total_cmp(&a[j][c].abs()))?;
        if a[p][c].abs() < 1e-300 {
            return None;
        }
        a.swap(c, p);
        b.swap(c, p);
        for r in c + 1..n {
            let f = a[r][c] / a[c][c];
            let pivot = a[c];
            for (x, p) in a[r][c..n].iter_mut().zip(&pivot[c..n]) {
                *x -= f * p;
            }
            b[r] -= f * b[c];
        }
    }
    let mut x = [0.0; 3];
    for c in (0..n).rev() {
        let s: f64 = (c + 1..n).map(|k| a[c][k] * x[k]).sum();
        x[c] = (b[c] - s) / a[c][c];
    }
    Some(x)
}

/// Inverse of the `n`×`n` leading block.
fn invert(a: [[f64; 3]; 3], n: usize) -> Option<[[f64; 3]; 3]> {
    let mut inv = [[0.0; 3]; 3];
    for c in 0..n {
        let mut e = [0.0; 3];
        e[c] = 1.0;
        let col = solve(a, e, n)?;
        for r in 0..n {
            inv[r][c] = col[r];
        }
    }
    Some(inv)
}

/// Levenberg–Marquardt on the first `n` parameters; returns (θ, SSE, JᵀWJ).
fn levenberg_marquardt(
    d: &Data,
    r: &CaptureReport,
    band: Option<&Band>,
    start: Theta,
    n: usize,
) -> (Theta, f64, [[f64; 3]; 3]) {
    let white = n == 1;
    let mut t = start;
    let mut m = d.model(r, band, &t, white);
    let mut sse = d.sse(&m);
    let mut lambda = 1e-3;
    let steps = [1e-6, 1e-6, 1e-6];
    let mut jtj = [[0.0; 3]; 3];
    for _ in 0..200 {
        // Numerical Jacobian of the model (central differences).
        let mut jac = vec![[0.0; 3]; d.y.len()];
        for p in 0..n {
            let mut tp = t;
            let mut tm = t;
            tp[p] += steps[p];
            tm[p] -= steps[p];
            let mp = d.model(r, band, &tp, white);
            let mm = d.model(r, band, &tm, white);
            for i in 0..d.y.len() {
                jac[i][p] = (mp[i] - mm[i]) / (2.0 * steps[p]);
            }
        }
        let mut g = [0.0; 3];
        jtj = [[0.0; 3]; 3];
        for i in 0..d.y.len() {
            let res = d.y[i] - m[i];
            for a in 0..n {
                g[a] += d.w[i] * jac[i][a] * res;
                for b in 0..n {
                    jtj[a][b] += d.w[i] * jac[i][a] * jac[i][b];
                }
            }
        }
        let mut improved = false;
        for _ in 0..20 {
            let mut a = jtj;
            for (k, row) in a.iter_mut().enumerate().take(n) {
                row[k] *= 1.0 + lambda;
            }
            let Some(step) = solve(a, g, n) else {
                lambda *= 10.0;
                continue;
            };
            let mut tn = t;
            for k in 0..n {
                tn[k] += step[k];
            }
            tn[2] = tn[2].clamp(0.01, 2.0);
            let mn = d.model(r, band, &tn, white);
            let sn = d.sse(&mn);
            if sn < sse {
                let done = sse - sn < 1e-12 * sse.max(1.0);
                t = tn;
                m = mn;
                sse = sn;
                lambda = (lambda / 10.0).max(1e-12);
                improved = !done;
                break;
            }
            lambda *= 10.0;
        }
        if !improved {
            break;
        }
    }
    (t, sse, jtj)
}

/// Fits the floor model to `r` (see the module docs).
pub fn fit_floor(r: &CaptureReport, options: &FitOptions) -> Result<FloorFit> {
    let fs = r.sample_rate_hz;
    let (lo, hi) = match &options.band {
        Some(b) => (b.low_hz, b.high_hz),
        None => (0.0, fs / 4.0),
    };
    let bands: Vec<&BandEstimate> = r
        .bands
        .iter()
        .filter(|b| b.f_lo_hz >= lo && b.f_hi_hz <= hi && b.dof > 0.0 && b.psd_mean > 0.0)
        .collect();
    if bands.len() < 4 {
        return Err(Error::Unsupported(format!(
            "only {} bands of the density lie in the fitted range {}..{}; a fit needs at least \
             4 (use a longer capture or a finer \u{1}resolution\u{1})",
            bands.len(),
            format_quantity(lo, "Hz"),
            format_quantity(hi, "Hz")
        )));
    }
    let y = bands
        .iter()
        .map(|b| b.psd_mean.ln() - (digamma(b.dof / 2.0) - (b.dof / 2.0).ln()))
        .collect();
    let w = bands.iter().map(|b| 1.0 / trigamma(b.dof / 2.0)).collect();
    let range_hz = (bands[0].f_lo_hz, bands[bands.len() - 1].f_hi_hz);
    let d = Data { bands, y, w };
    let band = options.band.as_ref();

    // White floor alone: ln A only.
    let mean_y = d.y.iter().zip(&d.w).map(|(y, w)| y * w).sum::<f64>() / d.w.iter().sum::<f64>();
    let (t_white, sse_white, jtj_white) =
        levenberg_marquardt(&d, r, band, [mean_y, f64::NEG_INFINITY, 1.0], 1);

    // Grid start for the rise: α, f_c over the range and a decade beyond; A closed form.
    let mut best: Option<(f64, Theta)> = None;
    let (f0, f1) = (range_hz.0.max(1e-12), range_hz.1);
    for ia in 1..=8 {
        let alpha = 0.25 * f64::from(ia);
        for ic in 0..=24 {
            let fc = (f0 / 10.0) * (100.0 * f1 / f0).powf(f64::from(ic) / 24.0);
            let t0: Theta = [0.0, alpha * fc.ln(), alpha];
            let m = d.model(r, band, &t0, false);
            let shift =
                d.y.iter()
                    .zip(&m)
                    .zip(&d.w)
                    .map(|((y, m), w)| w * (y - m))
                    .sum::<f64>()
                    / d.w.iter().sum::<f64>();
            let t: Theta = [shift, shift + alpha * fc.ln(), alpha];
            let s = d.sse(&d.model(r, band, &t, false));
            if best.as_ref().is_none_or(|(b, _)| s < *b) {
                best = Some((s, t));
            }
        }
    }
    let (_, start) = best.expect("grid is not empty");
    let (t, sse, jtj) = levenberg_marquardt(&d, r, band, start, 3);
    let n = d.y.len() as f64;
    let keep_rise = sse_white - sse > ChiSquared::new(2.0).expect("2 dof").inverse_cdf(1.0 - 1e-3);
    let burst = r
        .levels
        .as_ref()
        .map(|l| (l.levels.clone(), l.dwell_s.clone()));
    let out_band = options.band.unwrap_or(Band::brick_wall(
        range_hz.0.max(fs * 1e-9),
        range_hz.1.min(fs / 2.0),
    ));
    if !keep_rise {
        let scale = (sse_white / (n - 1.0)).max(1.0);
        let var = invert(jtj_white, 1).map_or(f64::NAN, |c| c[0][0] * scale);
        return Ok(FloorFit {
            floor_density: (0.5 * t_white[0]).exp(),
            floor_rel_se: 0.5 * var.sqrt(),
            corner_hz: None,
            corner_rel_se: f64::NAN,
            slope: 0.0,
            slope_se: f64::NAN,
            chi2: sse_white,
            bands: d.y.len(),
            range_hz,
            band: out_band,
            sample_rate_hz: fs,
            burst,
        });
    }
    let scale = (sse / (n - 3.0)).max(1.0);
    let cov = invert(jtj, 3).map(|c| c.map(|row| row.map(|v| v * scale)));
    let (la, lb, alpha) = (t[0], t[1], t[2]);
    let ln_fc = (lb - la) / alpha;
    let (floor_rel_se, corner_rel_se, slope_se) = match cov {
        Some(c) => {
            let g = [-1.0 / alpha, 1.0 / alpha, -(lb - la) / (alpha * alpha)];
            let mut v = 0.0;
            for i in 0..3 {
                for j in 0..3 {
                    v += g[i] * c[i][j] * g[j];
                }
            }
            (0.5 * c[0][0].sqrt(), v.sqrt(), c[2][2].sqrt())
        }
        None => (f64::NAN, f64::NAN, f64::NAN),
    };
    Ok(FloorFit {
        floor_density: (0.5 * la).exp(),
        floor_rel_se,
        corner_hz: Some(ln_fc.exp()),
        corner_rel_se,
        slope: alpha,
        slope_se,
        chi2: sse,
        bands: d.y.len(),
        range_hz,
        band: out_band,
        sample_rate_hz: fs,
        burst,
    })
}

/// TOML number: shortest round-trip form, always valid TOML (finite values only).
fn num(x: f64) -> String {
    let s = format!("{x:e}");
    if s.contains('.') || s.contains('e') {
        s
    } else {
        format!("{s}.0")
    }
}

impl FloorFit {
    /// JSON keys: `floor_density` (unit/√Hz), `floor_rel_se`, `corner_hz` (null for white),
    /// `corner_rel_se`, `slope`, `slope_se`, `chi2`, `bands`, `range_hz` [lo, hi], `burst`
    /// ({`levels`, `dwell_s`} or null).
    pub fn to_json(&self) -> Value {
        json!({
            "floor_density": self.floor_density,
            "floor_rel_se": self.floor_rel_se,
            "corner_hz": self.corner_hz,
            "corner_rel_se": self.corner_rel_se,
            "slope": self.slope,
            "slope_se": self.slope_se,
            "chi2": self.chi2,
            "bands": self.bands,
            "range_hz": [self.range_hz.0, self.range_hz.1],
            "burst": self.burst.as_ref().map(|(l, d)| json!({"levels": l, "dwell_s": d})),
        })
    }

    /// A profile `generate` accepts: the capture's rate, the band (the profile's, or the
    /// fitted range with a brick wall), one `[[floor]]`, and a `[[burst]]` with `levels`
    /// (unit) and `dwell` (s) when levels were clearly present. Bare numbers are SI units.
    pub fn to_profile_toml(&self, r: &CaptureReport, source: &str) -> String {
        let unit = match r.unit.as_str() {
            "A" => "A",
            _ => "V",
        };
        let du = format!("{unit}/√Hz");
        let mut s = String::new();
        s += &format!(
            "# Fitted by noisewright {} analyze from {source}.\n",
            env!("CARGO_PKG_VERSION")
        );
        s += &format!(
            "# floor {} (±{:.2} %), ",
            format_quantity(self.floor_density, &du),
            100.0 * self.floor_rel_se
        );
        match self.corner_hz {
            Some(fc) => {
                s += &format!(
                    "corner {} (±{:.2} %), slope {:.4} (±{:.4}); ",
                    format_quantity(fc, "Hz"),
                    100.0 * self.corner_rel_se,
                    self.slope,
                    self.slope_se
                )
            }
            None => s += "no significant 1/f rise; ",
        }
        s += &format!(
            "{} bands over {} .. {}, weighted χ² {:.1}.\n",
            self.bands,
            format_quantity(self.range_hz.0, "Hz"),
            format_quantity(self.range_hz.1, "Hz"),
            self.chi2
        );
        s += &format!("name = {:?}\n", format!("fit of {source}"));
        s += &format!("unit = \"{unit}\"\n");
        s += &format!("sample_rate = {}\n\n[band]\n", num(self.sample_rate_hz));
        s += &format!("low = {}\n", num(self.band.low_hz));
        s += &format!("high = {}\n", num(self.band.high_hz));
        s += &format!(
            "order = {}\n\n[[floor]]\nname = \"fitted floor\"\n",
            self.band.order
        );
        s += &format!("density = {}\n", num(self.floor_density));
        if let Some(fc) = self.corner_hz {
            s += &format!("corner = {}\nslope = {}\n", num(fc), num(self.slope));
        }
        if let Some((levels, dwell)) = &self.burst {
            let list = |v: &[f64]| v.iter().map(|x| num(*x)).collect::<Vec<_>>().join(", ");
            s += &format!(
                "\n[[burst]]\nname = \"fitted levels\"\nlevels = [{}]\ndwell = [{}]\n",
                list(levels),
                list(dwell)
            );
        }
        s
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// ψ'(1) = π²/6, ψ'(1/2) = π²/2 (Abramowitz & Stegun 6.4.2, 6.4.4, from memory).
    #[test]
    fn trigamma_check_values() {
        let pi2 = std::f64::consts::PI.powi(2);
        assert!((trigamma(1.0) - pi2 / 6.0).abs() < 1e-10);
        assert!((trigamma(0.5) - pi2 / 2.0).abs() < 1e-10);
        // Recurrence: ψ'(x) − ψ'(x + 1) = 1/x².
        for x in [0.3, 2.5, 7.0, 40.0] {
            assert!((trigamma(x) - trigamma(x + 1.0) - 1.0 / (x * x)).abs() < 1e-10);
        }
    }

    #[test]
    fn numbers_are_valid_toml() {
        for x in [4e-9, 48000.0, 1.0, 0.123456789] {
            let t = format!("x = {}", num(x));
            let v: toml::Table = toml::from_str(&t).unwrap();
            assert_eq!(v["x"].as_float().unwrap(), x);
        }
    }
}
