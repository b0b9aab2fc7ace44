//! The closed-form statistics of a burst source: occupancy, mean, variance, corner
//! frequencies and the exact density of its samples.
//!
//! A burst source ([`Burst`]) is a continuous-time Markov chain over K levels `v` with mean
//! dwell times `τ` (s) and jump probabilities `J`. Its generator matrix (1/s) is
//! `Q[i][j] = J[i][j]/τ_i` (i ≠ j), `Q[i][i] = −1/τ_i`. The stationary occupancy π solves
//! `πQ = 0, Σπ = 1` (REFERENCES §4); the continuous autocovariance is
//! `C(τ) = v'ᵀ diag(π) e^{Q|τ|} v'` with `v' = v − μ`, `μ = πᵀv`, a sum of exponentials
//! `e^{λ_k|τ|}` over the non-zero eigenvalues λ_k of Q, i.e. a sum of Lorentzians in
//! frequency (Machlup 1954 for two levels; the eigenvalue form for more, REFERENCES §4).
//!
//! **Sampled (aliased) density.** With `T = 1/fs`, `P = e^{QT}`, `Π = 1πᵀ` and
//! `z = e^{−i2πf/fs}`, the samples' one-sided density (unit²/Hz) is exactly
//!
//! - instant sampling, `x[n] = v(X(nT))`: `C[n] = v'ᵀ diag(π) Pⁿ v'` and
//!   `S(f) = (2/fs)·(2·Re Σ_{n≥0} C[n] zⁿ − C[0])`, where
//!   `Σ_{n≥0} Pⁿzⁿ v' = (I − z(P − Π))⁻¹ v'` (because `Πv' = 0`; the matrix is regular even
//!   at f = 0);
//! - interval-mean sampling, `x[n] = (1/T)∫_{nT}^{(n+1)T} v(X(t)) dt`: with `A = QT`,
//!   `φ₁(A) = (e^A − I)/A`, `φ₂(A) = (e^A − I − A)/A²`, the autocovariance is
//!   `R[0] = v'ᵀ diag(π) 2φ₂(A) v'`, `R[m] = v'ᵀ diag(π) P^{m−1} φ₁(A)² v'` (m ≥ 1; the
//!   double integral of C over two sample intervals), so
//!   `S(f) = (2/fs)·(R[0] + 2·Re z·v'ᵀ diag(π)(I − z(P − Π))⁻¹ φ₁(A)² v')`.
//!
//! Both are a small complex linear solve per frequency, with no eigenvectors. `e^A − I`,
//! `φ₁` and `φ₂` come from a Taylor series of `A/2^s` and exact doubling formulas, so slow
//! chains (‖A‖ ≪ 1) keep their precision. Corner frequencies need only the eigenvalues of Q
//! (real for reversible chains such as two-level or birth–death ones; a chain whose `next`
//! circulates can have complex pairs, reported with their oscillation frequency).

use std::f64::consts::PI;

use rustfft::num_complex::Complex;

use crate::error::{Error, Result};
use crate::profile::{Burst, BurstSampling};

/// One relaxation mode of a chain: a non-zero eigenvalue λ of its generator (a complex pair
/// counted once).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Mode {
    /// Corner frequency in Hz: −Re λ / 2π (the decay rate of the mode's autocovariance).
    pub corner_hz: f64,
    /// Oscillation frequency in Hz: |Im λ| / 2π; 0 for a real eigenvalue (a plain Lorentzian).
    pub oscillation_hz: f64,
}

/// A burst source's chain at one sample rate, with everything its samples' statistics need.
#[derive(Debug, Clone)]
pub struct BurstModel {
    burst: Burst,
    sample_rate_hz: f64,
    /// Generator matrix Q in 1/s, row-major K×K.
    q: Vec<f64>,
    occupancy: Vec<f64>,
    mean: f64,
    process_variance: f64,
    /// `e^{Q/fs} − I`, row-major.
    e: Vec<f64>,
    /// `φ₁(Q/fs)²·v'` (interval mean only; empty otherwise).
    phi1_sq_v: Vec<f64>,
    sample_variance: f64,
    modes: Vec<Mode>,
}

impl BurstModel {
    /// The model of `burst` sampled at `sample_rate_hz` (Hz). Fails with
    /// [`Error::Unsupported`] if the burst is not a valid chain (see [`Burst`]).
    pub fn new(burst: &Burst, sample_rate_hz: f64) -> Result<BurstModel> {
        let k = burst.len();
        if !(sample_rate_hz > 0.0 && sample_rate_hz.is_finite()) {
            return Err(Error::Unsupported(format!(
                "burst {:?}: sample rate {sample_rate_hz} Hz must be positive",
                burst.name
            )));
        }
        let q = generator_matrix(burst)?;
        let occupancy = occupancy_of(burst, &q)?;
        let mean: f64 = occupancy
            .iter()
            .zip(&burst.levels)
            .map(|(p, v)| p * v)
            .sum();
        let vc: Vec<f64> = burst.levels.iter().map(|v| v - mean).collect();
        let process_variance: f64 = occupancy.iter().zip(&vc).map(|(p, v)| p * v * v).sum();
        let a: Vec<f64> = q.iter().map(|x| x / sample_rate_hz).collect();
        let (e, phi1, phi2) = exp_phi(&a, k);
        let (phi1_sq_v, sample_variance) = match burst.sampling {
            BurstSampling::Instant => (Vec::new(), process_variance),
            BurstSampling::Mean => {
                let u = mat_vec(&phi1, &mat_vec(&phi1, &vc, k), k);
                let w = mat_vec(&phi2, &vc, k);
                let r0: f64 = (0..k).map(|i| occupancy[i] * vc[i] * 2.0 * w[i]).sum();
                (u, r0)
            }
        };
        let modes = modes(&q, k, &occupancy, max_sweeps(k)).ok_or_else(|| no_modes(burst))?;
        Ok(BurstModel {
            burst: burst.clone(),
            sample_rate_hz,
            q,
            occupancy,
            mean,
            process_variance,
            e,
            phi1_sq_v,
            sample_variance,
            modes,
        })
    }

