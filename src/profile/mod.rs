//! The density profile: TOML schema, quantities with units, validation.
//!
//! A [`Profile`] is the validated, unit-resolved form of a profile file. All values are in SI
//! base units: hertz, seconds, kelvin, ohms, and the profile's [`Unit`] (volts or amperes) per
//! √Hz for densities.

mod burst;
mod channels;
mod schema;
mod tone;

pub use crate::units::{Dimension, format_quantity, format_quantity_exact, parse_quantity};
pub use burst::{
    Burst, BurstSampling, MAX_BURST_LEVELS, MAX_TOTAL_BURST_LEVELS, MIN_DWELL_SAMPLES,
    NEXT_ROW_TOLERANCE, describe_levels,
};
pub use channels::{
    MAX_CHANNELS, check_matrix as check_correlation, tolerance as correlation_tolerance,
};
pub use schema::inertial::INERTIAL_KEYS;
pub use schema::{
    DEFAULT_TEMPERATURE_K, MAX_ORDER, MAX_SOURCES, MAX_TABLE_POINTS, MIN_LOW_TO_RATE, parse_profile,
};
pub use tone::{AmplitudeConvention, Tone};

use serde::Serialize;

use crate::error::Result;

use crate::model::amplifier::{Refer, StagePart};

/// What one unit of output means: an electrical quantity, or a sensor's own quantity (the
/// `unit` key). Values stay in the unit as written: nothing converts between units.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, serde::Deserialize)]
pub enum Unit {
    /// Volts; densities are in V/√Hz.
    #[serde(rename = "V")]
    Volt,
    /// Amperes; densities are in A/√Hz.
    #[serde(rename = "A")]
    Ampere,
    /// Pascals (pressure); densities in Pa/√Hz.
    #[serde(rename = "Pa")]
    Pascal,
    /// Kelvin (a temperature channel); densities in K/√Hz.
    #[serde(rename = "K")]
    Kelvin,
    /// Teslas (magnetic flux density); densities in T/√Hz.
    #[serde(rename = "T")]
    Tesla,
    /// Metres (displacement); densities in m/√Hz.
    #[serde(rename = "m")]
    Metre,
    /// Newtons (force); densities in N/√Hz.
    #[serde(rename = "N")]
    Newton,
    /// Metres per second squared (acceleration); densities in (m/s²)/√Hz.
    #[serde(rename = "m/s\u{b2}")]
    MetrePerSecondSquared,
    /// Standard gravity, 9.806 65 m/s² exactly (3rd CGPM, 1901); densities in g/√Hz.
    #[serde(rename = "g")]
    StandardGravity,
    /// Radians per second (angular rate); densities in (rad/s)/√Hz.
    #[serde(rename = "rad/s")]
    RadianPerSecond,
    /// Degrees per second (angular rate); densities in (°/s)/√Hz.
    #[serde(rename = "\u{b0}/s")]
    DegreePerSecond,
}

impl Unit {
    /// Every unit, in the order of [`crate::units::UNITS`].
    pub const ALL: [Unit; 11] = [
        Unit::Volt,
        Unit::Ampere,
        Unit::Pascal,
        Unit::Kelvin,
        Unit::Tesla,
        Unit::Metre,
        Unit::Newton,
        Unit::MetrePerSecondSquared,
        Unit::StandardGravity,
        Unit::RadianPerSecond,
        Unit::DegreePerSecond,
    ];

    /// The unit's display symbol: `"V"`, `"A"`, `"Pa"`, `"K"`, `"T"`, `"m"`, `"N"`,
    /// `"m/s²"`, `"g"`, `"rad/s"` or `"°/s"`.
    pub fn symbol(self) -> &'static str {
        self.spec().symbol
    }

    /// The unit's spellings and practice forms.
    pub fn spec(self) -> &'static crate::units::UnitSpec {
        &crate::units::UNITS[self as usize]
    }

    /// The unit written as `text` (a symbol or a spelling such as `deg/s`, `m/s^2`), if any.
    pub fn from_text(text: &str) -> Option<Unit> {
        Unit::ALL
            .into_iter()
            .find(|u| u.symbol() == text || u.spec().spellings.contains(&text))
    }

    /// Whether the unit is electrical (V or A): resistors and amplifier stages need it.
    pub fn is_electrical(self) -> bool {
        matches!(self, Unit::Volt | Unit::Ampere)
    }
}

