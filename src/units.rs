//! Quantities with units: parsing "4 nV/rtHz", "48 kHz", "10 kOhm", "25 C", "10 s", a
//! sensor's "25 ug/rtHz", "0.2 deg/rth", "3 deg/h" and sensitivity "20 mV/g" ([`UNITS`]);
//! the physical constants the models use.
//!
//! A quantity is a decimal number (optional sign, optional fraction, optional exponent such as
//! `4e-9`), optional whitespace, then a unit made of an optional SI prefix and a unit symbol.
//! Prefixes: `f` (1e-15), `p`, `n`, `u`/`µ`, `m`, `k`, `M`, `G`, `T` (1e12); they are
//! case-sensitive (`m` is milli, `M` is mega). A string with no unit is a value in the SI base
//! unit of its dimension.
//!
//! Parsing is exact: the prefix is folded into the number's decimal exponent before the one
//! decimal-to-binary conversion, so `"4 nV/rtHz"` is the same `f64` as the literal `4e-9` and
//! `"4.7 kOhm"` the same as `4700.0`.

use serde::Serialize;

/// Boltzmann constant in J/K (SI 2019, exact; BIPM SI Brochure, 9th ed.).
pub const BOLTZMANN: f64 = 1.380649e-23;

/// The physical dimension a value is expected to have.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub enum Dimension {
    /// Hz.
    Frequency,
    /// Seconds (`s`, `ms`, `us`, `min`, `h`).
    Time,
    /// Kelvin; `C`/`°C` are converted (bare numbers are kelvin).
    Temperature,
    /// Ohms (`Ohm`, `Ω`, with SI prefixes).
    Resistance,
    /// The profile unit per √Hz (`V/rtHz`, `A/√Hz`, `V/sqrt(Hz)`, with SI prefixes), which is
    /// also the unit·s^½ of a random-walk coefficient N: for an angular rate `°/√h`
    /// (`deg/rth`, 1/60 (°/s)/√Hz), for an acceleration `m/s/√h` (`m/s/rth`).
    Density,
    /// The profile unit itself (with SI prefixes), e.g. a full scale or a bias instability B;
    /// for an angular rate also `°/h` (`deg/h`, 1/3600 °/s).
    Amplitude,
    /// The profile unit·s^−½ (= unit·√Hz) of a rate random walk coefficient K: the unit per
    /// √h (`deg/h/rth` = 1/216 000 °/s^1.5, `ug/rth`), per √s (`deg/s/rts`), or the unit per
    /// second per √Hz (`deg/s/s/rtHz`).
    RateWalk,
}

/// SI prefixes accepted in front of a unit symbol, with their decimal exponents.
const PREFIXES: &[(&str, i32)] = &[
    ("f", -15),
    ("p", -12),
    ("n", -9),
    ("u", -6),
    ("\u{b5}", -6),  // MICRO SIGN
    ("\u{3bc}", -6), // GREEK SMALL LETTER MU
    ("m", -3),
    ("k", 3),
    ("M", 6),
    ("G", 9),
    ("T", 12),
];

/// Ways of writing "per √Hz" after the numerator unit of a density.
const PER_ROOT_HZ: &[&str] = &["/rtHz", "/\u{221a}Hz", "/sqrt(Hz)"];

/// Ways of writing "per √h" (inertial practice: 1/√h = 1/(60 √s)).
const PER_ROOT_HOUR: &[&str] = &["/rth", "/\u{221a}h", "/sqrt(h)"];

/// Ways of writing "per √s".
const PER_ROOT_SECOND: &[&str] = &["/rts", "/\u{221a}s", "/sqrt(s)"];

/// A unit a profile's values may be in: its display symbol, its spellings (each may carry an
/// SI prefix) and the spellings of its time integral (the angle of an angular rate, the
/// velocity of an acceleration), which give the inertial practice forms `°/h`, `°/√h` and
/// `m/s/√h`.
#[derive(Debug)]
pub struct UnitSpec {
    /// The symbol shown in summaries, JSON documents, headers and plots, e.g. `"°/s"`.
    pub symbol: &'static str,
    /// Accepted spellings after an optional SI prefix; the first is the ASCII one.
    pub spellings: &'static [&'static str],
    /// Spellings of the unit's time integral (empty when it has none in practice).
    pub integral: &'static [&'static str],
    /// What the unit is, for messages (`"angular rate"`).
    pub quantity: &'static str,
}

/// Every unit a profile may be in (the `unit` key). Standard gravity `g` is 9.806 65 m/s²
/// exactly (3rd CGPM, 1901); noisewright keeps values in the unit as written and never
/// converts between units, so each is exact.
pub const UNITS: &[UnitSpec] = &[
    UnitSpec {
        symbol: "V",
        spellings: &["V"],
        integral: &[],
        quantity: "voltage",
    },
    UnitSpec {
        symbol: "A",
        spellings: &["A"],
        integral: &[],
        quantity: "current",
    },
    UnitSpec {
        symbol: "Pa",
        spellings: &["Pa"],
        integral: &[],
        quantity: "pressure",
    },
    UnitSpec {
        symbol: "K",
        spellings: &["K"],
        integral: &[],
        quantity: "temperature",
    },
    UnitSpec {
        symbol: "T",
        spellings: &["T"],
        integral: &[],
        quantity: "magnetic flux density",
    },
    UnitSpec {
        symbol: "m",
        spellings: &["m"],
        integral: &[],
        quantity: "length",
    },
    UnitSpec {
        symbol: "N",
        spellings: &["N"],
        integral: &[],
        quantity: "force",
    },
    UnitSpec {
        symbol: "m/s\u{b2}",
        spellings: &["m/s^2", "m/s\u{b2}", "m/s2"],
        integral: &["m/s"],
        quantity: "acceleration",
    },
    UnitSpec {
        symbol: "g",
        spellings: &["g"],
        integral: &[],
        quantity: "acceleration",
    },
    UnitSpec {
        symbol: "rad/s",
        spellings: &["rad/s"],
        integral: &["rad"],
        quantity: "angular rate",
    },
    UnitSpec {
        symbol: "\u{b0}/s",
        spellings: &["deg/s", "\u{b0}/s"],
        integral: &["deg", "\u{b0}"],
        quantity: "angular rate",
    },
];

