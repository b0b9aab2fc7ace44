//! A C header holding the samples as a `static const` array, for firmware and test rigs.
//!
//! ```c
//! /* noisewright 0.2.0: <provenance lines: profile, seed>
//!  * 4 frames x 1 channel at 48000 Hz, f32, digital 1.0 = 2 V */
//! #ifndef HISS_H
//! #define HISS_H
//! #include <stdint.h>
//! #define HISS_LENGTH 4              /* frames */
//! #define HISS_CHANNELS 1
//! #define HISS_SAMPLE_RATE_HZ 48000
//! #define HISS_FULL_SCALE 2.0000000000000000e0 /* V: physical value of digital 1.0 */
//! static const float hiss[HISS_LENGTH * HISS_CHANNELS] = { ... };
//! #endif
//! ```
//!
//! * The element type comes from [`c_type`], the one place that decides it: `int16_t` for
//!   i16 codes, `int32_t` for i24 and i32 codes, `float` for f32, `double` for f64.
//! * Floats are printed with 9 significant digits and an `f` suffix, doubles with 17
//!   (FLT_DECIMAL_DIG and DBL_DECIMAL_DIG of C11 §5.2.4.2.2: enough for a correctly rounding
//!   compiler to give back the exact binary value), always in exponent form so that 1e-7 or
//!   a subnormal keeps its digits.
//! * Frames are interleaved (channel 0, channel 1, … of frame 0, then frame 1), the C order
//!   of a `[LENGTH][CHANNELS]` array; the values are the same as raw output of the same run.
//! * `SAMPLE_RATE_HZ` is an integer constant for a whole rate, else a double constant.

use std::io::Write;

use super::{Buffered, CHUNK_SAMPLES, Format, SampleFormat, Scaler, Sink, SinkReport, SinkSpec};
use crate::error::{Error, Result, Setting};
use crate::profile::format_quantity;

/// Values per line of the array initialiser.
const PER_LINE: usize = 8;

/// C keywords (C11 §6.4.1, plus C23's new ones), which cannot name an array.
const KEYWORDS: [&str; 54] = [
    "auto",
    "break",
    "case",
    "char",
    "const",
    "continue",
    "default",
    "do",
    "double",
    "else",
    "enum",
    "extern",
    "float",
    "for",
    "goto",
    "if",
    "inline",
    "int",
    "long",
    "register",
    "restrict",
    "return",
    "short",
    "signed",
    "sizeof",
    "static",
    "struct",
    "switch",
    "typedef",
    "union",
    "unsigned",
    "void",
    "volatile",
    "while",
    "_Alignas",
    "_Alignof",
    "_Atomic",
    "_Bool",
    "_Complex",
    "_Generic",
    "_Imaginary",
    "_Noreturn",
    "_Static_assert",
    "_Thread_local",
    "alignas",
    "alignof",
    "bool",
    "constexpr",
    "false",
    "nullptr",
    "static_assert",
    "thread_local",
    "true",
    "typeof",
];

/// The C type of one stored value: `int16_t` (i16), `int32_t` (i24, i32), `float` (f32),
/// `double` (f64). The one place the element type is decided.
pub fn c_type(sample_format: SampleFormat) -> &'static str {
    match sample_format {
        SampleFormat::I16 => "int16_t",
        SampleFormat::I24 | SampleFormat::I32 => "int32_t",
        SampleFormat::F32 => "float",
        SampleFormat::F64 => "double",
    }
}

/// The C element type of the array `spec` describes: the ADC container's (`uint16_t`, …) for
/// ADC codes, else [`c_type`] of the sample format.
pub fn c_spec_type(spec: &SinkSpec) -> &'static str {
    match &spec.adc {
        Some(adc) => adc.container().c_type(),
        None => c_type(spec.sample_format),
    }
}

