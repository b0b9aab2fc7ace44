//! A capture's DC offset and linear drift: the least-squares line through the samples against
//! their time, fitted in one streaming pass, and its removal sample by sample.
//!
//! The line is `x̂(n) = offset + slope·(n − n̄)` with n the sample index and n̄ = (N − 1)/2 its
//! mean, so `offset` is the record's mean (the line's value at the middle of the record) and
//! `slope` is in unit per sample (unit/s after multiplying by the rate). Ordinary least squares
//! (common practice); the sums are taken block by block about each block's own means and
//! merged with the pairwise-update formulas for the co-moments (T. F. Chan, G. H. Golub,
//! R. J. LeVeque, 1979 [from memory]: `C = C_a + C_b + δ_t·δ_x·n_a·n_b/n`), so a large offset
//! or a long record costs no precision.

/// Streaming least-squares fit of a straight line to samples against their index.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct TrendFit {
    n: u64,
    /// Mean of the samples so far, unit.
    mean_x: f64,
    /// Σ (x − x̄)², unit².
    m2_x: f64,
    /// Σ (n − n̄)(x − x̄), unit·samples.
    c_tx: f64,
}

/// A fitted line and its spread.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Trend {
    /// Samples fitted.
    pub samples: u64,
    /// The line's value at the record's middle, unit (equal to the mean of the samples).
    pub offset: f64,
    /// Slope, unit per sample.
    pub slope_per_sample: f64,
    /// Standard error of the slope in unit per sample, were the residuals white:
    /// `√(s²/Σ(n − n̄)²)` with `s²` the residual variance over N − 2 (textbook least squares;
    /// coloured noise makes the real spread larger). `NaN` below 3 samples.
    pub slope_se_white: f64,
    /// Index n̄ = (N − 1)/2 of the record's middle, samples.
    pub centre: f64,
}

impl Trend {
    /// The line's value at sample `index`, unit.
    pub fn at(&self, index: u64) -> f64 {
        self.offset + self.slope_per_sample * (index as f64 - self.centre)
    }

    /// No line: zero offset and slope (keeps samples as they are).
    pub fn none() -> Trend {
        Trend {
            samples: 0,
            offset: 0.0,
            slope_per_sample: 0.0,
            slope_se_white: f64::NAN,
            centre: 0.0,
        }
    }
}

impl TrendFit {
    /// An empty fit.
    pub fn new() -> TrendFit {
        TrendFit::default()
    }

    /// Adds the next samples (unit), continuing the index from the samples pushed before.
    pub fn push(&mut self, x: &[f64]) {
        if x.is_empty() {
            return;
        }
        let nb = x.len() as f64;
        let mean_b = x.iter().sum::<f64>() / nb;
        let mid_b = (nb - 1.0) / 2.0;
        let (mut m2_b, mut c_b) = (0.0, 0.0);
        for (j, v) in x.iter().enumerate() {
            let d = v - mean_b;
            m2_b += d * d;
            c_b += (j as f64 - mid_b) * d;
        }
        let na = self.n as f64;
        let n = na + nb;
        // Index means: (na − 1)/2 for the samples so far, na + mid_b for the block.
        let dt = (na + mid_b) - (na - 1.0) / 2.0;
        let dx = mean_b - self.mean_x;
        let w = na * nb / n;
        self.m2_x += m2_b + dx * dx * w;
        self.c_tx += c_b + dt * dx * w;
        self.mean_x += dx * nb / n;
        self.n += x.len() as u64;
    }

    /// The fitted line (offset and slope 0 with no samples).
    pub fn finish(&self) -> Trend {
        let n = self.n as f64;
        // Σ (n − n̄)² over 0..N: N(N² − 1)/12.
        let m2_t = n * (n * n - 1.0) / 12.0;
        let slope = if m2_t > 0.0 { self.c_tx / m2_t } else { 0.0 };
        let se = if self.n > 2 {
            let resid = (self.m2_x - slope * self.c_tx).max(0.0) / (n - 2.0);
            (resid / m2_t).sqrt()
        } else {
            f64::NAN
        };
        Trend {
            samples: self.n,
            offset: self.mean_x,
            slope_per_sample: slope,
            slope_se_white: se,
            centre: (n - 1.0).max(0.0) / 2.0,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A line plus a known zero-mean, zero-slope ripple is recovered to rounding, however the
    /// samples are split into blocks, with a large offset.
    #[test]
    fn a_line_is_recovered_in_any_blocks() {
        let n = 10_001usize;
        // cos(2π·3n/(N−1)·…) is symmetric about the middle: orthogonal to the slope; its mean
        // over the record is not exactly 0, so compare with the direct sums instead.
        let x: Vec<f64> = (0..n)
            .map(|i| 1.65 + 2e-6 * (i as f64) + 1e-4 * (0.37 * i as f64).sin())
            .collect();
        let mean = x.iter().sum::<f64>() / n as f64;
        let c = (n as f64 - 1.0) / 2.0;
        let stt: f64 = (0..n).map(|i| (i as f64 - c).powi(2)).sum();
        let stx: f64 = (0..n).map(|i| (i as f64 - c) * (x[i] - mean)).sum();
        for split in [1usize, 7, 4096, n] {
            let mut f = TrendFit::new();
            for chunk in x.chunks(split) {
                f.push(chunk);
            }
            let t = f.finish();
            assert!((t.offset - mean).abs() < 1e-13, "split {split}");
            assert!(
                (t.slope_per_sample - stx / stt).abs() < 1e-12 * (stx / stt).abs(),
                "split {split}: {} vs {}",
                t.slope_per_sample,
                stx / stt
            );
            assert!((t.at(0) - (mean - c * stx / stt)).abs() < 1e-12);
        }
    }

    /// White noise with no slope: the fitted slope lies within 5.3 of its white standard
    /// errors (two-sided false-failure probability 1.2e−7 per seed; seeds printed), and the
    /// standard error matches the textbook σ·√(12/(N(N² − 1))) to 1 %.
    #[test]
    fn slope_of_white_noise_is_within_its_error() {
        use rand_core::SeedableRng;
        use rand_distr::{Distribution, StandardNormal};
        for seed in [1u64, 2, 3] {
            let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(seed);
            let n = 20_000usize;
            let x: Vec<f64> = (0..n).map(|_| StandardNormal.sample(&mut rng)).collect();
            let mut f = TrendFit::new();
            f.push(&x);
            let t = f.finish();
            let nf = n as f64;
            let textbook = (12.0 / (nf * (nf * nf - 1.0))).sqrt();
            assert!(
                (t.slope_se_white / textbook - 1.0).abs() < 0.01,
                "seed {seed}"
            );
            assert!(
                t.slope_per_sample.abs() < 5.3 * t.slope_se_white,
                "seed {seed}: slope {} se {}",
                t.slope_per_sample,
                t.slope_se_white
            );
        }
    }
}