/// The unit whose display symbol or one of whose spellings is `text` (no prefix).
pub fn unit_spec(text: &str) -> Option<&'static UnitSpec> {
    UNITS
        .iter()
        .find(|u| u.symbol == text || u.spellings.contains(&text))
}

/// Symbols of the ohm (spelled out, OHM SIGN, GREEK CAPITAL OMEGA).
const OHM: &[&str] = &["Ohm", "ohm", "Ohms", "ohms", "\u{3a9}", "\u{2126}"];

/// Zero of the Celsius scale in kelvin (SI Brochure, 9th ed., 2019: t/°C = T/K − 273.15).
const CELSIUS_ZERO_K: f64 = 273.15;

/// Parse `text` as a quantity of `dim`, returning its value in SI base units.
///
/// `unit` is the profile's unit symbol (`"V"` or `"A"`), used for `Density` and `Amplitude`.
/// The error string says what was expected (it does not name the file or key: callers add those).
///
/// Results by dimension: hertz, seconds (`min` = 60 s, `h` = 3600 s), kelvin (`25 C` =
/// 298.15 K; Celsius takes no prefix), ohms, unit/√Hz, unit. NaN and infinity are rejected;
/// the sign is not checked here (the schema checks ranges).
pub fn parse_quantity(text: &str, dim: Dimension, unit: &str) -> Result<f64, String> {
    let expected = || format!("{}, got \"{text}\"", expectation(dim, unit));
    let trimmed = text.trim();
    let Some(number) = Number::lex(trimmed) else {
        return Err(expected());
    };
    // Unit symbols never contain spaces, so "4 nV / rtHz" is read as "nV/rtHz".
    let unit_text: String = trimmed[number.len..]
        .chars()
        .filter(|c| !c.is_whitespace())
        .collect();

    let value = if unit_text.is_empty() {
        number.value(0)
    } else {
        match resolve_unit(&unit_text, dim, unit).map_err(|m| m.replace("\u{1}", trimmed))? {
            Some(Scale::Exp10(e)) => number.value(e),
            Some(Scale::Factor(k)) => number.value(0) * k,
            Some(Scale::Celsius) => number.value(0) + CELSIUS_ZERO_K,
            Some(Scale::Ratio(e, 1.0)) => number.value(e),
            Some(Scale::Ratio(e, div)) => number.value(e) / div,
            None => return Err(expected()),
        }
    };
    if !value.is_finite() {
        return Err(format!("{} (the value is out of range)", expected()));
    }
    Ok(value)
}

/// What a dimension's values look like, for error messages.
pub(super) fn expectation(dim: Dimension, unit: &str) -> String {
    match dim {
        Dimension::Frequency => "expected a frequency such as \"48 kHz\" or a number in Hz".into(),
        Dimension::Time => {
            "expected a time such as \"10 s\", \"250 ms\" or \"2 min\", or a number in seconds"
                .into()
        }
        Dimension::Temperature => {
            "expected a temperature such as \"25 C\" or \"298.15 K\", or a number in kelvin".into()
        }
        Dimension::Resistance => {
            "expected a resistance such as \"10 kOhm\" or \"4.7 k\u{3a9}\", or a number in ohms"
                .into()
        }
        Dimension::Density => {
            let (ascii, integral) = ascii_and_integral(unit);
            format!(
                "expected a density such as \"4 n{ascii}/rtHz\" (or n{unit}/\u{221a}Hz, \
                 n{ascii}/sqrt(Hz)){}, or a number in {unit}/\u{221a}Hz",
                integral
                    .map(|i| format!(", or a random walk such as \"0.2 {i}/rth\" ({i}/\u{221a}h)"))
                    .unwrap_or_default()
            )
        }
        Dimension::Amplitude => {
            let (ascii, integral) = ascii_and_integral(unit);
            format!(
                "expected an amplitude such as \"10 u{ascii}\"{}, or a number in {unit}",
                integral
                    .map(|i| format!(" or \"3 {i}/h\""))
                    .unwrap_or_default()
            )
        }
        Dimension::RateWalk => {
            let (ascii, integral) = ascii_and_integral(unit);
            format!(
                "expected a rate random walk such as \"10 u{ascii}/rth\"{} (a level per \
                 \u{221a}h) or \"1 u{ascii}/s/rtHz\", or a number in {unit}\u{b7}s^-\u{bd}",
                integral
                    .map(|i| format!(" or \"0.5 {i}/h/rth\""))
                    .unwrap_or_default()
            )
        }
    }
}

/// The ASCII spelling of a unit symbol and the ASCII spelling of its integral, if any.
fn ascii_and_integral(unit: &str) -> (&str, Option<&'static str>) {
    match unit_spec(unit) {
        Some(spec) => (spec.spellings[0], spec.integral.first().copied()),
        None => (unit, None),
    }
}