/// Checks that `name` can name the array: a C identifier (a letter or `_`, then letters,
/// digits and `_`), not a keyword, not reserved (C11 §7.1.3: `__…` or `_` + capital), and
/// not a name from `<stdint.h>` (`…_t`, `INT…`/`UINT…`). Errors name `--name`.
pub fn validate_array_name(name: &str) -> Result<()> {
    let bad = |why: &str| {
        Err(Error::setting(
            Setting::Name,
            format!(
                "{name:?} cannot name a C array: {why}; expected a C identifier such as \
                 noise_table (letters, digits and _, not starting with a digit)"
            ),
        ))
    };
    let mut chars = name.chars();
    match chars.next() {
        None => return bad("it is empty"),
        Some(c) if !(c.is_ascii_alphabetic() || c == '_') => {
            return bad("it must start with a letter or _");
        }
        _ => {}
    }
    if let Some(c) = name
        .chars()
        .find(|c| !(c.is_ascii_alphanumeric() || *c == '_'))
    {
        return bad(&format!("{c:?} is not allowed in an identifier"));
    }
    if KEYWORDS.contains(&name) {
        return bad("it is a C keyword");
    }
    let b = name.as_bytes();
    if b.len() > 1 && b[0] == b'_' && (b[1] == b'_' || b[1].is_ascii_uppercase()) {
        return bad("identifiers starting with __ or _ and a capital are reserved (C11 §7.1.3)");
    }
    // C11 §7.31.10: names ending in _t, and INT…/UINT… macros, belong to <stdint.h>.
    if name.ends_with("_t") || name.starts_with("INT") || name.starts_with("UINT") {
        return bad("it may clash with a <stdint.h> name (…_t, INT…, UINT…)");
    }
    Ok(())
}

/// A valid array name made from a file stem: ASCII letters and digits kept (lower case),
/// everything else `_`; a leading digit gets `noise_` in front; a name that would still be
/// refused by [`validate_array_name`] gets `_data` appended. `mic-preamp` → `mic_preamp`,
/// `2k` → `noise_2k`, `""` → `noise`.
pub fn default_array_name(stem: &str) -> String {
    let mut s: String = stem
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() {
                c.to_ascii_lowercase()
            } else {
                '_'
            }
        })
        .collect();
    s = s.trim_start_matches('_').to_string();
    if s.is_empty() {
        return "noise".to_string();
    }
    if s.as_bytes()[0].is_ascii_digit() {
        s.insert_str(0, "noise_");
    }
    if validate_array_name(&s).is_err() {
        s.push_str("_data");
    }
    if validate_array_name(&s).is_err() {
        return "noise".to_string();
    }
    s
}

/// Keeps a line of user text inside a `/* … */` comment harmless: a closer `*/` would end
/// the comment early, an opener `/*` inside a comment is what `-Wcomment` warns about (C11
/// §6.4.9: comments do not nest), and `??` could begin a trigraph (C11 §5.2.1.1; `??/` at a
/// line's end splices lines, which `-Wtrigraphs` warns about). Each gets a space.
fn comment_safe(line: &str) -> String {
    line.replace("*/", "* /")
        .replace("/*", "/ *")
        .replace("??", "? ?")
}

/// A double as a C constant that converts back to the same bits (17 significant digits).
fn c_double(v: f64) -> String {
    format!("{v:.16e}")
}

/// C header writer (see the module docs). Needs the sample count ([`SinkSpec::frames`]),
/// which the length macro and the array's size state; writing more samples than announced,
/// or finishing with fewer, is an error.
#[derive(Debug)]
pub struct CHeaderSink<W: Write> {
    out: Buffered<W>,
    scaler: Scaler,
    /// Samples announced: frames × channels.
    samples: u64,
    /// Values written on the current line.
    column: usize,
}

impl<W: Write> CHeaderSink<W> {
    /// Validates `spec` (see [`SinkSpec::validate`]) and prepares everything before the
    /// first value; nothing is written to `out` until the first `write` or `finish`.
    pub fn new(spec: &SinkSpec, out: W) -> Result<CHeaderSink<W>> {
        spec.validate()?;
        if spec.format != Format::C {
            return Err(Error::Unsupported(format!(
                "a C header writer was asked for {} output",
                spec.format
            )));
        }
        let frames = spec.frames.expect("validated");
        let samples = spec.announced_samples()?;
        if samples == 0 {
            // A zero-length array is not C.
            return Err(Error::Unsupported(
                "a C array needs at least one value; ask for at least one sample".to_string(),
            ));
        }
        let mut out = Buffered::new(out, "writing the C header");
        out.buf.extend_from_slice(preamble(spec, frames).as_bytes());
        Ok(CHeaderSink {
            out,
            scaler: Scaler::new(spec),
            samples,
            column: 0,
        })
    }

