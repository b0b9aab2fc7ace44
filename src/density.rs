//! The density model: the one-sided power density S(f) (unit²/Hz) of every source, the band
//! shaping, their sum, and integrals of it.

use crate::profile::{Band, Profile, Source};

/// Boltzmann constant in J/K (SI 2019, exact; BIPM SI Brochure, 9th ed.).
pub const BOLTZMANN: f64 = 1.380649e-23;

/// One-sided power density of one source at `f` Hz, in unit²/Hz, before band shaping.
pub fn source_psd(source: &Source, profile: &Profile, f: f64) -> f64 {
    let _ = (source, profile, f);
    todo!()
}

/// Power gain (0..=1) of the band shaping at `f` Hz: the low-edge taper, and the Butterworth
/// low-pass (or brick-wall taper for order 0) at the high edge.
pub fn band_gain(band: &Band, sample_rate_hz: f64, f: f64) -> f64 {
    let _ = (band, sample_rate_hz, f);
    todo!()
}

/// The profile's target one-sided power density at `f` Hz in unit²/Hz: the sum of all sources
/// times the band shaping.
pub fn target_psd(profile: &Profile, f: f64) -> f64 {
    let _ = (profile, f);
    todo!()
}
