//! Structured quantities: a number (sign, digits, fraction, exponent) with an SI prefix and a
//! unit symbol, parsed as every dimension; and any finite value formatted and parsed back.
//! Parsing never panics; `format_quantity_exact` parses back to the very same `f64` (bit for
//! bit); `format_quantity` (display) parses back within its 6 significant digits and formats
//! to the same text again.
#![no_main]

#[path = "../harness.rs"]
mod harness;

use arbitrary::Arbitrary;
use libfuzzer_sys::fuzz_target;
use noisewright::profile::{Dimension, format_quantity, format_quantity_exact, parse_quantity};
const PREFIXES: [&str; 13] = [
    "", "f", "p", "n", "u", "\u{b5}", "\u{3bc}", "m", "k", "M", "G", "T", "x",
];
const UNITS: [&str; 22] = [
    "",
    "Hz",
    "s",
    "min",
    "h",
    "C",
    "\u{b0}C",
    "K",
    "Ohm",
    "ohm",
    "Ohms",
    "ohms",
    "\u{3a9}",
    "\u{2126}",
    "V",
    "A",
    "V/rtHz",
    "A/\u{221a}Hz",
    "V/sqrt(Hz)",
    "V / rtHz",
    "dB",
    "/rtHz",
];

#[derive(Debug, Arbitrary)]
struct Input<'a> {
    sign: u8,
    int_digits: &'a str,
    frac_digits: Option<&'a str>,
    exponent: Option<i32>,
    space: bool,
    prefix: u8,
    unit: u8,
    tail: &'a str,
    value: f64,
}

fuzz_target!(|input: Input<'_>| {
    let mut text = String::new();
    text.push_str(["", "-", "+", " "][input.sign as usize % 4]);
    text.push_str(input.int_digits);
    if let Some(f) = input.frac_digits {
        text.push('.');
        text.push_str(f);
    }
    if let Some(e) = input.exponent {
        text.push_str(&format!("e{e}"));
    }
    if input.space {
        text.push(' ');
    }
    text.push_str(PREFIXES[input.prefix as usize % PREFIXES.len()]);
    text.push_str(UNITS[input.unit as usize % UNITS.len()]);
    text.push_str(input.tail);
    harness::quantity(&text);

    let v = input.value;
    if v.is_finite() {
        for (dim, unit) in [
            (Dimension::Frequency, "Hz"),
            (Dimension::Resistance, "Ohm"),
            (Dimension::Density, "V/rtHz"),
            (Dimension::Amplitude, "V"),
            (Dimension::Time, "s"),
            (Dimension::Temperature, "K"),
        ] {
            let exact = format_quantity_exact(v, unit);
            let back = parse_quantity(&exact, dim, "V")
                .unwrap_or_else(|e| panic!("{v:e} written as {exact:?} does not parse: {e}"));
            assert_eq!(
                back.to_bits(),
                v.to_bits(),
                "{v:e} -> {exact:?} -> {back:e}"
            );
            if v == 0.0 {
                continue;
            }
            let shown = format_quantity(v, unit);
            let back = parse_quantity(&shown, dim, "V")
                .unwrap_or_else(|e| panic!("{v:e} formatted as {shown:?} does not parse: {e}"));
            let tol = 5e-6 * v.abs();
            assert!((back - v).abs() <= tol, "{v:e} -> {shown:?} -> {back:e}");
            assert_eq!(format_quantity(back, unit), shown, "{v:e} is not stable");
        }
    }
});