    fn count_error(&self, got: u64) -> Error {
        Error::io(
            "writing the C header",
            std::io::Error::new(
                std::io::ErrorKind::InvalidInput,
                format!(
                    "the C array was declared with {} values but {got} were given; the header \
                     would be inconsistent",
                    self.samples
                ),
            ),
        )
    }

    /// Appends one value as C source text.
    fn push(&mut self, x: f64) {
        // Writing into a Vec<u8> cannot fail.
        let buf = &mut self.out.buf;
        buf.extend_from_slice(if self.column == 0 { b"    " } else { b" " });
        let _ = match self.scaler.sample_format {
            _ if self.scaler.adc.is_some() => write!(buf, "{},", self.scaler.adc_code(x)),
            SampleFormat::F32 => write!(buf, "{:.8e}f,", self.scaler.f32_value(x)),
            SampleFormat::F64 => write!(buf, "{},", c_double(self.scaler.digital(x))),
            SampleFormat::I16 | SampleFormat::I24 | SampleFormat::I32 => {
                write!(buf, "{},", self.scaler.code(x))
            }
        };
        self.column += 1;
        if self.column == PER_LINE {
            buf.push(b'\n');
            self.column = 0;
        }
    }
}

/// Everything before the first value: the comment, include guard, `<stdint.h>`, the macros
/// and the array's declaration up to `{`.
fn preamble(spec: &SinkSpec, frames: u64) -> String {
    let name = spec.name.clone().unwrap_or_else(|| "noise".to_string());
    let upper = name.to_ascii_uppercase();
    let unit = spec.unit.symbol();
    let sf = spec.sample_format;
    let mut s = String::new();
    s += &format!(
        "/* noisewright {}: noise samples as a C array\n",
        env!("CARGO_PKG_VERSION")
    );
    for line in spec.provenance.iter().flat_map(|l| l.lines()) {
        s += &format!(" * {}\n", comment_safe(line));
    }
    let stored = match &spec.adc {
        Some(a) => format!("{}-bit {} ADC codes", a.bits(), a.coding().tag()),
        None => sf.to_string(),
    };
    s += &format!(
        " * {frames} frames x {} channel(s) at {}, {stored} stored as {}\n",
        spec.channels,
        format_quantity(spec.sample_rate_hz, "Hz"),
        c_spec_type(spec)
    );
    let (full_scale, scale_note) = match (spec.full_scale, sf.full_scale_code()) {
        (Some(fs), Some(code)) => (
            fs,
            format!(
                "digital 1.0 = code {code} = {}; one code = {}",
                format_quantity(fs, unit),
                format_quantity(fs / f64::from(code), unit)
            ),
        ),
        (Some(fs), None) => (fs, format!("digital 1.0 = {}", format_quantity(fs, unit))),
        (None, _) => (1.0, format!("values are physical, in {unit}")),
    };
    let scale_note = match &spec.adc {
        Some(a) => format!(
            "code c stands for {upper}_CODE_ZERO_LEVEL + c * {upper}_LSB ({} + c * {} over \
             the range {} .. {}; codes {} .. {})",
            format_quantity(a.level(0), unit),
            format_quantity(a.lsb(), unit),
            format_quantity(a.lo(), unit),
            format_quantity(a.hi(), unit),
            a.code_range().0,
            a.code_range().1
        ),
        None => scale_note,
    };
    s += &format!(" * scale: {}\n", comment_safe(&scale_note));
    if spec.adc.is_some() {
        s += " * Before feeding these codes to a DAC, firmware or a rig, check the range against\n";
        s += " * the converter's reference and input limits and what follows it.\n */\n";
    } else {
        s += " * Before sending these values to a DAC or amplifier, check the full scale against\n";
        s += " * the device's range; at high levels noise can damage hearing and speakers.\n */\n";
    }
    s += &format!("#ifndef {upper}_H\n#define {upper}_H\n\n#include <stdint.h>\n\n");
    s += &format!("#define {upper}_LENGTH {frames} /* frames */\n");
    s += &format!("#define {upper}_CHANNELS {}\n", spec.channels);
    let rate = spec.sample_rate_hz;
    let rate_text = if rate.fract() == 0.0 && rate < 9e15 {
        format!("{}", rate as u64)
    } else {
        c_double(rate)
    };
    s += &format!("#define {upper}_SAMPLE_RATE_HZ {rate_text}\n");
    let what = match (spec.full_scale, sf.full_scale_code()) {
        (None, _) => "value 1.0 (physical values)".to_string(),
        (Some(_), Some(code)) => format!("digital 1.0 (code {code})"),
        (Some(_), None) => "digital 1.0".to_string(),
    };
    match &spec.adc {
        Some(a) => {
            s += &format!("#define {upper}_BITS {}\n", a.bits());
            s += &format!(
                "#define {upper}_LSB {} /* {unit}: one code step */\n",
                c_double(a.lsb())
            );
            s += &format!(
                "#define {upper}_CODE_ZERO_LEVEL {} /* {unit}: level of code 0 */\n\n",
                c_double(a.level(0))
            );
        }
        None => {
            s += &format!(
                "#define {upper}_FULL_SCALE {} /* {unit}: physical value of {what} */\n\n",
                c_double(full_scale)
            );
        }
    }
    s += &format!(
        "static const {} {name}[{upper}_LENGTH * {upper}_CHANNELS] = {{\n",
        c_spec_type(spec)
    );
    s
}

