//! The `[[amplifier]]` section: keys, validation, and expansion into named sources.
//!
//! ```toml
//! [[amplifier]]
//! name = "preamp"                  # optional; default "amplifier N"
//! topology = "non-inverting"       # required: "non-inverting" or "inverting"
//! voltage_density = "5 nV/rtHz"    # required, V/√Hz
//! voltage_corner = "10 Hz"         # optional 1/f corner of the voltage noise
//! current_density = "1 pA/rtHz"    # A/√Hz on both inputs; required unless both below are given
//! current_density_plus = "1 pA/rtHz"   # optional, overrides current_density at the + input
//! current_density_minus = "2 pA/rtHz"  # optional, overrides current_density at the − input
//! current_corner = "100 Hz"        # optional 1/f corner of both current noises
//! source_resistance = "1 kOhm"     # optional, ≥ 0, default 0
//! feedback_resistance = "9 kOhm"   # required, ≥ 0 (> 0 for inverting)
//! gain_resistance = "1 kOhm"       # > 0; required for inverting, optional (none: follower) else
//! bias_resistance = "500 Ohm"      # optional, inverting only: + input to ground, ≥ 0
//! temperature = "25 C"             # optional, default 25 °C, every resistor of the stage
//! gbw = "10 MHz"                   # optional: one pole at gbw / noise gain
//! refer = "output"                 # optional: "output" (default) or "input"
//! ```
//!
//! The stage becomes one [`SourceKind::AmplifierPart`] per non-zero part, named
//! `"<stage>: <part>"` (see [`crate::model::amplifier::StagePart::label`]). A profile with an
//! amplifier must have `unit = "V"`.

use super::*;
use crate::model::amplifier::{Refer, Stage, Topology};

/// Keys allowed in an `[[amplifier]]` table.
pub(super) const KEYS: &[&str] = &[
    "name",
    "topology",
    "voltage_density",
    "voltage_corner",
    "current_density",
    "current_density_plus",
    "current_density_minus",
    "current_corner",
    "source_resistance",
    "feedback_resistance",
    "gain_resistance",
    "bias_resistance",
    "temperature",
    "gbw",
    "refer",
];

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct RawAmplifier {
    name: Option<String>,
    topology: Option<Spanned<String>>,
    voltage_density: Option<Spanned<Value>>,
    voltage_corner: Option<Spanned<Value>>,
    current_density: Option<Spanned<Value>>,
    current_density_plus: Option<Spanned<Value>>,
    current_density_minus: Option<Spanned<Value>>,
    current_corner: Option<Spanned<Value>>,
    source_resistance: Option<Spanned<Value>>,
    feedback_resistance: Option<Spanned<Value>>,
    gain_resistance: Option<Spanned<Value>>,
    bias_resistance: Option<Spanned<Value>>,
    temperature: Option<Spanned<Value>>,
    gbw: Option<Spanned<Value>>,
    refer: Option<Spanned<String>>,
}

/// Validate amplifier `i` of the file and expand it into its named parts.
pub(super) fn validate(
    cx: &Cx<'_>,
    i: usize,
    raw: &Spanned<RawAmplifier>,
    unit: Unit,
) -> Result<Vec<Source>> {
    let at = At {
        cx,
        i,
        span: Some(raw.span()),
    };
    let a = raw.get_ref();
    if unit != Unit::Volt {
        return Err(cx.err(
            &format!("amplifier[{i}]"),
            at.span.clone(),
            "an amplifier stage's noise is a voltage: the profile needs unit = \"V\"",
        ));
    }
    let stage = stage(&at, a, unit)?;
    let name = a
        .name
        .clone()
        .unwrap_or_else(|| format!("amplifier {}", i + 1));
    Ok(stage_sources(&stage, &name))
}

/// Amplifier `i` of the file, for naming its keys and pointing errors at its table.
struct At<'a, 'b> {
    cx: &'a Cx<'b>,
    i: usize,
    /// The `[[amplifier]]` table's bytes in the file.
    span: Option<Range<usize>>,
}

impl At<'_, '_> {
    /// The dotted key of `k` in this amplifier, e.g. `amplifier[0].gbw`.
    fn key(&self, k: &str) -> String {
        format!("amplifier[{}].{k}", self.i)
    }

    /// The error for the missing key `k`, pointing at the table.
    fn missing(&self, k: &str, example: &str) -> Error {
        missing(self.cx, &self.key(k), self.span.clone(), example)
    }

    /// An optional positive quantity of dimension `dim` at key `k`.
    fn opt_pos(&self, v: &Option<Spanned<Value>>, k: &str, dim: Dimension) -> Result<Option<f64>> {
        v.as_ref()
            .map(|v| positive(self.cx, v, &self.key(k), dim, Unit::Volt))
            .transpose()
    }

