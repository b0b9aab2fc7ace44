//! Several channels measured together: the zero-lag correlation matrix with a Fisher-z
//! interval per entry, and the magnitude-squared coherence of every pair of channels in bands,
//! from Welch cross-spectra on the same segments as the densities.
//!
//! Conventions (all values in the capture's unit u, after scaling):
//!
//! * **Correlation.** `r_ij = Σ x'_i x'_j / √(Σ x'_i² · Σ x'_j²)` over the N frames, with
//!   x' each channel less the line its density estimate takes out (the least-squares line, or
//!   nothing when the drift is kept) and less its mean: Pearson's coefficient, the definition
//!   of `numpy.corrcoef`.
//! * **Its interval.** Fisher's z = atanh r is close to normal with variance 1/(N' − 3)
//!   (R. A. Fisher, "On the 'probable error' of a coefficient of correlation deduced from a
//!   small sample", *Metron* 1, 1921). For coloured noise the samples are not independent: N'
//!   is the effective number of independent samples
//!   `N' = N / Σ_τ ρ_ii(τ)·ρ_jj(τ)` (M. S. Bartlett, "Some aspects of the time-correlation
//!   problem in regard to tests of significance", *J. R. Stat. Soc.* 98, 1935; G. V. Bayley &
//!   J. M. Hammersley, "The 'effective' number of independent observations in an
//!   autocorrelated time series", *J. R. Stat. Soc. Suppl.* 8, 1946). The sum over lags is
//!   written through the one-sided densities G (Wiener–Khinchin, Parseval):
//!   `Σ_τ γ_ii(τ)γ_jj(τ) = (fs/2)·∫₀^{fs/2} G_i G_j df`, so
//!   `N' = N·(Σ_k G_i,k)(Σ_k G_j,k)·(2/L) / Σ_k G_i,k G_j,k` over the Welch bins k ≥ 1 of
//!   segments of L samples. For two channels that are mixtures of copies with one density
//!   (what `generate` makes), Bartlett's variance of r is (1 − ρ²)²/N' exactly to first order,
//!   so var z = 1/N' (derivation: the channel's cross-correlation is ρ times its
//!   autocorrelation). Taking the measured densities for the true ones makes N' slightly small
//!   (the mean of Ĝ² is G²·(1 + O(1/ν))): the interval errs on the wide side.
//! * **Coherence.** In a band B of Welch bins, `Ĉ = |Σ_k Σ_s X_i X_j*|² / (Σ_k Σ_s |X_i|² ·
//!   Σ_k Σ_s |X_j|²)` over the bins k ∈ B and the segments s (periodic Hann window, 50 %
//!   overlap, no detrending of the segments: the densities' segments). For a band of one bin
//!   this is `scipy.signal.coherence` at that bin.
//! * **Its distribution.** With n independent averages, Ĉ given the true coherence C has the
//!   density `(n − 1)(1 − C)ⁿ (1 − Ĉ)^{n−2} ₂F₁(n, n; 1; C·Ĉ)` (G. C. Carter, C. H. Knapp,
//!   A. H. Nuttall, "Estimation of the magnitude-squared coherence function via overlapped
//!   fast Fourier transform processing", *IEEE Trans. Audio Electroacoust.* AU-21(4),
//!   337–344, 1973). Expanding ₂F₁ term by term shows it is a negative-binomial mixture of
//!   beta laws: `Ĉ ~ Σ_j NB(j; n, C)·Beta(1 + j, n − 1)`, which gives the distribution
//!   function as a short sum of regularised incomplete beta functions ([`msc_cdf`]; the
//!   identity is checked against the density in the tests). A band's n is ν/2, with ν the
//!   band's equivalent degrees of freedom from the Welch estimate (overlap and neighbouring
//!   bins counted, as for the densities; ν = 2n for n independent averages, common practice).

use std::ops::Range;
use std::sync::Arc;

use rayon::prelude::*;
use realfft::num_complex::Complex;
use realfft::{RealFftPlanner, RealToComplex};
use statrs::distribution::{ContinuousCDF, Normal};
use statrs::function::beta::beta_reg;
use statrs::function::gamma::ln_gamma;