impl<W: Write + Send> Sink for CHeaderSink<W> {
    fn write(&mut self, samples: &[f64]) -> Result<()> {
        self.out.ensure_open()?;
        let after = self.scaler.report.samples + samples.len() as u64;
        if after > self.samples {
            return Err(self.count_error(after));
        }
        self.scaler.check_finite(samples)?;
        for chunk in samples.chunks(CHUNK_SAMPLES) {
            for &x in chunk {
                self.push(x);
            }
            self.scaler.report.samples += chunk.len() as u64;
            self.out.maybe_flush()?;
        }
        Ok(())
    }

    fn finish(&mut self) -> Result<SinkReport> {
        self.out.ensure_open()?;
        let done = self.scaler.report.samples;
        if done != self.samples {
            self.out.finished = true;
            return Err(self.count_error(done));
        }
        if self.column != 0 {
            self.out.buf.push(b'\n');
        }
        self.out.buf.extend_from_slice(b"};\n\n#endif\n");
        self.out.close()?;
        Ok(self.scaler.report)
    }
}

#[cfg(test)]
mod tests {
    use super::super::test_util::*;
    use super::*;

    fn header(sf: SampleFormat, full_scale: Option<f64>, x: &[f64]) -> String {
        let mut s = spec(Format::C, sf, full_scale, Some(x.len() as u64));
        s.name = Some("hiss".into());
        s.provenance = vec!["profile: test */ hiss (t.toml)".into(), "seed: 7".into()];
        String::from_utf8(render(&s, x).unwrap().0).unwrap()
    }

    #[test]
    fn the_header_declares_macros_and_the_array() {
        let h = header(SampleFormat::I16, Some(2.0), &[0.5, -1.0, 3.0]);
        assert!(h.starts_with("/* noisewright "), "{h}");
        assert!(h.contains(" * profile: test * / hiss (t.toml)\n"), "{h}");
        assert!(h.contains(" * seed: 7\n"));
        assert!(h.contains("#include <stdint.h>\n"));
        assert!(h.contains("#define HISS_LENGTH 3 /* frames */\n"));
        assert!(h.contains("#define HISS_CHANNELS 1\n"));
        assert!(h.contains("#define HISS_SAMPLE_RATE_HZ 48000\n"));
        assert!(
            h.contains("#define HISS_FULL_SCALE 2.0000000000000000e0 /* V: physical value of digital 1.0 (code 32767) */"),
            "{h}"
        );
        assert!(h.contains("static const int16_t hiss[HISS_LENGTH * HISS_CHANNELS] = {\n"));
        // 0.5/2 · 32767 → 8192 (half away from zero); −1/2 → −16384; 3 V clips to 32767.
        assert!(
            h.contains("    8192, -16384, 32767,\n};\n\n#endif\n"),
            "{h}"
        );
        // Only one comment closes: the provenance could not end it early.
        assert_eq!(h.matches("*/").count(), 3, "{h}");
    }