/// The synthesised band.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Band {
    /// Lower edge in Hz (> 0); the edge's shape is [`Band::low_order`] (see
    /// [`crate::model::density`]).
    pub low_hz: f64,
    /// Upper edge in Hz (≤ sample_rate / 2).
    pub high_hz: f64,
    /// Butterworth low-pass order at `high_hz`; 0 = brick wall.
    pub order: u32,
    /// Butterworth high-pass order at `low_hz`; 0 = brick wall (the default).
    pub low_order: u32,
}

impl Band {
    /// A band from `low_hz` to `high_hz` (Hz) with brick walls at both edges.
    pub fn brick_wall(low_hz: f64, high_hz: f64) -> Band {
        Band {
            low_hz,
            high_hz,
            order: 0,
            low_order: 0,
        }
    }
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
    /// One part of an `[[amplifier]]` stage's noise (voltage noise, a current noise times a
    /// resistance, or a resistor's thermal noise), already carried through its gain (see
    /// [`crate::model::amplifier`]): S(f) = density²·(1 + corner/f)/(1 + (f/pole)²).
    AmplifierPart {
        /// The stage's name (the `name` key or `amplifier N`).
        stage: String,
        /// What the part is.
        part: StagePart,
        /// Whether `density` is at the stage output or referred to its input.
        refer: Refer,
        /// White density in V/√Hz.
        density: f64,
        /// 1/f corner in Hz, if any.
        corner_hz: Option<f64>,
        /// Closed-loop pole GBW/G_n in Hz, if a GBW was given.
        pole_hz: Option<f64>,
    },
    /// One term of an `[[inertial]]` table: a power law in f whose Allan deviation has the
    /// term's slope (see [`InertialTerm`]).
    Inertial {
        /// Which term.
        term: InertialTerm,
        /// N in unit·s^½ (= unit/√Hz), B in unit, or K in unit·s^−½.
        coefficient: f64,
    },
}

/// One of the three inertial noise terms of IEEE Std 952-1997 Annex C (also IEEE Std
/// 1554-2005), as the one-sided density (unit²/Hz) it becomes.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum InertialTerm {
    /// Random walk N (unit·s^½, e.g. an angle random walk in (°/s)/√Hz = °/√s): white,
    /// G = 2N², Allan deviation N/√τ.
    RandomWalk,
    /// Bias instability B (unit): G = B²/(π f) within the band, Allan deviation flat at
    /// B·√(2 ln 2/π) ≈ 0.664·B.
    BiasInstability,
    /// Rate random walk K (unit·s^−½): G = K²/(2π² f²) within the band, Allan deviation
    /// K·√(τ/3) for τ ≪ 1/(2π·band.low).
    RateRandomWalk,
}

impl InertialTerm {
    /// The profile key and JSON name: `random_walk`, `bias_instability`, `rate_random_walk`.
    pub fn key(self) -> &'static str {
        match self {
            InertialTerm::RandomWalk => "random_walk",
            InertialTerm::BiasInstability => "bias_instability",
            InertialTerm::RateRandomWalk => "rate_random_walk",
        }
    }

    /// The term's words in a source name: `random walk`, `bias instability`, `rate random
    /// walk`.
    pub fn words(self) -> &'static str {
        match self {
            InertialTerm::RandomWalk => "random walk",
            InertialTerm::BiasInstability => "bias instability",
            InertialTerm::RateRandomWalk => "rate random walk",
        }
    }

    /// The unit of the coefficient for a profile in `unit`: `unit·s^½` (N), `unit` (B),
    /// `unit·s^-½` (K).
    pub fn coefficient_unit(self, unit: &str) -> String {
        match self {
            InertialTerm::RandomWalk => format!("{unit}\u{b7}s^\u{bd}"),
            InertialTerm::BiasInstability => unit.to_string(),
            InertialTerm::RateRandomWalk => format!("{unit}\u{b7}s^-\u{bd}"),
        }
    }
}

