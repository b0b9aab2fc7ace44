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
use crate::error::Result;
use crate::model::burst::BurstModel;
use crate::profile::BurstSampling;
use crate::stop::Stop;

/// Expected jumps per stretch of a catch-up between two polls of its stop flag (a few
/// milliseconds of work).
const SKIP_JUMPS: f64 = 1e5;

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
    /// Length of the current visit in samples, known when it is entered (for the first visit:
    /// its residual from sample 0), so the tally needs no running sum of runs.
    visit: f64,
    /// Time in each level within the produced samples: whole sample periods (exact) and the
    /// parts of periods that hold a jump (summed in event order), so the tally does not depend
    /// on how `fill` is split.
    whole: Vec<u64>,
    part: Vec<f64>,
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
            visit: left,
            whole: vec![0; k],
            part: vec![0.0; k],
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
        self.run(out.len() as u64, Some(out));
    }

    /// Move the chain on by `samples` samples without producing them: the path, the random
    /// draws and every float operation on the chain's time are those [`BurstChain::fill`]
    /// would make, so what follows is bit for bit what a run through them gives. The tally
    /// does not count the skipped samples (nor the visits that end in them). Cost is one step
    /// per jump in the skipped time, not per sample.
    pub fn skip(&mut self, samples: u64) {
        self.skip_until(samples, Stop::default())
            .expect("a catch-up that is never stopped ends");
    }

    /// [`BurstChain::skip`], polling `stop` between stretches of about [`SKIP_JUMPS`]
    /// expected jumps (a stretch is as long as that many visits of the shortest level). The
    /// stretches are runs of whole samples, so the path is bit for bit that of one skip.
    pub(crate) fn skip_until(&mut self, samples: u64, stop: Stop<'_>) -> Result<()> {
        let shortest = self.dwell.iter().copied().fold(f64::INFINITY, f64::min);
        let stretch = ((SKIP_JUMPS * shortest) as u64).max(1);
        let kept = self.tally.clone();
        let (whole, part) = (self.whole.clone(), self.part.clone());
        let mut left = samples;
        while left > 0 {
            stop.check()?;
            let n = left.min(stretch);
            self.run(n, None);
            left -= n;
        }
        self.tally = kept;
        (self.whole, self.part) = (whole, part);
        Ok(())
    }

    fn run(&mut self, samples: u64, out: Option<&mut [f64]>) {
        match self.sampling {
            BurstSampling::Instant => self.run_instant(samples, out),
            BurstSampling::Mean => self.run_mean(samples, out),
        }
        for (t, (w, p)) in self
            .tally
            .occupied_s
            .iter_mut()
            .zip(self.whole.iter().zip(&self.part))
        {
            *t = (*w as f64 + p) * self.sample_period_s;
        }
    }

    /// Leave the current level at `left` (≤ the current position) and enter the next one.
    fn jump(&mut self) {
        let i = self.state;
        self.tally.visits[i] += 1;
        self.tally.visit_time_s[i] += self.visit * self.sample_period_s;
        let j = pick(&self.cumulative[i], self.rng.random::<f64>());
        self.tally.jumps[i][j] += 1;
        self.state = j;
        // The new visit begins at `left` (≤ 0 for instant sampling, within the interval for
        // the mean) and lasts an exponential dwell.
        self.visit = self.rng.sample::<f64, _>(Exp1) * self.dwell[j];
        self.left += self.visit;
    }

    /// The next run of whole samples in the current level, at most `rest`: `bound` is
    /// `left.ceil()` (instant) or `left.floor()` (mean), a whole number below 2^53.
    fn run_length(bound: f64, rest: u64) -> u64 {
        (bound as u64).min(rest)
    }

    // Moving on by a whole number of samples is exact in f64 (left is below 2^53 samples and
    // the result no larger in magnitude, or left < 1 and the step is always 1), so `left` takes
    // the same values whatever the run lengths: split fills and skips agree bit for bit.
    fn run_instant(&mut self, samples: u64, mut out: Option<&mut [f64]>) {
        let mut i = 0;
        while i < samples {
            // A jump exactly at a sample instant is seen at that instant (right-continuous).
            while self.left <= 0.0 {
                self.jump();
            }
            // Instants at offsets 0, 1, … < left are in the current level.
            let run = Self::run_length(self.left.ceil(), samples - i);
            if let Some(out) = out.as_deref_mut() {
                out[i as usize..(i + run) as usize].fill(self.levels[self.state]);
            }
            self.whole[self.state] += run;
            self.left -= run as f64;
            i += run;
        }
    }

    fn run_mean(&mut self, samples: u64, mut out: Option<&mut [f64]>) {
        let mut i = 0;
        while i < samples {
            if self.left >= 1.0 {
                // Whole intervals before the next jump hold the level exactly.
                let run = Self::run_length(self.left.floor(), samples - i);
                if let Some(out) = out.as_deref_mut() {
                    out[i as usize..(i + run) as usize].fill(self.levels[self.state]);
                }
                self.whole[self.state] += run;
                self.left -= run as f64;
                i += run;
                continue;
            }
            // One or more jumps inside this interval: integrate the path over it.
            let mut acc = 0.0;
            let mut pos = 0.0;
            while self.left < 1.0 {
                let span = self.left - pos;
                acc += self.levels[self.state] * span;
                self.part[self.state] += span;
                pos = self.left;
                self.jump();
            }
            let span = 1.0 - pos;
            acc += self.levels[self.state] * span;
            self.part[self.state] += span;
            if let Some(out) = out.as_deref_mut() {
                out[i as usize] = acc;
            }
            self.left -= 1.0;
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
    fn a_skipped_chain_continues_exactly_and_tallies_from_there() {
        for sampling in [BurstSampling::Instant, BurstSampling::Mean] {
            let m = model(sampling);
            let w = WhiteStreams::new(6);
            let (n0, len) = (12_345u64, 20_000usize);
            let mut whole = vec![0.0; n0 as usize + len];
            let mut run = BurstChain::new(&m, &w, 0);
            run.fill(&mut whole[..n0 as usize]);
            let before = run.tally().clone();
            run.fill(&mut whole[n0 as usize..]);
            let mut seg = BurstChain::new(&m, &w, 0);
            seg.skip(n0);
            assert!(seg.tally().visits.iter().all(|&v| v == 0), "{sampling:?}");
            let mut part = vec![0.0; len];
            seg.fill(&mut part[..777]);
            seg.fill(&mut part[777..]);
            assert!(part == whole[n0 as usize..], "seed 6, {sampling:?}");
            // The segment's tally is what the run from 0 counted after n0: counts exactly,
            // times to rounding.
            let (a, b, t) = (&before, run.tally(), seg.tally());
            for i in 0..3 {
                assert_eq!(t.visits[i], b.visits[i] - a.visits[i], "{sampling:?}");
                for j in 0..3 {
                    assert_eq!(t.jumps[i][j], b.jumps[i][j] - a.jumps[i][j]);
                }
                let occ = b.occupied_s[i] - a.occupied_s[i];
                assert!((t.occupied_s[i] - occ).abs() < 1e-9, "{sampling:?}");
                let vt = b.visit_time_s[i] - a.visit_time_s[i];
                assert!((t.visit_time_s[i] - vt).abs() < 1e-9, "{sampling:?}");
            }
            let total: f64 = t.occupied_s.iter().sum();
            assert!((total - len as f64 / 1000.0).abs() < 1e-9, "{total}");
        }
    }

    #[test]
    fn the_tally_does_not_depend_on_how_fill_is_split() {
        for sampling in [BurstSampling::Instant, BurstSampling::Mean] {
            let m = model(sampling);
            let w = WhiteStreams::new(8);
            let mut x = vec![0.0; 30_000];
            let mut a = BurstChain::new(&m, &w, 0);
            a.fill(&mut x);
            let mut b = BurstChain::new(&m, &w, 0);
            for piece in x.chunks_mut(997) {
                b.fill(piece);
            }
            assert_eq!(a.tally(), b.tally(), "{sampling:?}");
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
