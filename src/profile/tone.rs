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

#[cfg(test)]
mod tests {
    use super::super::parse_profile;
    use super::super::schema::tests::profile_error;
    use super::*;

    const BASE: &str = "sample_rate = \"48 kHz\"\n[band]\nlow = 1\nhigh = \"20 kHz\"\n\
                        [[floor]]\ndensity = \"10 nV/rtHz\"\n";

    fn with(extra: &str) -> String {
        format!("{BASE}{extra}")
    }

    #[test]
    fn tones_and_offset_resolve_with_their_conventions() {
        let p = parse_profile(
            &with(
                "offset = \"-1.65 V\"\n[[tone]]\nfrequency = \"1 kHz\"\npeak = \"2 mV\"\n\
                 [[tone]]\nname = \"pilot\"\nfrequency = 50\nrms = \"1 mV\"\nphase = \"90 deg\"\n\
                 [[tone]]\nfrequency = 10\npeak = 1\nphase = 45\n[[tone]]\nfrequency = 10\n\
                 peak = 1\nphase = \"1.5 rad\"\n",
            )
            .replacen("offset = \"-1.65 V\"\n", "", 1)
            .replacen("sample_rate", "offset = \"-1.65 V\"\nsample_rate", 1),
            "t.toml",
        )
        .unwrap();
        assert_eq!(p.offset, -1.65);
        let t = &p.tones;
        assert_eq!(t[0].name, "tone 1");
        assert_eq!(
            (t[0].frequency_hz, t[0].peak, t[0].phase_rad),
            (1000.0, 2e-3, 0.0)
        );
        assert_eq!(t[0].convention, AmplitudeConvention::Peak);
        assert_eq!(t[1].name, "pilot");
        assert!((t[1].peak - 1e-3 * std::f64::consts::SQRT_2).abs() < 1e-18);
        assert!((t[1].rms() - 1e-3).abs() < 1e-18);
        assert_eq!(t[1].convention, AmplitudeConvention::Rms);
        assert!((t[1].phase_rad - PI / 2.0).abs() < 1e-15);
        assert!((t[2].phase_rad - PI / 4.0).abs() < 1e-15);
        assert_eq!(t[3].phase_rad, 1.5);
        let j = p.to_json();
        assert_eq!(j["offset"], -1.65);
        assert_eq!(j["tones"][1]["given_as"], "rms");
        assert_eq!(j["tones"][1]["phase_deg"], 90.0);
        assert_eq!(parse_profile(BASE, "t").unwrap().offset, 0.0);
    }

    /// Every bad tone key is refused naming the file (checked by the helper), the key and
    /// what is expected.
    #[test]
    fn bad_tone_keys_name_the_key() {
        let cases: &[(&str, &str, &str)] = &[
            ("[[tone]]\npeak = 1\n", "tone[0].frequency", "missing"),
            ("[[tone]]\nfrequency = 10\n", "tone[0].peak", "rms"),
            (
                "[[tone]]\nfrequency = 10\npeak = 1\nrms = 1\n",
                "tone[0].rms",
                "exactly one",
            ),
            (
                "[[tone]]\nfrequency = \"24 kHz\"\npeak = 1\n",
                "tone[0].frequency",
                "Nyquist",
            ),
            (
                "[[tone]]\nfrequency = \"30 kHz\"\npeak = 1\n",
                "tone[0].frequency",
                "24 kHz",
            ),
            (
                "[[tone]]\nfrequency = 0\npeak = 1\n",
                "tone[0].frequency",
                "> 0",
            ),
            (
                "[[tone]]\nfrequency = 10\npeak = \"-1 mV\"\n",
                "tone[0].peak",
                "> 0",
            ),
            (
                "[[tone]]\nfrequency = 10\npeak = \"1 Hz\"\n",
                "tone[0].peak",
                "",
            ),
            (
                "[[tone]]\nfrequency = 10\npeak = 1\nphase = \"90\"\n",
                "tone[0].phase",
                "deg",
            ),
            (
                "[[tone]]\nfrequency = 10\npeak = 1\nphase = true\n",
                "tone[0].phase",
                "deg",
            ),
            (
                "[[tone]]\nfrequency = 10\npeak = 1\nfreq = 1\n",
                "tone[0].freq",
                "frequency",
            ),
            (
                "[tone]\nfrequency = 10\npeak = 1\n",
                "tone",
                "double brackets",
            ),
        ];
        for (extra, key, words) in cases {
            let (k, line, m) = profile_error(&with(extra), "bench.toml");
            assert_eq!(&k, key, "{extra}: {m}");
            assert!(line.is_some(), "{extra}");
            assert!(m.contains(words), "{extra}: {m}");
        }
        let (k, _, m) = profile_error(&format!("offset = \"3 Hz\"\n{BASE}"), "bench.toml");
        assert_eq!(k, "offset");
        assert!(m.contains("amplitude"), "{m}");
    }
}
