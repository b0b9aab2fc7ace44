//! The overlapping Allan deviation of a rate at octave-spaced averaging times, streamed with
//! bounded memory; its confidence intervals from the equivalent degrees of freedom; and the
//! fit of the inertial terms N, B and K.
//!
//! Estimator (W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST Special
//! Publication 1065, 2008; IEEE Std 1139-2008): rate samples y_i every τ₀, phase
//! x_k = τ₀·Σ_{i<k} y_i (N = samples + 1 phase points), τ = mτ₀,
//! σ²(τ) = Σ_{k=0}^{N−2m−1} (x_{k+2m} − 2x_{k+m} + x_k)² / (2τ²(N − 2m)).
//! The sums are kept relative to the first sample (a constant rate changes nothing) with a
//! compensated running sum, in a ring of the last 2·m_max + 1 phase points, so memory is
//! 16·m_max bytes whatever the length.

use serde::Serialize;
use statrs::distribution::{ChiSquared, ContinuousCDF};

use crate::model::allan::bias_instability_factor;

/// The largest m (samples per average) the streaming estimator keeps: 2^21 (a 32 MiB ring
/// of phase points); longer averaging times need a decimated capture.
pub const MAX_M: usize = 1 << 21;

/// Confidence of the intervals in `analyze --json` (two-sided).
pub const CONFIDENCE: f64 = 0.95;

/// Octave-spaced m (1, 2, 4 …) for a record of `samples` samples: m ≤ samples/4 (so each
/// σ² averages at least N/2 terms) and m ≤ [`MAX_M`].
pub fn octave_ms(samples: u64) -> Vec<usize> {
    let top = (samples / 4).min(MAX_M as u64) as usize;
    (0..usize::BITS)
        .map(|k| 1usize << k)
        .take_while(|&m| m <= top)
        .collect()
}

/// The streaming overlapping Allan variance at a fixed set of m.
#[derive(Debug, Clone)]
pub struct AllanStream {
    ms: Vec<usize>,
    /// Phase points (in units of τ₀·unit), a ring of length a power of two ≥ 2·m_max + 1.
    ring: Vec<f64>,
    mask: usize,
    /// Phase points pushed so far (x_0 = 0 included).
    points: u64,
    sums: Vec<f64>,
    reference: Option<f64>,
    cum: f64,
    carry: f64,
}

impl AllanStream {
    /// A stream for the averaging factors `ms` (samples per average, each ≥ 1).
    pub fn new(ms: &[usize]) -> AllanStream {
        let m_max = ms.iter().copied().max().unwrap_or(1);
        let len = (2 * m_max + 1).next_power_of_two();
        let mut s = AllanStream {
            ms: ms.to_vec(),
            ring: vec![0.0; len],
            mask: len - 1,
            points: 1,
            sums: vec![0.0; ms.len()],
            reference: None,
            cum: 0.0,
            carry: 0.0,
        };
        s.ring[0] = 0.0;
        s
    }

    /// Adds rate samples (unit).
    pub fn push(&mut self, samples: &[f64]) {
        for &y in samples {
            let r = *self.reference.get_or_insert(y);
            // Kahan-compensated running sum of y − y₀.
            let v = (y - r) - self.carry;
            let t = self.cum + v;
            self.carry = (t - self.cum) - v;
            self.cum = t;
            let j = self.points as usize;
            self.ring[j & self.mask] = t;
            self.points += 1;
            for (i, &m) in self.ms.iter().enumerate() {
                if j < 2 * m {
                    break;
                }
                let d =
                    t - 2.0 * self.ring[(j - m) & self.mask] + self.ring[(j - 2 * m) & self.mask];
                self.sums[i] += d * d;
            }
        }
    }

    /// The Allan deviations (unit) at τ = m·`tau0_s`, with their degrees of freedom and
    /// intervals at [`CONFIDENCE`]; m with no term yet are left out.
    pub fn finish(&self, tau0_s: f64) -> AllanDeviation {
        let n = self.points;
        let mut out = AllanDeviation {
            tau0_s,
            samples: n - 1,
            ..AllanDeviation::default()
        };
        for (i, &m) in self.ms.iter().enumerate() {
            let terms = n.saturating_sub(2 * m as u64);
            if terms == 0 {
                continue;
            }
            let mf = m as f64;
            let avar = self.sums[i] / (2.0 * mf * mf * terms as f64);
            out.m.push(m);
            out.tau_s.push(mf * tau0_s);
            out.adev.push(avar.sqrt());
        }
        out.noise = identify(&out.tau_s, &out.adev);
        out.edf = out
            .m
            .iter()
            .zip(&out.noise)
            .map(|(&m, &k)| edf(k, n as f64, m as f64))
            .collect();
        let (low, high): (Vec<f64>, Vec<f64>) = (0..out.m.len())
            .map(|i| out.interval(i, CONFIDENCE))
            .unzip();
        out.adev_low = low;
        out.adev_high = high;
        out
    }
}

