//! Writers behind one [`Sink`] trait: WAV (RF64 past 4 GiB), CSV, raw, numpy `.npy`, C
//! header arrays; the manifest.
//!
//! Engines hand a sink blocks of **physical** samples (the profile's [`Unit`], volts or
//! amperes). The sink scales them to digital units, clips, quantises and encodes them; the
//! engine never knows the format. Every writer works on any [`std::io::Write`] (a file, a
//! pipe, stdout, a `Vec<u8>`); none needs `Seek`, so WAV needs the total sample count up front
//! ([`SinkSpec::frames`]).
//!
//! # Scaling and quantisation
//!
//! * `full_scale` (in [`Unit`]) is the physical value mapped to digital 1.0. A sample `x`
//!   becomes `d = x / full_scale`. With no full scale, float formats store `x` itself.
//! * Clipping: `|d| > 1.0` is clipped to ±1.0 and counted in [`SinkReport::clipped`]. This
//!   applies to float formats too when a full scale is given (float WAV is nominally ±1.0,
//!   Microsoft RIFF/WAVE Rev. 3, REFERENCES §10).
//! * Integer codes: `code = round(d · (2^(b−1) − 1))`, rounding half away from zero (mid-tread:
//!   0.0 is a code). So digital ±1.0 ↔ ±(2^(b−1) − 1), e.g. ±32767 for i16; the range is
//!   symmetric and the most negative code −2^(b−1) is never written. One LSB is
//!   `full_scale / (2^(b−1) − 1)`, which differs from the `FSR/2^b` of IEEE Std 1241 (REFERENCES
//!   §9) by the factor `2^b/(2^b − 2)` (3·10⁻⁵ for 16 bits). Common practice; chosen so
//!   clipping is exactly `|d| > 1.0` for every format.
//! * ADC codes: with [`SinkSpec::adc`] every writer stores the codes of that ideal converter
//!   instead ([`crate::io::adc`]: offset binary or two's complement over a physical range, in the
//!   smallest u8/u16/u32 or i8/i16/i32 container); `full_scale` is then `None` and
//!   `sample_format` is not used. Clipping is a sample outside the range, counted the same way.
//! * Non-finite samples (NaN, ±∞) are refused with an error before any of the block is
//!   encoded.
//!
//! When the output can reach hardware (a DAC, an amplifier, a bench source), check the
//! full scale against the device's input range before playing it: a file at digital full
//! scale drives the device to its maximum output.
//!
//! [`Unit`]: crate::profile::Unit

mod c_header;
mod csv;
mod npy;
mod raw;
mod wav;

pub use c_header::{CHeaderSink, c_spec_type, c_type, default_array_name, validate_array_name};
pub use csv::{CsvSink, source_column_names};
pub use npy::{NpySink, npy_descr, npy_header, npy_shape, npy_spec_descr};
pub use raw::RawSink;
pub use wav::{
    WavContainer, WavPlan, WavSink, check_wav_size, wav_bytes, wav_header, wav_info_of,
    wav_max_frames, wav_plan,
};

use std::fmt;
use std::io::{self, Write};
use std::str::FromStr;

use serde::Serialize;

use crate::error::{Error, Result, Setting};
use crate::io::adc::{Adc, Container, Quantiser};
use crate::profile::Unit;

/// Samples encoded per inner loop; keeps the byte buffer near [`FLUSH_BYTES`].
const CHUNK_SAMPLES: usize = 16 * 1024;
/// The byte buffer is handed to `write_all` once it holds at least this much (64 KiB).
///
/// A `BufWriter` under a sink should have this capacity: writes at least as large as its
/// capacity go straight through, so the bytes are not copied a second time.
pub const FLUSH_BYTES: usize = 64 * 1024;

/// Output container.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, serde::Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Format {
    /// RIFF/WAVE, interleaved frames, with a header written first (needs the total sample
    /// count).
    Wav,
    /// Text: a header line, then `time,value` per sample (`time,ch0,ch1,…` per frame).
    Csv,
    /// Headerless little-endian samples.
    Raw,
    /// numpy's `.npy` array file (NEP 1 / `numpy.lib.format`): a header, then the samples.
    Npy,
    /// A C header (`.h`) holding a `static const` array and macros for its length and scale.
    C,
}

impl Format {
    /// The format for a file extension (with or without the dot, any case): `wav`; `csv`;
    /// `raw`, `bin`, `f32`, `f64`, `i16`, `i24`, `i32` and the ADC code containers `u8`,
    /// `u16`, `u32`, `i8` → [`Format::Raw`]; `npy`; `h` → [`Format::C`]. `None` otherwise.
    pub fn from_extension(ext: &str) -> Option<Format> {
        let e = ext.strip_prefix('.').unwrap_or(ext).to_ascii_lowercase();
        match e.as_str() {
            "wav" => Some(Format::Wav),
            "csv" => Some(Format::Csv),
            "raw" | "bin" | "f32" | "f64" | "i16" | "i24" | "i32" | "u8" | "u16" | "u32" | "i8" => {
                Some(Format::Raw)
            }
            "npy" => Some(Format::Npy),
            "h" => Some(Format::C),
            _ => None,
        }
    }

    /// Every format, in a fixed order.
    pub const ALL: [Format; 5] = [
        Format::Wav,
        Format::Csv,
        Format::Raw,
        Format::Npy,
        Format::C,
    ];

