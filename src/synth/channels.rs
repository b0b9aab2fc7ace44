//! Correlated channels: N independent copies of a profile's noise, mixed by a matrix L with
//! L·Lᵀ = C, the profile's correlation matrix.
//!
//! Channel k draws from its own [`Generator`] seeded with [`channel_seed`]`(seed, k)`; channel
//! 0 uses `seed` itself, so it is exactly the mono output for that seed. The copies are
//! independent with the same density S(f), so the mixed channels y = L·x have cross-spectral
//! density S_ij(f) = C_ij·S(f): every channel keeps the density S(f) (C_ii = 1), and every pair
//! has magnitude-squared coherence |S_ij|²/(S_ii·S_jj) = C_ij² at every frequency (Bendat &
//! Piersol, *Random Data*, coherence of linear combinations; from memory).
//!
//! Everything is mixed, bursts included, so the claim holds for the whole density; only the
//! bursts' DC mean μ is taken out before mixing and added back after, so each channel keeps the
//! profile's mean (otherwise channel i would have mean μ·Σ_k L_ik). A mixed channel's bursts are
//! therefore not on the profile's discrete levels (channel 0's are). Tones and the offset are
//! deterministic and the same in every copy: they are taken out before mixing and added back
//! once, so every channel carries each tone at the profile's amplitude and phase (their
//! coherence at a tone's frequency is therefore 1, not C_ij²).
//!
//! L is the lower-triangular Cholesky factor (Golub & Van Loan, *Matrix Computations*, §4.2;
//! from memory), computed without pivoting so it is deterministic; a zero pivot of a singular
//! positive semi-definite matrix (e.g. ρ = 1) gives a zero column, which still satisfies
//! L·Lᵀ = C. Row 0 of L is (1, 0, …, 0), which is why channel 0 is the mono output.

use super::Generator;
use crate::error::Result;
use crate::profile::{Profile, correlation_tolerance};
use crate::stop::Stop;

/// The seed of channel `k`'s engine: `seed` for channel 0, otherwise a SplitMix64 mix of
/// `seed` and `k` (S. Vigna's SplitMix64 finaliser, common practice for deriving seeds), so
/// every channel's ChaCha8 streams are unrelated to the others'.
pub fn channel_seed(seed: u64, k: usize) -> u64 {
    if k == 0 {
        return seed;
    }
    let mut z = seed ^ (k as u64).wrapping_mul(0x9E37_79B9_7F4A_7C15);
    z = z.wrapping_add(0x9E37_79B9_7F4A_7C15);
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}

/// The lower-triangular L with L·Lᵀ = `c` for a symmetric positive semi-definite `c` (a
/// validated correlation matrix), row-major. Pivots below [`correlation_tolerance`] count as
/// zero and give a zero column.
pub fn mixing_matrix(c: &[Vec<f64>]) -> Vec<Vec<f64>> {
    let n = c.len();
    let tol = correlation_tolerance(n);
    let mut l = vec![vec![0.0; n]; n];
    for j in 0..n {
        let d = c[j][j] - (0..j).map(|k| l[j][k] * l[j][k]).sum::<f64>();
        if d <= tol {
            continue; // zero pivot: column j stays zero
        }
        let ljj = d.sqrt();
        l[j][j] = ljj;
        for i in j + 1..n {
            let s = c[i][j] - (0..j).map(|k| l[i][k] * l[j][k]).sum::<f64>();
            l[i][j] = s / ljj;
        }
    }
    l
}

/// The multi-channel engine: fills interleaved frames (channel 0 of frame 0, channel 1 of
/// frame 0, …) in the profile's unit (V or A).
pub struct ChannelGenerator {
    engines: Vec<Generator>,
    mix: Vec<Vec<f64>>,
    correlation: Vec<Vec<f64>>,
    /// The noise's DC mean (the bursts'), in the unit.
    mean: f64,
    scratch: Vec<Vec<f64>>,
    /// Tones and offset of the current block, in the unit.
    deterministic: Vec<f64>,
}

