//! Streaming statistics of a sample stream: count, mean, variance, RMS, min, max.
//!
//! All results are in the unit of the samples (volts, amperes, or digital units), squared
//! for the variance.
//!
//! # Accuracy
//!
//! Samples are shifted by the first sample seen (`K`) before accumulating, so a large DC
//! offset does not cost precision (the shifted-data algorithm, T. F. Chan, G. H. Golub,
//! R. J. LeVeque, "Algorithms for computing the sample variance: analysis and
//! recommendations", *Am. Stat.* 37(3), 242–247, 1983 [from memory]). Each block of up to
//! 4096 samples is summed in two passes (mean, then squared deviations; each as eight
//! interleaved partial sums, added pairwise) and merged into the running totals with the
//! pairwise-update formula of T. F. Chan, G. H. Golub, R. J. LeVeque (1979) [from memory]: `M2 = M2_a + M2_b + δ²·n_a·n_b/n`, `δ = mean_b − mean_a`. Blocks keep
//! rounding error growth to about `√(n/4096)` merges; good to ~1e-13 relative at 2^30
//! samples for Gaussian data (estimate, not measured at that length).
//!
//! # Conventions
//!
//! [`RunningStats::variance`] and [`RunningStats::std`] are the **population** values (divide
//! by n): the spread of this record itself, so that `rms² = σ² + μ²` holds exactly
//! (REFERENCES §8) and [`RunningStats::rms`] is computed from it. [`RunningStats::sample_std`]
//! divides by n − 1 for an unbiased variance estimate.

/// Samples summed per block before merging into the running totals.
const BLOCK: usize = 4096;
/// Independent partial sums per block (eight f64 are two AVX2 registers).
const LANES: usize = 8;

/// `Σ parts` added pairwise in a fixed order.
fn lanes_sum(p: [f64; LANES]) -> f64 {
    ((p[0] + p[1]) + (p[2] + p[3])) + ((p[4] + p[5]) + (p[6] + p[7]))
}

/// Streaming count, mean, variance, min and max of samples pushed in any block sizes.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RunningStats {
    n: u64,
    /// Shift `K` (the first sample), same unit as the samples.
    shift: f64,
    /// Mean of `x − K`.
    mean_shifted: f64,
    /// Σ (x − mean)², unit².
    m2: f64,
    min: f64,
    max: f64,
}

impl Default for RunningStats {
    fn default() -> Self {
        RunningStats::new()
    }
}

impl RunningStats {
    /// Empty statistics.
    pub fn new() -> RunningStats {
        RunningStats {
            n: 0,
            shift: 0.0,
            mean_shifted: 0.0,
            m2: 0.0,
            min: f64::INFINITY,
            max: f64::NEG_INFINITY,
        }
    }

    /// Adds the samples `x` (any length, including 0). A NaN makes mean and variance NaN.
    pub fn push(&mut self, x: &[f64]) {
        if x.is_empty() {
            return;
        }
        if self.n == 0 {
            self.shift = x[0];
        }
        // The same lanes and order of additions either way; AVX2 only takes fewer instructions.
        crate::wide::avx2(
            #[inline(always)]
            || {
                for block in x.chunks(BLOCK) {
                    self.push_block(block);
                }
            },
        );
    }

    /// Adds one block of at most [`BLOCK`] samples (not empty; the shift is set): two passes,
    /// the sum of `x − K` then the squared deviations from the block's mean, each in [`LANES`]
    /// partial sums added by [`lanes_sum`], then one [`RunningStats::merge_parts`].
    #[inline(always)]
    fn push_block(&mut self, block: &[f64]) {
        let k = self.shift;
        // LANES independent partial sums, minima and maxima, so that the loops vectorise;
        // the sums are combined in a fixed order, so the result depends only on the data.
        let mut sum = [0.0; LANES];
        let mut lo = [f64::INFINITY; LANES];
        let mut hi = [f64::NEG_INFINITY; LANES];
        let mut parts = block.chunks_exact(LANES);
        for part in &mut parts {
            for j in 0..LANES {
                let v = part[j];
                sum[j] += v - k;
                // Written as comparisons (a NaN sample leaves both alone, as f64::min and
                // f64::max do) so that they become vector min/max instructions.
                lo[j] = if v < lo[j] { v } else { lo[j] };
                hi[j] = if v > hi[j] { v } else { hi[j] };
            }
        }
        let (mut sum, mut lo, mut hi) = crate::wide::fence((sum, lo, hi));
        for (j, &v) in parts.remainder().iter().enumerate() {
            sum[j] += v - k;
            lo[j] = lo[j].min(v);
            hi[j] = hi[j].max(v);
        }
        let nb = block.len() as f64;
        let mean_b = lanes_sum(sum) / nb;
        let mut m2 = [0.0; LANES];
        let mut parts = block.chunks_exact(LANES);
        for part in &mut parts {
            for j in 0..LANES {
                let d = (part[j] - k) - mean_b;
                m2[j] += d * d;
            }
        }
        let mut m2 = crate::wide::fence(m2);
        for (j, &v) in parts.remainder().iter().enumerate() {
            let d = (v - k) - mean_b;
            m2[j] += d * d;
        }
        self.merge_parts(block.len() as u64, mean_b, lanes_sum(m2));
        self.min = lo.iter().fold(self.min, |a, &b| a.min(b));
        self.max = hi.iter().fold(self.max, |a, &b| a.max(b));
    }