/// How a recognised unit maps the number to SI base units.
enum Scale {
    /// Multiply by 10^e (exactly, via the decimal exponent).
    Exp10(i32),
    /// Multiply by a factor (minutes, hours).
    Factor(f64),
    /// Degrees Celsius to kelvin.
    Celsius,
    /// Multiply by 10^e (via the decimal exponent), then divide by an exact integer
    /// (60 for √h, 3600 for h).
    Ratio(i32, f64),
}

/// Split `s` into an SI prefix and a remainder equal to one of `symbols`.
fn prefixed(s: &str, symbols: &[&str]) -> Option<i32> {
    for sym in symbols {
        if let Some(head) = s.strip_suffix(sym) {
            if head.is_empty() {
                return Some(0);
            }
            if let Some(&(_, e)) = PREFIXES.iter().find(|(p, _)| *p == head) {
                return Some(e);
            }
        }
    }
    None
}

/// Recognise `u` (whitespace removed) as a unit of `dim`. `Ok(None)` means "not a unit of this
/// dimension"; `Err` is a more specific message (a density or amplitude in the wrong unit).
fn resolve_unit(u: &str, dim: Dimension, unit: &str) -> Result<Option<Scale>, String> {
    Ok(match dim {
        Dimension::Frequency => prefixed(u, &["Hz"]).map(Scale::Exp10),
        Dimension::Time => match u {
            "min" => Some(Scale::Factor(60.0)),
            "h" => Some(Scale::Factor(3600.0)),
            _ => prefixed(u, &["s"]).map(Scale::Exp10),
        },
        Dimension::Temperature => match u {
            "C" | "\u{b0}C" | "\u{2103}" => Some(Scale::Celsius),
            _ => prefixed(u, &["K"]).map(Scale::Exp10),
        },
        Dimension::Resistance => prefixed(u, OHM).map(Scale::Exp10),
        Dimension::Density | Dimension::Amplitude | Dimension::RateWalk => {
            let Some(spec) = unit_spec(unit) else {
                return Ok(None);
            };
            if let Some((e, div)) = in_unit(u, spec, dim) {
                return Ok(Some(Scale::Ratio(e, div)));
            }
            return Err(misfit(u, spec, dim));
        }
    })
}

/// Recognise `u` as a value of `dim` in the unit `spec`: (prefix exponent, exact divisor).
fn in_unit(u: &str, spec: &UnitSpec, dim: Dimension) -> Option<(i32, f64)> {
    // Levels: the unit, or its integral per hour (°/h = 1/3600 °/s).
    let per_hour: Vec<String> = spec.integral.iter().map(|i| format!("{i}/h")).collect();
    let per_hour: Vec<&str> = per_hour.iter().map(String::as_str).collect();
    let level = |s: &str| {
        prefixed(s, spec.spellings)
            .map(|e| (e, 1.0))
            .or_else(|| prefixed(s, &per_hour).map(|e| (e, 3600.0)))
    };
    let with = |suffixes: &[&str], body: &dyn Fn(&str) -> Option<(i32, f64)>, k: f64| {
        suffixes
            .iter()
            .filter_map(|d| u.strip_suffix(d))
            .find_map(body)
            .map(|(e, div)| (e, div * k))
    };
    let integral = |s: &str| prefixed(s, spec.integral).map(|e| (e, 1.0));
    match dim {
        Dimension::Amplitude => level(u),
        // unit/√Hz = unit·s^½: the integral per √h (÷60) or per √s.
        Dimension::Density => with(
            PER_ROOT_HZ,
            &|s| prefixed(s, spec.spellings).map(|e| (e, 1.0)),
            1.0,
        )
        .or_else(|| with(PER_ROOT_HOUR, &integral, 60.0))
        .or_else(|| with(PER_ROOT_SECOND, &integral, 1.0)),
        // unit·s^−½: a level per √h (÷60) or per √s, or the unit per second per √Hz.
        Dimension::RateWalk => with(PER_ROOT_HOUR, &level, 60.0)
            .or_else(|| with(PER_ROOT_SECOND, &level, 1.0))
            .or_else(|| with(PER_ROOT_HZ, &|s| s.strip_suffix("/s").and_then(level), 1.0)),
        _ => None,
    }
}

/// Why `u` is not a value of `dim` in `spec`'s unit: it is in another unit, or it is a value
/// of another kind (a density where a level is expected), or it is not a unit at all.
///
/// The message quotes the value as U+0001, which [`parse_quantity`] replaces by the text.
fn misfit(u: &str, spec: &UnitSpec, dim: Dimension) -> String {
    let kinds = [
        Dimension::Amplitude,
        Dimension::Density,
        Dimension::RateWalk,
    ];
    if let Some(other) = UNITS
        .iter()
        .find(|o| o.symbol != spec.symbol && kinds.iter().any(|&k| in_unit(u, o, k).is_some()))
    {
        return format!(
            "\"\u{1}\" is in {}, but this profile's unit is {}; write the value in {} or set \
             unit = \"{}\"",
            other.symbol, spec.symbol, spec.symbol, other.spellings[0]
        );
    }
    if let Some(&k) = kinds
        .iter()
        .find(|&&k| k != dim && in_unit(u, spec, k).is_some())
    {
        return format!(
            "\"\u{1}\" is {}, but this key {}",
            kind_name(k, spec.symbol),
            expectation(dim, spec.symbol).replacen("expected", "expects", 1)
        );
    }
    format!("{}, got \"\u{1}\"", expectation(dim, spec.symbol))
}

/// What a value of `dim` is, in words, with its unit.
fn kind_name(dim: Dimension, unit: &str) -> String {
    match dim {
        Dimension::Amplitude => format!("a level in {unit}"),
        Dimension::Density => format!("a density in {unit}/\u{221a}Hz (unit\u{b7}s^\u{bd})"),
        _ => format!("a rate random walk in {unit}\u{b7}s^-\u{bd}"),
    }
}