    /// The burst source this models.
    pub fn burst(&self) -> &Burst {
        &self.burst
    }

    /// Sample rate in Hz.
    pub fn sample_rate_hz(&self) -> f64 {
        self.sample_rate_hz
    }

    /// Generator matrix Q in 1/s, row-major K×K (rows sum to 0).
    pub fn generator(&self) -> &[f64] {
        &self.q
    }

    /// One-step transition matrix `P = e^{Q/fs}` (dimensionless, row-major K×K): `P[i][j]`
    /// is the probability of level j one sample after level i.
    pub fn transition(&self) -> Vec<f64> {
        let k = self.burst.len();
        let mut p = self.e.clone();
        for i in 0..k {
            p[i * k + i] += 1.0;
        }
        p
    }

    /// Stationary occupancy of each level (fractions of time, summing to 1).
    pub fn occupancy(&self) -> &[f64] {
        &self.occupancy
    }

    /// Mean of the samples (the DC level), in the unit: Σ πᵢ vᵢ. The same for both samplings.
    pub fn mean(&self) -> f64 {
        self.mean
    }

    /// Variance of the continuous path in unit²: Σ πᵢ (vᵢ − μ)².
    pub fn process_variance(&self) -> f64 {
        self.process_variance
    }

    /// Variance of the samples in unit²: the process variance for instant sampling, `R[0]`
    /// (smaller) for interval-mean sampling. Equals the integral of [`BurstModel::density`]
    /// over 0…fs/2.
    pub fn variance(&self) -> f64 {
        self.sample_variance
    }

    /// Mean square of the samples (AC + DC) in unit²: variance + mean².
    pub fn mean_square(&self) -> f64 {
        self.sample_variance + self.mean * self.mean
    }

    /// Relaxation modes, slowest first (K − 1 non-zero eigenvalues, complex pairs once).
    pub fn modes(&self) -> &[Mode] {
        &self.modes
    }

    /// Corner frequencies in Hz of every mode, lowest first.
    pub fn corners_hz(&self) -> Vec<f64> {
        self.modes.iter().map(|m| m.corner_hz).collect()
    }

    /// Mean number of jumps per second in the stationary chain: Σ πᵢ/τᵢ (1/s).
    pub fn jump_rate_hz(&self) -> f64 {
        self.occupancy
            .iter()
            .zip(&self.burst.dwell_s)
            .map(|(p, t)| p / t)
            .sum()
    }

    /// Exact one-sided density of the samples at `f` Hz (0 ≤ f ≤ fs/2), in unit²/Hz, DC
    /// excluded (the mean is a line at 0 Hz, not part of the density): the point-sampled or
    /// interval-mean chain of the module documentation, aliasing included.
    pub fn density(&self, f: f64) -> f64 {
        let k = self.burst.len();
        let fs = self.sample_rate_hz;
        let (s, c) = (2.0 * PI * f / fs).sin_cos();
        let z = Complex::new(c, -s);
        // M = I − z(P − Π) = (1 − z)I − zE + zΠ; 1 − z formed without cancellation.
        let half = (PI * f / fs).sin();
        let one_minus_z = Complex::new(2.0 * half * half, s);
        let mut m = vec![Complex::new(0.0, 0.0); k * k];
        for i in 0..k {
            for j in 0..k {
                let mut x = -z * (self.e[i * k + j] - self.occupancy[j]);
                if i == j {
                    x += one_minus_z;
                }
                m[i * k + j] = x;
            }
        }
        let vc: Vec<f64> = self.burst.levels.iter().map(|v| v - self.mean).collect();
        let weighted = |w: &[Complex<f64>]| -> Complex<f64> {
            (0..k).map(|i| w[i] * (self.occupancy[i] * vc[i])).sum()
        };
        match self.burst.sampling {
            BurstSampling::Instant => {
                let w = solve(m, vc.iter().map(|&x| Complex::new(x, 0.0)).collect(), k);
                (2.0 / fs) * (2.0 * weighted(&w).re - self.sample_variance)
            }
            BurstSampling::Mean => {
                let rhs = self
                    .phi1_sq_v
                    .iter()
                    .map(|&x| Complex::new(x, 0.0))
                    .collect();
                let w = solve(m, rhs, k);
                (2.0 / fs) * (self.sample_variance + 2.0 * (z * weighted(&w)).re)
            }
        }
        .max(0.0)
    }