use super::trend::Trend;
use super::welch::hann_periodic;

/// The index of pair (i, j), i < j, among the pairs of `n` channels in row order
/// ((0,1), (0,2), …, (1,2), …).
pub fn pair_index(n: usize, i: usize, j: usize) -> usize {
    debug_assert!(i < j && j < n);
    i * (2 * n - i - 1) / 2 + (j - i - 1)
}

/// Every pair (i, j), i < j, of `n` channels in row order.
pub fn pairs(n: usize) -> Vec<(usize, usize)> {
    (0..n)
        .flat_map(|i| (i + 1..n).map(move |j| (i, j)))
        .collect()
}

/// One channel's FFT buffers.
struct ChannelWork {
    fft_in: Vec<f64>,
    fft_out: Vec<Complex<f64>>,
    scratch: Vec<Complex<f64>>,
}

/// The pass over a multi-channel capture's frames that measures the zero-lag products and
/// the Welch cross-spectra of every pair, summed in bands. Memory: one segment and one block
/// per channel, the bins of each channel's auto-spectrum, and pairs × bands sums.
pub struct CrossPass {
    channels: usize,
    seg_len: usize,
    hop: usize,
    window: Vec<f64>,
    fft: Arc<dyn RealToComplex<f64>>,
    removed: Vec<Trend>,
    shifts: Vec<f64>,
    bands: Vec<Range<usize>>,
    index: u64,
    /// Per channel: its samples less the line, from the start of the next segment.
    buffers: Vec<Vec<f64>>,
    work: Vec<ChannelWork>,
    /// Σ x, per channel, and Σ x_i x_j, i ≤ j packed by rows (x less line and shift).
    sums: Vec<f64>,
    products: Vec<f64>,
    /// Per channel, per bin: Σ over segments of |X_k|².
    auto_bins: Vec<Vec<f64>>,
    /// Per pair, per band: Σ over segments and the band's bins of X_i·X_j*.
    cross_bands: Vec<Vec<Complex<f64>>>,
    segments: usize,
}

impl CrossPass {
    /// For `removed.len()` channels at `sample_rate_hz` (only the segment length matters),
    /// segments of `seg_len` samples (even) at 50 % overlap, each channel less its line
    /// `removed[c]` ([`Trend::none`] keeps it as it is) for the spectra and less also
    /// `shifts[c]` (unit, near its mean) for the products; `bands` are ranges of Welch bins.
    pub fn new(
        seg_len: usize,
        removed: Vec<Trend>,
        shifts: Vec<f64>,
        bands: Vec<Range<usize>>,
    ) -> CrossPass {
        let channels = removed.len();
        let fft = RealFftPlanner::<f64>::new().plan_fft_forward(seg_len);
        let work = (0..channels)
            .map(|_| ChannelWork {
                fft_in: fft.make_input_vec(),
                fft_out: fft.make_output_vec(),
                scratch: fft.make_scratch_vec(),
            })
            .collect();
        let n_pairs = channels * channels.saturating_sub(1) / 2;
        CrossPass {
            channels,
            seg_len,
            hop: seg_len / 2,
            window: hann_periodic(seg_len),
            fft,
            removed,
            shifts,
            index: 0,
            buffers: vec![Vec::new(); channels],
            work,
            sums: vec![0.0; channels],
            products: vec![0.0; channels * (channels + 1) / 2],
            auto_bins: vec![vec![0.0; seg_len / 2 + 1]; channels],
            cross_bands: vec![vec![Complex::new(0.0, 0.0); bands.len()]; n_pairs],
            bands,
            segments: 0,
        }
    }