/// Parse a sensor's sensitivity such as `"20 mV/g"` or `"4 mV/(deg/s)"`: volts per
/// `unit` (a profile unit symbol), the number of volts one unit of the quantity gives at the
/// sensor's output. The denominator may carry a prefix (`"0.02 mV/mg"`) and, for an angular
/// rate, be a practice form (`"1 uV/(deg/h)"`); a bare number is in V per unit.
///
/// The error string says what was expected (callers add the file and key).
pub fn parse_sensitivity(text: &str, unit: &str) -> Result<f64, String> {
    let expected = || {
        let ascii = ascii_and_integral(unit).0;
        let per = if ascii.contains('/') {
            format!("({ascii})")
        } else {
            ascii.to_string()
        };
        format!(
            "expected a sensitivity in volts per {unit} such as \"20 mV/{per}\", or a number \
             in V per {unit}, got \"{text}\""
        )
    };
    let trimmed = text.trim();
    let Some(number) = Number::lex(trimmed) else {
        return Err(expected());
    };
    let u: String = trimmed[number.len..]
        .chars()
        .filter(|c| !c.is_whitespace())
        .collect();
    let value = if u.is_empty() {
        number.value(0)
    } else {
        let spec = unit_spec(unit).ok_or_else(expected)?;
        let (volts, per) = u.split_once('/').ok_or_else(expected)?;
        let e_volts = prefixed(volts, &["V"]).ok_or_else(expected)?;
        let per = per
            .strip_prefix('(')
            .and_then(|p| p.strip_suffix(')'))
            .unwrap_or(per);
        let Some((e_per, div)) = in_unit(per, spec, Dimension::Amplitude) else {
            return Err(expected());
        };
        // V·10^a per (10^b/div) unit = 10^(a−b)·div V per unit.
        number.value(e_volts - e_per) * div
    };
    if !(value.is_finite() && value > 0.0) {
        return Err(format!("{} (it must be positive and finite)", expected()));
    }
    Ok(value)
}

/// Parse an amplitude (a full scale, an end of an ADC range) in the profile's `unit`, or, for
/// a sensor profile with a sensitivity of `volts_per_unit` V per unit, in volts at the
/// sensor's output (`"1.65V"` with 20 mV/g is 82.5 g). Returns the value in the unit; a
/// value in volts is divided by the sensitivity and rounded to 15 significant digits (more
/// than the decimal inputs carry), so the binary quotient's last-bit error does not show:
/// 1.65 V at 0.4 V/g is exactly 4.125 g, not 4.124999999999999 g.
pub fn parse_amplitude(text: &str, unit: &str, volts_per_unit: Option<f64>) -> Result<f64, String> {
    match (
        parse_quantity(text, Dimension::Amplitude, unit),
        volts_per_unit,
    ) {
        (Err(e), Some(s)) if unit != "V" => parse_quantity(text, Dimension::Amplitude, "V")
            .map(|v| at_15_digits(v / s))
            .map_err(|_| format!("{e}; or in V at the sensor's output (its sensitivity)")),
        (x, _) => x,
    }
}

/// The volts at a sensor's output for `value` in its unit at `volts_per_unit` V per unit,
/// rounded to 15 significant digits like [`parse_amplitude`] (4.125 g at 0.4 V/g is 1.65 V).
pub fn volts(value: f64, volts_per_unit: f64) -> f64 {
    at_15_digits(value * volts_per_unit)
}

/// `x` rounded to 15 significant decimal digits.
fn at_15_digits(x: f64) -> f64 {
    format!("{x:.14e}").parse().unwrap_or(x)
}

/// A lexed decimal number: mantissa text (sign, digits, optional point) and its exponent.
struct Number<'a> {
    mantissa: &'a str,
    exp: i32,
    /// Bytes of the input taken by the number.
    len: usize,
}