    #[test]
    fn floats_print_with_enough_digits_to_round_trip() {
        let x = [1e-7, -0.1, 1.0 / 3.0, 1e-40, 0.0];
        let h = header(SampleFormat::F32, None, &x);
        let body = &h[h.find("= {").unwrap() + 3..h.find("};").unwrap()];
        let vals: Vec<&str> = body
            .split(',')
            .map(str::trim)
            .filter(|t| !t.is_empty())
            .collect();
        assert_eq!(vals.len(), x.len());
        for (t, v) in vals.iter().zip(x) {
            let t = t.strip_suffix('f').expect("an f suffix");
            assert!(t.contains('e'), "{t}");
            assert_eq!(
                t.parse::<f32>().unwrap().to_bits(),
                (v as f32).to_bits(),
                "{t}"
            );
        }
        assert!(h.contains("values are physical, in V"));
        let h = header(SampleFormat::F64, None, &x);
        assert!(h.contains("static const double hiss["));
        let body = &h[h.find("= {").unwrap() + 3..h.find("};").unwrap()];
        for (t, v) in body
            .split(',')
            .map(str::trim)
            .filter(|t| !t.is_empty())
            .zip(x)
        {
            assert_eq!(t.parse::<f64>().unwrap().to_bits(), v.to_bits(), "{t}");
        }
    }

    #[test]
    fn c_types_follow_the_sample_format() {
        let got: Vec<&str> = SampleFormat::ALL.iter().map(|s| c_type(*s)).collect();
        assert_eq!(got, ["float", "double", "int16_t", "int32_t", "int32_t"]);
    }

    #[test]
    fn names_are_checked_and_derived() {
        for ok in ["noise", "mic_preamp", "_x", "Table2"] {
            assert!(validate_array_name(ok).is_ok(), "{ok}");
        }
        for bad in [
            "",
            "2k",
            "mic-preamp",
            "static",
            "__x",
            "_X",
            "size_t",
            "INT8_MAX",
            "a b",
        ] {
            let e = validate_array_name(bad).unwrap_err();
            assert!(e.cli_text().contains("--name"), "{bad}: {e}");
            assert_eq!(e.exit_code(), 2);
        }
        assert_eq!(default_array_name("mic-preamp"), "mic_preamp");
        assert_eq!(default_array_name("2k"), "noise_2k");
        assert_eq!(default_array_name("Static"), "static_data");
        assert_eq!(default_array_name("--"), "noise");
        assert_eq!(default_array_name("ünï"), "n_");
        assert!(validate_array_name("interval").is_ok());
        let mut s = spec(Format::C, SampleFormat::F32, None, Some(1));
        s.name = Some("for".into());
        assert!(super::super::open_sink(&s, Vec::new()).is_err());
    }

    #[test]
    fn an_empty_array_is_refused() {
        let s = spec(Format::C, SampleFormat::F32, Some(1.0), Some(0));
        let e = super::super::open_sink(&s, Vec::new()).err().unwrap();
        assert!(e.to_string().contains("at least one"), "{e}");
    }

    /// Two channels: the macros say so and the frames are interleaved rows.
    #[test]
    fn two_channels_are_declared_and_interleaved() {
        let mut s = spec(Format::C, SampleFormat::I16, Some(1.0), Some(2));
        s.channels = 2;
        let h = String::from_utf8(render(&s, &[1.0, -1.0, 0.0, 0.5]).unwrap().0).unwrap();
        assert!(h.contains("#define NOISE_LENGTH 2 /* frames */\n#define NOISE_CHANNELS 2\n"));
        assert!(h.contains("    32767, -32767, 0, 16384,\n};"), "{h}");
    }
}