    /// Adds whole frames (interleaved: channel 0, 1, … of a frame, then the next frame).
    pub fn push(&mut self, frames: &[f64]) {
        let c = self.channels;
        let n = frames.len() / c;
        let mut x = vec![0.0; c];
        let mut block_sums = vec![0.0; c];
        let mut block_products = vec![0.0; self.products.len()];
        for (t, frame) in frames.chunks_exact(c).enumerate() {
            let i = self.index + t as u64;
            for ch in 0..c {
                let tr = &self.removed[ch];
                let v = if tr.samples == 0 {
                    frame[ch]
                } else {
                    frame[ch] - tr.at(i)
                };
                self.buffers[ch].push(v);
                x[ch] = v - self.shifts[ch];
                block_sums[ch] += x[ch];
            }
            let mut p = 0;
            for a in 0..c {
                for b in a..c {
                    block_products[p] += x[a] * x[b];
                    p += 1;
                }
            }
        }
        for (s, b) in self.sums.iter_mut().zip(&block_sums) {
            *s += b;
        }
        for (s, b) in self.products.iter_mut().zip(&block_products) {
            *s += b;
        }
        self.index += n as u64;
        while self.buffers[0].len() >= self.seg_len {
            self.segment();
            for b in &mut self.buffers {
                b.drain(..self.hop);
            }
        }
    }

    /// Transforms the segment at the start of every buffer and adds its products.
    fn segment(&mut self) {
        let (fft, window) = (self.fft.as_ref(), &self.window);
        self.work
            .par_iter_mut()
            .zip(&self.buffers)
            .zip(&mut self.auto_bins)
            .for_each(|((w, buf), auto)| {
                for ((dst, &v), &h) in w.fft_in.iter_mut().zip(buf.iter()).zip(window) {
                    *dst = v * h;
                }
                fft.process_with_scratch(&mut w.fft_in, &mut w.fft_out, &mut w.scratch)
                    .expect("FFT buffers were made by the plan, so their lengths match");
                for (a, z) in auto.iter_mut().zip(&w.fft_out) {
                    *a += z.norm_sqr();
                }
            });
        let n = self.channels;
        let (work, bands) = (&self.work, &self.bands);
        self.cross_bands
            .par_iter_mut()
            .zip(pairs(n))
            .for_each(|(sums, (i, j))| {
                let (xi, xj) = (&work[i].fft_out, &work[j].fft_out);
                for (s, band) in sums.iter_mut().zip(bands) {
                    for k in band.clone() {
                        *s += xi[k] * xj[k].conj();
                    }
                }
            });
        self.segments += 1;
    }

    /// The measurement so far.
    pub fn finish(self) -> CrossEstimate {
        let c = self.channels;
        let n = self.index as f64;
        // Row a of the packed upper triangle starts at a·c − a(a − 1)/2.
        let packed = |a: usize, b: usize| a * c - a * a.saturating_sub(1) / 2 + (b - a);
        let cov: Vec<Vec<f64>> = (0..c)
            .map(|a| {
                (0..c)
                    .map(|b| {
                        let (lo, hi) = (a.min(b), a.max(b));
                        let p = self.products[packed(lo, hi)];
                        (p - self.sums[lo] * self.sums[hi] / n) / n
                    })
                    .collect()
            })
            .collect();
        let correlation: Vec<Vec<f64>> = (0..c)
            .map(|a| {
                (0..c)
                    .map(|b| match a == b {
                        true => 1.0,
                        false => (cov[a][b] / (cov[a][a] * cov[b][b]).sqrt()).clamp(-1.0, 1.0),
                    })
                    .collect()
            })
            .collect();
        // One-sided densities up to a common factor (c_k = 1 at DC and Nyquist, 2 between),
        // from bin 1 on (bin 0 holds what is left of the mean).
        let last = self.seg_len / 2;
        let g: Vec<Vec<f64>> = self
            .auto_bins
            .iter()
            .map(|a| {
                (1..=last)
                    .map(|k| if k == last { a[k] } else { 2.0 * a[k] })
                    .collect()
            })
            .collect();
        let total: Vec<f64> = g.iter().map(|g| g.iter().sum()).collect();
        let n_eff: Vec<Vec<f64>> = (0..c)
            .map(|a| {
                (0..c)
                    .map(|b| {
                        let cross: f64 = g[a].iter().zip(&g[b]).map(|(x, y)| x * y).sum();
                        let ratio = total[a] * total[b] * 2.0 / self.seg_len as f64 / cross;
                        // Never more than the samples themselves.
                        (n * ratio).min(n)
                    })
                    .collect()
            })
            .collect();
        let auto = self
            .auto_bins
            .iter()
            .map(|a| {
                self.bands
                    .iter()
                    .map(|b| a[b.clone()].iter().sum())
                    .collect()
            })
            .collect();
        CrossEstimate {
            frames: self.index,
            covariance: cov,
            correlation,
            n_eff,
            segments: self.segments,
            bands: self.bands,
            auto,
            cross: self.cross_bands,
        }
    }
}

