//! Engines that turn a target density into samples.
//!
//! - [`Design`] + [`Shaper`]: the streaming multirate engine (stationary, bounded memory,
//!   any band.low down to about 1e-12 of the sample rate, exact designed density).
//! - [`periodic_buffer`]: the loop buffer, one inverse FFT with random amplitudes and phases.
//! - [`BurstChain`]: a burst source's Markov chain, simulated event by event.
//! - [`Generator`]: all of a profile's sources together, the pull API.

mod burst;
mod design;
mod periodic;
mod shaper;
mod white;

pub use burst::{BurstChain, BurstTally};
pub use design::{Design, FFT_LEN, HISTORY, HOP, INTERP_TAPS, Level, RATIO, SHAPER_TAPS};
pub use periodic::{MAX_PERIODIC_SAMPLES, periodic_buffer, periodic_variance};
pub use shaper::{BATCH_PAIRS, MAX_START, Shaper};
pub use white::{Domain, WhiteStreams};

use crate::burst::BurstModel;
use crate::density::target_psd;
use crate::error::Result;
use crate::profile::Profile;

/// The streaming engine for a profile: the Gaussian part (its [`Design`] and a seeded
/// [`Shaper`]) plus one [`BurstChain`] per burst source.
///
/// This is the pull API for test harnesses: [`Generator::fill`] writes the next samples (in
/// the profile's unit) into any slice; [`Generator::density`] says what density they have
/// ([`Generator::design`] for the Gaussian part alone, [`Generator::bursts`] for each burst).
/// Each sample is the Gaussian sum plus every burst, added in that order in f64.
pub struct Generator {
    design: Design,
    /// `None` when the profile has no Gaussian source (that part is exactly 0).
    shaper: Option<Shaper>,
    bursts: Vec<BurstModel>,
    chains: Vec<BurstChain>,
    scratch: Vec<f64>,
}

impl Generator {
    /// Design the engine for `profile` and seed it with `seed`.
    pub fn new(profile: &Profile, seed: u64) -> Result<Generator> {
        Generator::starting_at(profile, seed, 0)
    }

    /// The engine of [`Generator::new`] positioned at sample `start` (0-based, below
    /// [`MAX_START`]): its samples are bit for bit those the run from 0 makes from `start` on,
    /// for every source. The Gaussian part seeks at a cost independent of `start`
    /// ([`Shaper::starting_at`]); each burst replays its path up to `start`, one step per jump
    /// ([`BurstChain::skip`]). Burst tallies count from `start`.
    pub fn starting_at(profile: &Profile, seed: u64, start: u64) -> Result<Generator> {
        let design = design_profile(profile)?;
        let shaper =
            (!profile.sources.is_empty()).then(|| Shaper::starting_at(&design, seed, start));
        let bursts = profile
            .bursts
            .iter()
            .map(|b| BurstModel::new(b, profile.sample_rate_hz))
            .collect::<Result<Vec<_>>>()?;
        let streams = WhiteStreams::new(seed);
        let chains = bursts
            .iter()
            .enumerate()
            .map(|(i, m)| {
                let mut chain = BurstChain::new(m, &streams, i as u64);
                chain.skip(start);
                chain
            })
            .collect();
        Ok(Generator {
            design,
            shaper,
            bursts,
            chains,
            scratch: Vec::new(),
        })
    }

    /// Fill `out` with the next samples, in the profile's unit (V or A).
    pub fn fill(&mut self, out: &mut [f64]) {
        self.fill_gaussian(out);
        let mut part = std::mem::take(&mut self.scratch);
        part.resize(out.len(), 0.0);
        for chain in &mut self.chains {
            chain.fill(&mut part);
            for (o, p) in out.iter_mut().zip(&part) {
                *o += p;
            }
        }
        self.scratch = part;
    }

    /// Fill `total` with the next samples and `parts` with what they are made of: `parts[0]`
    /// the Gaussian sum, `parts[1 + i]` burst `i` (all in the profile's unit). `parts` must
    /// hold `1 + bursts().len()` vectors; each is resized to `total.len()`. The samples are
    /// the same as [`Generator::fill`] would give, and `total[n]` is the f64 sum of the parts
    /// in order.
    ///
    /// # Panics
    /// If `parts` has the wrong length.
    pub fn fill_sources(&mut self, total: &mut [f64], parts: &mut [Vec<f64>]) {
        assert_eq!(parts.len(), 1 + self.chains.len(), "one part per source");
        let n = total.len();
        let (gauss, bursts) = parts.split_first_mut().expect("at least one part");
        gauss.resize(n, 0.0);
        self.fill_gaussian(gauss);
        total.copy_from_slice(gauss);
        for (chain, part) in self.chains.iter_mut().zip(bursts) {
            part.resize(n, 0.0);
            chain.fill(part);
            for (o, p) in total.iter_mut().zip(part.iter()) {
                *o += p;
            }
        }
    }

    fn fill_gaussian(&mut self, out: &mut [f64]) {
        match &mut self.shaper {
            Some(s) => s.fill(out),
            None => out.fill(0.0),
        }
    }

    /// The Gaussian part's design: its exact density ([`Design::density`], unit²/Hz) and
    /// variance (unit²).
    pub fn design(&self) -> &Design {
        &self.design
    }

    /// The burst sources' models, in profile order.
    pub fn bursts(&self) -> &[BurstModel] {
        &self.bursts
    }

    /// The burst sources' running chains (state and tally), in profile order.
    pub fn chains(&self) -> &[BurstChain] {
        &self.chains
    }

    /// The total designed one-sided density at `f` Hz (0 < f ≤ fs/2), in unit²/Hz: the
    /// Gaussian design plus every burst's sampled density (the bursts' mean is a line at DC,
    /// not part of it).
    pub fn density(&self, f: f64) -> f64 {
        self.design.density(f) + self.bursts.iter().map(|b| b.density(f)).sum::<f64>()
    }

    /// Expected variance of the samples in unit² (AC: the mean removed).
    pub fn variance(&self) -> f64 {
        self.design.variance() + self.bursts.iter().map(|b| b.variance()).sum::<f64>()
    }

    /// Expected mean of the samples in the unit: the bursts' DC levels (the Gaussian part has
    /// none).
    pub fn mean(&self) -> f64 {
        self.bursts.iter().map(|b| b.mean()).sum()
    }

    /// Expected RMS of the samples (AC + DC) in the unit: √(variance + mean²).
    pub fn expected_rms(&self) -> f64 {
        let m = self.mean();
        (self.variance() + m * m).sqrt()
    }
}

/// The streaming design for `profile`: its target density ([`target_psd`]) at its sample rate,
/// resolved down to its band's low edge.
pub fn design_profile(profile: &Profile) -> Result<Design> {
    Design::new(
        &|f| target_psd(profile, f),
        profile.sample_rate_hz,
        profile.band.low_hz,
    )
}