    /// Merges statistics of another stream (e.g. from another thread) into these, as if its
    /// samples had been pushed here.
    pub fn merge(&mut self, other: &RunningStats) {
        if other.n == 0 {
            return;
        }
        if self.n == 0 {
            *self = *other;
            return;
        }
        // Re-express the other's shifted mean relative to our shift.
        let mean_b = (other.shift - self.shift) + other.mean_shifted;
        self.merge_parts(other.n, mean_b, other.m2);
        self.min = self.min.min(other.min);
        self.max = self.max.max(other.max);
    }

    /// Chan–Golub–LeVeque pairwise update with a part of `nb` samples whose mean (of
    /// `x − shift`) is `mean_b` and whose Σ(x − mean_b)² is `m2_b`.
    fn merge_parts(&mut self, nb: u64, mean_b: f64, m2_b: f64) {
        let na = self.n as f64;
        let n = self.n + nb;
        let nbf = nb as f64;
        let nf = n as f64;
        let delta = mean_b - self.mean_shifted;
        self.mean_shifted += delta * (nbf / nf);
        self.m2 += m2_b + delta * delta * (na * nbf / nf);
        self.n = n;
    }

    /// Number of samples pushed.
    pub fn count(&self) -> u64 {
        self.n
    }

    /// Mean, in the samples' unit; NaN if empty.
    pub fn mean(&self) -> f64 {
        if self.n == 0 {
            f64::NAN
        } else {
            self.shift + self.mean_shifted
        }
    }

    /// Population variance `Σ(x − μ)²/n`, in the samples' unit squared; NaN if empty.
    pub fn variance(&self) -> f64 {
        if self.n == 0 {
            f64::NAN
        } else {
            self.m2 / self.n as f64
        }
    }

    /// Population standard deviation σ (divide by n), in the samples' unit: the AC RMS.
    /// NaN if empty.
    pub fn std(&self) -> f64 {
        self.variance().sqrt()
    }

    /// Sample standard deviation (divide by n − 1), in the samples' unit; NaN below 2 samples.
    pub fn sample_std(&self) -> f64 {
        if self.n < 2 {
            f64::NAN
        } else {
            (self.m2 / (self.n - 1) as f64).sqrt()
        }
    }

    /// RMS including DC, `√(σ² + μ²)`, in the samples' unit; NaN if empty.
    pub fn rms(&self) -> f64 {
        let m = self.mean();
        (self.variance() + m * m).sqrt()
    }

    /// Smallest sample, in the samples' unit; NaN if empty.
    pub fn min(&self) -> f64 {
        if self.n == 0 { f64::NAN } else { self.min }
    }

    /// Largest sample, in the samples' unit; NaN if empty.
    pub fn max(&self) -> f64 {
        if self.n == 0 { f64::NAN } else { self.max }
    }

