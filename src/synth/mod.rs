//! Engines that turn a target density into samples.
//!
//! - [`Design`] + [`Shaper`]: the streaming multirate engine (stationary, bounded memory,
//!   any band.low down to about 1e-12 of the sample rate, exact designed density).
//! - [`periodic_buffer`]: the loop buffer, one inverse FFT with random amplitudes and phases.

mod design;
mod periodic;
mod shaper;
mod white;

pub use design::{Design, FFT_LEN, HISTORY, HOP, INTERP_TAPS, Level, RATIO, SHAPER_TAPS};
pub use periodic::{MAX_PERIODIC_SAMPLES, periodic_buffer, periodic_variance};
pub use shaper::{BATCH_PAIRS, Shaper};
pub use white::{Domain, WhiteStreams};

use crate::density::target_psd;
use crate::error::Result;
use crate::profile::Profile;

/// The streaming engine for a profile: its [`Design`] and a seeded [`Shaper`] running it.
///
/// This is the pull API for test harnesses: [`Generator::fill`] writes the next samples (in
/// the profile's unit) into any slice; [`Generator::design`] says what density they have.
pub struct Generator {
    design: Design,
    shaper: Shaper,
}

impl Generator {
    /// Design the engine for `profile` and seed it with `seed`.
    pub fn new(profile: &Profile, seed: u64) -> Result<Generator> {
        let design = design_profile(profile)?;
        let shaper = Shaper::new(&design, seed);
        Ok(Generator { design, shaper })
    }

    /// Fill `out` with the next samples, in the profile's unit (V or A).
    pub fn fill(&mut self, out: &mut [f64]) {
        self.shaper.fill(out);
    }

    /// The design: its exact density ([`Design::density`], unit²/Hz) and variance (unit²).
    pub fn design(&self) -> &Design {
        &self.design
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