/// What [`CrossPass`] measured.
#[derive(Debug, Clone)]
pub struct CrossEstimate {
    /// Frames measured.
    pub frames: u64,
    /// Covariance matrix, unit² (over N, after the line and the mean are taken out).
    pub covariance: Vec<Vec<f64>>,
    /// Pearson's zero-lag correlation matrix (dimensionless, unit diagonal).
    pub correlation: Vec<Vec<f64>>,
    /// Effective number of independent samples N' per pair (Bartlett 1935; see the module
    /// docs), at most the number of frames.
    pub n_eff: Vec<Vec<f64>>,
    /// Welch segments per channel.
    pub segments: usize,
    /// The bands, as ranges of Welch bins.
    pub bands: Vec<Range<usize>>,
    /// Per channel, per band: Σ over segments and bins of |X|² (unscaled, FFT units).
    pub auto: Vec<Vec<f64>>,
    /// Per pair ([`pair_index`]), per band: Σ over segments and bins of X_i·X_j* (unscaled).
    pub cross: Vec<Vec<Complex<f64>>>,
}

impl CrossEstimate {
    /// Channels measured.
    pub fn channels(&self) -> usize {
        self.correlation.len()
    }

    /// The magnitude-squared coherence of channels i < j in band `band` (0 to 1).
    pub fn coherence(&self, i: usize, j: usize, band: usize) -> f64 {
        let s = self.cross[pair_index(self.channels(), i, j)][band];
        let d = self.auto[i][band] * self.auto[j][band];
        if d > 0.0 {
            (s.norm_sqr() / d).min(1.0)
        } else {
            0.0
        }
    }
}

/// The standard normal quantile at `p` (0 < p < 1).
fn normal_quantile(p: f64) -> f64 {
    Normal::new(0.0, 1.0).expect("unit normal").inverse_cdf(p)
}

/// The two-sided interval at probability `p` outside of the true correlation given an
/// estimate `r` from `n_eff` effective samples: `tanh(atanh r ± z_{1−p/2}/√(N' − 3))` (Fisher
/// 1921). The whole range [−1, 1] when N' ≤ 3; a coefficient of ±1 gives the interval [±1, ±1].
pub fn fisher_interval(r: f64, n_eff: f64, p: f64) -> (f64, f64) {
    if n_eff <= 3.0 || !r.is_finite() {
        return (-1.0, 1.0);
    }
    let z = r.clamp(-1.0, 1.0).atanh();
    let half = normal_quantile(1.0 - p / 2.0) / (n_eff - 3.0).sqrt();
    ((z - half).tanh(), (z + half).tanh())
}

/// The two-sided probability of a correlation estimate at least as far from the true `rho`
/// as `r` (in Fisher's z) with `n_eff` effective samples. For |ρ| = 1 the estimate is ±1
/// exactly, up to rounding: 1 when |r − ρ| ≤ 1e−9, else 0.
pub fn fisher_p_value(r: f64, rho: f64, n_eff: f64) -> f64 {
    if rho.abs() >= 1.0 || r.abs() >= 1.0 {
        return if (r - rho).abs() <= 1e-9 { 1.0 } else { 0.0 };
    }
    if n_eff <= 3.0 {
        return 1.0;
    }
    let d = (r.atanh() - rho.atanh()).abs() * (n_eff - 3.0).sqrt();
    2.0 * Normal::new(0.0, 1.0).expect("unit normal").sf(d)
}

/// The weights beyond which the negative-binomial terms of [`msc_cdf`] are left out: e^−50
/// of the largest (the terms are log-concave in j, so the rest sums to less than 1e−20).
const MSC_SPAN: f64 = 50.0;

