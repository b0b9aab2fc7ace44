//! Second-pass statistics about a known mean and standard deviation: skewness, excess
//! kurtosis, the fractions of samples within ±kσ, and a histogram.
//!
//! The first pass ([`super::stats::RunningStats`]) gives μ, σ, min and max; these need them,
//! so a capture is read twice (memory stays bounded: a fixed histogram and a few sums).

use statrs::function::erf::erf;

/// The ±kσ limits whose fractions are reported (REFERENCES §8 table).
pub const SIGMA_LEVELS: [f64; 4] = [1.0, 2.0, 3.0, 3.3];

/// Fraction of a Gaussian within ±kσ: erf(k/√2) (REFERENCES §8: 68.269 %, 95.450 %, 99.730 %,
/// 99.903 % for k = 1, 2, 3, 3.3).
pub fn gaussian_within(k: f64) -> f64 {
    erf(k / std::f64::consts::SQRT_2)
}

/// Counts of samples in equal bins over `[lo, hi]` (same unit as the samples).
#[derive(Debug, Clone, PartialEq)]
pub struct Histogram {
    /// Lower edge of the first bin.
    pub lo: f64,
    /// Upper edge of the last bin.
    pub hi: f64,
    /// Samples per bin; samples at `hi` count in the last bin.
    pub counts: Vec<u64>,
}

impl Histogram {
    /// Bin width, in the samples' unit.
    pub fn bin_width(&self) -> f64 {
        (self.hi - self.lo) / self.counts.len() as f64
    }
}

/// Central moments and σ-fractions about a given mean μ and standard deviation σ.
#[derive(Debug, Clone)]
pub struct CentralMoments {
    mean: f64,
    std: f64,
    n: u64,
    /// Σ (x − μ)², Σ (x − μ)³, Σ (x − μ)⁴ in unit², unit³, unit⁴.
    sums: [f64; 3],
    within: [u64; SIGMA_LEVELS.len()],
    hist: Histogram,
}

impl CentralMoments {
    /// `mean` and `std` (unit) from the first pass; the histogram covers `[lo, hi]` (usually
    /// the record's min and max) in `bins` bins.
    pub fn new(mean: f64, std: f64, lo: f64, hi: f64, bins: usize) -> CentralMoments {
        let (lo, hi) = if hi > lo {
            (lo, hi)
        } else {
            (lo - 0.5, lo + 0.5)
        };
        CentralMoments {
            mean,
            std,
            n: 0,
            sums: [0.0; 3],
            within: [0; SIGMA_LEVELS.len()],
            hist: Histogram {
                lo,
                hi,
                counts: vec![0; bins.max(1)],
            },
        }
    }

    /// Adds samples (the same ones, in the same unit, as the first pass).
    pub fn push(&mut self, x: &[f64]) {
        let nb = self.hist.counts.len();
        let scale = nb as f64 / (self.hist.hi - self.hist.lo);
        let limits = SIGMA_LEVELS.map(|k| k * self.std);
        let top = (nb + 1) as f64;
        for &v in x {
            let d = v - self.mean;
            let d2 = d * d;
            self.sums[0] += d2;
            self.sums[1] += d2 * d;
            self.sums[2] += d2 * d2;
            let a = d.abs();
            for (c, l) in self.within.iter_mut().zip(&limits) {
                *c += u64::from(a <= *l);
            }
            // Bin ⌊t⌋ for 0 ≤ ⌊t⌋ ≤ nb, i.e. 0 ≤ t < nb + 1, where truncation is the floor.
            let t = (v - self.hist.lo) * scale;
            if t >= 0.0 && t < top {
                self.hist.counts[(t as usize).min(nb - 1)] += 1;
            }
        }
        self.n += x.len() as u64;
    }

    /// Samples pushed.
    pub fn count(&self) -> u64 {
        self.n
    }

    /// Skewness g₁ = m₃/m₂^{3/2} (population moments, dimensionless); 0 for Gaussian noise,
    /// with standard error ≈ √(6/n) for independent samples (REFERENCES §11).
    pub fn skewness(&self) -> f64 {
        let n = self.n as f64;
        let m2 = self.sums[0] / n;
        (self.sums[1] / n) / m2.powf(1.5)
    }

    /// Excess kurtosis g₂ = m₄/m₂² − 3 (dimensionless); 0 for Gaussian noise, standard error
    /// ≈ √(24/n) for independent samples (REFERENCES §11).
    pub fn excess_kurtosis(&self) -> f64 {
        let n = self.n as f64;
        let m2 = self.sums[0] / n;
        (self.sums[2] / n) / (m2 * m2) - 3.0
    }

    /// Fraction of samples with |x − μ| ≤ kσ for each k of [`SIGMA_LEVELS`].
    pub fn within(&self) -> [f64; SIGMA_LEVELS.len()] {
        self.within.map(|c| c as f64 / self.n as f64)
    }

    /// The histogram.
    pub fn histogram(&self) -> &Histogram {
        &self.hist
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// REFERENCES §8 table, to its printed digits.
    #[test]
    fn gaussian_fractions_match_the_table() {
        for (k, p) in [
            (1.0, 0.68269),
            (2.0, 0.95450),
            (3.0, 0.99730),
            (3.3, 0.99903),
        ] {
            assert!((gaussian_within(k) - p).abs() < 5e-6, "{k}");
        }
    }

    #[test]
    fn hand_computed_moments() {
        // x = −1, −1, 2: μ = 0, m2 = 2, m3 = (−1 −1 + 8)/3 = 2, m4 = (1 + 1 + 16)/3 = 6.
        let mut m = CentralMoments::new(0.0, 2f64.sqrt(), -1.0, 2.0, 3);
        m.push(&[-1.0, -1.0, 2.0]);
        assert!((m.skewness() - 2.0 / 2f64.powf(1.5)).abs() < 1e-15);
        assert!((m.excess_kurtosis() - (6.0 / 4.0 - 3.0)).abs() < 1e-15);
        assert_eq!(m.within()[0], 2.0 / 3.0); // |−1| ≤ 1.414, |2| is not
        assert_eq!(m.within()[1], 1.0);
        assert_eq!(m.histogram().counts, [2, 0, 1]);
    }
}