impl ChannelGenerator {
    /// The engine for `profile`'s channels and correlation, seeded with `seed`.
    pub fn new(profile: &Profile, seed: u64) -> Result<ChannelGenerator> {
        ChannelGenerator::starting_at(profile, seed, 0)
    }

    /// The engine of [`ChannelGenerator::new`] positioned at frame `start` (0-based): its
    /// frames are bit for bit those the run from 0 makes from `start` on
    /// ([`Generator::starting_at`] for every channel's engine).
    pub fn starting_at(profile: &Profile, seed: u64, start: u64) -> Result<ChannelGenerator> {
        let design = std::sync::Arc::new(super::design_profile(profile)?);
        ChannelGenerator::from_design(profile, design, seed, start)
    }

    /// [`ChannelGenerator::starting_at`] with the design given ([`super::design_profile`] of
    /// this profile): every channel's engine shares it.
    pub fn from_design(
        profile: &Profile,
        design: std::sync::Arc<super::Design>,
        seed: u64,
        start: u64,
    ) -> Result<ChannelGenerator> {
        ChannelGenerator::from_design_until(profile, design, seed, start, Stop::default())
    }

    /// [`ChannelGenerator::from_design`], polling `stop` in each channel's engine (see
    /// [`Generator::from_design`]).
    pub(crate) fn from_design_until(
        profile: &Profile,
        design: std::sync::Arc<super::Design>,
        seed: u64,
        start: u64,
        stop: Stop<'_>,
    ) -> Result<ChannelGenerator> {
        let n = profile.channels;
        let engines = (0..n)
            .map(|k| {
                let seed = channel_seed(seed, k);
                Generator::from_design_until(profile, design.clone(), seed, start, stop)
            })
            .collect::<Result<Vec<_>>>()?;
        let mean = engines[0].noise_mean();
        Ok(ChannelGenerator {
            engines,
            mix: mixing_matrix(&profile.correlation),
            correlation: profile.correlation.clone(),
            mean,
            scratch: vec![Vec::new(); n],
            deterministic: Vec::new(),
        })
    }

    /// Channels per frame.
    pub fn channels(&self) -> usize {
        self.engines.len()
    }

    /// The correlation matrix C (dimensionless, N×N).
    pub fn correlation(&self) -> &[Vec<f64>] {
        &self.correlation
    }

    /// The mixing matrix L (lower-triangular, L·Lᵀ = C).
    pub fn mixing(&self) -> &[Vec<f64>] {
        &self.mix
    }

    /// Channel 0's engine; every channel has its density, variance and mean.
    pub fn generator(&self) -> &Generator {
        &self.engines[0]
    }