    /// One-sided density of the continuous path at `f` Hz, in unit²/Hz, before sampling:
    /// `4·Re v'ᵀ diag(π)(i2πf·I − Q + Π)⁻¹ v'`, the sum of Lorentzians (REFERENCES §4).
    pub fn continuous_density(&self, f: f64) -> f64 {
        let k = self.burst.len();
        let w = 2.0 * PI * f;
        let mut m = vec![Complex::new(0.0, 0.0); k * k];
        for i in 0..k {
            for j in 0..k {
                let mut x = Complex::new(self.occupancy[j] - self.q[i * k + j], 0.0);
                if i == j {
                    x += Complex::new(0.0, w);
                }
                m[i * k + j] = x;
            }
        }
        let vc: Vec<f64> = self.burst.levels.iter().map(|v| v - self.mean).collect();
        let sol = solve(m, vc.iter().map(|&x| Complex::new(x, 0.0)).collect(), k);
        let s: Complex<f64> = (0..k).map(|i| sol[i] * (self.occupancy[i] * vc[i])).sum();
        (4.0 * s.re).max(0.0)
    }
}

/// The generator matrix Q of `burst` in 1/s, row-major K×K (see the module documentation).
/// Fails with [`Error::Unsupported`] if the burst is not a valid chain (see [`Burst`]): fewer
/// than two levels, a dwell time that is not positive and finite, a `next` row of the wrong
/// length or with an entry that is negative or not finite, or a level that is not finite.
fn generator_matrix(burst: &Burst) -> Result<Vec<f64>> {
    let k = burst.len();
    let bad = |m: String| Err(Error::Unsupported(format!("burst {:?}: {m}", burst.name)));
    if k < 2 || burst.dwell_s.len() != k || burst.next.len() != k {
        return bad("needs at least two levels, one dwell time and one next row each".into());
    }
    if let Some(v) = burst.levels.iter().find(|v| !v.is_finite()) {
        return bad(format!("every level must be finite, got {v}"));
    }
    let mut q = vec![0.0; k * k];
    for i in 0..k {
        let tau = burst.dwell_s[i];
        let row = &burst.next[i];
        if !(tau > 0.0 && tau.is_finite())
            || row.len() != k
            || row.iter().any(|p| !(p.is_finite() && *p >= 0.0))
        {
            return bad(format!(
                "level {i}: dwell must be > 0 and next must have {k} entries, each finite and \
                 ≥ 0"
            ));
        }
        for j in 0..k {
            if i != j {
                q[i * k + j] = row[j] / tau;
            }
        }
        q[i * k + i] = -1.0 / tau;
    }
    if q.iter().any(|x| !x.is_finite()) {
        return bad("every jump rate next/dwell must be finite (1/s)".into());
    }
    Ok(q)
}

/// The stationary occupancy of `burst`, whose generator is `q`; fails if some level is not
/// reachable from every other.
fn occupancy_of(burst: &Burst, q: &[f64]) -> Result<Vec<f64>> {
    let occupancy = stationary(q, burst.len());
    if occupancy.iter().any(|p| !(p.is_finite() && *p > 0.0)) {
        return Err(Error::Unsupported(format!(
            "burst {:?}: every level must be reachable from every other",
            burst.name
        )));
    }
    Ok(occupancy)
}

/// The relaxation modes of `burst` (those of [`BurstModel::modes`], which do not depend on the
/// sample rate), in bounded time: fails with [`Error::Unsupported`] if the burst is not a
/// valid chain or its eigenvalues do not converge. The profile reader calls this, so that a
/// chain no command can model is refused when it is read.
pub fn relaxation_modes(burst: &Burst) -> Result<Vec<Mode>> {
    let k = burst.len();
    let q = generator_matrix(burst)?;
    let occupancy = occupancy_of(burst, &q)?;
    modes(&q, k, &occupancy, max_sweeps(k)).ok_or_else(|| no_modes(burst))
}

fn no_modes(burst: &Burst) -> Error {
    Error::Unsupported(format!(
        "burst {:?}: the relaxation rates of its chain (the eigenvalues of its generator) did \
         not converge within {} QR sweeps; change a dwell time or jump probability slightly",
        burst.name,
        max_sweeps(burst.len())
    ))
}

/// Stationary distribution of the rate matrix `q` (K×K) by the Grassmann–Taksar–Heyman
/// elimination, which uses only sums and products of non-negative rates (no cancellation).
fn stationary(q: &[f64], k: usize) -> Vec<f64> {
    let mut a = q.to_vec();
    for n in (1..k).rev() {
        let s: f64 = (0..n).map(|j| a[n * k + j]).sum();
        for i in 0..n {
            a[i * k + n] /= s;
        }
        for i in 0..n {
            for j in 0..n {
                if i != j {
                    a[i * k + j] += a[i * k + n] * a[n * k + j];
                }
            }
        }
    }
    let mut p = vec![0.0; k];
    p[0] = 1.0;
    for j in 1..k {
        p[j] = (0..j).map(|i| p[i] * a[i * k + j]).sum();
    }
    let total: f64 = p.iter().sum();
    p.iter().map(|x| x / total).collect()
}

fn mat_mul(a: &[f64], b: &[f64], k: usize) -> Vec<f64> {
    let mut c = vec![0.0; k * k];
    for i in 0..k {
        for l in 0..k {
            let x = a[i * k + l];
            if x != 0.0 {
                for j in 0..k {
                    c[i * k + j] += x * b[l * k + j];
                }
            }
        }
    }
    c
}

