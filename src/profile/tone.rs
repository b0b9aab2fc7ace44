//! Deterministic parts: the `[[tone]]` tables and the top-level `offset` of a profile.
//!
//! ```toml
//! offset = "1.65 V"              # optional DC value added to every sample, default 0
//! [[tone]]
//! name = "reference"             # optional, default "tone 1", "tone 2", …
//! frequency = "1 kHz"            # required, 0 < frequency < sample_rate / 2
//! peak = "1 mV"                  # exactly one of peak (amplitude A) …
//! # rms = "0.707 mV"             # … or rms (A/√2), in the profile unit
//! phase = "90 deg"               # optional, default 0: "90 deg", "1.5 rad" or a number in degrees
//! ```
//!
//! Tone i contributes `A·sin(2π·f·n/fs + φ)` at absolute sample index n, so at n = 0 it
//! starts at `A·sin φ` (phase 90 deg starts at its peak).

use std::f64::consts::PI;
use std::ops::Range;

use serde::Deserialize;
use toml::{Spanned, Value};

use super::schema::{Cx, missing, positive, quantity};
use super::{Dimension, Unit, format_quantity};
use crate::error::Result;

/// Keys allowed in a `[[tone]]` table.
pub(super) const TONE_KEYS: &[&str] = &["name", "frequency", "peak", "rms", "phase"];

/// How a tone's amplitude was written in the profile (the stored value is always the peak).
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum AmplitudeConvention {
    /// `peak = …`: the amplitude A of A·sin(…).
    Peak,
    /// `rms = …`: the RMS value A/√2.
    Rms,
}

/// One sine tone, added to the noise. Deterministic: it depends only on the sample index.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Tone {
    /// The tone's name: the `name` key, or `tone 1`, `tone 2`, … in file order.
    pub name: String,
    /// Frequency in Hz, 0 < f < fs/2.
    pub frequency_hz: f64,
    /// Peak amplitude A in the profile unit (V or A), > 0.
    pub peak: f64,
    /// Phase φ at sample 0 in radians (the profile gives degrees unless it says `rad`).
    pub phase_rad: f64,
    /// Which key gave the amplitude.
    pub convention: AmplitudeConvention,
}

impl Tone {
    /// RMS amplitude A/√2 in the profile unit.
    pub fn rms(&self) -> f64 {
        self.peak / std::f64::consts::SQRT_2
    }

    /// Mean power A²/2 in unit².
    pub fn power(&self) -> f64 {
        0.5 * self.peak * self.peak
    }
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct RawTone {
    name: Option<String>,
    frequency: Option<Spanned<Value>>,
    peak: Option<Spanned<Value>>,
    rms: Option<Spanned<Value>>,
    phase: Option<Spanned<Value>>,
}

/// Validate every `[[tone]]` table, in file order, against the sample rate `fs` (Hz).
pub(super) fn validate_tones(
    cx: &Cx<'_>,
    raw: &[Spanned<RawTone>],
    unit: Unit,
    fs: f64,
) -> Result<Vec<Tone>> {
    raw.iter()
        .enumerate()
        .map(|(i, t)| validate_tone(cx, i, t.get_ref(), t.span(), unit, fs))
        .collect()
}

fn validate_tone(
    cx: &Cx<'_>,
    i: usize,
    t: &RawTone,
    span: Range<usize>,
    unit: Unit,
    fs: f64,
) -> Result<Tone> {
    let key = |k: &str| format!("tone[{i}].{k}");
    let u = unit.symbol();
    let f_v = t.frequency.as_ref().ok_or_else(|| {
        missing(
            cx,
            &key("frequency"),
            Some(span.clone()),
            "frequency = \"1 kHz\"",
        )
    })?;
    let frequency_hz = positive(cx, f_v, &key("frequency"), Dimension::Frequency, unit)?;
    if frequency_hz >= fs / 2.0 {
        return Err(cx.err(
            &key("frequency"),
            Some(f_v.span()),
            format!(
                "must be below half the sample rate ({}), got {}: a tone at or above Nyquist \
                 aliases",
                format_quantity(fs / 2.0, "Hz"),
                format_quantity(frequency_hz, "Hz")
            ),
        ));
    }
    let (peak, convention) = match (&t.peak, &t.rms) {
        (Some(p), None) => (
            positive(cx, p, &key("peak"), Dimension::Amplitude, unit)?,
            AmplitudeConvention::Peak,
        ),
        (None, Some(r)) => (
            positive(cx, r, &key("rms"), Dimension::Amplitude, unit)? * std::f64::consts::SQRT_2,
            AmplitudeConvention::Rms,
        ),
        (Some(_), Some(r)) => {
            return Err(cx.err(
                &key("rms"),
                Some(r.span()),
                "give exactly one of peak (the amplitude A) or rms (A/√2), not both",
            ));
        }
        (None, None) => {
            return Err(missing(
                cx,
                &key("peak"),
                Some(span),
                &format!("peak = \"1 m{u}\" (amplitude) or rms = \"0.707 m{u}\""),
            ));
        }
    };
    let phase_rad = match &t.phase {
        None => 0.0,
        Some(p) => phase(cx, p, &key("phase"))?,
    };
    Ok(Tone {
        name: t.name.clone().unwrap_or_else(|| format!("tone {}", i + 1)),
        frequency_hz,
        peak,
        phase_rad,
        convention,
    })
}

/// A phase: a number in degrees, or a string `"90 deg"`, `"90°"` or `"1.5 rad"`.
fn phase(cx: &Cx<'_>, v: &Spanned<Value>, key: &str) -> Result<f64> {
    let bad = |got: String| {
        cx.err(
            key,
            Some(v.span()),
            format!(
                "expected a phase such as \"90 deg\", \"1.57 rad\" or a number in degrees, got \
                 {got}"
            ),
        )
    };
    let rad = match v.get_ref() {
        Value::Float(x) => x.to_radians(),
        Value::Integer(x) => (*x as f64).to_radians(),
        Value::String(s) => {
            let s = s.trim();
            let (num, scale) = if let Some(n) = s.strip_suffix("rad") {
                (n, 1.0)
            } else if let Some(n) = s.strip_suffix("deg").or_else(|| s.strip_suffix('°')) {
                (n, PI / 180.0)
            } else {
                return Err(bad(format!("{s:?} (no unit deg or rad)")));
            };
            num.trim()
                .parse::<f64>()
                .map_err(|_| bad(format!("{s:?}")))?
                * scale
        }
        other => return Err(bad(other.to_string())),
    };
    if !rad.is_finite() {
        return Err(bad(format!("{rad}")));
    }
    Ok(rad)
}

/// The top-level `offset`: a DC value in the profile unit, any sign, default 0.
pub(super) fn validate_offset(cx: &Cx<'_>, v: Option<&Spanned<Value>>, unit: Unit) -> Result<f64> {
    match v {
        None => Ok(0.0),
        Some(v) => quantity(
            cx,
            v.get_ref(),
            v.span(),
            "offset",
            Dimension::Amplitude,
            unit,
        ),
    }
}