    /// A current noise density in A/√Hz (≥ 0) at key `k`.
    fn current(&self, v: &Spanned<Value>, k: &str) -> Result<f64> {
        let (cx, key) = (self.cx, self.key(k));
        // Current noise is in A/√Hz whatever the profile's unit: say so rather than suggest
        // changing the profile's unit.
        let x = finite_quantity(
            cx,
            v.get_ref(),
            v.span(),
            &key,
            Dimension::Density,
            Unit::Ampere,
        )
        .map_err(|_| {
            cx.err(
                &key,
                Some(v.span()),
                format!(
                    "expected a current noise density such as \"1 pA/rtHz\" (A/\u{221a}Hz, or a \
                     number in A/\u{221a}Hz), got {}",
                    v.get_ref()
                ),
            )
        })?;
        let x = within_magnitude(cx, x, v.span(), &key, Dimension::Density, Unit::Ampere)?;
        if x >= 0.0 {
            Ok(x)
        } else {
            Err(cx.err(
                &key,
                Some(v.span()),
                format!("must be >= 0, got {}", format_quantity(x, "A/\u{221a}Hz")),
            ))
        }
    }
}

/// The stage an `[[amplifier]]` table describes, its keys checked in the order of the
/// fields of [`Stage`] (the first error found is the one reported).
fn stage(at: &At<'_, '_>, a: &RawAmplifier, unit: Unit) -> Result<Stage> {
    let topology = topology(at, a)?;
    let refer = refer(at, a)?;
    let vd = a
        .voltage_density
        .as_ref()
        .ok_or_else(|| at.missing("voltage_density", "voltage_density = \"5 nV/rtHz\""))?;
    let voltage_density = positive(
        at.cx,
        vd,
        &at.key("voltage_density"),
        Dimension::Density,
        unit,
    )?;
    let voltage_corner_hz =
        at.opt_pos(&a.voltage_corner, "voltage_corner", Dimension::Frequency)?;
    let (current_plus, current_minus) = input_currents(at, a)?;
    let current_corner_hz =
        at.opt_pos(&a.current_corner, "current_corner", Dimension::Frequency)?;
    let resistors = resistors(at, a, topology, unit)?;
    let temperature_k = match &a.temperature {
        None => DEFAULT_TEMPERATURE_K,
        Some(t) => positive(
            at.cx,
            t,
            &at.key("temperature"),
            Dimension::Temperature,
            unit,
        )?,
    };
    let gbw_hz = at.opt_pos(&a.gbw, "gbw", Dimension::Frequency)?;
    Ok(Stage {
        topology,
        voltage_density,
        voltage_corner_hz,
        current_plus,
        current_minus,
        current_corner_hz,
        source_ohm: resistors.source_ohm,
        feedback_ohm: resistors.feedback_ohm,
        gain_ohm: resistors.gain_ohm,
        bias_ohm: resistors.bias_ohm,
        temperature_k,
        gbw_hz,
        refer,
    })
}

/// The required `topology`.
fn topology(at: &At<'_, '_>, a: &RawAmplifier) -> Result<Topology> {
    match &a.topology {
        None => Err(at.missing("topology", "topology = \"non-inverting\"")),
        Some(t) => match t.get_ref().as_str() {
            "non-inverting" => Ok(Topology::NonInverting),
            "inverting" => Ok(Topology::Inverting),
            other => Err(at.cx.err(
                &at.key("topology"),
                Some(t.span()),
                format!("expected \"non-inverting\" or \"inverting\", got \"{other}\""),
            )),
        },
    }
}

/// `refer`: output-referred parts when absent.
fn refer(at: &At<'_, '_>, a: &RawAmplifier) -> Result<Refer> {
    match &a.refer {
        None => Ok(Refer::Output),
        Some(r) => match r.get_ref().as_str() {
            "output" => Ok(Refer::Output),
            "input" => Ok(Refer::Input),
            other => Err(at.cx.err(
                &at.key("refer"),
                Some(r.span()),
                format!("expected \"output\" or \"input\", got \"{other}\""),
            )),
        },
    }
}

/// The current noise of the + and the − input in A/√Hz: each its own key, else the shared
/// `current_density`.
fn input_currents(at: &At<'_, '_>, a: &RawAmplifier) -> Result<(f64, f64)> {
    let both = a
        .current_density
        .as_ref()
        .map(|v| at.current(v, "current_density"))
        .transpose()?;
    let per_input = |v: &Option<Spanned<Value>>, k: &str| -> Result<f64> {
        match (v, both) {
            (Some(v), _) => at.current(v, k),
            (None, Some(x)) => Ok(x),
            (None, None) => Err(at.missing(
                "current_density",
                "current_density = \"1 pA/rtHz\" (or current_density_plus and \
                 current_density_minus)",
            )),
        }
    };
    let current_plus = per_input(&a.current_density_plus, "current_density_plus")?;
    let current_minus = per_input(&a.current_density_minus, "current_density_minus")?;
    Ok((current_plus, current_minus))
}