/// The power-law noise types of a rate that the inertial terms are (Riley 2008 names them
/// for frequency data: white FM, flicker FM, random-walk FM).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Default)]
#[serde(rename_all = "snake_case")]
pub enum NoiseType {
    /// White rate (slope −½ of σ(τ)): random walk N.
    #[default]
    White,
    /// Flicker rate (slope 0): bias instability B.
    Flicker,
    /// Random-walk rate (slope +½): rate random walk K.
    RandomWalk,
}

/// The noise type at each τ from the local slope of log σ² against log τ (−1, 0 or +1,
/// whichever is nearest; centred differences inside, one-sided at the ends). Riley 2008 (§5)
/// also identifies it by the lag-1 autocorrelation; the slope is what a reader of the plot
/// sees.
fn identify(tau: &[f64], adev: &[f64]) -> Vec<NoiseType> {
    let n = tau.len();
    (0..n)
        .map(|i| {
            let (a, b) = (i.saturating_sub(1), (i + 1).min(n.saturating_sub(1)));
            if a == b || adev[a] <= 0.0 || adev[b] <= 0.0 {
                return NoiseType::White;
            }
            let mu = 2.0 * (adev[b] / adev[a]).ln() / (tau[b] / tau[a]).ln();
            if mu < -0.5 {
                NoiseType::White
            } else if mu < 0.5 {
                NoiseType::Flicker
            } else {
                NoiseType::RandomWalk
            }
        })
        .collect()
}

/// Equivalent degrees of freedom of the overlapping Allan variance with `n` phase points at
/// averaging factor `m` (the approximations of D. A. Howe, D. W. Allan, J. A. Barnes, 1981,
/// as tabulated in Riley, NIST SP 1065, 2008, §5.3; quoted from memory: the closed-form
/// checks of `tests/allan_statistics.rs` rest on the intervals they give, but no test
/// measures the degrees of freedom themselves). At least 1.
pub fn edf(noise: NoiseType, n: f64, m: f64) -> f64 {
    let v = match noise {
        NoiseType::White => {
            (3.0 * (n - 1.0) / (2.0 * m) - 2.0 * (n - 2.0) / n) * (4.0 * m * m)
                / (4.0 * m * m + 5.0)
        }
        NoiseType::Flicker if m == 1.0 => 2.0 * (n - 2.0).powi(2) / (2.3 * n - 4.9),
        NoiseType::Flicker => 5.0 * n * n / (4.0 * m * (n + 3.0 * m)),
        NoiseType::RandomWalk => {
            (n - 2.0) / m * ((n - 1.0).powi(2) - 3.0 * m * (n - 1.0) + 4.0 * m * m)
                / (n - 3.0).powi(2)
        }
    };
    v.max(1.0)
}

/// The measured Allan deviation at octave τ, with intervals and the noise type at each.
#[derive(Debug, Clone, Default, Serialize)]
pub struct AllanDeviation {
    /// Sample interval τ₀ in s.
    pub tau0_s: f64,
    /// Samples in the record.
    pub samples: u64,
    /// Samples per average at each τ.
    pub m: Vec<usize>,
    /// Averaging times τ = m·τ₀ in s.
    pub tau_s: Vec<f64>,
    /// The overlapping Allan deviation in the capture's unit.
    pub adev: Vec<f64>,
    /// Lower end of the [`CONFIDENCE`] interval (unit).
    pub adev_low: Vec<f64>,
    /// Upper end of the [`CONFIDENCE`] interval (unit).
    pub adev_high: Vec<f64>,
    /// Equivalent degrees of freedom at each τ.
    pub edf: Vec<f64>,
    /// The noise type the degrees of freedom assume at each τ.
    pub noise: Vec<NoiseType>,
}

impl AllanDeviation {
    /// The two-sided interval (unit) at `confidence` (0..1) of the true Allan deviation at
    /// point `i`: σ̂·√(ν/χ²_ν(1 − α/2)) … σ̂·√(ν/χ²_ν(α/2)), α = 1 − confidence, ν its edf
    /// (Riley 2008, §5.3).
    pub fn interval(&self, i: usize, confidence: f64) -> (f64, f64) {
        let nu = self.edf[i];
        let chi = ChiSquared::new(nu).expect("edf ≥ 1");
        let alpha = 1.0 - confidence;
        let s = self.adev[i];
        (
            s * (nu / chi.inverse_cdf(1.0 - alpha / 2.0)).sqrt(),
            s * (nu / chi.inverse_cdf(alpha / 2.0)).sqrt(),
        )
    }

