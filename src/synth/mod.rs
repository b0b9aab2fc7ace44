//! Engines that turn a target density into samples.
//!
//! - [`Design`] + [`Shaper`]: the streaming multirate engine (stationary, bounded memory,
//!   any band.low down to about 1e-12 of the sample rate, exact designed density).
//! - [`periodic_buffer`]: the loop buffer, one inverse FFT with random amplitudes and phases.
//! - [`BurstChain`]: a burst source's Markov chain, simulated event by event.
//! - [`tone`]: the deterministic parts (sine tones and the DC offset), from the sample index.
//! - [`Generator`]: all of a profile's sources together, the pull API.
//! - [`ChannelGenerator`]: N correlated channels of a profile, interleaved frames.

mod burst;
mod channels;
mod design;
mod periodic;
mod shaper;
mod team;
pub mod tone;
mod white;
mod ziggurat;

pub use burst::{BurstChain, BurstTally};
pub use channels::{ChannelGenerator, channel_seed, mixing_matrix};
pub use design::{
    Design, Guard, INTERP_TAPS, LEAK_FLOOR, Level, RATIO, SHAPER_LENGTHS, SHARE_TOLERANCE,
};
pub(crate) use periodic::periodic_buffer_until;
pub use periodic::{MAX_PERIODIC_SAMPLES, periodic_buffer, periodic_variance};
pub use shaper::{BATCH_PAIRS, MAX_START, Shaper, WHITE_CHUNK};
pub use white::{Domain, WhiteStreams};

/// Version of the sample engine (the design, the shaper and the white streams), written to
/// every manifest as `engine_version`. The same profile, seed and engine version give the same
/// noise bytes on every machine and for any thread count. Version 1 is noisewright 0.1.x;
/// version 2 (noisewright 0.2.0 on) chooses each level's FIR length, makes brick-wall edges
/// exact and reads `band.low_order`.
pub const ENGINE_VERSION: u32 = 2;

use std::sync::Arc;

use crate::error::{Error, Result};
use crate::model::burst::BurstModel;
use crate::stop::Stop;

use crate::model::density::{edge_guards, target_psd};
use crate::profile::{MIN_DWELL_SAMPLES, Profile, Tone, format_quantity};

/// The streaming engine for a profile: the Gaussian part (its [`Design`] and a seeded
/// [`Shaper`]) plus one [`BurstChain`] per burst source.
///
/// This is the pull API for test harnesses: [`Generator::fill`] writes the next samples (in
/// the profile's unit) into any slice; [`Generator::density`] says what density they have
/// ([`Generator::design`] for the Gaussian part alone, [`Generator::bursts`] for each burst).
/// Each sample is the Gaussian sum, plus every burst, plus every tone, plus the offset, added
/// in that order in f64. Tones and offset depend only on the absolute sample index (see
/// [`tone`]); [`Generator::set_deterministic_start`] moves that index.
///
/// Expected values come in two sets: the noise alone ([`Generator::noise_variance`],
/// [`Generator::noise_mean`], [`Generator::noise_rms`]) and the total
/// ([`Generator::variance`], [`Generator::mean`], [`Generator::expected_rms`]), where a tone of
/// peak A adds its mean power A²/2 to the variance and the offset adds to the mean.
pub struct Generator {
    /// Shared by every channel of a profile (designed once).
    design: Arc<Design>,
    /// `None` when the profile has no Gaussian source (that part is exactly 0).
    shaper: Option<Shaper>,
    bursts: Vec<BurstModel>,
    chains: Vec<BurstChain>,
    tones: Vec<Tone>,
    offset: f64,
    sample_rate_hz: f64,
    /// Absolute index of the next sample, for the tones.
    index: u64,
    scratch: Vec<f64>,
}

impl Generator {
    /// Design the engine for `profile` and seed it with `seed`. Fails with
    /// [`crate::Error::Unsupported`] when the design fails or a burst has a dwell time below
    /// [`MIN_DWELL_SAMPLES`] sample periods at the profile's rate (the schema refuses those
    /// already; a profile built by hand or moved to another rate may not).
    pub fn new(profile: &Profile, seed: u64) -> Result<Generator> {
        Generator::starting_at(profile, seed, 0)
    }

    /// The engine of [`Generator::new`] positioned at sample `start` (0-based, below
    /// [`MAX_START`]): its samples are bit for bit those the run from 0 makes from `start` on,
    /// for every source. The Gaussian part seeks at a cost independent of `start`
    /// ([`Shaper::starting_at`]); each burst replays its path up to `start`, one step per jump
    /// ([`BurstChain::skip`]); tones and offset take the absolute index `start`. Burst
    /// tallies count from `start`.
    pub fn starting_at(profile: &Profile, seed: u64, start: u64) -> Result<Generator> {
        Generator::from_design(profile, Arc::new(design_profile(profile)?), seed, start)
    }