impl<'a> Number<'a> {
    /// Lex the longest decimal number at the start of `s`; `None` if there is none.
    fn lex(s: &'a str) -> Option<Number<'a>> {
        let b = s.as_bytes();
        let mut i = 0;
        if matches!(b.first(), Some(b'+' | b'-')) {
            i += 1;
        }
        let int_start = i;
        while i < b.len() && b[i].is_ascii_digit() {
            i += 1;
        }
        let mut digits = i - int_start;
        if i < b.len() && b[i] == b'.' {
            i += 1;
            let frac_start = i;
            while i < b.len() && b[i].is_ascii_digit() {
                i += 1;
            }
            digits += i - frac_start;
        }
        if digits == 0 {
            return None;
        }
        let mantissa = &s[..i];
        let mut exp = 0i32;
        // An exponent only counts if digits follow, so "4e" stays a (bad) unit.
        if i < b.len() && (b[i] == b'e' || b[i] == b'E') {
            let mut j = i + 1;
            let neg = match b.get(j) {
                Some(b'-') => {
                    j += 1;
                    true
                }
                Some(b'+') => {
                    j += 1;
                    false
                }
                _ => false,
            };
            let exp_start = j;
            while j < b.len() && b[j].is_ascii_digit() {
                j += 1;
            }
            if j > exp_start {
                // Saturate: absurd exponents overflow to 0 or infinity in `value`.
                let e: i32 = s[exp_start..j].parse().unwrap_or(99_999);
                exp = if neg { -e } else { e };
                i = j;
            }
        }
        Some(Number {
            mantissa,
            exp,
            len: i,
        })
    }

    /// The value times 10^`extra`, with one correctly rounded decimal-to-binary conversion.
    fn value(&self, extra: i32) -> f64 {
        let e = self.exp.saturating_add(extra).clamp(-99_999, 99_999);
        // The mantissa is digits with at most a sign and a point, so this always parses.
        format!("{}e{e}", self.mantissa)
            .parse::<f64>()
            .unwrap_or(f64::NAN)
    }
}

/// Format an SI value with an SI prefix and the unit for **display**, e.g.
/// `4e-9, "V/√Hz"` → `"4 nV/√Hz"`. Rounds to 6 significant digits, so it is lossy for values
/// with more digits (`123456789 Hz` → `"123.457 MHz"`): use it for computed figures a person
/// reads (RMS, densities, SNR, peak-to-peak), never for a value someone is meant to copy back
/// into a profile or an option; that is what [`format_quantity_exact`] is for.
///
/// The prefix is the engineering one (exponent a multiple of 3) that puts the number in
/// [1, 1000); trailing zeros are trimmed (`"48 kHz"`, `"10 kΩ"`, `"0 V"`). Values outside the
/// prefix range f…T are written with an exponent (`"1e-18 V"`). The output parses back with
/// [`parse_quantity`] for the units that function knows, to within half a unit in the 6th
/// significant digit (relative error ≤ 5e-6), and formats again to the same text.
pub fn format_quantity(value: f64, unit: &str) -> String {
    if value == 0.0 {
        return format!("0 {unit}");
    }
    if !value.is_finite() {
        return format!("{value} {unit}");
    }
    // `{:.5e}` rounds correctly to 6 significant digits: "d.ddddde±x", carries included.
    with_prefix(value, &format!("{:.5e}", value.abs()), unit)
}

/// Format an SI value with an SI prefix and the unit so that [`parse_quantity`] gives back
/// **the very same `f64`** (bit for bit, the sign of zero included), e.g. `4e-9, "V/√Hz"` →
/// `"4 nV/√Hz"` and `123456789.0, "Hz"` → `"123.456789 MHz"`.
///
/// The digits are the shortest decimal that rounds back to `value` (what Rust's `{}` gives
/// for an `f64`), placed before the engineering prefix by moving the decimal point in the
/// text, not by arithmetic, so no rounding happens on the way; the parser folds the prefix
/// back into the decimal exponent before its one correctly rounded conversion. A value with
/// at most 6 significant digits reads exactly as [`format_quantity`] writes it. Used where a
/// value is echoed back from a profile or an option (band edges, sample rate, tone
/// frequencies, the offset, burst levels, ADC ranges) and in suggestions meant to be
/// copied. `-0.0` is written `"-0 V"`; NaN and infinities as `"NaN V"`, `"inf V"` (which the
/// parser refuses).
pub fn format_quantity_exact(value: f64, unit: &str) -> String {
    if value == 0.0 {
        let sign = if value.is_sign_negative() { "-" } else { "" };
        return format!("{sign}0 {unit}");
    }
    if !value.is_finite() {
        return format!("{value} {unit}");
    }
    // `{:e}` without a precision gives the shortest round-trip digits: "d.ddde±x" or "de±x".
    with_prefix(value, &format!("{:e}", value.abs()), unit)
}

/// `sci` (the scientific form of |`value`|, "d.ddde±x") written with the engineering SI
/// prefix in front of `unit`, the sign of `value` in front; only the decimal point moves.
fn with_prefix(value: f64, sci: &str, unit: &str) -> String {
    let (mant, exp) = sci
        .split_once('e')
        .expect("exponent format always has an 'e'");
    let exp: i32 = exp.parse().expect("exponent is an integer");
    let mut digits: String = mant.chars().filter(|c| c.is_ascii_digit()).collect();
    let eng = exp.div_euclid(3) * 3;
    let int_len = (exp - eng) as usize + 1;
    while digits.len() < int_len {
        digits.push('0');
    }
    let (int_part, frac_part) = digits.split_at(int_len);
    let frac_part = frac_part.trim_end_matches('0');
    let sign = if value < 0.0 { "-" } else { "" };
    let number = if frac_part.is_empty() {
        format!("{sign}{int_part}")
    } else {
        format!("{sign}{int_part}.{frac_part}")
    };
    let prefix = match eng {
        0 => Some(""),
        -6 => Some("\u{b5}"),
        _ => PREFIXES.iter().find(|(_, e)| *e == eng).map(|(p, _)| *p),
    };
    match prefix {
        Some(p) => format!("{number} {p}{unit}"),
        None => format!("{number}e{eng} {unit}"),
    }
}

/// The dBFS convention every level in noisewright uses, as stated in manifests.
pub const DBFS_CONVENTION: &str = "AES17: 0 dBFS = RMS of a sine whose peak is digital full \
     scale (1.0), so a level of L dBFS is RMS_digital = 10^(L/20)/sqrt(2); a full-scale square \
     wave is +3.01 dBFS";

/// Digital RMS (relative to digital full scale 1.0) of a level in dBFS, AES17 convention
/// (REFERENCES §9): `10^(L/20) / √2`. E.g. 0 dBFS → 0.7071, −20 dBFS → 0.07071.
pub fn rms_digital_from_dbfs(level_dbfs: f64) -> f64 {
    10f64.powf(level_dbfs / 20.0) / std::f64::consts::SQRT_2
}

/// Level in dBFS (AES17, REFERENCES §9) of a digital RMS relative to full scale 1.0:
/// `20·log10(√2 · rms)`. The inverse of [`rms_digital_from_dbfs`].
pub fn dbfs_from_rms_digital(rms: f64) -> f64 {
    20.0 * (std::f64::consts::SQRT_2 * rms).log10()
}

#[cfg(test)]
mod tests {
    use super::*;
    use Dimension::*;