/// How messages name a profile, and the file it was read from (absolute, so a later change
/// of the working folder does not move it), which a run must not write over. Two profiles
/// that differ only in their labels are equal.
#[derive(Debug, Clone, Default)]
pub(crate) struct Label(pub(crate) String, pub(crate) Option<std::path::PathBuf>);

impl PartialEq for Label {
    fn eq(&self, _: &Label) -> bool {
        true
    }
}

/// A validated profile.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Profile {
    /// How messages name the profile: the file as the caller gave it, or the label given to
    /// [`Profile::from_toml_str`].
    #[serde(skip)]
    pub(crate) label: Label,
    /// Optional display name.
    pub name: Option<String>,
    /// What one unit of output means.
    pub unit: Unit,
    /// Sample rate in samples per second.
    pub sample_rate_hz: f64,
    /// The synthesised band.
    pub band: Band,
    /// The Gaussian sources, in file order (floors, then resistors, then tables, then the
    /// parts of each amplifier stage); they add in power and the band shapes them. May be
    /// empty when the profile has bursts.
    pub sources: Vec<Source>,
    /// The burst sources, in file order: independent Markov chains over discrete levels,
    /// DC-coupled and not shaped by the band. May be empty.
    pub bursts: Vec<Burst>,
    /// The sine tones, in file order: deterministic, added after the noise, not shaped by
    /// the band. May be empty.
    pub tones: Vec<Tone>,
    /// DC value in the unit added to every sample (the `offset` key; 0 without it).
    pub offset: f64,
    /// Volts at the sensor's output per unit of its quantity (the `sensitivity` key, e.g.
    /// 0.02 for "20 mV/g"): the full scale and an ADC range may then be given in volts.
    /// `None` without the key (never set in a volt profile).
    pub sensitivity_v_per_unit: Option<f64>,
    /// Channels per frame, 1 ≤ N ≤ [`MAX_CHANNELS`] (the `channels` key, default 1).
    pub channels: usize,
    /// The N×N correlation matrix between channels (dimensionless; symmetric, unit diagonal,
    /// positive semi-definite); the identity without a `correlation` key.
    pub correlation: Vec<Vec<f64>>,
}

/// The largest profile file read, bytes: far beyond any real profile (a few KiB; a table of
/// thousands of points is well under 1 MiB), small enough that a wrong path such as a device
/// or a capture is refused at once instead of read whole.
pub const MAX_PROFILE_BYTES: u64 = 16 << 20;

impl Profile {
    /// Reads and validates the profile (TOML) at `path`; errors name the file as given.
    pub fn from_path(path: impl AsRef<std::path::Path>) -> Result<Profile> {
        let path = path.as_ref();
        let file = path.display().to_string();
        let text = read_limited(path, MAX_PROFILE_BYTES, "a profile is a short TOML text")
            .map_err(|e| {
                crate::Error::setting(crate::Setting::Profile, format!("cannot read {file}: {e}"))
            })?;
        let mut profile = parse_profile(&text, &file)?;
        profile.label.1 = Some(std::path::absolute(path).unwrap_or_else(|_| path.to_path_buf()));
        Ok(profile)
    }

    /// Validates a profile given as TOML text; `label` names it in messages (a file name, or
    /// something like `inline`).
    pub fn from_toml_str(text: &str, label: &str) -> Result<Profile> {
        parse_profile(text, label)
    }

    /// How messages name the profile: its file as given, or the label it was parsed with.
    pub fn label(&self) -> &str {
        &self.label.0
    }

    /// The file the profile was read from ([`Profile::from_path`]), made absolute; `None` for
    /// a profile given as text.
    pub(crate) fn source_file(&self) -> Option<&std::path::Path> {
        self.label.1.as_deref()
    }