    /// [`Generator::starting_at`] with the Gaussian part's design given: `design` must be
    /// [`design_profile`] of this profile at its sample rate. Engines of several channels (or
    /// a second engine for the same profile) share one design instead of each designing it.
    pub fn from_design(
        profile: &Profile,
        design: Arc<Design>,
        seed: u64,
        start: u64,
    ) -> Result<Generator> {
        Generator::from_design_until(profile, design, seed, start, Stop::default())
    }

    /// [`Generator::from_design`], polling `stop` before each burst's model and during each
    /// burst's catch-up to `start` (see [`BurstChain::skip`]).
    pub(crate) fn from_design_until(
        profile: &Profile,
        design: Arc<Design>,
        seed: u64,
        start: u64,
        stop: Stop<'_>,
    ) -> Result<Generator> {
        let shaper =
            (!profile.sources.is_empty()).then(|| Shaper::starting_at(&design, seed, start));
        let fs = profile.sample_rate_hz;
        // The chains are simulated jump by jump: a profile built by hand (or designed at
        // another rate) with dwell times below the schema's limit would never finish a sample.
        if let Some(b) = profile.bursts.iter().find(|b| {
            b.dwell_s
                .iter()
                .any(|t| t.is_nan() || t * fs < MIN_DWELL_SAMPLES)
        }) {
            return Err(Error::Unsupported(format!(
                "burst {:?}: every dwell time must be at least 1/1000 of a sample period ({} \
                 at {}); the shortest is {}",
                b.name,
                format_quantity(MIN_DWELL_SAMPLES / fs, "s"),
                format_quantity(fs, "Hz"),
                format_quantity(b.dwell_s.iter().copied().fold(f64::INFINITY, f64::min), "s")
            )));
        }
        let bursts = profile
            .bursts
            .iter()
            .map(|b| stop.check().and_then(|()| BurstModel::new(b, fs)))
            .collect::<Result<Vec<_>>>()?;
        let streams = WhiteStreams::new(seed);
        let chains = bursts
            .iter()
            .enumerate()
            .map(|(i, m)| {
                let mut chain = BurstChain::new(m, &streams, i as u64);
                chain.skip_until(start, stop)?;
                Ok(chain)
            })
            .collect::<Result<Vec<_>>>()?;
        Ok(Generator {
            design,
            shaper,
            bursts,
            chains,
            tones: profile.tones.clone(),
            offset: profile.offset,
            sample_rate_hz: profile.sample_rate_hz,
            index: start,
            scratch: Vec::new(),
        })
    }

    /// Make the next sample's tones and offset those of absolute sample index `n0` (the
    /// noise engines are not moved). A run that calls this with n0 and then fills gives,
    /// for its tones and offset, exactly the values a run from 0 gives from n0 on.
    pub fn set_deterministic_start(&mut self, n0: u64) {
        self.index = n0;
    }

    /// Absolute sample index of the next sample's tones and offset.
    pub fn deterministic_index(&self) -> u64 {
        self.index
    }

    /// Sample rate in Hz.
    pub fn sample_rate_hz(&self) -> f64 {
        self.sample_rate_hz
    }

    /// The tones, in profile order.
    pub fn tones(&self) -> &[Tone] {
        &self.tones
    }

    /// The DC offset in the unit.
    pub fn offset(&self) -> f64 {
        self.offset
    }

    /// Number of vectors [`Generator::fill_sources`] fills: the Gaussian sum, each burst,
    /// each tone, and the offset when it is not 0.
    pub fn part_count(&self) -> usize {
        1 + self.chains.len() + self.tones.len() + usize::from(self.offset != 0.0)
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
        tone::add_deterministic(
            &self.tones,
            self.offset,
            self.sample_rate_hz,
            self.index,
            out,
        );
        self.index += out.len() as u64;
    }