    fn ok(text: &str, dim: Dimension) -> f64 {
        parse_quantity(text, dim, "V").unwrap_or_else(|e| panic!("{text:?}: {e}"))
    }

    // Exactness is a property of IEEE 754 correctly rounded conversion (common practice): the
    // parsed value must be the very same f64 as the literal, so `==` is the right comparison.
    #[test]
    fn densities_in_every_spelling_are_exact() {
        for t in [
            "4 nV/rtHz",
            "4nV/rtHz",
            "4 nV/\u{221a}Hz",
            "4nV/\u{221a}Hz",
            "4 nV/sqrt(Hz)",
            "4e-9 V/rtHz",
            "4e-9",
            "0.004 uV/rtHz",
            "0.004 \u{b5}V/rtHz",
            "4000 pV/rtHz",
            "4 nV / rtHz",
        ] {
            assert_eq!(ok(t, Density), 4e-9, "{t}");
        }
        assert_eq!(ok("1.5 fV/rtHz", Density), 1.5e-15);
        assert_eq!(
            parse_quantity("2 pA/\u{221a}Hz", Density, "A").unwrap(),
            2e-12
        );
    }

    #[test]
    fn frequencies_times_temperatures_resistances_amplitudes() {
        assert_eq!(ok("48 kHz", Frequency), 48e3);
        assert_eq!(ok("48kHz", Frequency), 48000.0);
        assert_eq!(ok("0.1Hz", Frequency), 0.1);
        assert_eq!(ok("100 mHz", Frequency), 0.1);
        assert_eq!(ok("1 MHz", Frequency), 1e6);
        assert_eq!(ok("2.4 GHz", Frequency), 2.4e9);
        assert_eq!(ok("1 THz", Frequency), 1e12);
        assert_eq!(ok("20e3 Hz", Frequency), 20e3);
        assert_eq!(ok("1E-1 Hz", Frequency), 0.1);
        assert_eq!(ok("48000", Frequency), 48e3);
        assert_eq!(ok("10 kOhm", Resistance), 10e3);
        assert_eq!(ok("10 kohm", Resistance), 10e3);
        assert_eq!(ok("4.7k\u{3a9}", Resistance), 4.7e3);
        assert_eq!(ok("4.7 k\u{2126}", Resistance), 4700.0);
        assert_eq!(ok("1 MOhm", Resistance), 1e6);
        assert_eq!(ok("50 Ohm", Resistance), 50.0);
        assert_eq!(ok("300 K", Temperature), 300.0);
        assert_eq!(ok("300", Temperature), 300.0);
        assert_eq!(ok("20 mK", Temperature), 0.02);
        // 25 °C = 298.15 K (SI Brochure, 9th ed.: T/K = t/°C + 273.15); one rounding of the sum.
        assert!((ok("25 C", Temperature) - 298.15).abs() < 1e-12);
        assert!((ok("25 \u{b0}C", Temperature) - 298.15).abs() < 1e-12);
        assert!((ok("-40C", Temperature) - 233.15).abs() < 1e-12);
        assert_eq!(ok("10 s", Time), 10.0);
        assert_eq!(ok("250 ms", Time), 0.25);
        assert_eq!(ok("20 us", Time), 20e-6);
        assert_eq!(ok("20 \u{b5}s", Time), 20e-6);
        assert_eq!(ok("2 min", Time), 120.0);
        assert_eq!(ok("1.5 h", Time), 5400.0);
        assert_eq!(ok("10 uV", Amplitude), 10e-6);
        assert_eq!(ok("+1.5 V", Amplitude), 1.5);
        assert_eq!(parse_quantity("1.5 mA", Amplitude, "A").unwrap(), 1.5e-3);
    }

    #[test]
    fn prefix_case_and_minutes_are_not_confused() {
        assert_eq!(ok("1 Ms", Time), 1e6);
        assert_eq!(ok("1 ms", Time), 1e-3);
        assert_eq!(ok("1 min", Time), 60.0);
        assert_eq!(ok("1 MOhm", Resistance), 1e6);
        assert_eq!(ok("1 mOhm", Resistance), 1e-3);
        assert!(parse_quantity("1 m", Time, "V").is_err());
        assert!(parse_quantity("1 mmin", Time, "V").is_err());
        assert!(parse_quantity("1 mC", Temperature, "V").is_err());
        assert!(parse_quantity("1 KHz", Frequency, "V").is_err());
    }

    #[test]
    fn bad_input_says_what_is_expected() {
        assert_eq!(
            parse_quantity("48 kHz2", Frequency, "V").unwrap_err(),
            "expected a frequency such as \"48 kHz\" or a number in Hz, got \"48 kHz2\""
        );
        for (t, dim) in [
            ("nan", Frequency),
            ("NaN Hz", Frequency),
            ("inf Hz", Frequency),
            ("1e999 Hz", Frequency),
            ("", Time),
            ("kHz", Frequency),
            ("4 nV/Hz", Density),
            ("10 kOhm", Frequency),
            ("4e Hz", Frequency),
            ("1.2.3 Hz", Frequency),
        ] {
            let e = parse_quantity(t, dim, "V").unwrap_err();
            assert!(e.starts_with("expected a"), "{t}: {e}");
            assert!(e.contains(&format!("\"{t}\"")), "{t}: {e}");
        }
        let e = parse_quantity("4 pA/rtHz", Density, "V").unwrap_err();
        assert!(e.contains("in A") && e.contains("unit is V"), "{e}");
        let e = parse_quantity("1.5 mA", Amplitude, "V").unwrap_err();
        assert!(e.contains("unit = \"A\""), "{e}");
    }