fn mat_vec(a: &[f64], v: &[f64], k: usize) -> Vec<f64> {
    (0..k)
        .map(|i| (0..k).map(|j| a[i * k + j] * v[j]).sum())
        .collect()
}

/// `(e^A − I, φ₁(A), φ₂(A))` for a K×K matrix `A` (row-major): Taylor series of `A/2^s`
/// (‖A/2^s‖∞ ≤ 1/4), then s doublings `φ₂(2X) = (φ₁(X)² + 2φ₂(X))/4`,
/// `φ₁(2X) = φ₁(X) + φ₁(X)·E(X)/2`, `E(2X) = 2E(X) + E(X)²` (exact identities of the
/// exponential; the three functions of X commute).
fn exp_phi(a: &[f64], k: usize) -> (Vec<f64>, Vec<f64>, Vec<f64>) {
    let norm = (0..k)
        .map(|i| (0..k).map(|j| a[i * k + j].abs()).sum::<f64>())
        .fold(0.0, f64::max);
    let mut s = 0;
    while norm * 0.5f64.powi(s) > 0.25 {
        s += 1;
    }
    let scale = 0.5f64.powi(s);
    let b: Vec<f64> = a.iter().map(|x| x * scale).collect();
    let eye = |c: f64| {
        let mut m = vec![0.0; k * k];
        for i in 0..k {
            m[i * k + i] = c;
        }
        m
    };
    // Terms B^n/(n+2)!, accumulated into the three series.
    let mut e = vec![0.0; k * k];
    let mut phi1 = eye(1.0);
    let mut phi2 = eye(0.5);
    let mut power = eye(1.0); // B^n
    let mut fact = 1.0; // n!
    for n in 1..=30 {
        power = mat_mul(&power, &b, k);
        fact *= n as f64;
        let mut biggest: f64 = 0.0;
        for idx in 0..k * k {
            let t = power[idx] / fact;
            e[idx] += t;
            phi1[idx] += t / (n + 1) as f64;
            phi2[idx] += t / ((n + 1) * (n + 2)) as f64;
            biggest = biggest.max(t.abs());
        }
        if biggest < 1e-20 * (1.0 + norm * scale) {
            break;
        }
    }
    for _ in 0..s {
        let p1sq = mat_mul(&phi1, &phi1, k);
        let p1e = mat_mul(&phi1, &e, k);
        let esq = mat_mul(&e, &e, k);
        for idx in 0..k * k {
            phi2[idx] = (p1sq[idx] + 2.0 * phi2[idx]) / 4.0;
            phi1[idx] += p1e[idx] / 2.0;
            e[idx] = 2.0 * e[idx] + esq[idx];
        }
    }
    (e, phi1, phi2)
}

/// Solve `m·x = b` (K×K complex, row-major) by Gaussian elimination with partial pivoting.
fn solve(mut m: Vec<Complex<f64>>, mut b: Vec<Complex<f64>>, k: usize) -> Vec<Complex<f64>> {
    for col in 0..k {
        let piv = (col..k)
            .max_by(|&r, &s| m[r * k + col].norm().total_cmp(&m[s * k + col].norm()))
            .unwrap_or(col);
        if piv != col {
            for j in 0..k {
                m.swap(col * k + j, piv * k + j);
            }
            b.swap(col, piv);
        }
        let d = m[col * k + col];
        for r in col + 1..k {
            let factor = m[r * k + col] / d;
            if factor.norm() == 0.0 {
                continue;
            }
            for j in col..k {
                let x = m[col * k + j];
                m[r * k + j] -= factor * x;
            }
            let x = b[col];
            b[r] -= factor * x;
        }
    }
    let mut x = vec![Complex::new(0.0, 0.0); k];
    for r in (0..k).rev() {
        let mut acc = b[r];
        for j in r + 1..k {
            acc -= m[r * k + j] * x[j];
        }
        x[r] = acc / m[r * k + r];
    }
    x
}

/// Most QR sweeps an eigenvalue solve of a K-level chain may take: 30·max(K, 10), the
/// iteration limit of LAPACK's Hessenberg QR (`dlahqr`, ITMAX = 30·max(10, n)); common
/// practice. Each sweep costs O(K²), so the solve ends in O(K³) time whatever the chain.
pub fn max_sweeps(k: usize) -> usize {
    30 * k.max(10)
}

