//! The density profile: TOML schema, quantities with units, validation.
//!
//! A [`Profile`] is the validated, unit-resolved form of a profile file. All values are in SI
//! base units: hertz, seconds, kelvin, ohms, and the profile's [`Unit`] (volts or amperes) per
//! √Hz for densities.

mod quantity;
mod schema;

pub use quantity::{Dimension, format_quantity, parse_quantity};
pub use schema::parse_profile;

use serde::Serialize;

/// What one unit of output means.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub enum Unit {
    /// Volts; densities are in V/√Hz.
    #[serde(rename = "V")]
    Volt,
    /// Amperes; densities are in A/√Hz.
    #[serde(rename = "A")]
    Ampere,
}

impl Unit {
    /// The unit's symbol, `"V"` or `"A"`.
    pub fn symbol(self) -> &'static str {
        match self {
            Unit::Volt => "V",
            Unit::Ampere => "A",
        }
    }
}

/// The synthesised band.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Band {
    /// Lower edge in Hz (> 0). Below it the density falls to zero within one octave
    /// (see [`crate::density`]).
    pub low_hz: f64,
    /// Upper edge in Hz (≤ sample_rate / 2).
    pub high_hz: f64,
    /// Butterworth low-pass order at `high_hz`; 0 = brick wall.
    pub order: u32,
}

/// One uncorrelated noise source. All sources of a profile add in power.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Source {
    /// The source's name: the `name` key, or a default such as `floor 1`.
    pub name: String,
    /// What kind of source it is, with its parameters.
    pub kind: SourceKind,
}

/// The kinds of noise source, with parameters in SI base units.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum SourceKind {
    /// White floor `density` (unit/√Hz) with an optional rise below `corner_hz`:
    /// S(f) = density²·(1 + (corner/f)^slope).
    Floor {
        /// White density in unit/√Hz.
        density: f64,
        /// Corner frequency in Hz where the 1/f^slope part equals the white part, if any.
        corner_hz: Option<f64>,
        /// Power-density exponent of the rise, 0 < slope ≤ 2 (default 1).
        slope: f64,
    },
    /// Thermal (Johnson–Nyquist) noise of a resistor: √(4kTR) V/√Hz, or √(4kT/R) A/√Hz
    /// in a current profile.
    Resistor {
        /// Resistance in ohms.
        resistance_ohm: f64,
        /// Temperature in kelvin.
        temperature_k: f64,
    },
    /// A digitised curve of (Hz, unit/√Hz) points, interpolated log-log; outside its points
    /// it holds the first and last density.
    Table {
        /// (frequency in Hz, density in unit/√Hz), strictly increasing in frequency.
        points: Vec<(f64, f64)>,
    },
}

/// A validated profile.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Profile {
    /// Optional display name.
    pub name: Option<String>,
    /// What one unit of output means.
    pub unit: Unit,
    /// Sample rate in samples per second.
    pub sample_rate_hz: f64,
    /// The synthesised band.
    pub band: Band,
    /// The sources, in file order (floors, then resistors, then tables).
    pub sources: Vec<Source>,
}
