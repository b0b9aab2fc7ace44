//! The TOML schema of a profile file and its validation into a [`Profile`].
//!
//! ```toml
//! name = "bench preamp"        # optional display name
//! unit = "V"                   # "V", "A" or a sensor's unit ("g", "deg/s", "Pa" …); default "V"
//! sensitivity = "20 mV/g"      # optional in a sensor profile: volts per unit
//! sample_rate = "48 kHz"       # required; a string with a unit or a number in Hz
//! [band]                       # required
//! low = "0.1 Hz"               # required, > 0
//! high = "20 kHz"              # required, low < high ≤ sample_rate / 2
//! order = 2                    # optional, 0..=8, default 0 (brick wall)
//! [[floor]]
//! name = "input stage"         # optional on every source
//! density = "4 nV/rtHz"        # required, unit/√Hz
//! corner = "100 Hz"            # optional; without it the floor is white
//! slope = 1.0                  # optional, 0 < slope ≤ 2, default 1; needs a corner
//! [[resistor]]
//! resistance = "10 kOhm"       # required
//! temperature = "25 C"         # optional, default 25 °C = 298.15 K
//! [[table]]
//! points = [[1.0, 30e-9], [10.0, "12 nV/rtHz"]]   # (Hz, unit/√Hz), ≥ 1 point
//! [[amplifier]]                # an op-amp stage, expanded into named parts: see `amplifier`
//! topology = "non-inverting"
//! offset = "1.65 V"            # optional DC value added to every sample (see [`super::Tone`])
//! [[inertial]]                 # N, B, K of an inertial sensor: see `inertial`
//! random_walk = "0.2 deg/rth"
//! [[tone]]                     # a sine added to the noise: frequency, peak or rms, phase
//! frequency = "1 kHz"
//! peak = "1 mV"
//! ```
//!
//! Bare numbers are SI base units (Hz, Ω, K, unit/√Hz); strings carry units
//! (see [`super::parse_quantity`]). A profile needs at least one source: Gaussian sources
//! (floor, resistor, table), `[[burst]]` sources (see [`super::Burst`]), or both.
//!
//! Errors are [`Error::Profile`] with the 1-based line of the offending key or value and a
//! dotted key path such as `floor[0].density` or `table[1].points[2]`; array indices in key
//! paths count from 0, while default source names (`floor 1`) count from 1.

use std::ops::Range;

use serde::Deserialize;
use toml::de::{DeTable, DeValue};
use toml::{Spanned, Value};

use super::burst::{BURST_KEYS, RawBurst, validate_bursts};
use super::tone::{RawTone, TONE_KEYS, validate_offset, validate_tones};
use super::{Band, Dimension, Profile, Source, SourceKind, Unit, format_quantity, parse_quantity};
use crate::error::{Error, Result};
use crate::units::expectation;

mod amplifier;
pub(super) mod inertial;

/// Temperature of a resistor without a `temperature` key: 25 °C in kelvin.
pub const DEFAULT_TEMPERATURE_K: f64 = 298.15;

/// Smallest `band.low / sample_rate` accepted (dimensionless): the engine's pyramid reaches
/// down to about 8.5e-16 of the sample rate (24 levels of ×4, see `synth::design`), so this
/// keeps every accepted profile within its reach.
pub const MIN_LOW_TO_RATE: f64 = 1e-15;

/// Highest Butterworth order accepted for `band.order`.
pub const MAX_ORDER: u32 = 8;

/// Most noise sources a profile may have: its `[[floor]]`, `[[resistor]]`, `[[table]]`,
/// `[[amplifier]]` and `[[burst]]` tables together. Every density evaluation sums them all
/// and a stream's design evaluates the density about 16 000 times per pyramid level: at this
/// limit `generate` spends under a second on its design (measured 2026-12-04: 0.8 s for 256
/// floors with corners, 3.8 s for 1024).
pub const MAX_SOURCES: usize = 256;

/// Most `[frequency, density]` points all `[[table]]` sources of a profile may have together.
/// Every point is a panel edge of the band integrals: at this limit `generate` and `budget`
/// take about 2.6 s each (measured 2026-12-04; 400 000 points took 7 to 8 s).
pub const MAX_TABLE_POINTS: usize = 100_000;