    /// Fill `out` with the next `out.len() / channels()` interleaved frames.
    ///
    /// # Panics
    /// If `out.len()` is not a multiple of [`ChannelGenerator::channels`].
    pub fn fill_frames(&mut self, out: &mut [f64]) {
        let n = self.engines.len();
        assert_eq!(out.len() % n, 0, "whole frames only");
        let frames = out.len() / n;
        // The tones and offset are the same deterministic values in every engine: they are
        // taken out before mixing and added back once, so every channel carries them at the
        // profile's amplitude (mixing would scale them by the row sum of L).
        let first = &self.engines[0];
        self.deterministic.clear();
        self.deterministic.resize(frames, 0.0);
        super::tone::add_deterministic(
            first.tones(),
            first.offset(),
            first.sample_rate_hz(),
            first.deterministic_index(),
            &mut self.deterministic,
        );
        for (engine, part) in self.engines.iter_mut().zip(&mut self.scratch) {
            part.resize(frames, 0.0);
            engine.fill(part);
        }
        let mean = self.mean;
        let det = &self.deterministic;
        for (t, frame) in out.chunks_exact_mut(n).enumerate() {
            frame[0] = self.scratch[0][t];
            for (i, y) in frame.iter_mut().enumerate().skip(1) {
                let row = &self.mix[i];
                let ac: f64 = (0..=i)
                    .map(|k| row[k] * (self.scratch[k][t] - det[t] - mean))
                    .sum();
                *y = ac + mean + det[t];
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn product(l: &[Vec<f64>]) -> Vec<Vec<f64>> {
        let n = l.len();
        (0..n)
            .map(|i| {
                (0..n)
                    .map(|j| (0..n).map(|k| l[i][k] * l[j][k]).sum())
                    .collect()
            })
            .collect()
    }

    #[test]
    fn mixing_matrix_reproduces_definite_and_singular_matrices() {
        let cases = [
            vec![vec![1.0, 0.3], vec![0.3, 1.0]],
            vec![vec![1.0, 1.0], vec![1.0, 1.0]],
            vec![
                vec![1.0, -0.5, -0.5],
                vec![-0.5, 1.0, -0.5],
                vec![-0.5, -0.5, 1.0],
            ],
            vec![
                vec![1.0, 0.9, 0.2],
                vec![0.9, 1.0, 0.4],
                vec![0.2, 0.4, 1.0],
            ],
        ];
        for c in cases {
            let l = mixing_matrix(&c);
            assert_eq!(l[0][0], 1.0);
            for (i, row) in l.iter().enumerate() {
                for x in &row[i + 1..] {
                    assert_eq!(*x, 0.0, "lower-triangular");
                }
            }
            let p = product(&l);
            for i in 0..c.len() {
                for j in 0..c.len() {
                    assert!((p[i][j] - c[i][j]).abs() < 1e-12, "{c:?}: {p:?}");
                }
            }
        }
    }

    #[test]
    fn channel_seeds_keep_channel_zero_and_differ() {
        assert_eq!(channel_seed(42, 0), 42);
        let s: Vec<u64> = (0..64).map(|k| channel_seed(42, k)).collect();
        let mut d = s.clone();
        d.sort_unstable();
        d.dedup();
        assert_eq!(d.len(), 64);
        assert_ne!(channel_seed(42, 1), channel_seed(43, 1));
    }

    /// Every channel carries each tone at the profile's amplitude and the offset as its mean:
    /// a least-squares sine fit at the known frequency (IEEE Std 1057, three-parameter fit)
    /// recovers them within 5 σ of the estimator, σ_A ≈ σ·√(2/N) for white noise of standard
    /// deviation σ over N samples (common practice), σ_mean = σ/√N.
    #[test]
    fn every_channel_carries_tones_and_offset_at_full_amplitude() {
        const SEED: u64 = 0x7013_C4A1;
        let text = r#"
sample_rate = "48 kHz"
offset = "0.25 V"
channels = 3
correlation = 0.5
[band]
low = "10 Hz"
high = "20 kHz"
[[floor]]
density = "1 uV/rtHz"
[[tone]]
frequency = "997 Hz"
peak = "1 V"
"#;
        let profile = crate::profile::parse_profile(text, "t.toml").unwrap();
        let mut g = ChannelGenerator::new(&profile, SEED).unwrap();
        let frames = 48_000;
        let mut out = vec![0.0; frames * 3];
        g.fill_frames(&mut out);
        let sigma = g.generator().noise_variance().sqrt();
        let w = 2.0 * std::f64::consts::PI * 997.0 / 48_000.0;
        for c in 0..3 {
            let x: Vec<f64> = out.iter().skip(c).step_by(3).copied().collect();
            // Sine, cosine and constant are nearly orthogonal over many whole periods:
            // project on each (the residual cross terms are O(1/N), far below the bound).
            let n = x.len() as f64;
            let (mut s, mut co, mut m) = (0.0, 0.0, 0.0);
            for (k, v) in x.iter().enumerate() {
                let ph = w * k as f64;
                s += v * ph.sin();
                co += v * ph.cos();
                m += v;
            }
            let amp = (2.0 * s / n).hypot(2.0 * co / n);
            let mean = m / n;
            let sa = sigma * (2.0 / n).sqrt();
            assert!(
                (amp - 1.0).abs() < 5.0 * sa + 1e-4,
                "seed {SEED:#x}: channel {c} tone amplitude {amp} V, expected 1 V"
            );
            assert!(
                (mean - 0.25).abs() < 5.0 * sigma / n.sqrt() + 1e-4,
                "seed {SEED:#x}: channel {c} mean {mean} V, expected 0.25 V"
            );
        }
    }
}
