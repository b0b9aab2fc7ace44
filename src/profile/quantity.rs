//! Quantities with units: parsing "4 nV/rtHz", "48 kHz", "10 kOhm", "25 C", "10 s".

use serde::Serialize;

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
    /// The profile unit per √Hz (`V/rtHz`, `A/√Hz`, `V/sqrt(Hz)`, with SI prefixes).
    Density,
    /// The profile unit itself (V or A, with SI prefixes), e.g. a full scale.
    Amplitude,
}

/// Parse `text` as a quantity of `dim`, returning its value in SI base units.
///
/// `unit` is the profile's unit symbol (`"V"` or `"A"`), used for `Density` and `Amplitude`.
/// The error string says what was expected (it does not name the file or key: callers add those).
pub fn parse_quantity(text: &str, dim: Dimension, unit: &str) -> Result<f64, String> {
    let _ = (text, dim, unit);
    todo!()
}

/// Format an SI value with an SI prefix and the unit, e.g. `4e-9, "V/√Hz"` → `"4 nV/√Hz"`.
/// Uses up to 6 significant digits.
pub fn format_quantity(value: f64, unit: &str) -> String {
    let _ = (value, unit);
    todo!()
}