/// The relaxation modes of generator `q` (1/s, K×K, stationary occupancy `occupancy`): its
/// eigenvalues without the zero one, complex pairs once, slowest first. `None` if the
/// eigenvalues do not converge within `sweeps` QR sweeps.
///
/// The general real Schur decomposition comes first (its result, when it converges, is the
/// one every earlier version printed). It can stall on a multiple eigenvalue (a chain with
/// many equal dwell times): then a reversible chain (detailed balance πᵢQᵢⱼ = πⱼQⱼᵢ, which
/// holds for every birth–death chain and every chain with the default `next`, REFERENCES §4)
/// is solved as the symmetric matrix D^{1/2}·Q·D^{−1/2}, D = diag(π), similar to Q and so
/// with the same eigenvalues, by the symmetric QR algorithm, which converges for any
/// spectrum (common practice).
fn modes(q: &[f64], k: usize, occupancy: &[f64], sweeps: usize) -> Option<Vec<Mode>> {
    let m = nalgebra::DMatrix::from_row_slice(k, k, q);
    let mut eig: Vec<Complex<f64>> = match nalgebra::Schur::try_new(m, f64::EPSILON, sweeps) {
        Some(schur) => schur
            .complex_eigenvalues()
            .iter()
            .map(|c| Complex::new(c.re, c.im))
            .collect(),
        None => reversible_eigenvalues(q, k, occupancy, sweeps)?,
    };
    // The stationary eigenvalue is 0; drop the one nearest it.
    if let Some(zero) = (0..eig.len()).min_by(|&a, &b| eig[a].norm().total_cmp(&eig[b].norm())) {
        eig.remove(zero);
    }
    let mut out: Vec<Mode> = eig
        .iter()
        .filter(|l| l.im >= -1e-9 * l.norm())
        .map(|l| {
            let real = l.im.abs() <= 1e-9 * l.norm();
            Mode {
                corner_hz: -l.re / (2.0 * PI),
                oscillation_hz: if real { 0.0 } else { l.im.abs() / (2.0 * PI) },
            }
        })
        .collect();
    out.sort_by(|a, b| a.corner_hz.total_cmp(&b.corner_hz));
    Some(out)
}

/// Relative mismatch of the probability flows πᵢQᵢⱼ and πⱼQⱼᵢ up to which a chain counts as
/// reversible: far above the rounding of the occupancy (a few ulps), far below anything a
/// profile writes on purpose.
const REVERSIBLE_TOLERANCE: f64 = 1e-10;