    /// Fill `total` with the next samples and `parts` with what they are made of: `parts[0]`
    /// the Gaussian sum, `parts[1 + i]` burst `i`, then one per tone, then the offset when it
    /// is not 0 (all in the profile's unit). `parts` must hold [`Generator::part_count`]
    /// vectors; each is resized to `total.len()`. The samples are the same as
    /// [`Generator::fill`] would give, and `total[n]` is the f64 sum of the parts in order.
    ///
    /// # Panics
    /// If `parts` has the wrong length.
    pub fn fill_sources(&mut self, total: &mut [f64], parts: &mut [Vec<f64>]) {
        assert_eq!(parts.len(), self.part_count(), "one part per source");
        let n = total.len();
        let (gauss, rest) = parts.split_first_mut().expect("at least one part");
        let (bursts, rest) = rest.split_at_mut(self.chains.len());
        let (tones, offset) = rest.split_at_mut(self.tones.len());
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
        for (t, part) in self.tones.iter().zip(tones) {
            part.clear();
            part.resize(n, 0.0);
            tone::add_deterministic(
                std::slice::from_ref(t),
                0.0,
                self.sample_rate_hz,
                self.index,
                part,
            );
            for (o, p) in total.iter_mut().zip(part.iter()) {
                *o += p;
            }
        }
        if let Some(part) = offset.first_mut() {
            part.clear();
            part.resize(n, self.offset);
            for o in total.iter_mut() {
                *o += self.offset;
            }
        }
        self.index += n as u64;
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

    /// Expected variance of the noise alone in unit² (AC: the mean removed): the Gaussian
    /// design plus every burst.
    pub fn noise_variance(&self) -> f64 {
        self.design.variance() + self.bursts.iter().map(|b| b.variance()).sum::<f64>()
    }

    /// Expected mean of the noise alone in the unit: the bursts' DC levels (the Gaussian part
    /// has none).
    pub fn noise_mean(&self) -> f64 {
        self.bursts.iter().map(|b| b.mean()).sum()
    }

    /// Expected RMS of the noise alone (AC + DC) in the unit: √(noise variance + noise mean²).
    pub fn noise_rms(&self) -> f64 {
        let m = self.noise_mean();
        (self.noise_variance() + m * m).sqrt()
    }

    /// Mean power of the tones in unit²: Σ A²/2 (their time average over a long run; tones of
    /// different frequencies add in power).
    pub fn tone_power(&self) -> f64 {
        self.tones.iter().map(Tone::power).sum()
    }

    /// Expected variance of the samples in unit² (AC: the mean removed): the noise variance
    /// plus the tones' power Σ A²/2.
    pub fn variance(&self) -> f64 {
        self.noise_variance() + self.tone_power()
    }

    /// Expected mean of the samples in the unit: the bursts' DC levels plus the offset.
    pub fn mean(&self) -> f64 {
        self.noise_mean() + self.offset
    }

    /// Expected RMS of the samples (AC + DC, tones included) in the unit: √(variance + mean²).
    pub fn expected_rms(&self) -> f64 {
        let m = self.mean();
        (self.variance() + m * m).sqrt()
    }

    /// Expected noise power in the profile band in unit²: the total designed density
    /// ([`Generator::density`], Gaussian design plus bursts) integrated over band.low..band.high.
    /// This is the noise a tone's SNR is quoted against.
    pub fn band_noise_power(&self, band_low_hz: f64, band_high_hz: f64) -> f64 {
        crate::model::density::integrate(&|f| self.density(f), band_low_hz, band_high_hz)
    }

    /// Per tone, its expected SNR in dB against the band's noise power
    /// ([`Generator::band_noise_power`]) plus `extra_noise_power` (unit², e.g. quantisation
    /// noise; 0 for none), and the matching ENOB in bits ([`crate::model::tone::enob`] with SINAD = SNR:
    /// no distortion is modelled).
    pub fn tone_snr(
        &self,
        band_low_hz: f64,
        band_high_hz: f64,
        extra_noise_power: f64,
    ) -> Vec<(f64, f64)> {
        let noise = self.band_noise_power(band_low_hz, band_high_hz);
        self.tones
            .iter()
            .map(|t| {
                let snr = crate::model::tone::snr_db(t.power(), noise, extra_noise_power);
                (snr, crate::model::tone::enob(snr))
            })
            .collect()
    }
}

/// The streaming design for `profile`: its target density ([`target_psd`]) at its sample rate,
/// resolved down to its band's low edge.
pub fn design_profile(profile: &Profile) -> Result<Design> {
    design_profile_until(profile, Stop::default())
}

/// [`design_profile`], polling `stop` (see [`Design::new`]).
pub(crate) fn design_profile_until(profile: &Profile, stop: Stop<'_>) -> Result<Design> {
    Design::new_until(
        &|f| target_psd(profile, f),
        profile.sample_rate_hz,
        profile.band.low_hz,
        &edge_guards(&profile.band, profile.sample_rate_hz),
        stop,
    )
}