    /// The format's name as accepted by [`FromStr`]: `"wav"`, `"csv"`, `"raw"`, `"npy"` or
    /// `"c"`.
    pub fn name(self) -> &'static str {
        match self {
            Format::Wav => "wav",
            Format::Csv => "csv",
            Format::Raw => "raw",
            Format::Npy => "npy",
            Format::C => "c",
        }
    }

    /// True for the formats whose header states the sample count, so it must be known
    /// before the first sample ([`SinkSpec::frames`]).
    pub fn needs_frames(self) -> bool {
        matches!(self, Format::Wav | Format::Npy | Format::C)
    }
}

impl fmt::Display for Format {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

impl FromStr for Format {
    type Err = Error;

    /// Parses `wav`, `csv`, `raw`, `npy` or `c` (any case).
    fn from_str(s: &str) -> Result<Format> {
        let l = s.to_ascii_lowercase();
        Format::ALL
            .into_iter()
            .find(|f| f.name() == l)
            .ok_or_else(|| {
                Error::setting(
                    Setting::Format,
                    format!("unknown format \"{s}\"; expected wav, csv, raw, npy or c"),
                )
            })
    }
}

/// How one sample is stored.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum SampleFormat {
    /// IEEE 754 binary32, 4 bytes.
    F32,
    /// IEEE 754 binary64, 8 bytes (raw and CSV only).
    F64,
    /// Signed 16-bit integer code, 2 bytes.
    I16,
    /// Signed 24-bit integer code, 3 bytes packed little-endian.
    I24,
    /// Signed 32-bit integer code, 4 bytes.
    I32,
}

impl SampleFormat {
    /// Every sample format, in a fixed order.
    pub const ALL: [SampleFormat; 5] = [
        SampleFormat::F32,
        SampleFormat::F64,
        SampleFormat::I16,
        SampleFormat::I24,
        SampleFormat::I32,
    ];

    /// Bytes per stored sample: 4, 8, 2, 3, 4.
    pub fn bytes(self) -> usize {
        match self {
            SampleFormat::F32 => 4,
            SampleFormat::F64 => 8,
            SampleFormat::I16 => 2,
            SampleFormat::I24 => 3,
            SampleFormat::I32 => 4,
        }
    }

    /// True for the integer (PCM code) formats.
    pub fn is_integer(self) -> bool {
        matches!(
            self,
            SampleFormat::I16 | SampleFormat::I24 | SampleFormat::I32
        )
    }

    /// The name as accepted by [`FromStr`]: `"f32"`, `"f64"`, `"i16"`, `"i24"`, `"i32"`.
    pub fn name(self) -> &'static str {
        match self {
            SampleFormat::F32 => "f32",
            SampleFormat::F64 => "f64",
            SampleFormat::I16 => "i16",
            SampleFormat::I24 => "i24",
            SampleFormat::I32 => "i32",
        }
    }

    /// The integer code of digital +1.0, `2^(b−1) − 1` (32767 for i16); `None` for floats.
    /// Digital −1.0 is its negative (see the module docs).
    pub fn full_scale_code(self) -> Option<i32> {
        match self {
            SampleFormat::I16 => Some(i16::MAX as i32),
            SampleFormat::I24 => Some((1 << 23) - 1),
            SampleFormat::I32 => Some(i32::MAX),
            SampleFormat::F32 | SampleFormat::F64 => None,
        }
    }

    /// One LSB of this integer format in physical units (the unit of `full_scale`, the value
    /// of digital 1.0): `full_scale / (2^(b−1) − 1)`, the step between codes as the writers
    /// round; `None` for floats. The one definition of a file's LSB in the crate.
    pub fn lsb(self, full_scale: f64) -> Option<f64> {
        self.full_scale_code().map(|c| full_scale / f64::from(c))
    }

    /// The sample format named by a raw file extension (`f32`, `f64`, `i16`, `i24`, `i32`,
    /// with or without the dot, any case); `None` for any other extension.
    pub fn from_extension(ext: &str) -> Option<SampleFormat> {
        let e = ext.strip_prefix('.').unwrap_or(ext);
        e.parse().ok()
    }
}

impl fmt::Display for SampleFormat {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

impl FromStr for SampleFormat {
    type Err = Error;

