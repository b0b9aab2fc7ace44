//! Structured profiles: TOML assembled from the schema's own tables, every key of every table,
//! quantity strings and whole valid sections (with the odd unknown key, wrong type or hostile
//! number), so the fuzzer spends its time past the TOML syntax, in the schema's checks.
//! `parse_profile` must return `Ok` or an error, never panic.
//!
//! An accepted profile then goes where `generate` and `budget` take it: its JSON, the target
//! density on a frequency grid, the budget text, each burst's model and chain, the tones at
//! sample 0 and far into a run, the channel mixing matrix, and, when the design is small (at
//! most two pyramid levels and two channels), the whole multi-channel engine for a few frames.
//! Each may return an error; none may panic or hang (`harness::exercise`).
#![no_main]

#[path = "../harness.rs"]
mod harness;

use arbitrary::Arbitrary;
use libfuzzer_sys::fuzz_target;

const TABLES: [&str; 13] = [
    "",
    "[band]",
    "[[floor]]",
    "[[resistor]]",
    "[[table]]",
    "[[amplifier]]",
    "[[burst]]",
    "[[tone]]",
    "[amplifier]",
    "[tone]",
    "[burst]",
    "[correlation]",
    "[[unknown]]",
];
/// Every key of every table (src/profile/schema.rs, tone.rs, burst.rs, channels.rs,
/// schema/amplifier.rs), the table names as keys, and one unknown key.
const KEYS: [&str; 44] = [
    // top level
    "name",
    "unit",
    "sample_rate",
    "offset",
    "channels",
    "correlation",
    // [band]
    "low",
    "high",
    "order",
    // [[floor]], [[resistor]], [[table]]
    "density",
    "corner",
    "slope",
    "resistance",
    "temperature",
    "points",
    // [[amplifier]]
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
    "gbw",
    "refer",
    // [[burst]]
    "levels",
    "dwell",
    "next",
    "sampling",
    // [[tone]]
    "frequency",
    "peak",
    "rms",
    "phase",
    // tables as keys
    "band",
    "floor",
    "resistor",
    "table",
    "amplifier",
    "burst",
    "tone",
    "x",
];
const VALUES: [&str; 82] = [
    "\"V\"",
    "\"A\"",
    "\"W\"",
    "\"48 kHz\"",
    "48000",
    "0",
    "1",
    "2",
    "3",
    "64",
    "65",
    "-1",
    "-0.5",
    "1e308",
    "-1e308",
    "1e-300",
    "1e-320",
    "nan",
    "inf",
    "-inf",
    "4294967297",
    "9223372036854775807",
    "-9223372036854775808",
    "\"15 nV/rtHz\"",
    "\"4 pA/rtHz\"",
    "\"5 nV/rtHz\"",
    "\"1 pA/rtHz\"",
    "\"0 V/rtHz\"",
    "\"0 A/rtHz\"",
    "\"-3 nV/rtHz\"",
    "\"1e400 V/rtHz\"",
    "\"1e-300 V/rtHz\"",
    "\"30 Hz\"",
    "\"0.1 Hz\"",
    "\"0 Hz\"",
    "\"-5 Hz\"",
    "\"1 THz\"",
    "\"10 MHz\"",
    "\"1e-30 Hz\"",
    "\"350 Ohm\"",
    "\"1 kOhm\"",
    "\"9 kOhm\"",
    "\"0 Ohm\"",
    "\"1e300 Ohm\"",
    "\"25 C\"",
    "\"-300 C\"",
    "\"0 K\"",
    "\"1e300 K\"",
    "\"10 ms\"",
    "\"0 s\"",
    "\"1e-30 s\"",
    "\"1e300 h\"",
    "\"1 mV\"",
    "\"1.65 V\"",
    "\"1e300 V\"",
    "\"90 deg\"",
    "\"1.5 rad\"",
    "\"-720\u{b0}\"",
    "\"1e308 rad\"",
    "1.0",
    "0.5",
    "true",
    "\"non-inverting\"",
    "\"inverting\"",
    "\"output\"",
    "\"input\"",
    "\"instant\"",
    "\"mean\"",
    "\"\"",
    "[]",
    "[[1, 2], [3, 4]]",
    "[[\"1 Hz\", \"1 nV/rtHz\"], [\"10 Hz\", \"2 nV/rtHz\"]]",
    "[[0.5, 0.5], [0.5, 0.5]]",
    "[[0, 1], [1, 0]]",
    "[[1, 0.3], [0.3, 1]]",
    "[[1, 1], [1, 1]]",
    "[[1, -1], [-1, 1]]",
    "[\"1 uV\", \"-1 uV\"]",
    "[\"20 ms\", \"5 ms\"]",
    "[\"1e-30 s\", \"1e-30 s\"]",
    "[[1.0, 0.0], [0.0]]",
    "{ a = 1 }",
];
/// Whole valid pieces, so that accepted profiles (and the engine behind them) are reached
/// from the first runs: a header with the sample rate and band, and one table of each kind.
const SNIPPETS: [&str; 16] = [
    "sample_rate = 48000\n[band]\nlow = 1\nhigh = 20000\n",
    "sample_rate = \"48 kHz\"\n[band]\nlow = \"2 kHz\"\nhigh = \"24 kHz\"\norder = 4\n",
    "sample_rate = 1000\nunit = \"A\"\n[band]\nlow = 100\nhigh = 400\norder = 8\n",
    "sample_rate = \"1 THz\"\n[band]\nlow = \"100 GHz\"\nhigh = \"0.5 THz\"\n",
    "sample_rate = 1e-3\n[band]\nlow = 1e-4\nhigh = 5e-4\n",
    "[[floor]]\ndensity = \"4 nV/rtHz\"\ncorner = \"100 Hz\"\nslope = 2\n",
    "[[resistor]]\nresistance = \"10 kOhm\"\ntemperature = \"25 C\"\n",
    "[[table]]\npoints = [[1.0, 30e-9], [10.0, \"12 nV/rtHz\"], [1e4, 1e-300]]\n",
    "[[amplifier]]\ntopology = \"non-inverting\"\nvoltage_density = \"5 nV/rtHz\"\n\
     current_density = \"1 pA/rtHz\"\nfeedback_resistance = \"9 kOhm\"\n\
     gain_resistance = \"1 kOhm\"\ngbw = \"10 MHz\"\n",
    "[[amplifier]]\ntopology = \"inverting\"\nvoltage_density = \"5 nV/rtHz\"\n\
     voltage_corner = \"10 Hz\"\ncurrent_density_plus = \"1 pA/rtHz\"\n\
     current_density_minus = \"2 pA/rtHz\"\ncurrent_corner = \"100 Hz\"\n\
     source_resistance = \"1 kOhm\"\nfeedback_resistance = \"9 kOhm\"\n\
     gain_resistance = \"1 kOhm\"\nbias_resistance = \"500 Ohm\"\nrefer = \"input\"\n",
    "[[burst]]\nlevels = [\"0 uV\", \"3 uV\", \"7 uV\"]\ndwell = [\"20 ms\", \"5 ms\", \"2 ms\"]\n\
     next = [[0, 0.7, 0.3], [1, 0, 0], [0.5, 0.5, 0]]\nsampling = \"mean\"\n",
    "[[burst]]\nlevels = [0, 1e-6]\ndwell = [1e-3, 1e-3]\n",
    "[[tone]]\nfrequency = \"1 kHz\"\npeak = \"1 mV\"\nphase = \"90 deg\"\n",
    "[[tone]]\nfrequency = 50\nrms = \"0.707 mV\"\n",
    "offset = \"1.65 V\"\nchannels = 2\ncorrelation = 0.5\n",
    "channels = 3\ncorrelation = [[1, 0.3, 0], [0.3, 1, 0], [0, 0, 1]]\n",
];