/// The spread of the negative-binomial weights (terms) above which [`msc_cdf`] takes Fisher's
/// normal form instead of the exact sum.
const MSC_NORMAL_ABOVE: f64 = 1e4;

/// P(Ĉ ≤ x) for the magnitude-squared coherence estimate Ĉ from `n` > 1 independent averages
/// (real n allowed) when the true coherence is `c` (Carter, Knapp & Nuttall 1973, as the
/// negative-binomial mixture of beta laws of the module docs; for C so near 1 that the
/// mixture's spread √(nC)/(1 − C) exceeds 10⁴ terms, Fisher's normal form).
pub fn msc_cdf(x: f64, c: f64, n: f64) -> f64 {
    if x <= 0.0 {
        return 0.0;
    }
    if x >= 1.0 {
        return 1.0;
    }
    let b = n - 1.0;
    if c <= 0.0 {
        // Beta(1, n − 1): 1 − (1 − x)^{n−1}.
        return -(b * (-x).ln_1p()).exp_m1();
    }
    if c >= 1.0 {
        return 0.0;
    }
    // The terms that count span about ±20 standard deviations of NB(n, C), √(nC)/(1 − C):
    // millions of them as C nears 1. There, Fisher's transform of the coherence is close to
    // normal: atanh √Ĉ ~ N(atanh √C + 1/(2(n − 1)), 1/(2(n − 1))) (L. D. Enochson &
    // N. R. Goodman 1965, as restated by G. C. Carter, Proc. IEEE 75(2), 1987; from memory).
    if (n * c).sqrt() / (1.0 - c) > MSC_NORMAL_ABOVE {
        let mean = c.sqrt().atanh() + 0.5 / (n - 1.0);
        let sd = (0.5 / (n - 1.0)).sqrt();
        return Normal::new(mean, sd).expect("finite").cdf(x.sqrt().atanh());
    }
    let (ln_c, ln_1c) = (c.ln(), (-c).ln_1p());
    let ln_w = |j: f64| ln_gamma(n + j) - ln_gamma(j + 1.0) - ln_gamma(n) + j * ln_c + n * ln_1c;
    let mode = ((n - 1.0) * c / (1.0 - c)).floor().max(0.0);
    let top = ln_w(mode);
    let mut lo = mode;
    let mut lw = top;
    while lo > 0.0 && lw > top - MSC_SPAN {
        // w_{j−1} = w_j · j / ((n + j − 1)·c)
        lw += lo.ln() - (n + lo - 1.0).ln() - ln_c;
        lo -= 1.0;
    }
    let (ln_x, ln_1x) = (x.ln(), (-x).ln_1p());
    // I_x(1 + j, n − 1) by the continued fraction once, then down the recurrence
    // I_x(a + 1, b) = I_x(a, b) − x^a (1 − x)^b / (a·B(a, b)).
    let mut i_x = beta_reg(1.0 + lo, b, x);
    let mut ln_t =
        (lo + 1.0) * ln_x + b * ln_1x + ln_gamma(n + lo) - ln_gamma(lo + 2.0) - ln_gamma(b);
    let mut j = lo;
    let mut total = 0.0;
    loop {
        total += lw.exp() * i_x.max(0.0);
        if j > mode && lw < top - MSC_SPAN {
            break;
        }
        i_x -= ln_t.exp();
        ln_t += ln_x + (n + j).ln() - (j + 2.0).ln();
        lw += (n + j).ln() - (j + 1.0).ln() + ln_c;
        j += 1.0;
    }
    total.clamp(0.0, 1.0)
}

/// The two-sided probability of a coherence estimate at least as extreme as `c_hat` from `n`
/// averages when the true coherence is `c`: 2·min(F, 1 − F) with F = [`msc_cdf`]. For C = 1
/// the estimate is 1 exactly, up to rounding: 1 when Ĉ ≥ 1 − 1e−9, else 0.
pub fn msc_p_value(c_hat: f64, c: f64, n: f64) -> f64 {
    if c >= 1.0 {
        return if c_hat >= 1.0 - 1e-9 { 1.0 } else { 0.0 };
    }
    if n <= 1.0 {
        return 1.0;
    }
    let f = msc_cdf(c_hat, c, n);
    (2.0 * f.min(1.0 - f)).min(1.0)
}