    /// Parses `f32`, `f64`, `i16`, `i24` or `i32` (any case).
    fn from_str(s: &str) -> Result<SampleFormat> {
        let l = s.to_ascii_lowercase();
        SampleFormat::ALL
            .into_iter()
            .find(|f| f.name() == l)
            .ok_or_else(|| {
                Error::setting(
                    Setting::SampleFormat,
                    format!("unknown sample format \"{s}\"; expected f32, f64, i16, i24 or i32"),
                )
            })
    }
}

/// Everything a sink needs to know before the first sample.
#[derive(Debug, Clone, PartialEq)]
pub struct SinkSpec {
    /// Output container.
    pub format: Format,
    /// How each sample is stored (for CSV: only matters with a full scale, see [`CsvSink`]).
    pub sample_format: SampleFormat,
    /// Sample rate in samples per second (Hz), e.g. 48000. WAV needs a whole number.
    pub sample_rate_hz: f64,
    /// The physical value (in `unit`) mapped to digital 1.0, e.g. 1.0 for ±1 V. `None` writes
    /// physical values; allowed only for float raw and CSV output.
    pub full_scale: Option<f64>,
    /// Total number of frames (one sample per channel) when known in advance. WAV requires
    /// it: its header is written first and states the data size.
    pub frames: Option<u64>,
    /// Channels per frame (1 = mono). [`Sink::write`] takes frames interleaved: channel 0 of
    /// frame 0, channel 1 of frame 0, …, so its slice length is a multiple of this.
    pub channels: u16,
    /// The physical unit of the samples handed to [`Sink::write`].
    pub unit: Unit,
    /// Index of the first frame in the whole run (0 unless the file is a segment that starts
    /// later): CSV's time column starts at `start_frame / sample_rate_hz` seconds.
    pub start_frame: u64,
    /// Store the integer codes of this ideal converter instead of scaled samples (see
    /// [`crate::io::adc`]); needs `full_scale: None`, ignores `sample_format`, not for WAV.
    pub adc: Option<Adc>,
    /// The identifier of the data, for formats that name it (the C array; its macros are the
    /// name in capitals). `None`: [`default_array_name`] of nothing, `noise`.
    pub name: Option<String>,
    /// Where the data came from (profile, seed, version), one line each, for formats that
    /// can carry comments (the C header writes them in its leading comment).
    pub provenance: Vec<String>,
    /// The name of the profile the samples come from, if it has one: WAV writes it in its
    /// INFO comment ([`crate::io::wav_info`]).
    pub profile_name: Option<String>,
    /// The run's random seed, if any: WAV writes it in its INFO comment.
    pub seed: Option<u64>,
}

impl SinkSpec {
    /// Values the writer will be handed in all: frames × channels. For writers whose header
    /// states the length (npy, C); call after [`SinkSpec::validate`], which requires `frames`.
    pub fn announced_samples(&self) -> Result<u64> {
        let frames = self.frames.ok_or_else(|| {
            Error::Unsupported(format!(
                "{} output states its length first: give \u{1}samples\u{1} or \u{1}duration\u{1}",
                self.format
            ))
        })?;
        frames.checked_mul(u64::from(self.channels)).ok_or_else(|| {
            Error::Unsupported(format!(
                "{frames} frames of {} channels are more samples than 2^64",
                self.channels
            ))
        })
    }

    /// Checks that the spec can be written at all, before any output: a positive sample rate,
    /// a positive finite full scale where one is needed, and the format's own limits (for
    /// WAV: no f64, a whole sample rate, a known sample count, the 4 GiB size limit).
    pub fn validate(&self) -> Result<()> {
        if !(self.sample_rate_hz.is_finite() && self.sample_rate_hz > 0.0) {
            return Err(Error::setting(
                Setting::Rate,
                format!(
                    "sample rate {} Hz must be a positive number of samples per second",
                    self.sample_rate_hz
                ),
            ));
        }
        if self.adc.is_some() {
            if let Some(fs) = self.full_scale {
                return Err(Error::setting(
                    Setting::FullScale,
                    format!(
                        "ADC codes (\u{1}bits\u{1}) are scaled by their \u{1}range\u{1}; a full scale ({fs} {}) \
                         cannot apply as well",
                        self.unit.symbol()
                    ),
                ));
            }
            if self.format == Format::Wav {
                return Err(Error::setting(
                    Setting::Bits,
                    "WAV cannot carry ADC codes as they are (WAV PCM is left-justified, signed \
                     audio at full scale); write CSV (.csv), raw (.raw, .bin, .u16, .i16, …), .npy \
                     or a C header (.h)",
                ));
            }
        }
        match self.full_scale {
            _ if self.adc.is_some() => {}
            Some(fs) if !(fs.is_finite() && fs > 0.0) => {
                return Err(Error::setting(
                    Setting::FullScale,
                    format!(
                        "full scale {fs} {} must be a positive physical value (the value of digital 1.0)",
                        self.unit.symbol()
                    ),
                ));
            }
            Some(_) => {}
            None => {
                if self.format == Format::Wav || self.sample_format.is_integer() {
                    let what = if self.sample_format.is_integer() {
                        format!("{} output stores integer codes", self.sample_format)
                    } else {
                        "WAV output stores digital values (float WAV is nominally ±1.0)".to_string()
                    };
                    return Err(Error::setting(
                        Setting::FullScale,
                        format!(
                            "{what} and needs a full scale: the physical value in {} that maps \
                             to digital 1.0 (only float raw or CSV output can hold physical values)",
                            self.unit.symbol()
                        ),
                    ));
                }
            }
        }
        if self.channels == 0 {
            return Err(Error::Unsupported(
                "channels: expected at least 1 channel".into(),
            ));
        }
        match self.format {
            Format::Wav => wav::validate(self)?,
            Format::Npy | Format::C => {
                if self.frames.is_none() {
                    return Err(Error::Unsupported(format!(
                        "{} output states its length in its header, so the sample count must \
                         be known before the first sample; give a duration (not inf) or \
                         \u{1}samples\u{1}",
                        self.format
                    )));
                }
                if self.format == Format::C {
                    validate_array_name(self.name.as_deref().unwrap_or("noise"))?;
                }
            }
            Format::Csv | Format::Raw => {}
        }
        Ok(())
    }
}

/// What a sink wrote, returned by [`Sink::finish`].
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct SinkReport {
    /// Samples written, counting every channel (frames × channels).
    pub samples: u64,
    /// Samples (of any channel) whose digital value exceeded ±1.0 and were clipped (0 without a full scale,
    /// except f32 values beyond the f32 range).
    pub clipped: u64,
    /// Largest |sample| seen, in physical units (before scaling and clipping); 0 if none.
    pub peak_abs: f64,
}

/// A writer of physical samples in one output format.
///
/// Call [`write`](Sink::write) with consecutive blocks, then [`finish`](Sink::finish) exactly
/// once. Output is buffered: dropping a sink without `finish` loses the buffered tail.
/// Sinks are `Send`, so that another thread of the pool can encode and write while the engine
/// makes the next block.
pub trait Sink: Send {
    /// Scales, clips, quantises and writes a block of physical samples (in the spec's unit).
    fn write(&mut self, samples: &[f64]) -> Result<()>;
    /// Writes what is buffered (and any trailing pad), flushes the writer and reports.
    fn finish(&mut self) -> Result<SinkReport>;
    /// Writes a block of physical totals with the parts they are made of beside them, one
    /// slice per source, each as long as `total` (only a CSV writer made with
    /// [`CsvSink::with_sources`] has such columns; every other writer refuses).
    fn write_sources(&mut self, total: &[f64], sources: &[&[f64]]) -> Result<()> {
        let _ = (total, sources);
        Err(Error::Unsupported(
            "per-source columns need CSV output (\u{1}columns\u{1} sources with a .csv file)"
                .into(),
        ))
    }
}

/// Builds the sink for `spec` over `out`. Validates the spec first ([`SinkSpec::validate`]);
/// nothing is written to `out` until the first [`Sink::write`] or [`Sink::finish`].
pub fn open_sink<'a, W: Write + Send + 'a>(spec: &SinkSpec, out: W) -> Result<Box<dyn Sink + 'a>> {
    Ok(match spec.format {
        Format::Wav => Box::new(WavSink::new(spec, out)?),
        Format::Csv => Box::new(CsvSink::new(spec, out)?),
        Format::Raw => Box::new(RawSink::new(spec, out)?),
        Format::Npy => Box::new(NpySink::new(spec, out)?),
        Format::C => Box::new(CHeaderSink::new(spec, out)?),
    })
}