    #[test]
    fn format_uses_engineering_prefixes() {
        assert_eq!(format_quantity(4e-9, "V/\u{221a}Hz"), "4 nV/\u{221a}Hz");
        assert_eq!(format_quantity(48e3, "Hz"), "48 kHz");
        assert_eq!(format_quantity(10e3, "\u{3a9}"), "10 k\u{3a9}");
        assert_eq!(format_quantity(0.0, "V"), "0 V");
        assert_eq!(format_quantity(1.0, "V"), "1 V");
        assert_eq!(format_quantity(-2.5e-6, "A"), "-2.5 \u{b5}A");
        assert_eq!(format_quantity(298.15, "K"), "298.15 K");
        assert_eq!(format_quantity(123456789.0, "Hz"), "123.457 MHz");
        assert_eq!(format_quantity(999.9999, "Hz"), "1 kHz");
        assert_eq!(format_quantity(1e-18, "V"), "1e-18 V");
        // f64::MAX = 1.797693…e308 rounds down at 6 digits, so no value rounds past it.
        assert_eq!(format_quantity(f64::MAX, "V"), "179.769e306 V");
    }

    #[test]
    fn format_then_parse_round_trips() {
        let cases: [(f64, &str, Dimension); 10] = [
            (4e-9, "V/\u{221a}Hz", Density),
            (4.0578e-9, "V/\u{221a}Hz", Density),
            (1.23456e-7, "V/\u{221a}Hz", Density),
            (48e3, "Hz", Frequency),
            (0.1, "Hz", Frequency),
            (44.1e3, "Hz", Frequency),
            (4.7e3, "\u{3a9}", Resistance),
            (60.73, "\u{3a9}", Resistance),
            (298.15, "K", Temperature),
            (2.5e-3, "s", Time),
        ];
        // Values with at most 6 significant digits survive exactly: both directions are correctly
        // rounded conversions of the same decimal (IEEE 754, common practice).
        for (v, u, dim) in cases {
            let text = format_quantity(v, u);
            assert_eq!(ok(&text, dim), v, "{text}");
        }
        // Any other value comes back within half a unit in the 6th digit: |rel| ≤ 5e-6.
        for v in [
            std::f64::consts::PI * 1e-9,
            1.0 / 3.0,
            7.777_777_7e5,
            2.0f64.sqrt() * 1e3,
        ] {
            let back = ok(&format_quantity(v, "Hz"), Frequency);
            assert!(((back - v) / v).abs() <= 5e-6, "{v} -> {back}");
        }
    }

    #[test]
    fn exact_format_keeps_every_digit_and_the_sign_of_zero() {
        assert_eq!(format_quantity_exact(123456789.0, "Hz"), "123.456789 MHz");
        assert_eq!(format_quantity_exact(48e3, "Hz"), "48 kHz");
        assert_eq!(format_quantity_exact(50.0, "Hz"), "50 Hz");
        assert_eq!(format_quantity_exact(500.0, "Hz"), "500 Hz");
        assert_eq!(format_quantity_exact(-2.5e-6, "A"), "-2.5 \u{b5}A");
        assert_eq!(
            format_quantity_exact(0.1 + 0.2, "s"),
            "300.00000000000004 ms"
        );
        assert_eq!(format_quantity_exact(-0.0, "V"), "-0 V");
        assert_eq!(format_quantity_exact(0.0, "V"), "0 V");
        assert_eq!(format_quantity_exact(1e-18, "V"), "1e-18 V");
        assert_eq!(format_quantity_exact(5e-324, "V"), "5e-324 V");
        assert_eq!(
            format_quantity_exact(f64::MAX, "V"),
            "179.76931348623157e306 V"
        );
        for v in [
            0.1 + 0.2,
            std::f64::consts::PI * 1e-9,
            -1.0 / 3.0,
            f64::MAX,
            f64::MIN_POSITIVE,
            5e-324,
            -0.0,
        ] {
            let back = ok(&format_quantity_exact(v, "V"), Amplitude);
            assert_eq!(back.to_bits(), v.to_bits(), "{v:e}");
        }
    }

    fn in_unit_of(text: &str, dim: Dimension, unit: &str) -> f64 {
        parse_quantity(text, dim, unit).unwrap_or_else(|e| panic!("{text:?} in {unit}: {e}"))
    }

    #[test]
    fn sensor_units_take_si_prefixes_exactly() {
        // The prefix folds into the decimal exponent: the same f64 as the literal.
        assert_eq!(in_unit_of("25 ug/rtHz", Density, "g"), 25e-6);
        assert_eq!(in_unit_of("25 \u{b5}g/\u{221a}Hz", Density, "g"), 25e-6);
        assert_eq!(in_unit_of("3 mdeg/s/rtHz", Density, "\u{b0}/s"), 3e-3);
        assert_eq!(in_unit_of("3 m\u{b0}/s/rtHz", Density, "\u{b0}/s"), 3e-3);
        assert_eq!(in_unit_of("2 mrad/s", Amplitude, "rad/s"), 2e-3);
        assert_eq!(in_unit_of("1.5 kPa", Amplitude, "Pa"), 1.5e3);
        assert_eq!(in_unit_of("0.8 Pa/rtHz", Density, "Pa"), 0.8);
        assert_eq!(in_unit_of("2 mK/rtHz", Density, "K"), 2e-3);
        assert_eq!(in_unit_of("10 nT/rtHz", Density, "T"), 10e-9);
        assert_eq!(in_unit_of("4 pm/rtHz", Density, "m"), 4e-12);
        assert_eq!(in_unit_of("1 mN", Amplitude, "N"), 1e-3);
        assert_eq!(in_unit_of("60 um/s^2/rtHz", Density, "m/s\u{b2}"), 60e-6);
        assert_eq!(
            in_unit_of("60 um/s\u{b2}/rtHz", Density, "m/s\u{b2}"),
            60e-6
        );
        // "m" the unit and "m" the prefix: 1 mm is a millimetre.
        assert_eq!(in_unit_of("1 mm", Amplitude, "m"), 1e-3);
        assert_eq!(in_unit_of("1 m", Amplitude, "m"), 1.0);
        // "T" the unit and "T" the prefix: 1 TT is a terattesla.
        assert_eq!(in_unit_of("1 TT", Amplitude, "T"), 1e12);
    }

