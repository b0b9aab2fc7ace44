//! Exact, streaming simulation of a burst source's continuous-time Markov chain.
//!
//! The path is simulated event by event, not by per-sample coin flips: each visit to level i
//! lasts an exponential time with mean τᵢ (drawn when the level is entered), then the next
//! level is drawn from row i of `next`. The chain starts from its stationary occupancy with
//! an exponential residual dwell (memoryless, so the output is stationary from the first
//! sample). Samples are then read off the path: the level at each instant n/fs, or its mean
//! over [n/fs, (n+1)/fs). Time is kept in samples relative to the current sample, so a run of
//! any length loses no precision, and the output does not depend on how `fill` is split.

use rand::RngExt;
use rand_chacha::ChaCha8Rng;
use rand_distr::Exp1;

use super::white::{Domain, WhiteStreams};
use crate::burst::BurstModel;
use crate::profile::BurstSampling;

/// What a chain did so far: completed visits and the exact time spent per level.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct BurstTally {
    /// Completed visits per level (a visit is completed when the chain leaves the level).
    pub visits: Vec<u64>,
    /// Summed duration of the completed visits per level, in seconds.
    pub visit_time_s: Vec<f64>,
    /// Jumps made from level i to level j: `jumps[i][j]`.
    pub jumps: Vec<Vec<u64>>,
    /// Time spent in each level within the samples produced so far, in seconds (for instant
    /// sampling: the path up to the last sample instant plus one sample period).
    pub occupied_s: Vec<f64>,
}

impl BurstTally {
    /// Fraction of the produced time spent in each level (dimensionless, sums to 1).
    pub fn occupancy(&self) -> Vec<f64> {
        let total: f64 = self.occupied_s.iter().sum();
        self.occupied_s
            .iter()
            .map(|t| if total > 0.0 { t / total } else { 0.0 })
            .collect()
    }
}

/// A seeded, streaming simulation of one burst source.
#[derive(Debug, Clone)]
pub struct BurstChain {
    levels: Vec<f64>,
    /// Mean dwell per level in samples (τᵢ·fs).
    dwell: Vec<f64>,
    /// Cumulative jump probabilities per row; the last positive entry is exactly 1.
    cumulative: Vec<Vec<f64>>,
    sampling: BurstSampling,
    sample_period_s: f64,
    rng: ChaCha8Rng,
    state: usize,
    /// Time from the start of the next sample (its instant, or its interval) to the next jump,
    /// in samples.
    left: f64,
    /// Length of the current visit so far, in samples, up to the next sample's start.
    visit: f64,
    tally: BurstTally,
}

impl BurstChain {
    /// The chain of `model`, seeded from `streams`, as source number `index` (each burst of a
    /// profile has its own index and so its own independent random stream).
    pub fn new(model: &BurstModel, streams: &WhiteStreams, index: u64) -> BurstChain {
        let b = model.burst();
        let fs = model.sample_rate_hz();
        let k = b.len();
        let mut rng = streams.generator(WhiteStreams::stream_id(Domain::Burst, 0, index));
        let rows = b.next.iter().map(|row| cumulative(row)).collect::<Vec<_>>();
        let start = pick(&cumulative(model.occupancy()), rng.random::<f64>());
        let dwell: Vec<f64> = b.dwell_s.iter().map(|t| t * fs).collect();
        let left = rng.sample::<f64, _>(Exp1) * dwell[start];
        BurstChain {
            levels: b.levels.clone(),
            dwell,
            cumulative: rows,
            sampling: b.sampling,
            sample_period_s: 1.0 / fs,
            rng,
            state: start,
            left,
            visit: 0.0,
            tally: BurstTally {
                visits: vec![0; k],
                visit_time_s: vec![0.0; k],
                jumps: vec![vec![0; k]; k],
                occupied_s: vec![0.0; k],
            },
        }
    }

    /// The level index the chain is in at the start of the next sample.
    pub fn state(&self) -> usize {
        self.state
    }

    /// Visits and occupancy so far.
    pub fn tally(&self) -> &BurstTally {
        &self.tally
    }

    /// Overwrite `out` with the next samples, in the profile's unit.
    pub fn fill(&mut self, out: &mut [f64]) {
        match self.sampling {
            BurstSampling::Instant => self.fill_instant(out),
            BurstSampling::Mean => self.fill_mean(out),
        }
    }

    /// Leave the current level at `left` (≤ the current position) and enter the next one.
    fn jump(&mut self) {
        let i = self.state;
        let visit = self.visit + self.left;
        self.tally.visits[i] += 1;
        self.tally.visit_time_s[i] += visit * self.sample_period_s;
        let j = pick(&self.cumulative[i], self.rng.random::<f64>());
        self.tally.jumps[i][j] += 1;
        self.state = j;
        // The new visit began `left` samples from the next sample's start (≤ 0 for instant
        // sampling, within the interval for the mean).
        self.visit = -self.left;
        self.left += self.rng.sample::<f64, _>(Exp1) * self.dwell[j];
    }

    /// Account `run` samples of the current level and move the position on.
    fn advance(&mut self, run: f64) {
        self.left -= run;
        self.visit += run;
    }