/// Scaling, clipping and the report shared by all writers.
#[derive(Debug, Clone)]
struct Scaler {
    sample_format: SampleFormat,
    /// The ADC's quantiser and container, when codes are written (then `gain` is `None`).
    adc: Option<(Quantiser, Container)>,
    /// `1 / full_scale`, or `None` for physical output.
    gain: Option<f64>,
    /// `2^(b−1) − 1` as f64 for integer formats, 1.0 for floats.
    code_max: f64,
    report: SinkReport,
}

impl Scaler {
    fn new(spec: &SinkSpec) -> Scaler {
        Scaler {
            sample_format: spec.sample_format,
            adc: spec.adc.as_ref().map(|a| (a.quantiser(), a.container())),
            gain: spec.full_scale.map(|fs| 1.0 / fs),
            code_max: spec.sample_format.full_scale_code().map_or(1.0, f64::from),
            report: SinkReport::default(),
        }
    }

    /// Refuses a block holding a non-finite value; call before encoding any of it.
    fn check_finite(&self, samples: &[f64]) -> Result<()> {
        if crate::wide::avx2(
            #[inline(always)]
            || all_finite(samples),
        ) {
            return Ok(());
        }
        match samples.iter().position(|x| !x.is_finite()) {
            None => Ok(()),
            Some(i) => Err(Error::io(
                "writing samples",
                io::Error::new(
                    io::ErrorKind::InvalidData,
                    format!(
                        "sample {} is {}; only finite values can be written",
                        self.report.samples + i as u64,
                        samples[i]
                    ),
                ),
            )),
        }
    }

    /// The value to store for physical `x`: digital (clipped to ±1) or, with no full scale,
    /// `x` itself. Updates peak and clip counts.
    #[inline]
    fn digital(&mut self, x: f64) -> f64 {
        let a = x.abs();
        if a > self.report.peak_abs {
            self.report.peak_abs = a;
        }
        match self.gain {
            None => x,
            Some(g) => {
                let d = x * g;
                if d > 1.0 {
                    self.report.clipped += 1;
                    1.0
                } else if d < -1.0 {
                    self.report.clipped += 1;
                    -1.0
                } else {
                    d
                }
            }
        }
    }

    /// The integer code for physical `x` (integer formats; a full scale is guaranteed).
    #[inline]
    fn code(&mut self, x: f64) -> i32 {
        // |digital| ≤ 1, so the product is within ±code_max and the cast cannot saturate.
        (self.digital(x) * self.code_max).round() as i32
    }

    /// The ADC code for physical `x` (only with an ADC); counts the peak and clipping.
    #[inline]
    fn adc_code(&mut self, x: f64) -> i64 {
        let a = x.abs();
        if a > self.report.peak_abs {
            self.report.peak_abs = a;
        }
        let (q, _) = self.adc.as_mut().expect("an ADC spec");
        let (code, clipped) = q.code(x);
        if clipped {
            self.report.clipped += 1;
        }
        code
    }

    /// f32 value for physical `x`; beyond the f32 range (only possible without a full scale)
    /// it is clipped to ±f32::MAX and counted.
    #[inline]
    fn f32_value(&mut self, x: f64) -> f32 {
        let v = self.digital(x) as f32;
        if v.is_infinite() {
            self.report.clipped += 1;
            f32::MAX.copysign(v)
        } else {
            v
        }
    }