#[derive(Debug, Arbitrary)]
enum Line<'a> {
    Table(u8),
    Pair(u8, u8),
    /// A known key with any text as its quantity string.
    Quantity(u8, &'a str),
    /// A known key with an array of values.
    Array(u8, Vec<u8>),
    /// A known key with a number.
    Number(u8, f64),
    Snippet(u8),
    Raw(&'a str),
}

#[derive(Debug, Arbitrary)]
struct Input<'a> {
    lines: Vec<Line<'a>>,
    seed: u64,
    start: u64,
}

fuzz_target!(|input: Input<'_>| {
    let mut text = String::new();
    for line in &input.lines {
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
            Line::Number(k, x) => {
                text.push_str(KEYS[*k as usize % KEYS.len()]);
                // `{:?}` keeps a decimal point or exponent, so TOML reads a float.
                text.push_str(&format!(" = {x:?}").replace("NaN", "nan"));
            }
            Line::Snippet(s) => text.push_str(SNIPPETS[*s as usize % SNIPPETS.len()]),
            Line::Raw(r) => text.push_str(r),
        }
        text.push('\n');
    }
    if print() {
        // For turning an artifact into a profile fixture: FUZZ_PRINT=1 <target> <artifact>.
        eprintln!("----- profile text\n{text}-----");
    }
    if let Ok(profile) = noisewright::profile::parse_profile(&text, harness::PROFILE_FILE) {
        harness::exercise(&profile, input.seed, input.start);
    }
});

/// True when the environment has FUZZ_PRINT: print each assembled profile.
fn print() -> bool {
    static PRINT: std::sync::OnceLock<bool> = std::sync::OnceLock::new();
    *PRINT.get_or_init(|| std::env::var_os("FUZZ_PRINT").is_some())
}

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
