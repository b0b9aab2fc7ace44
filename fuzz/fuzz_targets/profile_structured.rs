//! Structured profiles: TOML assembled from the schema's own tables, keys and quantity strings
//! (with the odd unknown key, wrong type or hostile number), so the fuzzer spends its time past
//! the TOML syntax, in the schema's checks. `parse_profile` must return `Ok` or an error, never
//! panic, and an accepted profile must describe itself.
#![no_main]

use arbitrary::Arbitrary;
use libfuzzer_sys::fuzz_target;

const TABLES: [&str; 10] = [
    "",
    "[band]",
    "[[floor]]",
    "[[resistor]]",
    "[[table]]",
    "[amplifier]",
    "[[burst]]",
    "[[tone]]",
    "[correlation]",
    "[[unknown]]",
];
const KEYS: [&str; 40] = [
    "name",
    "unit",
    "sample_rate",
    "low",
    "high",
    "order",
    "density",
    "corner",
    "slope",
    "resistance",
    "temperature",
    "points",
    "levels",
    "dwell",
    "next",
    "sampling",
    "topology",
    "refer",
    "gain",
    "source_resistance",
    "voltage_density",
    "voltage_corner",
    "current_density",
    "current_corner",
    "feedback",
    "input",
    "frequency",
    "amplitude",
    "phase",
    "offset",
    "channels",
    "correlation",
    "coherence",
    "band",
    "floor",
    "resistor",
    "table",
    "burst",
    "tone",
    "x",
];
const VALUES: [&str; 48] = [
    "\"V\"",
    "\"A\"",
    "\"W\"",
    "\"48 kHz\"",
    "48000",
    "0",
    "-1",
    "1e308",
    "-1e308",
    "1e-320",
    "nan",
    "inf",
    "-inf",
    "4294967297",
    "9223372036854775807",
    "-9223372036854775808",
    "\"15 nV/rtHz\"",
    "\"4 pA/rtHz\"",
    "\"0 V/rtHz\"",
    "\"-3 nV/rtHz\"",
    "\"1e400 V/rtHz\"",
    "\"30 Hz\"",
    "\"0.1 Hz\"",
    "\"0 Hz\"",
    "\"-5 Hz\"",
    "\"1 THz\"",
    "\"1e-30 Hz\"",
    "\"350 Ohm\"",
    "\"0 Ohm\"",
    "\"25 C\"",
    "\"-300 C\"",
    "\"0 K\"",
    "\"10 ms\"",
    "\"0 s\"",
    "\"1e300 h\"",
    "1.0",
    "0.5",
    "true",
    "\"inverting\"",
    "\"output\"",
    "\"\"",
    "[]",
    "[[1, 2], [3, 4]]",
    "[[\"1 Hz\", \"1 nV/rtHz\"], [\"10 Hz\", \"2 nV/rtHz\"]]",
    "[[0.5, 0.5], [0.5, 0.5]]",
    "[\"1 uV\", \"-1 uV\"]",
    "[[1.0, 0.0], [0.0]]",
    "{ a = 1 }",
];

#[derive(Debug, Arbitrary)]
enum Line<'a> {
    Table(u8),
    Pair(u8, u8),
    /// A known key with any text as its quantity string.
    Quantity(u8, &'a str),
    /// A known key with an array of quantity strings.
    Array(u8, Vec<u8>),
    Raw(&'a str),
}

fuzz_target!(|lines: Vec<Line<'_>>| {
    let mut text = String::new();
    for line in &lines {
        match line {
            Line::Table(t) => text.push_str(TABLES[*t as usize % TABLES.len()]),
            Line::Pair(k, v) => {
                text.push_str(KEYS[*k as usize % KEYS.len()]);
                text.push_str(" = ");
                text.push_str(VALUES[*v as usize % VALUES.len()]);
            }
            Line::Quantity(k, q) => {
                text.push_str(KEYS[*k as usize % KEYS.len()]);
                text.push_str(" = ");
                text.push_str(&toml_string(q));
            }
            Line::Array(k, vs) => {
                text.push_str(KEYS[*k as usize % KEYS.len()]);
                text.push_str(" = [");
                for v in vs {
                    text.push_str(VALUES[*v as usize % VALUES.len()]);
                    text.push_str(", ");
                }
                text.push(']');
            }
            Line::Raw(r) => text.push_str(r),
        }
        text.push('\n');
    }
    if let Ok(profile) = noisewright::profile::parse_profile(&text, "fuzz.toml") {
        let _ = profile.to_json();
    }
});

/// `s` as a TOML basic string.
fn toml_string(s: &str) -> String {
    let mut out = String::from("\"");
    for c in s.chars() {
        match c {
            '"' => out.push_str("\\\""),
            '\\' => out.push_str("\\\\"),
            c if c.is_control() => out.push_str(&format!("\\u{:04X}", c as u32)),
            c => out.push(c),
        }
    }
    out.push('"');
    out
}