    fn fill_instant(&mut self, out: &mut [f64]) {
        let mut i = 0;
        while i < out.len() {
            // A jump exactly at a sample instant is seen at that instant (right-continuous).
            while self.left <= 0.0 {
                self.jump();
            }
            // Instants at offsets 0, 1, … < left are in the current level.
            let run = self.left.ceil().min((out.len() - i) as f64) as usize;
            out[i..i + run].fill(self.levels[self.state]);
            self.tally.occupied_s[self.state] += run as f64 * self.sample_period_s;
            self.advance(run as f64);
            i += run;
        }
    }

    fn fill_mean(&mut self, out: &mut [f64]) {
        let mut i = 0;
        while i < out.len() {
            if self.left >= 1.0 {
                // Whole intervals before the next jump hold the level exactly.
                let run = self.left.floor().min((out.len() - i) as f64) as usize;
                out[i..i + run].fill(self.levels[self.state]);
                self.tally.occupied_s[self.state] += run as f64 * self.sample_period_s;
                self.advance(run as f64);
                i += run;
                continue;
            }
            // One or more jumps inside this interval: integrate the path over it.
            let mut acc = 0.0;
            let mut pos = 0.0;
            while self.left < 1.0 {
                let span = self.left - pos;
                acc += self.levels[self.state] * span;
                self.tally.occupied_s[self.state] += span * self.sample_period_s;
                pos = self.left;
                self.jump();
            }
            let span = 1.0 - pos;
            acc += self.levels[self.state] * span;
            self.tally.occupied_s[self.state] += span * self.sample_period_s;
            out[i] = acc;
            self.advance(1.0);
            i += 1;
        }
    }
}

/// Cumulative sums of a probability row, with the last positive entry set to exactly 1 so
/// every draw in [0, 1) lands on a level with positive probability.
fn cumulative(row: &[f64]) -> Vec<f64> {
    let mut acc = 0.0;
    let mut c: Vec<f64> = row
        .iter()
        .map(|p| {
            acc += p;
            acc
        })
        .collect();
    if let Some(last) = row.iter().rposition(|&p| p > 0.0) {
        for x in &mut c[last..] {
            *x = 1.0;
        }
    }
    c
}

/// The first index whose cumulative probability exceeds `u` ∈ [0, 1), skipping zero entries.
fn pick(cumulative: &[f64], u: f64) -> usize {
    cumulative
        .iter()
        .position(|&c| u < c)
        .unwrap_or(cumulative.len() - 1)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::profile::Burst;

    fn model(sampling: BurstSampling) -> BurstModel {
        let b = Burst {
            name: "t".into(),
            levels: vec![0.0, 3.0, 7.0],
            dwell_s: vec![0.02, 0.005, 0.002],
            next: Burst::default_next(3),
            sampling,
        };
        BurstModel::new(&b, 1000.0).unwrap()
    }

    #[test]
    fn output_does_not_depend_on_how_fill_is_split() {
        for sampling in [BurstSampling::Instant, BurstSampling::Mean] {
            let m = model(sampling);
            let w = WhiteStreams::new(5);
            let mut whole = vec![0.0; 20_000];
            BurstChain::new(&m, &w, 0).fill(&mut whole);
            let mut parts = vec![0.0; 20_000];
            let mut c = BurstChain::new(&m, &w, 0);
            let mut at = 0;
            for (n, len) in [1usize, 2, 3, 997, 4096, 1].iter().cycle().enumerate() {
                let len = (*len + n).min(parts.len() - at);
                c.fill(&mut parts[at..at + len]);
                at += len;
                if at == parts.len() {
                    break;
                }
            }
            assert_eq!(whole, parts, "{sampling:?}");
            // Another index is another, independent stream.
            let mut other = vec![0.0; 20_000];
            BurstChain::new(&m, &w, 1).fill(&mut other);
            assert_ne!(whole, other);
        }
    }

    #[test]
    fn instant_samples_are_levels_and_mean_samples_lie_between() {
        let m = model(BurstSampling::Instant);
        let mut x = vec![0.0; 50_000];
        BurstChain::new(&m, &WhiteStreams::new(9), 0).fill(&mut x);
        assert!(x.iter().all(|v| [0.0, 3.0, 7.0].contains(v)));
        let m = model(BurstSampling::Mean);
        let mut c = BurstChain::new(&m, &WhiteStreams::new(9), 0);
        c.fill(&mut x);
        assert!(x.iter().all(|v| (0.0..=7.0).contains(v)));
        let between = x.iter().filter(|v| ![0.0, 3.0, 7.0].contains(*v)).count();
        // A dwell of 2 ms at 1 kHz: many intervals hold a step.
        assert!(between > 1000, "{between}");
        // The tally accounts for exactly the produced time.
        let t: f64 = c.tally().occupied_s.iter().sum();
        assert!((t - 50.0).abs() < 1e-9, "{t}");
    }

    #[test]
    fn cumulative_rows_end_at_one_and_skip_zeros() {
        let c = cumulative(&[0.0, 0.7, 0.3, 0.0]);
        assert_eq!(c[2], 1.0);
        assert_eq!(pick(&c, 0.0), 1);
        assert_eq!(pick(&c, 0.69), 1);
        assert_eq!(pick(&c, 0.7), 2);
        assert_eq!(pick(&c, 0.999_999_999), 2);
    }
}