    /// The resolved profile as JSON, for output manifests. Every value is in SI base units and
    /// the key names carry the unit:
    ///
    /// ```json
    /// { "name": "bench preamp" | null,
    ///   "unit": "V",                        // densities below are in this unit per √Hz
    ///   "sample_rate_hz": 48000.0,
    ///   "band": { "low_hz": 20.0, "high_hz": 20000.0, "order": 2 },
    ///   "sources": [
    ///     { "name": "floor 1", "kind": "floor", "density": 4e-9,
    ///       "corner_hz": 100.0 | null, "slope": 1.0 },
    ///     { "name": "resistor 1 (10 kΩ)", "kind": "resistor",
    ///       "resistance_ohm": 10000.0, "temperature_k": 298.15 },
    ///     { "name": "table 1", "kind": "table",
    ///       "points": [ { "frequency_hz": 1.0, "density": 3e-8 } ] } ],
    ///   "bursts": [
    ///     { "name": "burst 1", "levels": [0.0, 3e-6],   // in the unit
    ///       "dwell_s": [0.02, 0.005], "next": [[0.0, 1.0], [1.0, 0.0]],
    ///       "sampling": "instant" } ],
    ///   "tones": [
    ///     { "name": "tone 1", "frequency_hz": 1000.0, "peak": 1e-3, "rms": 7.07e-4,
    ///       "phase_deg": 90.0, "given_as": "peak" } ],
    ///   "offset": 1.65,                     // in the unit
    ///   "sensitivity_v_per_unit": 0.02 | null }
    /// ```
    ///
    /// An `[[inertial]]` term is a source `{ "name", "kind": "inertial", "term":
    /// "random_walk" | "bias_instability" | "rate_random_walk", "coefficient" }` (N in
    /// unit·s^½, B in unit, K in unit·s^−½).
    pub fn to_json(&self) -> serde_json::Value {
        use serde_json::json;
        let sources: Vec<serde_json::Value> = self
            .sources
            .iter()
            .map(|s| match &s.kind {
                SourceKind::Floor {
                    density,
                    corner_hz,
                    slope,
                } => json!({
                    "name": s.name,
                    "kind": "floor",
                    "density": density,
                    "corner_hz": corner_hz,
                    "slope": slope,
                }),
                SourceKind::Resistor {
                    resistance_ohm,
                    temperature_k,
                } => json!({
                    "name": s.name,
                    "kind": "resistor",
                    "resistance_ohm": resistance_ohm,
                    "temperature_k": temperature_k,
                }),
                SourceKind::Table { points } => json!({
                    "name": s.name,
                    "kind": "table",
                    "points": points
                        .iter()
                        .map(|&(f, d)| json!({ "frequency_hz": f, "density": d }))
                        .collect::<Vec<_>>(),
                }),
                SourceKind::AmplifierPart {
                    stage,
                    part,
                    refer,
                    density,
                    corner_hz,
                    pole_hz,
                } => json!({
                    "name": s.name,
                    "kind": "amplifier_part",
                    "stage": stage,
                    "part": part,
                    "refer": refer,
                    "density": density,
                    "corner_hz": corner_hz,
                    "pole_hz": pole_hz,
                }),
                SourceKind::Inertial { term, coefficient } => json!({
                    "name": s.name,
                    "kind": "inertial",
                    "term": term.key(),
                    "coefficient": coefficient,
                }),
            })
            .collect();
        json!({
            "name": self.name,
            "unit": self.unit.symbol(),
            "sample_rate_hz": self.sample_rate_hz,
            "band": {
                "low_hz": self.band.low_hz,
                "high_hz": self.band.high_hz,
                "order": self.band.order,
                "low_order": self.band.low_order,
            },
            "sources": sources,
            "bursts": self.bursts.iter().map(|b| json!({
                "name": b.name,
                "levels": b.levels,
                "dwell_s": b.dwell_s,
                "next": b.next,
                "sampling": b.sampling.name(),
            })).collect::<Vec<_>>(),
            "tones": self.tones.iter().map(|t| json!({
                "name": t.name,
                "frequency_hz": t.frequency_hz,
                "peak": t.peak,
                "rms": t.rms(),
                "phase_deg": t.phase_rad.to_degrees(),
                "given_as": t.convention,
            })).collect::<Vec<_>>(),
            "offset": self.offset,
            "sensitivity_v_per_unit": self.sensitivity_v_per_unit,
            "channels": self.channels,
            "correlation": self.correlation,
        })
    }
}