    /// Appends the little-endian encoding of `samples` to `buf`.
    fn encode_le(&mut self, samples: &[f64], buf: &mut Vec<u8>) {
        if let Some((_, container)) = self.adc {
            buf.reserve(samples.len() * container.bytes());
            for &x in samples {
                let code = self.adc_code(x);
                container.put_le(code, buf);
            }
            self.report.samples += samples.len() as u64;
            return;
        }
        let m = self.code_max;
        match self.sample_format {
            // With a full scale the digital value is within ±1, so f32 cannot overflow.
            SampleFormat::F32 if self.gain.is_some() => {
                self.encode_each(samples, buf, |d| ((d as f32).to_le_bytes(), false))
            }
            SampleFormat::F32 => self.encode_each(samples, buf, |d| {
                let v = d as f32;
                if v.is_infinite() {
                    (f32::MAX.copysign(v).to_le_bytes(), true)
                } else {
                    (v.to_le_bytes(), false)
                }
            }),
            SampleFormat::F64 => self.encode_each(samples, buf, |d| (d.to_le_bytes(), false)),
            SampleFormat::I16 => self.encode_each(samples, buf, |d| {
                (((d * m).round() as i32 as i16).to_le_bytes(), false)
            }),
            SampleFormat::I24 => self.encode_each(samples, buf, |d| {
                let b = ((d * m).round() as i32).to_le_bytes();
                ([b[0], b[1], b[2]], false)
            }),
            SampleFormat::I32 => self.encode_each(samples, buf, |d| {
                (((d * m).round() as i32).to_le_bytes(), false)
            }),
        }
        self.report.samples += samples.len() as u64;
    }
}

impl Scaler {
    /// Appends `put(digital)` for every sample, where `digital` is what [`Scaler::digital`]
    /// gives, and `put` also says whether the encoding itself had to clip. Does the same
    /// arithmetic as `digital` sample by sample, but keeps the peak and the clip count in
    /// [`LANES`] independent lanes, so that the loop vectorises; both are exact (a maximum
    /// and a count), so the result does not depend on the lanes.
    #[inline(always)]
    fn encode_each<const B: usize>(
        &mut self,
        samples: &[f64],
        buf: &mut Vec<u8>,
        put: impl Fn(f64) -> ([u8; B], bool),
    ) {
        // No full scale: the value itself, never clipped here (×1 and a clamp to ±∞ are exact).
        let (gain, limit) = self.gain.map_or((1.0, f64::INFINITY), |g| (g, 1.0));
        buf.reserve(B * samples.len());
        let mut lanes = Lanes {
            peak: [0.0; LANES],
            clipped: [0; LANES],
        };
        // The same lanes either way; AVX2 only takes fewer instructions.
        crate::wide::avx2(
            #[inline(always)]
            || {
                // Each group is encoded on the stack and appended at once: the buffer is never
                // zeroed first, and its length is checked once per group.
                let mut o = [[0u8; B]; GROUP];
                for group in samples.chunks(GROUP) {
                    match <&[f64; GROUP]>::try_from(group) {
                        Ok(x) => lanes.encode_group(x, gain, limit, &put, &mut o),
                        Err(_) => {
                            // Padding with zeros changes neither the peak nor the clip count.
                            let mut x = [0.0; GROUP];
                            x[..group.len()].copy_from_slice(group);
                            lanes.encode_group(&x, gain, limit, &put, &mut o);
                        }
                    }
                    buf.extend_from_slice(&o.as_flattened()[..B * group.len()]);
                }
            },
        );
        let (peak, clipped) = (lanes.peak, lanes.clipped);
        self.report.peak_abs = peak.iter().fold(self.report.peak_abs, |a, &p| a.max(p));
        self.report.clipped += clipped.iter().sum::<u64>();
    }
}

/// The running peak and clip count of [`Scaler::encode_each`], one per lane.
struct Lanes {
    /// Largest |x| per lane, physical unit.
    peak: [f64; LANES],
    clipped: [u64; LANES],
}

impl Lanes {
    /// Encodes [`GROUP`] samples `x` into `out`, [`LANES`] at a time ([`Lanes::encode`]).
    #[inline(always)]
    fn encode_group<const B: usize>(
        &mut self,
        x: &[f64; GROUP],
        gain: f64,
        limit: f64,
        put: &impl Fn(f64) -> ([u8; B], bool),
        out: &mut [[u8; B]; GROUP],
    ) {
        for (x, o) in x.chunks_exact(LANES).zip(out.chunks_exact_mut(LANES)) {
            let x: &[f64; LANES] = x.try_into().expect("LANES samples");
            self.encode(x, gain, limit, put, o.as_flattened_mut());
        }
    }

    /// Encodes LANES samples `x` into `out` with `put`, first the digital values, the peak and
    /// the clip count, then the bytes, in loops of constant length that vectorise.
    #[inline(always)]
    fn encode<const B: usize>(
        &mut self,
        x: &[f64; LANES],
        gain: f64,
        limit: f64,
        put: &impl Fn(f64) -> ([u8; B], bool),
        out: &mut [u8],
    ) {
        assert_eq!(out.len(), B * LANES);
        let mut d = [0.0f64; LANES];
        for k in 0..LANES {
            let a = x[k].abs();
            // A comparison, not f64::max (the samples are finite), so it vectorises.
            self.peak[k] = if a > self.peak[k] { a } else { self.peak[k] };
            let v = x[k] * gain;
            self.clipped[k] += u64::from(v.abs() > limit);
            d[k] = v.clamp(-limit, limit);
        }
        for (k, o) in out.chunks_exact_mut(B).enumerate() {
            let (bytes, over) = put(d[k]);
            self.clipped[k] += u64::from(over);
            o.copy_from_slice(&bytes);
        }
    }
}