/// The two-sided interval at probability `p` outside of the true coherence given an estimate
/// `c_hat` from `n` averages: the C for which Ĉ lies at the 1 − p/2 and p/2 points of its
/// distribution ([`msc_cdf`] falls as C grows), by bisection to 1e−9.
pub fn msc_interval(c_hat: f64, n: f64, p: f64) -> (f64, f64) {
    if n <= 1.0 || !c_hat.is_finite() {
        return (0.0, 1.0);
    }
    if c_hat >= 1.0 {
        return (1.0, 1.0);
    }
    let solve = |target: f64| {
        if msc_cdf(c_hat, 0.0, n) <= target {
            return 0.0;
        }
        let (mut a, mut b) = (0.0f64, 1.0f64);
        while b - a > 1e-9 {
            let m = 0.5 * (a + b);
            if msc_cdf(c_hat, m, n) > target {
                a = m;
            } else {
                b = m;
            }
        }
        0.5 * (a + b)
    };
    (solve(1.0 - p / 2.0), solve(p / 2.0))
}

/// A correlation matrix near `m` (symmetric, |m_ij| ≤ 1) that a profile accepts: symmetric,
/// unit diagonal, positive semi-definite. Negative eigenvalues of the symmetric part are
/// clipped to zero and the result rescaled to a unit diagonal, D^−½·A·D^−½ (eigenvalue
/// clipping, R. Rebonato & P. Jäckel, "The most general methodology to create a valid
/// correlation matrix", *J. Risk* 2(2), 1999; the exact nearest matrix in the Frobenius norm
/// needs N. J. Higham's alternating projections, "Computing the nearest correlation matrix",
/// *IMA J. Numer. Anal.* 22(3), 2002; from memory). A measured Pearson matrix is a Gram
/// matrix, so clipping only removes rounding; the diagonal is set to exactly 1.
pub fn nearest_correlation(m: &[Vec<f64>]) -> Vec<Vec<f64>> {
    let n = m.len();
    let a = nalgebra::DMatrix::from_fn(n, n, |i, j| 0.5 * (m[i][j] + m[j][i]));
    let e = nalgebra::SymmetricEigen::new(a);
    let v = &e.eigenvectors;
    let l: Vec<f64> = e.eigenvalues.iter().map(|&x| x.max(0.0)).collect();
    let b = |i: usize, j: usize| (0..n).map(|k| v[(i, k)] * l[k] * v[(j, k)]).sum::<f64>();
    let d: Vec<f64> = (0..n)
        .map(|i| b(i, i).max(f64::MIN_POSITIVE).sqrt())
        .collect();
    (0..n)
        .map(|i| {
            (0..n)
                .map(|j| match i.cmp(&j) {
                    std::cmp::Ordering::Equal => 1.0,
                    // The same value on both sides of the diagonal.
                    std::cmp::Ordering::Less => (b(i, j) / (d[i] * d[j])).clamp(-1.0, 1.0),
                    std::cmp::Ordering::Greater => (b(j, i) / (d[j] * d[i])).clamp(-1.0, 1.0),
                })
                .collect()
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The density of Ĉ as Carter, Knapp & Nuttall (1973) write it, with ₂F₁(n, n; 1; z) by
    /// its series (integer n).
    fn ckn_density(x: f64, c: f64, n: usize) -> f64 {
        let nf = n as f64;
        let z = c * x;
        let (mut term, mut sum) = (1.0f64, 1.0f64);
        for k in 0..2000 {
            let kf = k as f64;
            term *= (nf + kf) * (nf + kf) / ((kf + 1.0) * (kf + 1.0)) * z;
            sum += term;
            if term < 1e-18 * sum {
                break;
            }
        }
        (nf - 1.0) * (1.0 - c).powf(nf) * (1.0 - x).powf(nf - 2.0) * sum
    }

    #[test]
    fn the_mixture_is_the_published_density_integrated() {
        for &(c, n) in &[(0.0, 6usize), (0.36, 8), (0.81, 20), (0.01, 40)] {
            // Simpson's rule on 20 000 intervals of the density from 0 to x.
            for &x in &[0.05, 0.3, 0.6, 0.9] {
                let m = 20_000;
                let h = x / m as f64;
                let mut s = ckn_density(0.0, c, n) + ckn_density(x, c, n);
                for i in 1..m {
                    let w = if i % 2 == 1 { 4.0 } else { 2.0 };
                    s += w * ckn_density(i as f64 * h, c, n);
                }
                let integral = s * h / 3.0;
                let cdf = msc_cdf(x, c, n as f64);
                assert!(
                    (cdf - integral).abs() < 1e-9,
                    "C {c}, n {n}, x {x}: mixture {cdf}, integral {integral}"
                );
            }
        }
    }

    #[test]
    fn coherence_interval_and_p_value_agree() {
        // At a limit of the interval the estimate sits at the p/2 point.
        let (lo, hi) = msc_interval(0.4, 50.0, 0.05);
        assert!(lo > 0.0 && lo < 0.4 && hi > 0.4 && hi < 1.0, "{lo} {hi}");
        assert!((msc_p_value(0.4, lo, 50.0) - 0.05).abs() < 1e-6);
        assert!((msc_p_value(0.4, hi, 50.0) - 0.05).abs() < 1e-6);
        // Large n: the mean of Ĉ is near C.
        let f = msc_cdf(0.36, 0.36, 5000.0);
        assert!((f - 0.5).abs() < 0.05, "{f}");
        assert_eq!(msc_interval(1.0, 30.0, 0.05), (1.0, 1.0));
        // Near C = 1 the normal form takes over, and agrees with the exact sum where both
        // hold (C = 0.95, n = 20 000: spread 2757 terms, exact; the normal form at its median).
        let f = msc_cdf(0.95, 0.95, 20_000.0);
        assert!((f - 0.5).abs() < 0.02, "{f}");
        let (lo, hi) = msc_interval(1.0 - 1e-15, 5000.0, 0.05);
        assert!(lo > 0.99 && hi > 1.0 - 1e-9, "{lo} {hi}");
        assert_eq!(msc_p_value(1.0, 1.0, 30.0), 1.0);
    }

    #[test]
    fn fisher_interval_is_the_textbook_one() {
        // z_{0.975} = 1.959964 (normal table); r = 0.5, N' = 103: atanh 0.5 = 0.549306,
        // ± 0.1959964 → tanh 0.339308, 0.632338 (computed by hand).
        let (lo, hi) = fisher_interval(0.5, 103.0, 0.05);
        assert!((lo - 0.339_307_5).abs() < 2e-6, "{lo}");
        assert!((hi - 0.632_338_2).abs() < 2e-6, "{hi}");
        assert_eq!(fisher_interval(1.0, 1000.0, 0.05), (1.0, 1.0));
        assert!((fisher_p_value(0.5, 0.5, 100.0) - 1.0).abs() < 1e-12);
    }

    #[test]
    fn a_matrix_that_is_not_semi_definite_is_repaired() {
        // Pairwise-plausible but jointly impossible: eigenvalues 1 + 2·0.9·… include −0.8.
        let m = vec![
            vec![1.0, 0.9, -0.9],
            vec![0.9, 1.0, 0.9],
            vec![-0.9, 0.9, 1.0],
        ];
        let c = nearest_correlation(&m);
        assert!(crate::profile::check_correlation(&c).is_ok(), "{c:?}");
        // A valid matrix comes back unchanged up to rounding.
        let ok = vec![
            vec![1.0, 0.6, 0.1],
            vec![0.6, 1.0, -0.3],
            vec![0.1, -0.3, 1.0],
        ];
        let c = nearest_correlation(&ok);
        for i in 0..3 {
            for j in 0..3 {
                assert!((c[i][j] - ok[i][j]).abs() < 1e-12, "{c:?}");
            }
        }
    }

    #[test]
    fn pair_indices_follow_row_order() {
        let n = 5;
        for (k, (i, j)) in pairs(n).into_iter().enumerate() {
            assert_eq!(pair_index(n, i, j), k);
        }
    }
}