/// A stage's resistors in Ω, as in [`Stage`].
struct Resistors {
    source_ohm: f64,
    feedback_ohm: f64,
    gain_ohm: Option<f64>,
    bias_ohm: f64,
}

/// The stage's resistors: which are required, and which may be 0, depends on `topology`.
fn resistors(
    at: &At<'_, '_>,
    a: &RawAmplifier,
    topology: Topology,
    unit: Unit,
) -> Result<Resistors> {
    let (cx, key) = (at.cx, |k: &str| at.key(k));
    let source_ohm = match &a.source_resistance {
        None => 0.0,
        Some(v) => non_negative(
            cx,
            v,
            &key("source_resistance"),
            Dimension::Resistance,
            Unit::Volt,
        )?,
    };
    let rf = a
        .feedback_resistance
        .as_ref()
        .ok_or_else(|| at.missing("feedback_resistance", "feedback_resistance = \"9 kOhm\""))?;
    let feedback_ohm = match topology {
        Topology::NonInverting => non_negative(
            cx,
            rf,
            &key("feedback_resistance"),
            Dimension::Resistance,
            Unit::Volt,
        )?,
        Topology::Inverting => positive(
            cx,
            rf,
            &key("feedback_resistance"),
            Dimension::Resistance,
            unit,
        )?,
    };
    let gain_ohm = at.opt_pos(&a.gain_resistance, "gain_resistance", Dimension::Resistance)?;
    if topology == Topology::Inverting && gain_ohm.is_none() {
        return Err(at.missing(
            "gain_resistance",
            "gain_resistance = \"1 kOhm\" (the input resistor of an inverting stage)",
        ));
    }
    let bias_ohm = match (&a.bias_resistance, topology) {
        (None, _) => 0.0,
        (Some(v), Topology::Inverting) => non_negative(
            cx,
            v,
            &key("bias_resistance"),
            Dimension::Resistance,
            Unit::Volt,
        )?,
        (Some(v), Topology::NonInverting) => {
            return Err(cx.err(
                &key("bias_resistance"),
                Some(v.span()),
                "bias_resistance belongs to an inverting stage; in a non-inverting stage \
                 the resistance at the + input is source_resistance",
            ));
        }
    };
    Ok(Resistors {
        source_ohm,
        feedback_ohm,
        gain_ohm,
        bias_ohm,
    })
}