/// True when every sample is finite: `0·x` is ±0 for a finite `x` and NaN for ±∞ and NaN,
/// and a NaN stays in its lane's sum. One pass without an early exit, in [`LANES`] lanes, so
/// that it vectorises.
#[inline(always)]
fn all_finite(samples: &[f64]) -> bool {
    let mut acc = [0.0f64; LANES];
    let mut parts = samples.chunks_exact(LANES);
    for part in &mut parts {
        for j in 0..LANES {
            acc[j] += 0.0 * part[j];
        }
    }
    parts.remainder().iter().all(|x| x.is_finite()) && acc.iter().all(|&a| a == 0.0)
}

/// Samples [`Scaler::encode_each`] encodes on the stack before appending them to the buffer
/// (a multiple of [`LANES`]).
const GROUP: usize = 128;

/// Independent lanes of [`Scaler::encode_each`]'s peak and clip count (eight f64 are two
/// AVX2 registers).
const LANES: usize = 8;

/// An output writer with a reusable byte buffer, flushed in chunks of at least
/// [`FLUSH_BYTES`].
#[derive(Debug)]
struct Buffered<W: Write> {
    out: W,
    buf: Vec<u8>,
    context: &'static str,
    finished: bool,
}

impl<W: Write> Buffered<W> {
    fn new(out: W, context: &'static str) -> Buffered<W> {
        Buffered {
            out,
            buf: Vec::with_capacity(2 * FLUSH_BYTES),
            context,
            finished: false,
        }
    }

    fn ensure_open(&self) -> Result<()> {
        if self.finished {
            return Err(Error::io(
                self.context,
                io::Error::other("the sink was already finished"),
            ));
        }
        Ok(())
    }

    /// Writes the buffer out if it is large enough.
    fn maybe_flush(&mut self) -> Result<()> {
        if self.buf.len() >= FLUSH_BYTES {
            self.drain()?;
        }
        Ok(())
    }

    fn drain(&mut self) -> Result<()> {
        if !self.buf.is_empty() {
            self.out
                .write_all(&self.buf)
                .map_err(|e| Error::io(self.context, e))?;
            self.buf.clear();
        }
        Ok(())
    }

    /// Writes everything left and flushes the writer; marks the sink finished.
    fn close(&mut self) -> Result<()> {
        self.finished = true;
        self.drain()?;
        self.out.flush().map_err(|e| Error::io(self.context, e))
    }
}

#[cfg(test)]
pub(crate) mod test_util {
    //! Helpers shared by the sink tests.

    use super::*;

    /// Fixed seed for every random test input in the sink tests.
    pub const SEED: u64 = 0x5EED_0005;

    /// A spec with the given format fields, 48 kHz, volts.
    pub fn spec(
        format: Format,
        sample_format: SampleFormat,
        full_scale: Option<f64>,
        frames: Option<u64>,
    ) -> SinkSpec {
        SinkSpec {
            format,
            sample_format,
            sample_rate_hz: 48_000.0,
            full_scale,
            frames,
            channels: 1,
            start_frame: 0,
            unit: Unit::Volt,
            adc: None,
            name: None,
            provenance: Vec::new(),
            profile_name: None,
            seed: None,
        }
    }

    /// Writes `samples` in uneven blocks (to cross block boundaries) and returns bytes + report.
    pub fn render(spec: &SinkSpec, samples: &[f64]) -> Result<(Vec<u8>, SinkReport)> {
        let mut bytes = Vec::new();
        let report = {
            let mut sink = open_sink(spec, &mut bytes)?;
            let mut rest = samples;
            let mut step = 1usize;
            while !rest.is_empty() {
                let n = step.min(rest.len());
                sink.write(&rest[..n])?;
                rest = &rest[n..];
                step = step * 7 + 3;
            }
            sink.finish()?
        };
        Ok((bytes, report))
    }

    /// `n` seeded Gaussian samples with standard deviation `sigma`.
    pub fn gaussian(n: usize, sigma: f64, seed: u64) -> Vec<f64> {
        use rand_chacha::ChaCha8Rng;
        use rand_core::SeedableRng;
        use rand_distr::{Distribution, StandardNormal};
        let mut rng = ChaCha8Rng::seed_from_u64(seed);
        (0..n)
            .map(|_| {
                let z: f64 = StandardNormal.sample(&mut rng);
                sigma * z
            })
            .collect()
    }
}

#[cfg(test)]
mod tests {
    use super::test_util::*;
    use super::*;

    #[test]
    fn extensions_map_to_formats() {
        assert_eq!(Format::from_extension("wav"), Some(Format::Wav));
        assert_eq!(Format::from_extension(".WAV"), Some(Format::Wav));
        assert_eq!(Format::from_extension("csv"), Some(Format::Csv));
        for e in [
            "raw", "f32", "f64", "i16", "i24", "i32", "bin", ".I24", "u8", "u16", "u32", "i8",
        ] {
            assert_eq!(Format::from_extension(e), Some(Format::Raw), "{e}");
        }
        assert_eq!(Format::from_extension("flac"), None);
        assert_eq!(
            SampleFormat::from_extension(".i24"),
            Some(SampleFormat::I24)
        );
        assert_eq!(SampleFormat::from_extension("raw"), None);
    }