const TOP_KEYS: &[&str] = &[
    "name",
    "unit",
    "sample_rate",
    "band",
    "floor",
    "resistor",
    "table",
    "amplifier",
    "burst",
    "tone",
    "offset",
    "sensitivity",
    "inertial",
    "channels",
    "correlation",
];
const BAND_KEYS: &[&str] = &["low", "high", "order", "low_order"];
const FLOOR_KEYS: &[&str] = &["name", "density", "corner", "slope"];
const RESISTOR_KEYS: &[&str] = &["name", "resistance", "temperature"];
const TABLE_KEYS: &[&str] = &["name", "points"];

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawProfile {
    name: Option<Spanned<String>>,
    unit: Option<Spanned<String>>,
    sample_rate: Option<Spanned<Value>>,
    band: Option<Spanned<RawBand>>,
    #[serde(default)]
    floor: Vec<Spanned<RawFloor>>,
    #[serde(default)]
    resistor: Vec<Spanned<RawResistor>>,
    #[serde(default)]
    table: Vec<Spanned<RawTable>>,
    #[serde(default)]
    amplifier: Vec<Spanned<amplifier::RawAmplifier>>,
    #[serde(default)]
    burst: Vec<Spanned<RawBurst>>,
    #[serde(default)]
    tone: Vec<Spanned<RawTone>>,
    #[serde(default)]
    inertial: Vec<Spanned<inertial::RawInertial>>,
    offset: Option<Spanned<Value>>,
    sensitivity: Option<Spanned<Value>>,
    channels: Option<Spanned<Value>>,
    correlation: Option<Spanned<Value>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawBand {
    low: Option<Spanned<Value>>,
    high: Option<Spanned<Value>>,
    order: Option<Spanned<Value>>,
    low_order: Option<Spanned<Value>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawFloor {
    name: Option<String>,
    density: Option<Spanned<Value>>,
    corner: Option<Spanned<Value>>,
    slope: Option<Spanned<Value>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawResistor {
    name: Option<String>,
    resistance: Option<Spanned<Value>>,
    temperature: Option<Spanned<Value>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawTable {
    name: Option<String>,
    points: Option<Spanned<Vec<Spanned<Value>>>>,
}

/// Parse and validate a profile from TOML text. `file` is the name used in error messages.
pub fn parse_profile(text: &str, file: &str) -> Result<Profile> {
    let cx = Cx { text, file };
    let doc = DeTable::parse(text).map_err(|e| {
        let at = e
            .span()
            .map(|s| format!(" at column {}", column_of(text, s.start)))
            .unwrap_or_default();
        cx.err(
            "syntax",
            e.span(),
            format!("not valid TOML{at}: {}", e.message().trim()),
        )
    })?;
    check_keys(&cx, doc.get_ref())?;
    let raw = RawProfile::deserialize(toml::de::Deserializer::from(doc.clone())).map_err(|e| {
        let key = e
            .span()
            .and_then(|s| find_path(doc.get_ref(), s.start, ""))
            .unwrap_or_else(|| "profile".into());
        cx.err(&key, e.span(), e.message().to_string())
    })?;
    validate(&cx, raw)
}

/// The text being parsed and its file name, for building errors.
pub(super) struct Cx<'a> {
    text: &'a str,
    file: &'a str,
}

impl Cx<'_> {
    pub(super) fn err(
        &self,
        key: &str,
        span: Option<Range<usize>>,
        message: impl Into<String>,
    ) -> Error {
        Error::Profile {
            file: self.file.to_string(),
            line: span.map(|s| line_of(self.text, s.start)),
            key: key.to_string(),
            message: message.into(),
        }
    }
}

/// 1-based column (in characters) of byte offset `pos` in `text`.
fn column_of(text: &str, pos: usize) -> usize {
    let mut pos = pos.min(text.len());
    while !text.is_char_boundary(pos) {
        pos -= 1;
    }
    let start = text[..pos].rfind('\n').map_or(0, |i| i + 1);
    text[start..pos].chars().count() + 1
}

/// 1-based line of byte offset `pos` in `text`.
fn line_of(text: &str, pos: usize) -> usize {
    let pos = pos.min(text.len());
    text.as_bytes()[..pos]
        .iter()
        .filter(|&&b| b == b'\n')
        .count()
        + 1
}

fn join(prefix: &str, key: &str) -> String {
    if prefix.is_empty() {
        key.to_string()
    } else {
        format!("{prefix}.{key}")
    }
}

fn contains(span: &Range<usize>, pos: usize) -> bool {
    span.start <= pos && pos < span.end.max(span.start + 1)
}

/// The dotted path of the deepest key or value whose span holds byte `pos`.
fn find_path(table: &DeTable<'_>, pos: usize, prefix: &str) -> Option<String> {
    for (k, v) in table.iter() {
        let path = join(prefix, k.get_ref());
        let inner = match v.get_ref() {
            DeValue::Table(t) => find_path(t, pos, &path),
            DeValue::Array(a) => a.iter().enumerate().find_map(|(i, e)| {
                let item = format!("{path}[{i}]");
                match e.get_ref() {
                    DeValue::Table(t) => find_path(t, pos, &item)
                        .or_else(|| contains(&e.span(), pos).then(|| item.clone())),
                    _ => contains(&e.span(), pos).then_some(item),
                }
            }),
            _ => None,
        };
        if inner.is_some() {
            return inner;
        }
        if contains(&k.span(), pos) || contains(&v.span(), pos) {
            return Some(path);
        }
    }
    None
}

/// Reject unknown keys (naming the nearest allowed one) and sections of the wrong shape,
/// reporting the first problem in file order.
fn check_keys(cx: &Cx<'_>, doc: &DeTable<'_>) -> Result<()> {
    let mut problems: Vec<(Range<usize>, String, String)> = Vec::new();
    unknown_keys(doc, TOP_KEYS, "", &mut problems);
    for (k, v) in doc.iter() {
        let name = k.get_ref().as_ref();
        match (name, v.get_ref()) {
            ("band", DeValue::Table(t)) => unknown_keys(t, BAND_KEYS, "band", &mut problems),
            ("band", other) => problems.push((
                v.span(),
                "band".into(),
                format!(
                    "expected a [band] table with low, high and order, got {}",
                    a(other.type_str())
                ),
            )),
            (
                "floor" | "resistor" | "table" | "amplifier" | "burst" | "tone" | "inertial",
                value,
            ) => {
                let allowed = match name {
                    "inertial" => inertial::INERTIAL_KEYS,
                    "floor" => FLOOR_KEYS,
                    "resistor" => RESISTOR_KEYS,
                    "amplifier" => amplifier::KEYS,
                    "burst" => BURST_KEYS,
                    "tone" => TONE_KEYS,
                    _ => TABLE_KEYS,
                };
                match value {
                    DeValue::Array(items) => {
                        for (i, item) in items.iter().enumerate() {
                            let path = format!("{name}[{i}]");
                            match item.get_ref() {
                                DeValue::Table(t) => unknown_keys(t, allowed, &path, &mut problems),
                                other => problems.push((
                                    item.span(),
                                    path,
                                    format!(
                                        "expected a [[{name}]] table, got {}",
                                        a(other.type_str())
                                    ),
                                )),
                            }
                        }
                    }
                    other => problems.push((
                        k.span(),
                        name.into(),
                        format!(
                            "expected [[{name}]] (double brackets: one table per source), \
                             got {}",
                            if matches!(other, DeValue::Table(_)) {
                                "a single [".to_string() + name + "] table"
                            } else {
                                a(other.type_str())
                            }
                        ),
                    )),
                }
            }
            _ => {}
        }
    }
    match problems.into_iter().min_by_key(|p| p.0.start) {
        Some((span, key, message)) => Err(cx.err(&key, Some(span), message)),
        None => Ok(()),
    }
}

fn unknown_keys(
    table: &DeTable<'_>,
    allowed: &[&str],
    prefix: &str,
    problems: &mut Vec<(Range<usize>, String, String)>,
) {
    for (k, _) in table.iter() {
        let key: &str = k.get_ref();
        if allowed.contains(&key) {
            continue;
        }
        let here = if prefix.is_empty() {
            "at the top level".to_string()
        } else {
            format!("in {prefix}")
        };
        let suggestion = allowed
            .iter()
            .map(|a| (edit_distance(&key.to_lowercase(), a), *a))
            .filter(|(d, a)| *d <= 2.max(a.len() / 3))
            .min()
            .map(|(_, a)| format!("; did you mean `{a}`?"))
            .unwrap_or_default();
        problems.push((
            k.span(),
            join(prefix, key),
            format!(
                "unknown key `{key}`{suggestion} (allowed {here}: {})",
                allowed.join(", ")
            ),
        ));
    }
}

/// A type name with its indefinite article: "an integer", "a string".
fn a(type_name: &str) -> String {
    let article = if type_name.starts_with(['a', 'e', 'i', 'o', 'u']) {
        "an"
    } else {
        "a"
    };
    format!("{article} {type_name}")
}

/// Levenshtein distance in characters.
fn edit_distance(a: &str, b: &str) -> usize {
    let b: Vec<char> = b.chars().collect();
    let mut prev: Vec<usize> = (0..=b.len()).collect();
    for (i, ca) in a.chars().enumerate() {
        let mut cur = vec![i + 1; b.len() + 1];
        for (j, &cb) in b.iter().enumerate() {
            cur[j + 1] = (prev[j] + usize::from(ca != cb))
                .min(prev[j + 1] + 1)
                .min(cur[j] + 1);
        }
        prev = cur;
    }
    prev[b.len()]
}

/// A number or a string with a unit, resolved to SI base units, checked finite and, for
/// densities, levels and resistances, at most [`MAX_MAGNITUDE`] in magnitude.
pub(super) fn quantity(
    cx: &Cx<'_>,
    value: &Value,
    span: Range<usize>,
    key: &str,
    dim: Dimension,
    unit: Unit,
) -> Result<f64> {
    let x = finite_quantity(cx, value, span.clone(), key, dim, unit)?;
    within_magnitude(cx, x, span, key, dim, unit)
}

/// A number or a string with a unit, resolved to SI base units and checked finite.
pub(super) fn finite_quantity(
    cx: &Cx<'_>,
    value: &Value,
    span: Range<usize>,
    key: &str,
    dim: Dimension,
    unit: Unit,
) -> Result<f64> {
    let sym = unit.symbol();
    let x = match value {
        Value::Float(x) => *x,
        Value::Integer(i) => *i as f64,
        Value::String(s) => {
            parse_quantity(s, dim, sym).map_err(|m| cx.err(key, Some(span.clone()), m))?
        }
        other => {
            return Err(cx.err(
                key,
                Some(span),
                format!("{}, got {}", expectation(dim, sym), a(other.type_str())),
            ));
        }
    };
    if !x.is_finite() {
        return Err(cx.err(
            key,
            Some(span),
            format!("{}, got {x}", expectation(dim, sym)),
        ));
    }
    Ok(x)
}

/// `x` itself if it is a density, level or resistance of at most [`MAX_MAGNITUDE`] in
/// magnitude (or of another dimension); an error naming the key otherwise.
pub(super) fn within_magnitude(
    cx: &Cx<'_>,
    x: f64,
    span: Range<usize>,
    key: &str,
    dim: Dimension,
    unit: Unit,
) -> Result<f64> {
    let scaled = matches!(
        dim,
        Dimension::Density | Dimension::Amplitude | Dimension::Resistance | Dimension::RateWalk
    );
    if scaled && x.abs() > MAX_MAGNITUDE {
        let unit_symbol = symbol(dim, unit);
        return Err(cx.err(
            key,
            Some(span),
            format!(
                "expected at most {} in magnitude (larger values overflow the sums of powers \
                 over sources and samples), got {}",
                format_quantity(MAX_MAGNITUDE, &unit_symbol),
                format_quantity(x, &unit_symbol)
            ),
        ));
    }
    Ok(x)
}

/// The largest magnitude of a density (unit/√Hz), level or amplitude (unit) or resistance (Ω)
/// a profile may hold: far beyond anything physical, and small enough that squares summed
/// over many sources and 2^63 samples stay finite in f64 (1e30² · 2^63 ≈ 1e79).
pub const MAX_MAGNITUDE: f64 = 1e30;

fn spanned_quantity(
    cx: &Cx<'_>,
    v: &Spanned<Value>,
    key: &str,
    dim: Dimension,
    unit: Unit,
) -> Result<f64> {
    quantity(cx, v.get_ref(), v.span(), key, dim, unit)
}

/// SI symbol used when quoting a value of `dim` back to the user.
fn symbol(dim: Dimension, unit: Unit) -> String {
    match dim {
        Dimension::Frequency => "Hz".into(),
        Dimension::Time => "s".into(),
        Dimension::Temperature => "K".into(),
        Dimension::Resistance => "\u{3a9}".into(),
        Dimension::Density => format!("{}/\u{221a}Hz", unit.symbol()),
        Dimension::Amplitude => unit.symbol().into(),
        Dimension::RateWalk => format!("{}\u{b7}s^-\u{bd}", unit.symbol()),
    }
}

/// A required positive quantity.
pub(super) fn positive(
    cx: &Cx<'_>,
    v: &Spanned<Value>,
    key: &str,
    dim: Dimension,
    unit: Unit,
) -> Result<f64> {
    bounded_below(cx, v, key, dim, unit, false)
}

/// A quantity that may be 0 but not negative.
pub(super) fn non_negative(
    cx: &Cx<'_>,
    v: &Spanned<Value>,
    key: &str,
    dim: Dimension,
    unit: Unit,
) -> Result<f64> {
    bounded_below(cx, v, key, dim, unit, true)
}

/// A quantity above 0 (or at least 0 when `zero_ok`), with an error naming the key.
fn bounded_below(
    cx: &Cx<'_>,
    v: &Spanned<Value>,
    key: &str,
    dim: Dimension,
    unit: Unit,
    zero_ok: bool,
) -> Result<f64> {
    let x = spanned_quantity(cx, v, key, dim, unit)?;
    if x > 0.0 || (zero_ok && x == 0.0) {
        Ok(x)
    } else {
        Err(cx.err(
            key,
            Some(v.span()),
            format!(
                "must be {} 0, got {}",
                if zero_ok { ">=" } else { ">" },
                format_quantity(x, &symbol(dim, unit))
            ),
        ))
    }
}

/// A missing required key: the error points at the enclosing table.
pub(super) fn missing(cx: &Cx<'_>, key: &str, span: Option<Range<usize>>, example: &str) -> Error {
    cx.err(key, span, format!("missing; expected e.g. {example}"))
}

/// Check every section of `raw` in file-format order (the first error found is the one
/// reported) and build the profile.
fn validate(cx: &Cx<'_>, raw: RawProfile) -> Result<Profile> {
    let unit = validate_unit(cx, raw.unit.as_ref())?;
    let Some(fs_v) = &raw.sample_rate else {
        return Err(missing(cx, "sample_rate", None, "sample_rate = \"48 kHz\""));
    };
    let fs = positive(cx, fs_v, "sample_rate", Dimension::Frequency, unit)?;
    let band = validate_band(cx, raw.band.as_ref(), unit, fs)?;
    check_source_count(cx, &raw)?;

    let mut sources = validate_floors(cx, &raw.floor, unit)?;
    sources.extend(validate_resistors(cx, &raw.resistor, unit)?);
    sources.extend(validate_tables(cx, &raw.table, unit)?);
    for (i, a) in raw.amplifier.iter().enumerate() {
        sources.extend(amplifier::validate(cx, i, a, unit)?);
    }
    sources.extend(inertial::validate_inertial(cx, &raw.inertial, unit)?);
    let bursts = validate_bursts(cx, &raw.burst, unit, fs)?;
    let tones = validate_tones(cx, &raw.tone, unit, fs)?;
    let offset = validate_offset(cx, raw.offset.as_ref(), unit)?;
    let sensitivity_v_per_unit = validate_sensitivity(cx, raw.sensitivity.as_ref(), unit)?;
    if sources.is_empty() && bursts.is_empty() {
        return Err(cx.err(
            "sources",
            None,
            "a profile needs at least one [[floor]], [[resistor]], [[table]], [[amplifier]], \
             [[inertial]] or [[burst]]",
        ));
    }

    let (channels, correlation) =
        super::channels::validate_channels(cx, raw.channels.as_ref(), raw.correlation.as_ref())?;

    Ok(Profile {
        label: super::Label(cx.file.to_string(), None),
        name: raw.name.as_ref().map(|n| n.get_ref().clone()),
        unit,
        sample_rate_hz: fs,
        band,
        sources,
        bursts,
        tones,
        offset,
        sensitivity_v_per_unit,
        channels,
        correlation,
    })
}

/// The `sensitivity` key: volts per unit of a sensor's quantity, positive; refused in a volt
/// profile (its values are volts already).
fn validate_sensitivity(
    cx: &Cx<'_>,
    v: Option<&Spanned<Value>>,
    unit: Unit,
) -> Result<Option<f64>> {
    let Some(v) = v else { return Ok(None) };
    let sym = unit.symbol();
    if unit == Unit::Volt {
        return Err(cx.err(
            "sensitivity",
            Some(v.span()),
            "turns a sensor's quantity into volts, but this profile's unit is V already; \
             remove sensitivity or set the sensor's unit (e.g. unit = \"g\")",
        ));
    }
    let x = match v.get_ref() {
        Value::String(t) => crate::units::parse_sensitivity(t, sym),
        Value::Float(x) => crate::units::parse_sensitivity(&format!("{x:e}"), sym),
        Value::Integer(i) => crate::units::parse_sensitivity(&i.to_string(), sym),
        other => Err(format!(
            "expected a sensitivity such as \"20 mV/{}\", got {}",
            unit.spec().spellings[0],
            a(other.type_str())
        )),
    };
    x.map(Some)
        .map_err(|m| cx.err("sensitivity", Some(v.span()), m))
}

/// Refuses more than [`MAX_SOURCES`] source tables, naming the first one past the limit (in
/// the order floor, resistor, table, amplifier, burst).
fn check_source_count(cx: &Cx<'_>, raw: &RawProfile) -> Result<()> {
    let kinds: [(&str, Vec<Range<usize>>); 6] = [
        ("floor", raw.floor.iter().map(|t| t.span()).collect()),
        ("resistor", raw.resistor.iter().map(|t| t.span()).collect()),
        ("table", raw.table.iter().map(|t| t.span()).collect()),
        (
            "amplifier",
            raw.amplifier.iter().map(|t| t.span()).collect(),
        ),
        ("burst", raw.burst.iter().map(|t| t.span()).collect()),
        ("inertial", raw.inertial.iter().map(|t| t.span()).collect()),
    ];
    let total: usize = kinds.iter().map(|(_, v)| v.len()).sum();
    if total <= MAX_SOURCES {
        return Ok(());
    }
    let (kind, i, span) = kinds
        .iter()
        .flat_map(|(kind, v)| {
            v.iter()
                .enumerate()
                .map(move |(i, s)| (*kind, i, s.clone()))
        })
        .nth(MAX_SOURCES)
        .expect("more tables than the limit");
    Err(cx.err(
        &format!("{kind}[{i}]"),
        Some(span),
        format!(
            "a profile may have at most {MAX_SOURCES} noise sources ([[floor]], [[resistor]], \
             [[table]], [[amplifier]] and [[burst]] tables together), got {total}"
        ),
    ))
}

/// The profile's `unit`: volts when absent.
fn validate_unit(cx: &Cx<'_>, unit: Option<&Spanned<String>>) -> Result<Unit> {
    match unit {
        None => Ok(Unit::Volt),
        Some(u) => Unit::from_text(u.get_ref().trim()).ok_or_else(|| {
            cx.err(
                "unit",
                Some(u.span()),
                format!(
                    "expected \"V\" (volts) or \"A\" (amperes), or a sensor's unit: \"Pa\", \
                     \"K\", \"T\", \"m\", \"N\", \"m/s^2\", \"g\", \"rad/s\" or \"deg/s\" \
                     (values then take SI prefixes, e.g. \"25 ug/rtHz\"), got \"{}\"",
                    u.get_ref()
                ),
            )
        }),
    }
}

/// The `[band]` section: edges in Hz within what a sample rate of `fs` Hz can carry and
/// shape, and the order of the upper edge.
fn validate_band(
    cx: &Cx<'_>,
    band: Option<&Spanned<RawBand>>,
    unit: Unit,
    fs: f64,
) -> Result<Band> {
    let Some(band) = band else {
        return Err(missing(
            cx,
            "band",
            None,
            "[band] with low = \"20 Hz\" and high = \"20 kHz\"",
        ));
    };
    let band_span = Some(band.span());
    let band = band.get_ref();
    let low_v = band
        .low
        .as_ref()
        .ok_or_else(|| missing(cx, "band.low", band_span.clone(), "low = \"20 Hz\""))?;
    let high_v = band
        .high
        .as_ref()
        .ok_or_else(|| missing(cx, "band.high", band_span.clone(), "high = \"20 kHz\""))?;
    let low = positive(cx, low_v, "band.low", Dimension::Frequency, unit)?;
    let high = positive(cx, high_v, "band.high", Dimension::Frequency, unit)?;
    let hz = |x: f64| format_quantity(x, "Hz");
    if low >= high {
        return Err(cx.err(
            "band.low",
            Some(low_v.span()),
            format!(
                "band.low ({}) must be below band.high ({})",
                hz(low),
                hz(high)
            ),
        ));
    }
    if low / fs < MIN_LOW_TO_RATE {
        return Err(cx.err(
            "band.low",
            Some(low_v.span()),
            format!(
                "{} is below what the engine can shape at sample_rate {}: band.low must be at \
                 least {MIN_LOW_TO_RATE:e} of the sample rate ({}); raise band.low or lower \
                 sample_rate",
                hz(low),
                hz(fs),
                hz(MIN_LOW_TO_RATE * fs)
            ),
        ));
    }
    let nyquist = fs / 2.0;
    if high > nyquist {
        return Err(cx.err(
            "band.high",
            Some(high_v.span()),
            format!(
                "{} is above the Nyquist frequency {} (half the sample rate {}); \
                 lower band.high or raise sample_rate",
                hz(high),
                hz(nyquist),
                hz(fs)
            ),
        ));
    }
    Ok(Band {
        low_hz: low,
        high_hz: high,
        order: band_order(cx, "band.order", band.order.as_ref())?,
        low_order: band_order(cx, "band.low_order", band.low_order.as_ref())?,
    })
}

/// `band.order` or `band.low_order` (`key`): 0 (brick wall) when absent, else a Butterworth
/// order up to [`MAX_ORDER`].
fn band_order(cx: &Cx<'_>, key: &str, order: Option<&Spanned<Value>>) -> Result<u32> {
    match order {
        None => Ok(0),
        Some(o) => match o.get_ref() {
            Value::Integer(n) if (0..=i64::from(MAX_ORDER)).contains(n) => Ok(*n as u32),
            other => Err(cx.err(
                key,
                Some(o.span()),
                format!(
                    "expected an integer from 0 (brick wall) to {MAX_ORDER} \
                     (Butterworth order), got {other}"
                ),
            )),
        },
    }
}

/// The `[[floor]]` sources, in file order.
fn validate_floors(cx: &Cx<'_>, floors: &[Spanned<RawFloor>], unit: Unit) -> Result<Vec<Source>> {
    let mut sources = Vec::new();
    for (i, f) in floors.iter().enumerate() {
        let key = |k: &str| format!("floor[{i}].{k}");
        let span = Some(f.span());
        let f = f.get_ref();
        let d = f
            .density
            .as_ref()
            .ok_or_else(|| missing(cx, &key("density"), span, "density = \"4 nV/rtHz\""))?;
        let density = positive(cx, d, &key("density"), Dimension::Density, unit)?;
        let corner_hz = match &f.corner {
            Some(c) => Some(positive(cx, c, &key("corner"), Dimension::Frequency, unit)?),
            None => None,
        };
        let slope = match &f.slope {
            None => 1.0,
            Some(s) => floor_slope(cx, s, &key("slope"), corner_hz)?,
        };
        sources.push(Source {
            name: f.name.clone().unwrap_or_else(|| format!("floor {}", i + 1)),
            kind: SourceKind::Floor {
                density,
                corner_hz,
                slope,
            },
        });
    }
    Ok(sources)
}

/// A floor's `slope` (the exponent α of 1/f^α, dimensionless, 0 < α ≤ 2), which needs the
/// floor's corner (`corner_hz`, Hz).
fn floor_slope(cx: &Cx<'_>, s: &Spanned<Value>, k: &str, corner_hz: Option<f64>) -> Result<f64> {
    let x = match s.get_ref() {
        Value::Float(x) => *x,
        Value::Integer(n) => *n as f64,
        _ => f64::NAN,
    };
    if !(x > 0.0 && x <= 2.0) {
        return Err(cx.err(
            k,
            Some(s.span()),
            format!(
                "expected a number with 0 < slope <= 2 (1 = 1/f), got {}",
                s.get_ref()
            ),
        ));
    }
    if corner_hz.is_none() {
        return Err(cx.err(
            k,
            Some(s.span()),
            "slope has no effect without a corner; add e.g. corner = \"100 Hz\" \
             or remove slope",
        ));
    }
    Ok(x)
}

/// The `[[resistor]]` sources, in file order.
fn validate_resistors(
    cx: &Cx<'_>,
    resistors: &[Spanned<RawResistor>],
    unit: Unit,
) -> Result<Vec<Source>> {
    let mut sources = Vec::new();
    for (i, r) in resistors.iter().enumerate() {
        let key = |k: &str| format!("resistor[{i}].{k}");
        let span = Some(r.span());
        if !unit.is_electrical() {
            return Err(cx.err(
                &format!("resistor[{i}]"),
                span,
                format!(
                    "a resistor's thermal noise is a voltage (or a current), but this profile's \
                     unit is {}; write it as a [[floor]] in {}/\u{221a}Hz or set unit = \"V\"",
                    unit.symbol(),
                    unit.symbol()
                ),
            ));
        }
        let r = r.get_ref();
        let rv = r
            .resistance
            .as_ref()
            .ok_or_else(|| missing(cx, &key("resistance"), span, "resistance = \"10 kOhm\""))?;
        let resistance_ohm = positive(cx, rv, &key("resistance"), Dimension::Resistance, unit)?;
        let temperature_k = match &r.temperature {
            None => DEFAULT_TEMPERATURE_K,
            Some(t) => positive(cx, t, &key("temperature"), Dimension::Temperature, unit)?,
        };
        sources.push(Source {
            name: r.name.clone().unwrap_or_else(|| {
                format!(
                    "resistor {} ({})",
                    i + 1,
                    format_quantity(resistance_ohm, "\u{3a9}")
                )
            }),
            kind: SourceKind::Resistor {
                resistance_ohm,
                temperature_k,
            },
        });
    }
    Ok(sources)
}

/// The `[[table]]` sources, in file order.
fn validate_tables(cx: &Cx<'_>, tables: &[Spanned<RawTable>], unit: Unit) -> Result<Vec<Source>> {
    let mut sources = Vec::new();
    let mut total = 0;
    for (i, t) in tables.iter().enumerate() {
        let key = format!("table[{i}].points");
        let span = Some(t.span());
        let t = t.get_ref();
        let pts = t.points.as_ref().ok_or_else(|| {
            missing(
                cx,
                &key,
                span.clone(),
                "points = [[10.0, 20e-9], [1000.0, 5e-9]] (Hz, unit/\u{221a}Hz)",
            )
        })?;
        if pts.get_ref().is_empty() {
            return Err(cx.err(
                &key,
                Some(pts.span()),
                "needs at least one [frequency, density] point",
            ));
        }
        total += pts.get_ref().len();
        if total > MAX_TABLE_POINTS {
            return Err(cx.err(
                &key,
                Some(pts.span()),
                format!(
                    "a profile's tables may have at most {MAX_TABLE_POINTS} points together; \
                     with this table they have {total} (thin the table: the density between \
                     points is interpolated as a power law)"
                ),
            ));
        }
        let mut points: Vec<(f64, f64)> = Vec::with_capacity(pts.get_ref().len());
        for (j, p) in pts.get_ref().iter().enumerate() {
            let point = table_point(cx, p, &format!("{key}[{j}]"), unit, points.last())?;
            points.push(point);
        }
        sources.push(Source {
            name: t.name.clone().unwrap_or_else(|| format!("table {}", i + 1)),
            kind: SourceKind::Table { points },
        });
    }
    Ok(sources)
}

/// One `[frequency, density]` point of a table as (Hz, unit/√Hz), both positive and the
/// frequency above that of the point before (`previous`).
fn table_point(
    cx: &Cx<'_>,
    p: &Spanned<Value>,
    pkey: &str,
    unit: Unit,
    previous: Option<&(f64, f64)>,
) -> Result<(f64, f64)> {
    let hz = |x: f64| format_quantity(x, "Hz");
    let pair = match p.get_ref() {
        Value::Array(a) if a.len() == 2 => a,
        other => {
            return Err(cx.err(
                pkey,
                Some(p.span()),
                format!(
                    "expected a [frequency, density] pair such as [10.0, 20e-9] or \
                     [\"10 Hz\", \"20 n{}/rtHz\"], got {other}",
                    unit.symbol()
                ),
            ));
        }
    };
    let f = quantity(cx, &pair[0], p.span(), pkey, Dimension::Frequency, unit)?;
    let d = quantity(cx, &pair[1], p.span(), pkey, Dimension::Density, unit)?;
    if f <= 0.0 {
        return Err(cx.err(
            pkey,
            Some(p.span()),
            format!("the frequency must be > 0 Hz, got {}", hz(f)),
        ));
    }
    if d <= 0.0 {
        return Err(cx.err(
            pkey,
            Some(p.span()),
            format!(
                "the density must be > 0, got {}",
                format_quantity(d, &symbol(Dimension::Density, unit))
            ),
        ));
    }
    if let Some(&(prev, _)) = previous {
        if f <= prev {
            return Err(cx.err(
                pkey,
                Some(p.span()),
                format!(
                    "frequencies must increase strictly: {} follows {}",
                    hz(f),
                    hz(prev)
                ),
            ));
        }
    }
    Ok((f, d))
}

#[cfg(test)]
pub(super) mod tests {
    use super::*;

    const GOOD: &str = r#"name = "bench preamp"
unit = "V"
sample_rate = "48 kHz"
[band]
low = "0.1 Hz"
high = "20 kHz"
order = 2
[[floor]]
name = "input stage"
density = "4 nV/rtHz"
corner = "100 Hz"
slope = 1.5
[[floor]]
density = 2e-9
[[resistor]]
resistance = "10 kOhm"
[[resistor]]
resistance = 50
temperature = "300 K"
[[table]]
points = [[1.0, 30e-9], ["10 Hz", "12 nV/rtHz"], [1000, 5e-9]]
"#;

    /// (key, line, message) of the error `text` gives.
    fn fail(text: &str) -> (String, Option<usize>, String) {
        profile_error(text, "t.toml")
    }

    /// (key, line, message) of the profile error that `text`, read as `file`, gives; panics
    /// if it parses or fails otherwise.
    pub(in crate::profile) fn profile_error(
        text: &str,
        file: &str,
    ) -> (String, Option<usize>, String) {
        match parse_profile(text, file) {
            Err(Error::Profile {
                file: f,
                line,
                key,
                message,
            }) => {
                assert_eq!(f, file);
                (key, line, message)
            }
            other => panic!("expected a profile error for {text:?}, got {other:?}"),
        }
    }

    /// `GOOD` with the line starting `old` replaced by `new` (or removed if `new` is empty).
    fn edit(old: &str, new: &str) -> String {
        let mut found = false;
        let out: Vec<&str> = GOOD
            .lines()
            .filter_map(|l| {
                if !found && l.starts_with(old) {
                    found = true;
                    (!new.is_empty()).then_some(new)
                } else {
                    Some(l)
                }
            })
            .collect();
        assert!(found, "no line starts with {old:?}");
        out.join("\n") + "\n"
    }

    #[test]
    fn a_full_profile_resolves_to_si_units_with_default_names() {
        let p = parse_profile(GOOD, "t.toml").unwrap();
        assert_eq!(p.name.as_deref(), Some("bench preamp"));
        assert_eq!(p.unit, Unit::Volt);
        assert_eq!(p.sample_rate_hz, 48e3);
        assert_eq!(
            p.band,
            Band {
                low_hz: 0.1,
                high_hz: 20e3,
                order: 2,
                low_order: 0,
            }
        );
        let names: Vec<&str> = p.sources.iter().map(|s| s.name.as_str()).collect();
        assert_eq!(
            names,
            [
                "input stage",
                "floor 2",
                "resistor 1 (10 k\u{3a9})",
                "resistor 2 (50 \u{3a9})",
                "table 1"
            ]
        );
        assert_eq!(
            p.sources[0].kind,
            SourceKind::Floor {
                density: 4e-9,
                corner_hz: Some(100.0),
                slope: 1.5
            }
        );
        assert_eq!(
            p.sources[1].kind,
            SourceKind::Floor {
                density: 2e-9,
                corner_hz: None,
                slope: 1.0
            }
        );
        assert_eq!(
            p.sources[2].kind,
            SourceKind::Resistor {
                resistance_ohm: 10e3,
                temperature_k: DEFAULT_TEMPERATURE_K
            }
        );
        assert_eq!(
            p.sources[3].kind,
            SourceKind::Resistor {
                resistance_ohm: 50.0,
                temperature_k: 300.0
            }
        );
        assert_eq!(
            p.sources[4].kind,
            SourceKind::Table {
                points: vec![(1.0, 30e-9), (10.0, 12e-9), (1000.0, 5e-9)]
            }
        );
    }

    #[test]
    fn defaults_unit_volt_order_zero_and_25_celsius() {
        let p = parse_profile(
            "sample_rate = 1000\n[band]\nlow = 1\nhigh = 500\n[[resistor]]\nresistance = 1e3\n",
            "t.toml",
        )
        .unwrap();
        assert_eq!(p.unit, Unit::Volt);
        assert_eq!(p.band.order, 0);
        assert_eq!(p.name, None);
        // 25 °C = 298.15 K (SI Brochure, 9th ed.).
        assert_eq!(
            p.sources[0].kind,
            SourceKind::Resistor {
                resistance_ohm: 1e3,
                temperature_k: 298.15
            }
        );
        let a = parse_profile(
            &edit("unit", "unit = \"A\"").replace("nV/rtHz", "pA/rtHz"),
            "t",
        )
        .unwrap();
        assert_eq!(a.unit, Unit::Ampere);
    }

    #[test]
    fn inline_tables_are_the_same_profile() {
        let inline = r#"sample_rate = "48 kHz"
band = { low = "0.1 Hz", high = "20 kHz", order = 2 }
floor = [{ density = "4 nV/rtHz", corner = 100 }]
"#;
        let tables = r#"sample_rate = 48000
[band]
low = 0.1
high = 20e3
order = 2
[[floor]]
density = 4e-9
corner = "100 Hz"
"#;
        assert_eq!(
            parse_profile(inline, "a").unwrap(),
            parse_profile(tables, "b").unwrap()
        );
    }

    #[test]
    fn an_unknown_key_in_an_inline_table_is_named_with_its_line() {
        let (k, l, _) = fail("sample_rate = 1\nfloor = [{ density = 1 }, { dens = 1 }]\n");
        assert_eq!((k.as_str(), l), ("floor[1].dens", Some(2)));
    }

    #[test]
    fn band_high_above_nyquist_names_the_key_line_and_24_khz() {
        let (key, line, msg) = fail(&edit("high", "high = \"30 kHz\""));
        assert_eq!((key.as_str(), line), ("band.high", Some(6)));
        assert!(msg.contains("24 kHz") && msg.contains("Nyquist"), "{msg}");
        // Exactly at Nyquist is allowed.
        assert!(parse_profile(&edit("high", "high = \"24 kHz\""), "t").is_ok());
    }

    /// Each case edits `GOOD` (the line starting `old` becomes `new`) and expects an error
    /// at `key` on `line` whose message holds `needle`: (old, new, key, line, needle).
    fn assert_errors(cases: &[(&str, &str, &str, usize, &str)]) {
        for &(old, new, key, line, needle) in cases {
            let (k, l, msg) = fail(&edit(old, new));
            assert_eq!((k.as_str(), l), (key, Some(line)), "{new}: {msg}");
            assert!(msg.contains(needle), "{new}: {msg:?} lacks {needle:?}");
        }
    }

    #[test]
    fn top_level_and_band_errors_have_their_key_and_line() {
        assert_errors(&[
            ("unit", "unit = \"mV\"", "unit", 2, "\"V\""),
            ("sample_rate", "sample_rate = 0", "sample_rate", 3, "> 0"),
            (
                "sample_rate",
                "sample_rate = \"48 kHz2\"",
                "sample_rate",
                3,
                "\"48 kHz2\"",
            ),
            (
                "sample_rate",
                "sample_rate = nan",
                "sample_rate",
                3,
                "frequency",
            ),
            (
                "sample_rate",
                "sample_rate = true",
                "sample_rate",
                3,
                "boolean",
            ),
            ("low", "low = \"-1 Hz\"", "band.low", 5, "> 0"),
            ("low", "low = \"30 kHz\"", "band.low", 5, "below band.high"),
            ("low", "low = \"20 kHz\"", "band.low", 5, "below band.high"),
            ("order", "order = 9", "band.order", 7, "0 (brick wall) to 8"),
            ("order", "order = 1.5", "band.order", 7, "integer"),
            ("order", "order = -1", "band.order", 7, "integer"),
        ]);
    }

    #[test]
    fn floor_errors_have_their_key_and_line() {
        assert_errors(&[
            (
                "density = \"4",
                "density = \"0 nV/rtHz\"",
                "floor[0].density",
                10,
                "> 0",
            ),
            (
                "density = \"4",
                "density = \"4 pA/rtHz\"",
                "floor[0].density",
                10,
                "unit is V",
            ),
            (
                "density = 2e-9",
                "density = -inf",
                "floor[1].density",
                14,
                "density",
            ),
            ("corner", "corner = \"0 Hz\"", "floor[0].corner", 11, "> 0"),
            (
                "slope",
                "slope = 2.5",
                "floor[0].slope",
                12,
                "0 < slope <= 2",
            ),
            ("slope", "slope = 0", "floor[0].slope", 12, "0 < slope <= 2"),
            (
                "slope",
                "slope = \"1\"",
                "floor[0].slope",
                12,
                "0 < slope <= 2",
            ),
            (
                "density = 2e-9",
                "density = 2e-9\nslope = 1",
                "floor[1].slope",
                15,
                "corner",
            ),
        ]);
    }

    #[test]
    fn resistor_and_table_errors_have_their_key_and_line() {
        assert_errors(&[
            (
                "resistance = \"10",
                "resistance = \"-10 kOhm\"",
                "resistor[0].resistance",
                16,
                "> 0",
            ),
            (
                "temperature",
                "temperature = \"-300 C\"",
                "resistor[1].temperature",
                19,
                "> 0",
            ),
            (
                "temperature",
                "temperature = \"300 Hz\"",
                "resistor[1].temperature",
                19,
                "temperature such as",
            ),
            (
                "points",
                "points = []",
                "table[0].points",
                21,
                "at least one",
            ),
            (
                "points",
                "points = [[10.0, 1e-9], [1.0, 2e-9]]",
                "table[0].points[1]",
                21,
                "increase strictly",
            ),
            (
                "points",
                "points = [[1.0, 1e-9], [1.0, 2e-9]]",
                "table[0].points[1]",
                21,
                "increase strictly",
            ),
            (
                "points",
                "points = [[0.0, 1e-9]]",
                "table[0].points[0]",
                21,
                "> 0 Hz",
            ),
            (
                "points",
                "points = [[1.0, 0.0]]",
                "table[0].points[0]",
                21,
                "> 0",
            ),
            (
                "points",
                "points = [[1.0, 1e-9, 3]]",
                "table[0].points[0]",
                21,
                "pair",
            ),
            (
                "points",
                "points = [\n  [1.0, 1e-9],\n  [2.0, \"1 nV\"],\n]",
                "table[0].points[1]",
                23,
                "density such as",
            ),
        ]);
    }

    #[test]
    fn missing_keys_are_reported() {
        let (k, l, msg) = fail(&edit("sample_rate", ""));
        assert_eq!((k.as_str(), l), ("sample_rate", None));
        assert!(msg.contains("48 kHz"), "{msg}");
        let (k, l, _) = fail(&edit("high", ""));
        assert_eq!((k.as_str(), l), ("band.high", Some(4)));
        let (k, l, _) = fail(&edit("density = 2e-9", ""));
        assert_eq!((k.as_str(), l), ("floor[1].density", Some(13)));
        let (k, _, _) = fail(&edit("resistance = 50", ""));
        assert_eq!(k, "resistor[1].resistance");
        let (k, l, _) = fail(&edit("points", ""));
        assert_eq!((k.as_str(), l), ("table[0].points", Some(20)));
        let (k, l, msg) = fail("sample_rate = 1000\n[band]\nlow = 1\nhigh = 10\n");
        assert_eq!((k.as_str(), l), ("sources", None));
        assert!(
            msg.contains(
                "at least one [[floor]], [[resistor]], [[table]], [[amplifier]], [[inertial]] or [[burst]]"
            ),
            "{msg}"
        );
    }

    #[test]
    fn unknown_keys_are_named_with_a_suggestion() {
        let (k, l, msg) = fail(&edit("density = 2e-9", "dnesity = 2e-9"));
        assert_eq!((k.as_str(), l), ("floor[1].dnesity", Some(14)));
        assert!(
            msg.contains("`dnesity`") && msg.contains("did you mean `density`"),
            "{msg}"
        );
        let (k, l, msg) = fail(&edit("order", "ordre = 2"));
        assert_eq!((k.as_str(), l), ("band.ordre", Some(7)));
        assert!(
            msg.contains("`order`") && msg.contains("low, high, order"),
            "{msg}"
        );
        let (k, l, msg) = fail(&edit("name = \"bench", "samplerate = 5"));
        assert_eq!((k.as_str(), l), ("samplerate", Some(1)));
        assert!(msg.contains("did you mean `sample_rate`"), "{msg}");
        let (k, _, msg) = fail(&edit("name = \"bench", "colour = 5"));
        assert_eq!(k, "colour");
        assert!(
            !msg.contains("did you mean") && msg.contains("allowed"),
            "{msg}"
        );
        // Two unknown keys: the first in the file is reported.
        let (k, _, _) = fail(&edit("slope", "zzz = 1\n[[floor]]\naaa = 1"));
        assert_eq!(k, "floor[0].zzz");
    }

    #[test]
    fn wrong_shapes_and_syntax_errors_have_lines() {
        let (k, l, msg) =
            fail("sample_rate = 10\n[band]\nlow = 1\nhigh = 2\n[resistor]\nresistance = 50\n");
        assert_eq!((k.as_str(), l), ("resistor", Some(5)));
        assert!(msg.contains("[[resistor]]"), "{msg}");
        // The same section written both ways is a TOML error, reported at its line.
        let (k, l, msg) = fail(&GOOD.replace(
            "[[resistor]]\nresistance = 50",
            "[resistor]\nresistance = 50",
        ));
        assert_eq!((k.as_str(), l), ("syntax", Some(17)), "{msg}");
        let (k, l, msg) = fail("sample_rate = 10\nband = 3\n");
        assert_eq!((k.as_str(), l), ("band", Some(2)));
        assert!(msg.contains("[band] table"), "{msg}");
        let (k, l, _) = fail(&edit("name = \"bench", "name = 3"));
        assert_eq!((k.as_str(), l), ("name", Some(1)));
        let (k, l, msg) = fail(&edit("corner", "corner = \"100 Hz"));
        assert_eq!((k.as_str(), l), ("syntax", Some(11)));
        assert!(msg.starts_with("not valid TOML"), "{msg}");
        let (_, l, _) = fail("sample_rate = 10\n\n\nsample_rate = 20\n");
        assert_eq!(l, Some(4));
    }

    #[test]
    fn display_shows_file_line_and_key() {
        let e = parse_profile(&edit("high", "high = \"30 kHz\""), "bench.toml").unwrap_err();
        assert!(
            e.to_string().starts_with("bench.toml:6: band.high: "),
            "{e}"
        );
        assert_eq!(e.exit_code(), 2);
    }

    #[test]
    fn every_bundled_profile_parses() {
        let dir = concat!(env!("CARGO_MANIFEST_DIR"), "/profiles");
        let mut n = 0;
        for entry in std::fs::read_dir(dir).unwrap() {
            let path = entry.unwrap().path();
            if path.extension().is_some_and(|e| e == "toml") {
                let text = std::fs::read_to_string(&path).unwrap();
                let p = parse_profile(&text, &path.display().to_string())
                    .unwrap_or_else(|e| panic!("{e}"));
                assert!(!p.sources.is_empty());
                n += 1;
            }
        }
        assert!(n >= 5, "found only {n} profiles in {dir}");
    }
}