/// One source per part of `stage`, named `"<name>: <part>"`.
fn stage_sources(stage: &Stage, name: &str) -> Vec<Source> {
    stage
        .parts()
        .into_iter()
        .map(|p| Source {
            name: format!("{name}: {}", p.part.label()),
            kind: SourceKind::AmplifierPart {
                stage: name.to_string(),
                part: p.part,
                refer: stage.refer,
                density: p.density,
                corner_hz: p.corner_hz,
                pole_hz: p.pole_hz,
            },
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    const STAGE: &str = r#"sample_rate = "48 kHz"
[band]
low = "10 Hz"
high = "20 kHz"
[[amplifier]]
name = "pre"
topology = "non-inverting"
voltage_density = "5 nV/rtHz"
current_density = "1 pA/rtHz"
source_resistance = "1 kOhm"
feedback_resistance = "9 kOhm"
gain_resistance = "1 kOhm"
temperature = "25 C"
"#;

    fn fail(text: &str) -> (String, Option<usize>, String) {
        match parse_profile(text, "a.toml") {
            Err(Error::Profile {
                line, key, message, ..
            }) => (key, line, message),
            other => panic!("expected a profile error, got {other:?}"),
        }
    }

    #[test]
    fn a_stage_expands_into_named_parts_with_their_classes() {
        let p = parse_profile(STAGE, "a.toml").unwrap();
        let names: Vec<&str> = p.sources.iter().map(|s| s.name.as_str()).collect();
        assert_eq!(
            names,
            [
                "pre: voltage noise",
                "pre: i_n+ \u{d7} Rs (1 k\u{3a9})",
                "pre: Rs thermal (1 k\u{3a9})",
                "pre: i_n- \u{d7} Rf (9 k\u{3a9})",
                "pre: Rf thermal (9 k\u{3a9})",
                "pre: Rg thermal (1 k\u{3a9})",
            ]
        );
        let thermal: Vec<bool> = p
            .sources
            .iter()
            .map(|s| match &s.kind {
                SourceKind::AmplifierPart { part, .. } => part.is_resistor_thermal(),
                _ => panic!("not a part"),
            })
            .collect();
        assert_eq!(thermal, [false, false, true, false, true, true]);
        // The manifest's profile JSON carries each part with its resistor and units in keys.
        let j = p.to_json();
        let rs = &j["sources"][2];
        assert_eq!(rs["kind"], "amplifier_part");
        assert_eq!(rs["stage"], "pre");
        assert_eq!(rs["refer"], "output");
        assert_eq!(rs["part"]["type"], "thermal");
        assert_eq!(rs["part"]["resistor"], "source");
        assert_eq!(rs["part"]["resistance_ohm"], 1e3);
        assert_eq!(rs["corner_hz"], serde_json::Value::Null);
        // REFERENCES §7 [V]: G_n·√(4kT·1 kΩ) = 40.58 nV/√Hz at 25 °C.
        assert!((rs["density"].as_f64().unwrap() * 1e9 - 40.58).abs() <= 0.005);
        // Per-input current noise overrides the shared value; refer = input divides by 10.
        let q = parse_profile(
            &STAGE.replace(
                "current_density = \"1 pA/rtHz\"",
                "current_density = \"1 pA/rtHz\"\ncurrent_density_minus = \"3 pA/rtHz\"\n\
                 refer = \"input\"",
            ),
            "a.toml",
        )
        .unwrap();
        match &q.sources[3].kind {
            SourceKind::AmplifierPart { density, refer, .. } => {
                assert_eq!(*refer, Refer::Input);
                assert!((density / (3e-12 * 9e3 / 10.0) - 1.0).abs() < 1e-15);
            }
            other => panic!("{other:?}"),
        }
    }

    #[test]
    fn amplifier_errors_name_key_and_line() {
        let cases: &[(&str, &str, &str, usize, &str)] = &[
            (
                "topology = \"non-inverting\"",
                "topology = \"differential\"",
                "amplifier[0].topology",
                7,
                "\"inverting\"",
            ),
            (
                "voltage_density",
                "voltage_density = \"5 pA/rtHz\"",
                "amplifier[0].voltage_density",
                8,
                "unit is V",
            ),
            (
                "current_density",
                "current_density = \"1 nV/rtHz\"",
                "amplifier[0].current_density",
                9,
                "A",
            ),
            (
                "source_resistance",
                "source_resistance = \"-1 kOhm\"",
                "amplifier[0].source_resistance",
                10,
                ">= 0",
            ),
            (
                "gain_resistance",
                "gain_resistance = 0",
                "amplifier[0].gain_resistance",
                12,
                "> 0",
            ),
            (
                "temperature",
                "bias_resistance = 50",
                "amplifier[0].bias_resistance",
                13,
                "inverting",
            ),
            (
                "temperature",
                "refer = \"middle\"",
                "amplifier[0].refer",
                13,
                "\"input\"",
            ),
            (
                "temperature",
                "gbw = \"10 MOhm\"",
                "amplifier[0].gbw",
                13,
                "frequency",
            ),
            (
                "temperature",
                "gain_resistence = 5",
                "amplifier[0].gain_resistence",
                13,
                "did you mean `gain_resistance`",
            ),
        ];
        for &(old, new, key, line, needle) in cases {
            let text: String = STAGE
                .lines()
                .map(|l| if l.starts_with(old) { new } else { l })
                .collect::<Vec<_>>()
                .join("\n");
            let (k, l, msg) = fail(&text);
            assert_eq!((k.as_str(), l), (key, Some(line)), "{new}: {msg}");
            assert!(msg.contains(needle), "{new}: {msg:?} lacks {needle:?}");
        }
        let (k, _, msg) = fail(&STAGE.replace("current_density = \"1 pA/rtHz\"\n", ""));
        assert_eq!(k, "amplifier[0].current_density");
        assert!(msg.contains("missing"), "{msg}");
        let (k, _, _) = fail(&STAGE.replace("topology = \"non-inverting\"\n", ""));
        assert_eq!(k, "amplifier[0].topology");
        let (k, _, _) = fail(
            &STAGE
                .replace(
                    "topology = \"non-inverting\"\n",
                    "topology = \"inverting\"\n",
                )
                .replace("gain_resistance = \"1 kOhm\"\n", ""),
        );
        assert_eq!(k, "amplifier[0].gain_resistance");
        let (k, _, msg) = fail(&format!("unit = \"A\"\n{STAGE}"));
        assert_eq!(k, "amplifier[0]");
        assert!(msg.contains("unit = \"V\""), "{msg}");
    }
}