    /// Fits N, B and K (see [`fit_terms`]) to the points with τ ≥ [`FIT_MIN_M`]·τ₀.
    pub fn fit(&self) -> InertialFit {
        let keep: Vec<usize> = (0..self.m.len())
            .filter(|&i| self.m[i] >= FIT_MIN_M && self.adev[i] > 0.0)
            .collect();
        let pick = |v: &[f64]| keep.iter().map(|&i| v[i]).collect::<Vec<f64>>();
        fit_terms(&pick(&self.tau_s), &pick(&self.adev), &pick(&self.edf))
    }
}

/// The smallest m the fit uses: the first octaves see the band's upper edge (an anti-alias
/// filter, or the band ending below fs/2) rather than the white level alone.
pub const FIT_MIN_M: usize = 8;

/// The fitted inertial terms with their 1σ uncertainties; a term the data do not support is
/// 0 with no uncertainty.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize)]
pub struct InertialFit {
    /// N in unit·s^½.
    pub random_walk: f64,
    /// B in unit.
    pub bias_instability: f64,
    /// K in unit·s^−½.
    pub rate_random_walk: f64,
    /// 1σ uncertainties of N, B, K in their units (`None` for a term fixed at 0).
    pub uncertainty: [Option<f64>; 3],
    /// The weighted residual sum over the degrees of freedom of the fit (≈ 1 when the model
    /// fits; the uncertainties are scaled by √ of it when it is above 1).
    pub reduced_chi2: f64,
}

/// Fits σ²(τ) = N²/τ + (2 ln 2/π)B² + K²τ/3 (IEEE Std 952-1997 Annex C) to Allan deviations
/// `adev` (unit) at `tau_s` with degrees of freedom `edf`, by weighted least squares on σ²
/// (weights ν/(2σ⁴), the variance of σ̂² for ν degrees of freedom, with σ from the model,
/// iterated), keeping the three coefficients ≥ 0 (the best of the subsets whose coefficients
/// all come out positive). The points are taken as independent; octave-spaced overlapping
/// estimates are mildly correlated, and the uncertainties are scaled up by √(reduced χ²)
/// when it exceeds 1 (common practice).
pub fn fit_terms(tau_s: &[f64], adev: &[f64], edf: &[f64]) -> InertialFit {
    let q = bias_instability_factor().powi(2);
    let basis = |t: f64| [1.0 / t, q, t / 3.0];
    let mut best: Option<(f64, InertialFit)> = None;
    for mask in 1u8..8 {
        let used: Vec<usize> = (0..3).filter(|k| mask & (1 << k) != 0).collect();
        if used.len() > tau_s.len() {
            continue;
        }
        let Some((coef, cov, chi2)) = subset_fit(tau_s, adev, edf, &used, &basis) else {
            continue;
        };
        if coef.iter().any(|&c| c <= 0.0) {
            continue;
        }
        let dof = (tau_s.len() as f64 - used.len() as f64).max(1.0);
        let mut c3 = [0.0; 3];
        let mut u3 = [None; 3];
        let scale = (chi2 / dof).max(1.0).sqrt();
        for (j, &k) in used.iter().enumerate() {
            c3[k] = coef[j];
            u3[k] = Some(cov[j].sqrt() * scale);
        }
        if best.as_ref().is_none_or(|b| chi2 < b.0) {
            best = Some((chi2, terms_of(c3, u3, chi2 / dof)));
        }
    }
    best.map(|b| b.1).unwrap_or_default()
}

/// N, B, K from the σ² coefficients N², B², K² and their 1σ `u`: σ_N = σ_{N²}/(2N), and
/// likewise for B and K.
fn terms_of(c: [f64; 3], u: [Option<f64>; 3], reduced_chi2: f64) -> InertialFit {
    let v = c.map(f64::sqrt);
    let half = |k: usize| {
        u[k].map(|s| {
            if v[k] > 0.0 {
                s / (2.0 * v[k])
            } else {
                s.sqrt()
            }
        })
    };
    InertialFit {
        random_walk: v[0],
        bias_instability: v[1],
        rate_random_walk: v[2],
        uncertainty: [half(0), half(1), half(2)],
        reduced_chi2,
    }
}