    #[test]
    fn names_parse_back() {
        for f in [Format::Wav, Format::Csv, Format::Raw] {
            assert_eq!(f.name().parse::<Format>().unwrap(), f);
        }
        for s in SampleFormat::ALL {
            assert_eq!(s.name().parse::<SampleFormat>().unwrap(), s);
            assert_eq!(
                s.to_string()
                    .to_uppercase()
                    .parse::<SampleFormat>()
                    .unwrap(),
                s
            );
        }
        let e = "mp3".parse::<Format>().unwrap_err();
        assert!(matches!(
            e,
            Error::Setting {
                setting: Setting::Format,
                ..
            }
        ));
        let e = "u8".parse::<SampleFormat>().unwrap_err();
        assert!(e.to_string().contains("i24"), "{e}");
    }

    #[test]
    fn sample_format_facts() {
        let bytes: Vec<usize> = SampleFormat::ALL.iter().map(|s| s.bytes()).collect();
        assert_eq!(bytes, [4, 8, 2, 3, 4]);
        // 2^(b-1) - 1, exact integers.
        assert_eq!(SampleFormat::I16.full_scale_code(), Some(32_767));
        assert_eq!(SampleFormat::I24.full_scale_code(), Some(8_388_607));
        assert_eq!(SampleFormat::I32.full_scale_code(), Some(2_147_483_647));
        assert_eq!(SampleFormat::F32.full_scale_code(), None);
        assert!(SampleFormat::I24.is_integer() && !SampleFormat::F64.is_integer());
    }

    #[test]
    fn integer_formats_without_full_scale_are_refused() {
        for sf in [SampleFormat::I16, SampleFormat::I24, SampleFormat::I32] {
            for f in [Format::Raw, Format::Csv, Format::Wav] {
                let e = open_sink(&spec(f, sf, None, Some(4)), Vec::new())
                    .err()
                    .unwrap();
                assert!(
                    matches!(
                        e,
                        Error::Setting {
                            setting: Setting::FullScale,
                            ..
                        }
                    ),
                    "{f} {sf}: {e}"
                );
            }
        }
        // Float WAV is digital too.
        let e = open_sink(
            &spec(Format::Wav, SampleFormat::F32, None, Some(4)),
            Vec::new(),
        )
        .err()
        .unwrap();
        assert!(e.to_string().contains("full scale"), "{e}");
        // Float raw and CSV may hold physical values.
        for f in [Format::Raw, Format::Csv] {
            assert!(open_sink(&spec(f, SampleFormat::F64, None, None), Vec::new()).is_ok());
        }
    }

    #[test]
    fn bad_rate_and_full_scale_are_refused() {
        let mut s = spec(Format::Raw, SampleFormat::F32, Some(1.0), None);
        s.sample_rate_hz = 0.0;
        assert!(matches!(
            s.validate(),
            Err(Error::Setting {
                setting: Setting::Rate,
                ..
            })
        ));
        let mut s = spec(Format::Raw, SampleFormat::F32, Some(-1.0), None);
        assert!(matches!(
            s.validate(),
            Err(Error::Setting {
                setting: Setting::FullScale,
                ..
            })
        ));
        s.full_scale = Some(f64::NAN);
        assert!(s.validate().is_err());
    }

    /// 1.5 × full scale clips and is counted; exactly ±full scale does not clip.
    #[test]
    fn clipping_is_counted_and_peak_reported() {
        let fs = 2.0;
        let x = [1.0, 3.0, -3.0, -2.0, 2.0, 0.0];
        for f in [Format::Raw, Format::Wav, Format::Csv] {
            for sf in [SampleFormat::I16, SampleFormat::I24, SampleFormat::F32] {
                let s = spec(f, sf, Some(fs), Some(x.len() as u64));
                let (_, r) = render(&s, &x).unwrap();
                assert_eq!(r.samples, 6, "{f} {sf}");
                assert_eq!(r.clipped, 2, "{f} {sf}");
                assert_eq!(r.peak_abs, 3.0, "{f} {sf}");
            }
        }
        // The clipped codes are the symmetric extremes.
        let (b, _) = render(&spec(Format::Raw, SampleFormat::I16, Some(fs), None), &x).unwrap();
        let codes: Vec<i16> = b
            .chunks_exact(2)
            .map(|c| i16::from_le_bytes([c[0], c[1]]))
            .collect();
        assert_eq!(codes, [16_384, 32_767, -32_767, -32_767, 32_767, 0]);
        // Physical output never clips.
        let (_, r) = render(&spec(Format::Raw, SampleFormat::F64, None, None), &x).unwrap();
        assert_eq!((r.clipped, r.peak_abs), (0, 3.0));
    }

    #[test]
    fn non_finite_samples_are_refused_before_encoding() {
        let mut bytes = Vec::new();
        let report = {
            let mut sink = open_sink(
                &spec(Format::Raw, SampleFormat::F32, None, None),
                &mut bytes,
            )
            .unwrap();
            sink.write(&[1.0, 2.0]).unwrap();
            let e = sink.write(&[3.0, f64::NAN]).unwrap_err();
            assert!(e.to_string().contains("sample 3 is NaN"), "{e}");
            sink.finish().unwrap()
        };
        assert_eq!(report.samples, 2);
        assert_eq!(bytes.len(), 8);
    }