    /// `max − min`, in the samples' unit; NaN if empty. Grows with record length for
    /// Gaussian noise (REFERENCES §8): state the record length with it.
    pub fn peak_to_peak(&self) -> f64 {
        self.max() - self.min()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand_chacha::ChaCha8Rng;
    use rand_core::SeedableRng;
    use rand_distr::{Distribution, StandardNormal};

    const SEED: u64 = 0x5EED_57A7;

    /// Neumaier-compensated sum (A. Neumaier, ZAMM 54, 39–51, 1974 [from memory]): the slow,
    /// obvious reference.
    fn exact_sum(it: impl Iterator<Item = f64>) -> f64 {
        let (mut s, mut c) = (0.0f64, 0.0f64);
        for v in it {
            let t = s + v;
            c += if s.abs() >= v.abs() {
                (s - t) + v
            } else {
                (v - t) + s
            };
            s = t;
        }
        s + c
    }

    /// Two-pass reference: (mean, population variance, rms).
    fn two_pass(x: &[f64]) -> (f64, f64, f64) {
        let n = x.len() as f64;
        let mean = exact_sum(x.iter().copied()) / n;
        let var = exact_sum(x.iter().map(|v| (v - mean) * (v - mean))) / n;
        let rms = (exact_sum(x.iter().map(|v| v * v)) / n).sqrt();
        (mean, var, rms)
    }

    fn data(n: usize, dc: f64, sigma: f64) -> Vec<f64> {
        let mut rng = ChaCha8Rng::seed_from_u64(SEED);
        (0..n)
            .map(|_| {
                let z: f64 = StandardNormal.sample(&mut rng);
                dc + sigma * z
            })
            .collect()
    }

    fn rel(a: f64, b: f64) -> f64 {
        ((a - b) / b).abs()
    }

    /// 1e6 samples with DC/σ = 1e6: streaming agrees with the two-pass reference to 1e-12.
    #[test]
    fn matches_two_pass_with_a_large_dc_offset() {
        let x = data(1_000_000, 1.0e4, 1.0e-2);
        let (mean, var, rms) = two_pass(&x);
        // Pushed in uneven pieces, crossing block boundaries.
        let mut st = RunningStats::new();
        let mut rest = &x[..];
        let mut step = 1;
        while !rest.is_empty() {
            let k = step.min(rest.len());
            st.push(&rest[..k]);
            rest = &rest[k..];
            step = (step * 3 + 1) % 20_011 + 1;
        }
        assert_eq!(st.count(), 1_000_000);
        assert!(rel(st.mean(), mean) < 1e-12, "mean, seed {SEED}");
        assert!(
            rel(st.variance(), var) < 1e-12,
            "variance {} vs {var}, seed {SEED}",
            st.variance()
        );
        assert!(rel(st.rms(), rms) < 1e-12, "rms, seed {SEED}");
        // The test discriminates: the naive one-pass formula E[x²] − μ² fails it badly.
        let naive = x.iter().map(|v| v * v).sum::<f64>() / 1e6 - mean * mean;
        assert!(rel(naive, var) > 1e-6, "seed {SEED}");
        // One big push and a merge of two halves agree too.
        let mut one = RunningStats::new();
        one.push(&x);
        assert!(rel(one.variance(), var) < 1e-12);
        let (a, b) = x.split_at(333_333);
        let mut sa = RunningStats::new();
        sa.push(a);
        let mut sb = RunningStats::new();
        sb.push(b);
        sa.merge(&sb);
        assert_eq!(sa.count(), 1_000_000);
        assert!(rel(sa.mean(), mean) < 1e-12 && rel(sa.variance(), var) < 1e-12);
    }

    /// rms² = σ² + μ² (REFERENCES §8), to rounding (a few ulps), for DC-heavy and zero-mean data.
    #[test]
    fn rms_squared_is_variance_plus_mean_squared() {
        for (dc, sigma) in [(3.0, 0.5), (0.0, 1.0), (-2e-6, 1e-9)] {
            let x = data(100_000, dc, sigma);
            let mut st = RunningStats::new();
            st.push(&x);
            let lhs = st.rms() * st.rms();
            let rhs = st.std() * st.std() + st.mean() * st.mean();
            assert!(rel(lhs, rhs) < 8.0 * f64::EPSILON, "dc {dc}");
            let (_, _, rms) = two_pass(&x);
            assert!(rel(st.rms(), rms) < 1e-12, "dc {dc}");
        }
    }

    /// The minimum and maximum are found in every lane and in the tail past the last whole
    /// group of lanes, for every block length up to 40.
    #[test]
    fn extremes_in_every_lane_and_the_tail() {
        for n in 1..=40usize {
            for i in 0..n {
                let mut x: Vec<f64> = (0..n).map(|k| (k % 7) as f64 * 0.1).collect();
                x[i] = -3.0;
                x[(i + 1) % n] = 9.0;
                let lo = x.iter().fold(f64::INFINITY, |a, &b| a.min(b));
                let hi = x.iter().fold(f64::NEG_INFINITY, |a, &b| a.max(b));
                let mut st = RunningStats::new();
                st.push(&x);
                assert_eq!((st.min(), st.max()), (lo, hi), "n {n}, i {i}");
            }
        }
    }

    #[test]
    fn extremes_and_small_cases() {
        let mut st = RunningStats::new();
        assert!(st.mean().is_nan() && st.rms().is_nan() && st.peak_to_peak().is_nan());
        st.push(&[]);
        assert_eq!(st.count(), 0);
        st.push(&[2.0, -1.0, 5.0]);
        st.push(&[4.0]);
        // Hand computed: mean 2.5, deviations −0.5, −3.5, 2.5, 1.5 → Σd² = 21.
        assert_eq!(st.count(), 4);
        assert_eq!(st.mean(), 2.5);
        assert_eq!(st.variance(), 21.0 / 4.0);
        assert_eq!(st.sample_std(), 7f64.sqrt());
        assert_eq!((st.min(), st.max(), st.peak_to_peak()), (-1.0, 5.0, 6.0));
        assert_eq!(st.rms(), (46.0f64 / 4.0).sqrt()); // Σx² = 4 + 1 + 25 + 16
        let mut empty = RunningStats::new();
        empty.merge(&st);
        assert_eq!(empty, st);
    }
}