    // Inertial practice units (IEEE Std 952-1997 Annex C; IEEE Std 1554-2005), derived from
    // 1 h = 3600 s and √h = 60 √s; each is one correctly rounded division of the decimal
    // value by an exact integer, so the results equal the f64 quotients below exactly.
    #[test]
    fn inertial_practice_units_convert_exactly() {
        let dps = "\u{b0}/s";
        // 1 °/√h = 1 °/(60 √s) = (1/60) °·s^-½ = (1/60) (°/s)·s^½ = (1/60) (°/s)/√Hz.
        assert_eq!(in_unit_of("1 deg/rth", Density, dps), 1.0 / 60.0);
        assert_eq!(in_unit_of("0.2 \u{b0}/\u{221a}h", Density, dps), 0.2 / 60.0);
        assert_eq!(in_unit_of("1 deg/rts", Density, dps), 1.0);
        // 1 °/h = 1 °/(3600 s) = (1/3600) °/s.
        assert_eq!(in_unit_of("1 deg/h", Amplitude, dps), 1.0 / 3600.0);
        assert_eq!(in_unit_of("3 \u{b0}/h", Amplitude, dps), 3.0 / 3600.0);
        // 1 °/h/√h = (1/3600 °/s)/(60 √s) = (1/216 000) (°/s)·s^-½.
        assert_eq!(in_unit_of("1 deg/h/rth", RateWalk, dps), 1.0 / 216_000.0);
        assert_eq!(in_unit_of("2 deg/s/s/rtHz", RateWalk, dps), 2.0);
        // 1 m/s/√h = 1 (m/s)/(60 √s) = (1/60) (m/s²)·s^½ = (1/60) (m/s²)/√Hz.
        assert_eq!(in_unit_of("1 m/s/rth", Density, "m/s\u{b2}"), 1.0 / 60.0);
        // A level per √h for any unit: 1 µg/√h = (1/60) µg·s^-½.
        assert_eq!(in_unit_of("30 ug/rth", RateWalk, "g"), 30e-6 / 60.0);
        // The practice forms belong to their quantity: no angle in a g profile.
        assert!(parse_quantity("1 deg/h", Amplitude, "g").is_err());
    }

    #[test]
    fn a_unit_that_does_not_fit_names_what_it_is_and_what_is_expected() {
        let dps = "\u{b0}/s";
        let e = parse_quantity("0.2 deg/rth", Amplitude, dps).unwrap_err();
        assert!(e.contains("\"0.2 deg/rth\" is a density"), "{e}");
        assert!(e.contains("expects an amplitude"), "{e}");
        let e = parse_quantity("3 deg/h", Density, dps).unwrap_err();
        assert!(
            e.contains("is a level in \u{b0}/s") && e.contains("expects a density"),
            "{e}"
        );
        let e = parse_quantity("4 nV", Density, "V").unwrap_err();
        assert!(e.contains("\"4 nV\" is a level in V"), "{e}");
        let e = parse_quantity("25 ug/rtHz", Density, "m/s\u{b2}").unwrap_err();
        assert!(e.contains("is in g") && e.contains("unit = \"g\""), "{e}");
        let e = parse_quantity("25 furlongs", Amplitude, "g").unwrap_err();
        assert!(
            e.starts_with("expected an amplitude") && e.contains("25 furlongs"),
            "{e}"
        );
    }

    #[test]
    fn sensitivities_are_volts_per_unit() {
        assert_eq!(parse_sensitivity("20 mV/g", "g").unwrap(), 20e-3);
        assert_eq!(parse_sensitivity("0.02 mV/mg", "g").unwrap(), 20e-3);
        assert_eq!(parse_sensitivity("4 mV/(deg/s)", "\u{b0}/s").unwrap(), 4e-3);
        assert_eq!(
            parse_sensitivity("4mV/(\u{b0}/s)", "\u{b0}/s").unwrap(),
            4e-3
        );
        // 1 µV per °/h = 3600 µV per °/s.
        assert_eq!(
            parse_sensitivity("1 uV/(deg/h)", "\u{b0}/s").unwrap(),
            1e-6 * 3600.0
        );
        assert_eq!(parse_sensitivity("0.5", "Pa").unwrap(), 0.5);
        for bad in ["20 mV/Pa", "20 mA/g", "-20 mV/g", "20 mV", "0 V/g"] {
            let e = parse_sensitivity(bad, "g").unwrap_err();
            assert!(e.contains("mV/g"), "{bad}: {e}");
        }
        // Amplitudes in volts through the sensitivity: 1.65 V at 20 mV/g.
        assert_eq!(
            parse_amplitude("1.65V", "g", Some(0.02)).unwrap(),
            1.65 / 0.02
        );
        assert_eq!(parse_amplitude("2 g", "g", Some(0.02)).unwrap(), 2.0);
        assert!(parse_amplitude("1.65V", "g", None).is_err());
    }
}