    /// A non-finite value is found in every lane and in the tail, and named by its index in
    /// the whole run; the largest finite values pass.
    #[test]
    fn non_finite_samples_are_found_anywhere() {
        let s = spec(Format::Raw, SampleFormat::F64, None, None);
        for bad in [f64::NAN, f64::INFINITY, f64::NEG_INFINITY] {
            for i in [0, 5, 7, 8, 63, 64, 100, 101] {
                let mut sink = open_sink(&s, Vec::new()).unwrap();
                sink.write(&[0.5; 3]).unwrap();
                let mut x = vec![f64::MAX; 102];
                x[1] = f64::MIN;
                x[2] = -0.0;
                x[i] = bad;
                let e = sink.write(&x).unwrap_err();
                assert!(
                    e.to_string()
                        .contains(&format!("sample {} is {bad}", i + 3)),
                    "{bad} at {i}: {e}"
                );
                assert!(sink.write(&x[i + 1..]).is_ok(), "{bad} at {i}");
            }
        }
    }

    #[test]
    fn output_is_written_in_large_chunks() {
        /// Records the size of every write call.
        struct Sizes(Vec<usize>);
        impl Write for Sizes {
            fn write(&mut self, b: &[u8]) -> io::Result<usize> {
                self.0.push(b.len());
                Ok(b.len())
            }
            fn flush(&mut self) -> io::Result<()> {
                Ok(())
            }
        }
        let n = 100_000;
        let x = gaussian(n, 0.1, SEED);
        for f in [Format::Raw, Format::Csv, Format::Wav] {
            let mut sizes = Sizes(Vec::new());
            {
                let s = spec(f, SampleFormat::I16, Some(1.0), Some(n as u64));
                let mut sink = open_sink(&s, &mut sizes).unwrap();
                for block in x.chunks(100) {
                    sink.write(block).unwrap();
                }
                sink.finish().unwrap();
            }
            let (last, rest) = sizes.0.split_last().unwrap();
            assert!(*last > 0, "{f}");
            assert!(rest.iter().all(|&s| s >= FLUSH_BYTES), "{f}: {:?}", sizes.0);
        }
    }

    /// ADC codes reach raw and CSV through the one Scaler: both hold exactly the codes of the
    /// library's quantiser (dither included, blocks split unevenly), in the container the ADC
    /// names, with samples outside the range counted as clipped.
    #[test]
    fn adc_codes_reach_every_writer_alike() {
        use crate::io::adc::{Adc, Coding, Dither};
        let x = gaussian(40_000, 0.6, SEED);
        for (bits, coding, bytes) in [
            (12, Coding::Twos, 2),
            (12, Coding::Offset, 2),
            (8, Coding::Offset, 1),
            (20, Coding::Twos, 4),
        ] {
            let adc = Adc::new(bits, -1.65, 1.65, Some(coding), Dither::Tpdf)
                .unwrap()
                .with_seed(SEED);
            let mut q = adc.quantiser();
            let want: Vec<i64> = x.iter().map(|&v| q.code(v).0).collect();
            let outside = x.iter().filter(|v| v.abs() > 1.65).count() as u64;
            assert!(outside > 0, "seed {SEED}: nothing outside the range");
            let mut s = spec(Format::Raw, SampleFormat::F32, None, None);
            s.adc = Some(adc.clone());
            let (b, r) = render(&s, &x).unwrap();
            assert_eq!(b.len(), x.len() * bytes, "{bits} {coding}");
            assert_eq!((r.samples, r.clipped), (x.len() as u64, outside));
            let got: Vec<i64> = b
                .chunks_exact(bytes)
                .map(|c| {
                    let mut w = [0u8; 8];
                    w[..bytes].copy_from_slice(c);
                    let u = i64::from_le_bytes(w);
                    let sign = 1i64 << (8 * bytes - 1);
                    if coding == Coding::Twos && u & sign != 0 {
                        u - 2 * sign
                    } else {
                        u
                    }
                })
                .collect();
            assert_eq!(got, want, "raw {bits} {coding}");
            s.format = Format::Csv;
            let (b, r) = render(&s, &x).unwrap();
            assert_eq!(r.clipped, outside);
            let text = String::from_utf8(b).unwrap();
            let mut lines = text.lines();
            assert_eq!(
                lines.next(),
                Some(format!("time_s,code_{}_{bits}bit", coding.tag()).as_str())
            );
            let csv: Vec<i64> = lines
                .map(|l| l.split_once(',').unwrap().1.parse().unwrap())
                .collect();
            assert_eq!(csv, want, "csv {bits} {coding}");
        }
    }

    #[test]
    fn adc_specs_refuse_a_full_scale_and_wav() {
        use crate::io::adc::{Adc, Dither};
        let adc = Adc::new(12, 0.0, 3.3, None, Dither::None).unwrap();
        let mut s = spec(Format::Raw, SampleFormat::I16, Some(1.0), None);
        s.adc = Some(adc.clone());
        assert!(matches!(
            s.validate(),
            Err(Error::Setting {
                setting: Setting::FullScale,
                ..
            })
        ));
        let mut s = spec(Format::Wav, SampleFormat::I16, None, Some(10));
        s.adc = Some(adc);
        let e = s.validate().unwrap_err();
        assert!(
            matches!(
                e,
                Error::Setting {
                    setting: Setting::Bits,
                    ..
                }
            ),
            "{e}"
        );
        assert!(e.to_string().contains("CSV"), "{e}");
        // Integer sample formats need no full scale with an ADC.
        s.format = Format::Raw;
        assert!(s.validate().is_ok());
    }

    #[test]
    fn writing_after_finish_is_an_error() {
        let mut sink = open_sink(
            &spec(Format::Raw, SampleFormat::F32, None, None),
            Vec::new(),
        )
        .unwrap();
        sink.finish().unwrap();
        assert!(sink.write(&[0.0]).is_err());
    }
}