/// The eigenvalues of a reversible generator `q` (1/s) as those of the symmetric
/// D^{1/2}·Q·D^{−1/2} (see [`modes`]); `None` if the chain is not reversible or the symmetric
/// solve does not converge within `sweeps` sweeps.
fn reversible_eigenvalues(
    q: &[f64],
    k: usize,
    occupancy: &[f64],
    sweeps: usize,
) -> Option<Vec<Complex<f64>>> {
    for i in 0..k {
        for j in i + 1..k {
            let (a, b) = (occupancy[i] * q[i * k + j], occupancy[j] * q[j * k + i]);
            if (a - b).abs() > REVERSIBLE_TOLERANCE * a.max(b) {
                return None;
            }
        }
    }
    // S_ij = √πᵢ·Qᵢⱼ/√πⱼ = πᵢQᵢⱼ/√(πᵢπⱼ); the two flows are averaged so S is exactly symmetric.
    let s = nalgebra::DMatrix::from_fn(k, k, |i, j| {
        if i == j {
            q[i * k + i]
        } else {
            let flow = 0.5 * (occupancy[i] * q[i * k + j] + occupancy[j] * q[j * k + i]);
            flow / (occupancy[i] * occupancy[j]).sqrt()
        }
    });
    let eig = nalgebra::SymmetricEigen::try_new(s, f64::EPSILON, sweeps)?;
    Some(
        eig.eigenvalues
            .iter()
            .map(|&l| Complex::new(l, 0.0))
            .collect(),
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    fn burst(
        levels: &[f64],
        dwell: &[f64],
        next: Option<Vec<Vec<f64>>>,
        s: BurstSampling,
    ) -> Burst {
        Burst {
            name: "t".into(),
            levels: levels.to_vec(),
            dwell_s: dwell.to_vec(),
            next: next.unwrap_or_else(|| Burst::default_next(levels.len())),
            sampling: s,
        }
    }

    /// ∫₀^hi g by composite Simpson with 20000 intervals (g is smooth here).
    fn simpson(g: &dyn Fn(f64) -> f64, hi: f64) -> f64 {
        let n = 20_000;
        let h = hi / n as f64;
        let mut s = g(0.0) + g(hi);
        for i in 1..n {
            s += g(i as f64 * h) * if i % 2 == 1 { 4.0 } else { 2.0 };
        }
        s * h / 3.0
    }

    /// REFERENCES §4 check values [V] (Machlup 1954): τ_up = 10 ms, τ_dn = 30 ms, Δ = 1 V →
    /// p_up = 0.25, variance 0.1875 V², f_c = 21.22 Hz, S(0) = 5.625e−3 V²/Hz.
    #[test]
    fn two_level_check_values_from_machlup() {
        let b = burst(&[0.0, 1.0], &[0.030, 0.010], None, BurstSampling::Instant);
        let m = BurstModel::new(&b, 48_000.0).unwrap();
        assert!(
            (m.occupancy()[1] - 0.25).abs() < 1e-15,
            "{:?}",
            m.occupancy()
        );
        assert!((m.variance() - 0.1875).abs() < 1e-15);
        assert!((m.mean() - 0.25).abs() < 1e-15);
        let fc = m.corners_hz();
        assert_eq!(fc.len(), 1);
        // λ = 1/τ_up + 1/τ_dn = 133.33 /s, f_c = λ/2π = 21.2207 Hz; printed to 4 figures.
        assert!((fc[0] - 21.22).abs() < 0.005, "{fc:?}");
        assert!((fc[0] - (1.0 / 0.01 + 1.0 / 0.03) / (2.0 * PI)).abs() < 1e-9);
        assert!((m.continuous_density(0.0) - 5.625e-3).abs() < 1e-15);
        // Machlup's form 4Δ²/[(τ_up+τ_dn)(λ² + ω²)] at every frequency.
        let lam: f64 = 1.0 / 0.01 + 1.0 / 0.03;
        for f in [0.0, 1.0, 21.22, 300.0, 5000.0] {
            let w = 2.0 * PI * f;
            let want = 4.0 / (0.04 * (lam * lam + w * w));
            let got = m.continuous_density(f);
            assert!((got / want - 1.0).abs() < 1e-12, "{f} Hz: {got} vs {want}");
        }
        // S(0)·f_c·π/2 = variance (REFERENCES §4).
        assert!((m.continuous_density(0.0) * fc[0] * PI / 2.0 - 0.1875).abs() < 1e-12);
    }

    /// The point-sampled two-level density is the aliased Lorentzian of REFERENCES §2,
    /// (2σ²/fs)(1 − a²)/(1 − 2a cos 2πf/fs + a²), a = e^{−λ/fs}, at fast and slow rates.
    #[test]
    fn sampled_two_level_density_is_the_aliased_lorentzian() {
        for fs in [200.0, 1000.0, 48_000.0, 1e7] {
            let b = burst(&[0.0, 1.0], &[0.030, 0.010], None, BurstSampling::Instant);
            let m = BurstModel::new(&b, fs).unwrap();
            let lam: f64 = 1.0 / 0.01 + 1.0 / 0.03;
            let a = (-lam / fs).exp();
            for i in 0..=50 {
                let f = fs / 2.0 * i as f64 / 50.0;
                // 1 − 2a·cos ω + a² = (1 − a)² + 4a·sin²(ω/2), without cancellation.
                let want = 2.0 * 0.1875 / fs * (-(-2.0 * lam / fs).exp_m1())
                    / ((-lam / fs).exp_m1().powi(2) + 4.0 * a * (PI * f / fs).sin().powi(2));
                let got = m.density(f);
                assert!(
                    (got / want - 1.0).abs() < 1e-9,
                    "fs {fs}, {f} Hz: {got} vs {want}"
                );
            }
            // P = e^{Q/fs}: P[0][1] = p_up (1 − e^{−λ/fs}) for two levels.
            let p = m.transition();
            assert!((p[1] / (0.25 * -(-lam / fs).exp_m1()) - 1.0).abs() < 1e-12);
        }
    }

    /// The instant density of a three-level chain equals the continuous density folded over
    /// all aliases, Σ_m S_c(|f + m·fs|) (exact sampling identity, REFERENCES §4); the
    /// interval-mean density equals the same sum weighted by the one-sample box filter,
    /// sinc²((f + m·fs)/fs) (common practice: a mean over T is a box filter before sampling).
    #[test]
    fn sampled_densities_are_folded_continuous_densities() {
        let next = vec![
            vec![0.0, 0.7, 0.3],
            vec![1.0, 0.0, 0.0],
            vec![0.5, 0.5, 0.0],
        ];
        let fs = 1000.0;
        for sampling in [BurstSampling::Instant, BurstSampling::Mean] {
            let b = burst(
                &[0.0, 3.0, 7.0],
                &[0.02, 0.005, 0.002],
                Some(next.clone()),
                sampling,
            );
            let m = BurstModel::new(&b, fs).unwrap();
            for f in [3.0, 50.0, 170.0, 420.0, 499.0] {
                let mut sum = 0.0;
                let terms = 400_000i64;
                for j in -terms..=terms {
                    let g = f + j as f64 * fs;
                    let w = match sampling {
                        BurstSampling::Instant => 1.0,
                        BurstSampling::Mean => {
                            let x = PI * g / fs;
                            if x == 0.0 { 1.0 } else { (x.sin() / x).powi(2) }
                        }
                    };
                    sum += m.continuous_density(g.abs()) * w;
                }
                // One-sided S_d(f) = 2·Σ_m S2_c(f + m·fs) = Σ_m S_c(|f + m·fs|), S_c = 2·S2_c.
                let want = sum;
                let got = m.density(f);
                // The truncated instant sum misses ≈ 2·S_c(Mfs)·M·fs/fs ∝ 1/M of the tail.
                let tol = match sampling {
                    BurstSampling::Instant => 1e-5,
                    BurstSampling::Mean => 1e-9,
                };
                assert!(
                    (got / want - 1.0).abs() < tol,
                    "{sampling:?} {f} Hz: {got} vs {want}"
                );
            }
        }
    }

    /// The integral of the sampled density over 0…fs/2 is the sample variance, for both
    /// samplings (Parseval); the mean sampling has less variance than the path.
    #[test]
    fn density_integrates_to_the_sample_variance() {
        let fs = 400.0;
        for sampling in [BurstSampling::Instant, BurstSampling::Mean] {
            let b = burst(&[-1.0, 2.0, 5.0], &[0.01, 0.004, 0.02], None, sampling);
            let m = BurstModel::new(&b, fs).unwrap();
            let v = simpson(&|f| m.density(f), fs / 2.0);
            assert!(
                (v / m.variance() - 1.0).abs() < 1e-8,
                "{sampling:?}: {v} vs {}",
                m.variance()
            );
            if sampling == BurstSampling::Mean {
                assert!(m.variance() < m.process_variance());
            }
        }
    }

    /// Occupancy of a birth–death chain: π_{i+1}/π_i = q_{i,i+1}/q_{i+1,i} (REFERENCES §4);
    /// with the default `next` the occupancy of any chain is proportional to the dwell times
    /// (every level is left towards every other with equal probability: symmetric jumps).
    #[test]
    fn occupancy_follows_the_detailed_balance() {
        let next = vec![
            vec![0.0, 1.0, 0.0],
            vec![0.4, 0.0, 0.6],
            vec![0.0, 1.0, 0.0],
        ];
        let tau = [0.01, 0.002, 0.05];
        let b = burst(
            &[0.0, 1.0, 2.0],
            &tau,
            Some(next.clone()),
            BurstSampling::Instant,
        );
        let m = BurstModel::new(&b, 1e4).unwrap();
        let p = m.occupancy();
        let rate = |i: usize, j: usize| next[i][j] / tau[i];
        assert!((p[1] / p[0] - rate(0, 1) / rate(1, 0)).abs() < 1e-12);
        assert!((p[2] / p[1] - rate(1, 2) / rate(2, 1)).abs() < 1e-12);
        let d = burst(
            &[0.0, 1.0, 2.0, 3.0],
            &[1.0, 2.0, 3.0, 4.0],
            None,
            BurstSampling::Instant,
        );
        let m = BurstModel::new(&d, 1e4).unwrap();
        for (i, p) in m.occupancy().iter().enumerate() {
            assert!((p - (i + 1) as f64 / 10.0).abs() < 1e-14);
        }
        // Birth–death chains are reversible: real eigenvalues only.
        assert!(m.modes().iter().all(|md| md.oscillation_hz == 0.0));
    }

    /// A cyclic chain 0 → 1 → 2 → 0 with equal dwell τ has generator eigenvalues
    /// (−1 + e^{±i2π/3})/τ (a circulant matrix, exact math): one complex pair with corner
    /// 1.5/(2πτ) and oscillation (√3/2)/(2πτ).
    #[test]
    fn a_circulating_chain_has_a_complex_mode() {
        let next = vec![
            vec![0.0, 1.0, 0.0],
            vec![0.0, 0.0, 1.0],
            vec![1.0, 0.0, 0.0],
        ];
        let tau = 0.01;
        let b = burst(
            &[0.0, 1.0, 2.0],
            &[tau; 3],
            Some(next),
            BurstSampling::Instant,
        );
        let m = BurstModel::new(&b, 1e4).unwrap();
        assert_eq!(m.modes().len(), 1, "{:?}", m.modes());
        let md = m.modes()[0];
        assert!((md.corner_hz - 1.5 / (2.0 * PI * tau)).abs() < 1e-9);
        assert!((md.oscillation_hz - 3f64.sqrt() / 2.0 / (2.0 * PI * tau)).abs() < 1e-9);
        // The density is still the fold of the continuous one and integrates to the variance.
        let v = simpson(&|f| m.density(f), 5e3);
        assert!((v / m.variance() - 1.0).abs() < 1e-8);
    }

    /// Slow chains keep their precision: at band.low-like ratios (dwell 1000 s at 1 MHz) the
    /// density near DC matches the aliased Lorentzian of REFERENCES §2 to 1e−6.
    #[test]
    fn slow_chains_keep_their_precision() {
        let fs = 1e6;
        let b = burst(&[0.0, 1.0], &[3000.0, 1000.0], None, BurstSampling::Instant);
        let m = BurstModel::new(&b, fs).unwrap();
        let lam: f64 = 1.0 / 3000.0 + 1.0 / 1000.0;
        let var = 0.1875;
        let a = (-lam / fs).exp();
        for f in [0.0, 1e-5, 1e-3, 1.0, 1e3, 5e5] {
            let want = 2.0 * var / fs * (-(-2.0 * lam / fs).exp_m1())
                / ((-lam / fs).exp_m1().powi(2) + 4.0 * a * (PI * f / fs).sin().powi(2));
            let got = m.density(f);
            assert!(
                (got / want - 1.0).abs() < 1e-6,
                "{f} Hz: {got:e} vs {want:e}"
            );
        }
    }

    /// Equal dwell times τ with the default `next` give Q = λ(Π − I), λ = K/((K − 1)τ), with
    /// Π = 1πᵀ and π uniform (exact algebra: Qᵢⱼ = 1/((K − 1)τ), Qᵢᵢ = −1/τ): the K − 1
    /// non-zero eigenvalues all equal −λ, `e^{Qt} = Π + e^{−λt}(I − Π)`, so the
    /// autocovariance is σ²e^{−λ|t|} and the point-sampled density the aliased Lorentzian of
    /// REFERENCES §2. σ² is the variance of K equally likely levels 0, d, …, (K − 1)d,
    /// d²(K² − 1)/12 (the discrete uniform distribution; common practice). Such a chain has
    /// one eigenvalue of multiplicity K − 1, on which the general Schur solve stalls from
    /// K = 36 on; each of these must finish, in the symmetric solve, with these values.
    #[test]
    fn equal_dwell_chains_of_many_levels_have_their_closed_form() {
        let (fs, tau, d) = (100e3, 1e-3, 10e-9);
        for k in [36, 64, crate::profile::MAX_BURST_LEVELS] {
            let levels: Vec<f64> = (0..k).map(|i| i as f64 * d).collect();
            let b = burst(&levels, &vec![tau; k], None, BurstSampling::Instant);
            let m = BurstModel::new(&b, fs).unwrap();
            let kf = k as f64;
            let var = d * d * (kf * kf - 1.0) / 12.0;
            assert!(
                (m.variance() / var - 1.0).abs() < 1e-12,
                "K {k}: {}",
                m.variance()
            );
            let lam = kf / ((kf - 1.0) * tau);
            assert_eq!(m.modes().len(), k - 1, "K {k}");
            for md in m.modes() {
                // Eigenvalues of a symmetric matrix to a few ulps of its norm, ≈ 2λ.
                assert!(
                    (md.corner_hz / (lam / (2.0 * PI)) - 1.0).abs() < 1e-12,
                    "K {k}"
                );
                assert_eq!(md.oscillation_hz, 0.0);
            }
            let a = (-lam / fs).exp();
            for i in 0..=20 {
                let f = fs / 2.0 * i as f64 / 20.0;
                let want = 2.0 * var / fs * (-(-2.0 * lam / fs).exp_m1())
                    / ((-lam / fs).exp_m1().powi(2) + 4.0 * a * (PI * f / fs).sin().powi(2));
                let got = m.density(f);
                // A linear solve of order K ≤ 128 on a well-conditioned matrix: 1e−9 leaves
                // room for K·ε growth.
                assert!(
                    (got / want - 1.0).abs() < 1e-9,
                    "K {k}, {f} Hz: {got} vs {want}"
                );
            }
        }
    }

    /// Where the general solve converges, its eigenvalues are bit for bit those of the
    /// unbounded solve every earlier version used (so corner frequencies in manifests keep
    /// their bytes), and the symmetric solve of a reversible chain agrees with them to
    /// rounding.
    #[test]
    fn bounded_and_symmetric_solves_agree_with_the_unbounded_one() {
        let bd = vec![
            vec![0.0, 1.0, 0.0, 0.0],
            vec![0.4, 0.0, 0.6, 0.0],
            vec![0.0, 0.5, 0.0, 0.5],
            vec![0.0, 0.0, 1.0, 0.0],
        ];
        let chains = [
            burst(&[0.0, 1.0], &[0.03, 0.01], None, BurstSampling::Instant),
            burst(
                &[0.0, 1.0, 2.0, 5.0],
                &[1.0, 2.0, 3.0, 4.0],
                None,
                BurstSampling::Instant,
            ),
            burst(
                &[0.0, 1.0, 2.0, 3.0],
                &[0.01, 0.002, 0.05, 0.3],
                Some(bd),
                BurstSampling::Mean,
            ),
        ];
        for b in &chains {
            let k = b.len();
            let q = generator_matrix(b).unwrap();
            let occ = occupancy_of(b, &q).unwrap();
            let unbounded = nalgebra::DMatrix::from_row_slice(k, k, &q).complex_eigenvalues();
            let bounded = nalgebra::Schur::try_new(
                nalgebra::DMatrix::from_row_slice(k, k, &q),
                f64::EPSILON,
                max_sweeps(k),
            )
            .unwrap()
            .complex_eigenvalues();
            for (u, v) in unbounded.iter().zip(bounded.iter()) {
                assert_eq!(
                    (u.re.to_bits(), u.im.to_bits()),
                    (v.re.to_bits(), v.im.to_bits())
                );
            }
            let mut sym: Vec<f64> = reversible_eigenvalues(&q, k, &occ, max_sweeps(k))
                .unwrap()
                .iter()
                .map(|c| c.re)
                .collect();
            let mut general: Vec<f64> = unbounded.iter().map(|c| c.re).collect();
            sym.sort_by(f64::total_cmp);
            general.sort_by(f64::total_cmp);
            let scale = q.iter().fold(0.0f64, |m, x| m.max(x.abs()));
            for (s, g) in sym.iter().zip(&general) {
                assert!((s - g).abs() < 1e-12 * scale, "{sym:?} vs {general:?}");
            }
        }
    }

    /// A chain that is not reversible has no symmetric form: when its general solve runs out
    /// of sweeps the modes are refused (`None`), not looped for; with enough sweeps they come.
    #[test]
    fn a_solve_out_of_sweeps_is_refused() {
        // A ring 0 → 1 → … → 7 → 0 with one shortcut back: it circulates, so it is not
        // reversible.
        let k = 8;
        let mut next = vec![vec![0.0; k]; k];
        for (i, row) in next.iter_mut().enumerate() {
            row[(i + 1) % k] = if i == 3 { 0.5 } else { 1.0 };
        }
        next[3][0] = 0.5;
        let dwell: Vec<f64> = (0..k).map(|i| 0.01 * (1.0 + i as f64)).collect();
        let levels: Vec<f64> = (0..k).map(|i| i as f64).collect();
        let b = burst(&levels, &dwell, Some(next), BurstSampling::Instant);
        let q = generator_matrix(&b).unwrap();
        let occ = occupancy_of(&b, &q).unwrap();
        assert!(reversible_eigenvalues(&q, k, &occ, 1000).is_none());
        assert!(modes(&q, k, &occ, 1).is_none());
        assert!(modes(&q, k, &occ, max_sweeps(k)).unwrap().len() >= k / 2);
        assert!(relaxation_modes(&b).is_ok());
    }
}