/// Weighted least squares of σ² on the `used` basis functions, iterated on the weights:
/// (coefficients, their variances, χ²); `None` if the normal equations are singular.
fn subset_fit(
    tau_s: &[f64],
    adev: &[f64],
    edf: &[f64],
    used: &[usize],
    basis: &dyn Fn(f64) -> [f64; 3],
) -> Option<(Vec<f64>, Vec<f64>, f64)> {
    let p = used.len();
    let mut model: Vec<f64> = adev.iter().map(|s| s * s).collect();
    let mut result = None;
    for _ in 0..6 {
        let mut a = nalgebra::DMatrix::<f64>::zeros(p, p);
        let mut rhs = nalgebra::DVector::<f64>::zeros(p);
        for i in 0..tau_s.len() {
            let w = edf[i] / (2.0 * model[i].max(f64::MIN_POSITIVE).powi(2));
            let x = basis(tau_s[i]);
            for (r, &kr) in used.iter().enumerate() {
                rhs[r] += w * x[kr] * adev[i] * adev[i];
                for (c, &kc) in used.iter().enumerate() {
                    a[(r, c)] += w * x[kr] * x[kc];
                }
            }
        }
        let inv = a.try_inverse()?;
        let coef = &inv * &rhs;
        let mut chi2 = 0.0;
        for i in 0..tau_s.len() {
            let x = basis(tau_s[i]);
            let m: f64 = used.iter().enumerate().map(|(j, &k)| coef[j] * x[k]).sum();
            let w = edf[i] / (2.0 * model[i].max(f64::MIN_POSITIVE).powi(2));
            chi2 += w * (adev[i] * adev[i] - m).powi(2);
            model[i] = m.max(1e-3 * adev[i] * adev[i]);
        }
        let var: Vec<f64> = (0..p).map(|j| inv[(j, j)]).collect();
        result = Some((coef.iter().copied().collect(), var, chi2));
    }
    result
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;
    use rand_distr::{Distribution, StandardNormal};

    /// The definition, term by term (Riley 2008), for the oracle.
    fn naive(y: &[f64], m: usize) -> f64 {
        let mut x = vec![0.0];
        for v in y {
            x.push(x.last().unwrap() + v);
        }
        let n = x.len();
        let s: f64 = (0..n - 2 * m)
            .map(|k| (x[k + 2 * m] - 2.0 * x[k + m] + x[k]).powi(2))
            .sum();
        (s / (2.0 * (m * m) as f64 * (n - 2 * m) as f64)).sqrt()
    }

    #[test]
    fn streaming_equals_the_definition_in_any_split() {
        const SEED: u64 = 18;
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(SEED);
        let y: Vec<f64> = (0..5000)
            .map(|i| {
                3.0 + 1e-3 * i as f64 + {
                    let g: f64 = StandardNormal.sample(&mut rng);
                    g
                }
            })
            .collect();
        let ms = octave_ms(y.len() as u64);
        assert_eq!(ms.last(), Some(&1024));
        let mut one = AllanStream::new(&ms);
        one.push(&y);
        let mut parts = AllanStream::new(&ms);
        for c in y.chunks(777) {
            parts.push(c);
        }
        let (a, b) = (one.finish(0.5), parts.finish(0.5));
        for (i, &m) in ms.iter().enumerate() {
            let want = naive(&y, m);
            assert!((a.adev[i] / want - 1.0).abs() < 1e-9, "seed {SEED} m {m}");
            assert_eq!(a.adev[i], b.adev[i]);
            assert_eq!(a.tau_s[i], 0.5 * m as f64);
            assert!(a.adev_low[i] < a.adev[i] && a.adev[i] < a.adev_high[i]);
        }
    }

    // σ² = N²/τ + (2 ln 2/π)B² + K²τ/3 exactly at the points: the fit must return the three
    // coefficients it was built from.
    #[test]
    fn fit_returns_exact_coefficients_from_exact_points() {
        let (n, b, k) = (3e-3, 8e-4, 1.4e-5);
        let tau: Vec<f64> = (0..18).map(|j| 0.1 * 2f64.powi(j)).collect();
        let adev: Vec<f64> = tau
            .iter()
            .map(|&t| crate::model::allan::inertial_adev(n, b, k, t))
            .collect();
        let edf = vec![100.0; tau.len()];
        let f = fit_terms(&tau, &adev, &edf);
        assert!((f.random_walk / n - 1.0).abs() < 1e-6, "{f:?}");
        assert!((f.bias_instability / b - 1.0).abs() < 1e-6, "{f:?}");
        assert!((f.rate_random_walk / k - 1.0).abs() < 1e-6, "{f:?}");
        // White only: B and K are not supported and stay 0.
        let white: Vec<f64> = tau.iter().map(|t| n / t.sqrt()).collect();
        let f = fit_terms(&tau, &white, &edf);
        assert!((f.random_walk / n - 1.0).abs() < 1e-6, "{f:?}");
        assert_eq!((f.bias_instability, f.rate_random_walk), (0.0, 0.0));
        assert_eq!(f.uncertainty[1], None);
    }
}