/// The file at `path` as UTF-8 text, refused when it holds more than `limit` bytes (read
/// through a bounded reader, so a device or an endless pipe cannot fill memory); `why` ends
/// the refusal (e.g. "a profile is a short TOML text").
pub(crate) fn read_limited(
    path: &std::path::Path,
    limit: u64,
    why: &str,
) -> std::io::Result<String> {
    use std::io::Read;
    let mut text = String::new();
    std::fs::File::open(path)?
        .take(limit + 1)
        .read_to_string(&mut text)?;
    if text.len() as u64 > limit {
        return Err(std::io::Error::new(
            std::io::ErrorKind::FileTooLarge,
            format!("larger than {} MiB; {why}", limit >> 20),
        ));
    }
    Ok(text)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn to_json_names_carry_units() {
        let p = parse_profile(
            "unit = \"A\"\nsample_rate = \"10 kHz\"\n[band]\nlow = 1\nhigh = \"2 kHz\"\norder = 3\n\
             [[floor]]\ndensity = \"2 pA/rtHz\"\ncorner = \"5 Hz\"\n\
             [[resistor]]\nresistance = \"1 MOhm\"\n[[table]]\npoints = [[1, 3e-12]]\n",
            "t",
        )
        .unwrap();
        let j = p.to_json();
        assert_eq!(j["name"], serde_json::Value::Null);
        assert_eq!(j["unit"], "A");
        assert_eq!(j["sample_rate_hz"], 10e3);
        assert_eq!(j["band"]["low_hz"], 1.0);
        assert_eq!(j["band"]["high_hz"], 2e3);
        assert_eq!(j["band"]["order"], 3);
        let s = &j["sources"];
        assert_eq!(s[0]["kind"], "floor");
        assert_eq!(s[0]["name"], "floor 1");
        assert_eq!(s[0]["density"], 2e-12);
        assert_eq!(s[0]["corner_hz"], 5.0);
        assert_eq!(s[0]["slope"], 1.0);
        assert_eq!(s[1]["kind"], "resistor");
        assert_eq!(s[1]["resistance_ohm"], 1e6);
        assert_eq!(s[1]["temperature_k"], 298.15);
        assert_eq!(s[2]["kind"], "table");
        assert_eq!(s[2]["points"][0]["frequency_hz"], 1.0);
        assert_eq!(s[2]["points"][0]["density"], 3e-12);
    }

    #[test]
    fn sensor_units_and_sensitivity_are_read_and_recorded() {
        let p = parse_profile(
            "unit = \"g\"\nsensitivity = \"20 mV/g\"\nsample_rate = \"1 kHz\"\n[band]\n\
             low = \"0.1 Hz\"\nhigh = \"400 Hz\"\n[[floor]]\ndensity = \"25 ug/rtHz\"\n",
            "t",
        )
        .unwrap();
        assert_eq!(p.unit, Unit::StandardGravity);
        assert_eq!(p.sensitivity_v_per_unit, Some(0.02));
        let j = p.to_json();
        assert_eq!(j["unit"], "g");
        assert_eq!(j["sensitivity_v_per_unit"], 0.02);
        assert_eq!(j["sources"][0]["density"], 25e-6);
        for (text, unit, symbol) in [
            ("deg/s", Unit::DegreePerSecond, "\u{b0}/s"),
            ("\u{b0}/s", Unit::DegreePerSecond, "\u{b0}/s"),
            ("m/s^2", Unit::MetrePerSecondSquared, "m/s\u{b2}"),
            ("rad/s", Unit::RadianPerSecond, "rad/s"),
            ("Pa", Unit::Pascal, "Pa"),
            ("K", Unit::Kelvin, "K"),
            ("T", Unit::Tesla, "T"),
            ("m", Unit::Metre, "m"),
            ("N", Unit::Newton, "N"),
        ] {
            assert_eq!(Unit::from_text(text), Some(unit), "{text}");
            assert_eq!(unit.symbol(), symbol);
            // The serde name is the symbol too (manifests and JSON documents).
            assert_eq!(serde_json::to_value(unit).unwrap(), symbol);
        }
        assert_eq!(Unit::from_text("mV"), None);
    }
}
