//! An ideal N-bit analog-to-digital converter: physical samples become integer codes.
//!
//! # The mapping
//!
//! An [`Adc`] covers the input range `lo .. hi` (in the profile's unit, volts or amperes) with
//! `2^N` codes. One LSB is `Q = (hi − lo) / 2^N` (the `FSR/2^N` of IEEE Std 1241, REFERENCES
//! §9). The quantiser is mid-tread: a physical value `v` gets the **offset-binary** code
//!
//! ```text
//! k = clamp(floor((v − lo)/Q + ½), 0, 2^N − 1)
//! ```
//!
//! so code `k` stands for the reconstruction level `lo + k·Q` and is returned for
//! `lo + (k − ½)·Q ≤ v < lo + (k + ½)·Q` (ties round up). Code 0 stands for `lo` itself, code
//! `2^(N−1)` for the range centre `(lo + hi)/2` (a bipolar range ±A has a level at exactly
//! 0), and the top code `2^N − 1` for `hi − Q`: the top of the range is not itself a level,
//! as in a real converter whose last code transition lies 1.5 LSB below the top of its range
//! (IEEE Std 1241's ideal transition levels, from memory of the standard's wording).
//!
//! **Two's-complement** codes are the offset code minus `2^(N−1)`: code `c` stands for
//! `(lo + hi)/2 + c·Q`, from `−2^(N−1)` (level `lo`) to `2^(N−1) − 1` (level `hi − Q`). For a
//! bipolar range code 0 is 0 V. The default [`Coding`] is two's complement when the range
//! holds values of both signs (`lo < 0 < hi`), offset binary (straight binary for `0 .. hi`)
//! otherwise: what bipolar and unipolar converters usually output (common practice).
//!
//! # Clipping
//!
//! A sample outside `lo ..= hi` is clamped to the end code and counted as clipped, the same
//! rule as `|x| > full_scale` for the other integer formats. Inputs between `hi − Q/2` and
//! `hi` read the top code with an error of up to one LSB; they are inside the range and not
//! counted.
//!
//! # Dither
//!
//! [`Dither::Tpdf`] adds triangular dither of ±1 LSB peak — the sum of two independent uniform
//! values on ±½ LSB — before rounding. It makes the mean and variance of the total error
//! independent of the input; the error variance is then `Q²/4` instead of `Q²/12` (R. A.
//! Wannamaker, S. P. Lipshitz, J. Vanderkooy, "A theory of nonsubtractive dither", IEEE
//! Trans. Signal Process. 48(2), 2000 — REFERENCES §9, from memory). The random numbers come
//! from the seeded streams of [`crate::synth::WhiteStreams`] ([`Domain::Dither`], one stream
//! per [`DITHER_CHUNK`] samples, four 32-bit words per sample), so the dither of a sample
//! depends only on the seed and its absolute index: a run started later
//! ([`Adc::starting_at`]) reproduces the same codes byte for byte.
//!
//! # Added noise
//!
//! Without dither, a busy input (one that crosses many codes) sees an error uniform over ±Q/2:
//! RMS `Q/√12`, white, one-sided density `Q/√(6·fs)` (REFERENCES §9). With TPDF dither the
//! added noise is `Q²/4` in total (RMS `Q/2`, density `Q/√(2·fs)`), whatever the input.
//! [`Adc::added_noise_psd`] gives the one-sided power per hertz for SNR budgets.
//!
//! **Caution.** Codes drive real converters and firmware: check the range against the DAC's
//! or ADC's reference and input limits before playing or injecting them, start attenuated,
//! and follow your lab's practice.

use std::fmt;
use std::str::FromStr;

use rand::Rng;
use rand_chacha::ChaCha8Rng;
use serde_json::json;

use crate::error::{Error, Result, Setting};
use crate::profile::format_quantity;
use crate::synth::{Domain, WhiteStreams};

/// Samples per dither stream: sample `i` draws from stream `i / DITHER_CHUNK` at word
/// `4·(i % DITHER_CHUNK)` (the engine's chunk size).
pub const DITHER_CHUNK: u64 = 2048;

/// The most bits an [`Adc`] takes: codes must fit a 32-bit container, and `(v − lo)/Q` keeps
/// 21 bits below one LSB in an f64 at 2^32 codes.
pub const MAX_BITS: u32 = 32;

/// How codes are numbered.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Coding {
    /// Two's complement: offset code − 2^(N−1), signed, code 0 at the range centre.
    Twos,
    /// Offset binary: 0 at the bottom of the range, unsigned.
    Offset,
}

impl Coding {
    /// `"twos"` or `"offset-binary"`, as accepted by [`FromStr`].
    pub fn name(self) -> &'static str {
        match self {
            Coding::Twos => "twos",
            Coding::Offset => "offset-binary",
        }
    }
}

impl Coding {
    /// The short tag in CSV column names (`code_offset_12bit`) and C header comments:
    /// `twos` or `offset`, as files have always carried it.
    pub fn tag(self) -> &'static str {
        match self {
            Coding::Twos => "twos",
            Coding::Offset => "offset",
        }
    }
}

impl fmt::Display for Coding {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

impl FromStr for Coding {
    type Err = Error;

    /// Parses `twos` or `offset-binary` (also `offset`, its earlier spelling).
    fn from_str(s: &str) -> Result<Coding> {
        match s.trim() {
            "twos" => Ok(Coding::Twos),
            "offset-binary" | "offset" => Ok(Coding::Offset),
            _ => Err(Error::setting(
                Setting::Code,
                format!(
                    "expected twos (two's complement, signed) or offset-binary (unsigned), \
                     got {s:?}"
                ),
            )),
        }
    }
}

/// Dither added before rounding.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Dither {
    /// No dither: the error follows the input.
    None,
    /// Triangular dither of ±1 LSB peak (two uniform ±½ LSB values summed).
    Tpdf,
}

impl Dither {
    /// `"none"` or `"tpdf"`, as accepted by [`FromStr`].
    pub fn name(self) -> &'static str {
        match self {
            Dither::None => "none",
            Dither::Tpdf => "tpdf",
        }
    }
}

impl FromStr for Dither {
    type Err = Error;

    /// Parses `none` or `tpdf`.
    fn from_str(s: &str) -> Result<Dither> {
        match s.trim() {
            "none" => Ok(Dither::None),
            "tpdf" => Ok(Dither::Tpdf),
            _ => Err(Error::setting(
                Setting::Dither,
                format!("expected tpdf (triangular, ±1 LSB peak) or none, got {s:?}"),
            )),
        }
    }
}

/// The integer type that stores codes: the smallest of 8, 16 or 32 bits that holds N bits,
/// signed for two's complement, unsigned for offset binary. Codes are right-aligned
/// (LSB-justified): a 12-bit code 4095 is stored as 4095, and a two's-complement code is
/// sign-extended.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Container {
    /// Unsigned 8-bit.
    U8,
    /// Unsigned 16-bit, little-endian.
    U16,
    /// Unsigned 32-bit, little-endian.
    U32,
    /// Signed 8-bit.
    I8,
    /// Signed 16-bit, little-endian.
    I16,
    /// Signed 32-bit, little-endian.
    I32,
}

impl Container {
    /// Every container, in a fixed order.
    pub const ALL: [Container; 6] = [
        Container::U8,
        Container::U16,
        Container::U32,
        Container::I8,
        Container::I16,
        Container::I32,
    ];

    /// `"u8"`, `"u16"`, `"u32"`, `"i8"`, `"i16"` or `"i32"` (also the raw file extensions).
    pub fn name(self) -> &'static str {
        match self {
            Container::U8 => "u8",
            Container::U16 => "u16",
            Container::U32 => "u32",
            Container::I8 => "i8",
            Container::I16 => "i16",
            Container::I32 => "i32",
        }
    }

    /// Bytes per code: 1, 2 or 4.
    pub fn bytes(self) -> usize {
        match self {
            Container::U8 | Container::I8 => 1,
            Container::U16 | Container::I16 => 2,
            Container::U32 | Container::I32 => 4,
        }
    }

    /// True for the two's-complement (signed) containers.
    pub fn is_signed(self) -> bool {
        matches!(self, Container::I8 | Container::I16 | Container::I32)
    }

    /// numpy's dtype string for the container (`'|u1'`, `'<u2'`, `'<u4'`, `'|i1'`, `'<i2'`,
    /// `'<i4'`), as a `.npy` header's `descr`.
    pub fn npy_descr(self) -> &'static str {
        match self {
            Container::U8 => "|u1",
            Container::U16 => "<u2",
            Container::U32 => "<u4",
            Container::I8 => "|i1",
            Container::I16 => "<i2",
            Container::I32 => "<i4",
        }
    }

    /// The `<stdint.h>` type of the container (`uint8_t` … `int32_t`).
    pub fn c_type(self) -> &'static str {
        match self {
            Container::U8 => "uint8_t",
            Container::U16 => "uint16_t",
            Container::U32 => "uint32_t",
            Container::I8 => "int8_t",
            Container::I16 => "int16_t",
            Container::I32 => "int32_t",
        }
    }

    /// The container named by a file extension (with or without the dot, any case).
    pub fn from_extension(ext: &str) -> Option<Container> {
        let e = ext.strip_prefix('.').unwrap_or(ext).to_ascii_lowercase();
        Container::ALL.into_iter().find(|c| c.name() == e)
    }

    /// Appends the little-endian bytes of `code` (which must fit the container).
    #[inline]
    pub fn put_le(self, code: i64, buf: &mut Vec<u8>) {
        match self {
            Container::U8 => buf.push(code as u8),
            Container::I8 => buf.push(code as i8 as u8),
            Container::U16 => buf.extend_from_slice(&(code as u16).to_le_bytes()),
            Container::I16 => buf.extend_from_slice(&(code as i16).to_le_bytes()),
            Container::U32 => buf.extend_from_slice(&(code as u32).to_le_bytes()),
            Container::I32 => buf.extend_from_slice(&(code as i32).to_le_bytes()),
        }
    }
}

impl fmt::Display for Container {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

/// An ideal N-bit converter over an input range (see the module docs for the mapping).
#[derive(Debug, Clone, PartialEq)]
pub struct Adc {
    bits: u32,
    lo: f64,
    hi: f64,
    coding: Coding,
    dither: Dither,
    seed: u64,
    first_sample: u64,
}

impl Adc {
    /// A converter of `bits` (1 ..= [`MAX_BITS`]) over `lo .. hi` (in the profile's unit,
    /// finite, `lo < hi`). `coding` `None` picks the default: two's complement when
    /// `lo < 0 < hi`, offset binary otherwise. The dither seed is 0 and the first sample index
    /// 0 until [`Adc::with_seed`] and [`Adc::starting_at`] say otherwise.
    pub fn new(bits: u32, lo: f64, hi: f64, coding: Option<Coding>, dither: Dither) -> Result<Adc> {
        if !(1..=MAX_BITS).contains(&bits) {
            return Err(Error::setting(
                Setting::Bits,
                format!(
                    "expected 1 to {MAX_BITS} bits (codes are stored in 8-, 16- or 32-bit \
                     integers), got {bits}"
                ),
            ));
        }
        if !(lo.is_finite() && hi.is_finite() && lo < hi) {
            return Err(Error::setting(
                Setting::Range,
                format!("expected finite ends with low < high, got {lo} .. {hi}"),
            ));
        }
        let q = (hi - lo) / 2f64.powi(bits as i32);
        if !(q.is_finite() && q >= f64::MIN_POSITIVE) {
            return Err(Error::setting(
                Setting::Range,
                format!("the range {lo} .. {hi} gives an LSB of {q}, which an f64 cannot hold"),
            ));
        }
        let coding = coding.unwrap_or(if lo < 0.0 && hi > 0.0 {
            Coding::Twos
        } else {
            Coding::Offset
        });
        Ok(Adc {
            bits,
            lo,
            hi,
            coding,
            dither,
            seed: 0,
            first_sample: 0,
        })
    }

    /// The same converter with its dither drawn from `seed` (a run's `--seed`).
    pub fn with_seed(mut self, seed: u64) -> Adc {
        self.seed = seed;
        self
    }

    /// The same converter for a stream whose first sample has absolute index `first_sample`
    /// (counting stored values from 0; interleaved values of several channels each count),
    /// so the dither of every sample is that of a run started at index 0.
    pub fn starting_at(mut self, first_sample: u64) -> Adc {
        self.first_sample = first_sample;
        self
    }

    /// Resolution in bits, N.
    pub fn bits(&self) -> u32 {
        self.bits
    }

    /// Bottom of the input range, in the unit.
    pub fn lo(&self) -> f64 {
        self.lo
    }

    /// Top of the input range, in the unit.
    pub fn hi(&self) -> f64 {
        self.hi
    }

    /// The code numbering.
    pub fn coding(&self) -> Coding {
        self.coding
    }

    /// The dither.
    pub fn dither(&self) -> Dither {
        self.dither
    }

    /// The dither seed.
    pub fn seed(&self) -> u64 {
        self.seed
    }

    /// Absolute index of the first sample this converter quantises.
    pub fn first_sample(&self) -> u64 {
        self.first_sample
    }

    /// One LSB, `Q = (hi − lo)/2^N`, in the unit.
    pub fn lsb(&self) -> f64 {
        (self.hi - self.lo) / 2f64.powi(self.bits as i32)
    }

    /// Smallest and largest code: `0 .. 2^N − 1` (offset) or `−2^(N−1) .. 2^(N−1) − 1` (twos).
    pub fn code_range(&self) -> (i64, i64) {
        let n = 1i64 << self.bits;
        match self.coding {
            Coding::Offset => (0, n - 1),
            Coding::Twos => (-n / 2, n / 2 - 1),
        }
    }

    /// The level (in the unit) that `code` stands for: `lo + (code − code_min)·Q`.
    pub fn level(&self, code: i64) -> f64 {
        let offset = code - self.code_range().0;
        self.lo + offset as f64 * self.lsb()
    }

    /// The container that stores the codes.
    pub fn container(&self) -> Container {
        let signed = self.coding == Coding::Twos;
        match (self.bits, signed) {
            (..=8, false) => Container::U8,
            (..=16, false) => Container::U16,
            (_, false) => Container::U32,
            (..=8, true) => Container::I8,
            (..=16, true) => Container::I16,
            (_, true) => Container::I32,
        }
    }

    /// RMS of the undithered quantisation error for a busy input, `Q/√12`, in the unit.
    pub fn quantisation_noise_rms(&self) -> f64 {
        self.lsb() / 12f64.sqrt()
    }

    /// One-sided density of the undithered quantisation error, `Q/√(6·fs)`, in unit/√Hz, for
    /// a sample rate `fs` in Hz (white over 0 … fs/2, REFERENCES §9).
    pub fn quantisation_noise_density(&self, fs: f64) -> f64 {
        self.lsb() / (6.0 * fs).sqrt()
    }

    /// Variance of the noise the converter adds, in unit²: `Q²/12` without dither (busy
    /// input), `Q²/4` with TPDF dither (any input).
    pub fn added_noise_variance(&self) -> f64 {
        let q2 = self.lsb() * self.lsb();
        match self.dither {
            Dither::None => q2 / 12.0,
            Dither::Tpdf => q2 / 4.0,
        }
    }

    /// One-sided power density of the added noise, in unit²/Hz, at sample rate `fs` (Hz):
    /// [`added_noise_variance`](Adc::added_noise_variance) spread evenly over 0 … fs/2, i.e.
    /// `2·variance/fs`. For SNR and ENOB budgets.
    pub fn added_noise_psd(&self, fs: f64) -> f64 {
        2.0 * self.added_noise_variance() / fs
    }

    /// A range of the same kind (symmetric if this one is) that holds samples from `min` to
    /// `max` (unit) with a margin of two LSB, its ends rounded outward to two significant
    /// digits. Used to suggest a range after clipping.
    pub fn suggest_range(&self, min: f64, max: f64) -> (f64, f64) {
        let width = (self.hi.max(max) - self.lo.min(min)).max(f64::MIN_POSITIVE);
        let margin = 2.0 * width / 2f64.powi(self.bits as i32);
        let lo = self.lo.min(min - margin);
        let hi = self.hi.max(max + margin);
        if self.lo == -self.hi {
            let a = round_out(lo.abs().max(hi.abs()));
            (-a, a)
        } else {
            (-round_out(-lo), round_out(hi))
        }
    }

    /// The converter as manifest JSON (in the unit, at sample rate `fs` Hz): `bits`, `range`
    /// `[lo, hi]`, `coding`, `dither`, `container`, `lsb`, `code_min`, `code_max`,
    /// `level_of_code_min` (level(c) = level_of_code_min + (c − code_min)·lsb),
    /// `quantisation_noise_rms` (Q/√12), `quantisation_noise_density` (Q/√(6·fs)),
    /// `added_noise_rms` and `added_noise_density` (what this converter adds, dither
    /// included), `first_sample`.
    pub fn to_json(&self, fs: f64) -> serde_json::Value {
        let (cmin, cmax) = self.code_range();
        json!({
            "bits": self.bits,
            "range": [self.lo, self.hi],
            "coding": self.coding.name(),
            "dither": self.dither.name(),
            "container": self.container().name(),
            "lsb": self.lsb(),
            "code_min": cmin,
            "code_max": cmax,
            "level_of_code_min": self.lo,
            "quantisation_noise_rms": self.quantisation_noise_rms(),
            "quantisation_noise_density": self.quantisation_noise_density(fs),
            "added_noise_rms": self.added_noise_variance().sqrt(),
            "added_noise_density": self.added_noise_psd(fs).sqrt(),
            "first_sample": self.first_sample,
        })
    }

    /// A quantiser positioned at [`first_sample`](Adc::first_sample).
    pub fn quantiser(&self) -> Quantiser {
        Quantiser::new(self)
    }
}

/// Rounds a magnitude up to two significant digits (0 stays 0; negatives round toward 0).
fn round_out(x: f64) -> f64 {
    if x <= 0.0 {
        return -round_in(-x);
    }
    let p = 10f64.powf(x.log10().floor() - 1.0);
    (x / p).ceil() * p
}

/// Rounds a magnitude down to two significant digits.
fn round_in(x: f64) -> f64 {
    if x <= 0.0 {
        return 0.0;
    }
    let p = 10f64.powf(x.log10().floor() - 1.0);
    (x / p).floor() * p
}

/// Parses a range such as `"-1.65V..1.65V"`, `"0V..3.3V"` or `"-500mV .. 500mV"`: two
/// amplitudes in `unit` (the profile's unit symbol) joined by `..`; bare numbers are in the
/// unit. Returns `(lo, hi)`; the error says what was expected (the order of the ends is checked
/// by [`Adc::new`]).
///
/// With `volts_per_unit` (a sensor profile's sensitivity, V per unit), the ends may be given
/// in volts at the sensor's output and are returned in the unit.
pub fn parse_range(
    text: &str,
    unit: &str,
    volts_per_unit: Option<f64>,
) -> std::result::Result<(f64, f64), String> {
    let Some((a, b)) = text.split_once("..") else {
        return Err(format!(
            "expected a range low..high such as \"-1.65{unit}..1.65{unit}\" or \
             \"0{unit}..3.3{unit}\", got {text:?}"
        ));
    };
    let end = |s: &str, which: &str| {
        crate::units::parse_amplitude(s, unit, volts_per_unit)
            .map_err(|m| format!("{which} end: {m}"))
    };
    let (lo, hi) = (end(a, "low")?, end(b, "high")?);
    if lo >= hi {
        return Err(format!(
            "the low end must be below the high end, got {} .. {}",
            format_quantity(lo, unit),
            format_quantity(hi, unit)
        ));
    }
    Ok((lo, hi))
}

/// Quantises a stream of physical samples, one absolute sample index per call to
/// [`code`](Quantiser::code).
#[derive(Debug, Clone)]
pub struct Quantiser {
    lo: f64,
    hi: f64,
    lsb: f64,
    top: f64,
    shift: i64,
    dither: Option<DitherStream>,
    next: u64,
}

/// The TPDF dither generator: the stream of the current chunk, positioned at `next`.
#[derive(Clone)]
struct DitherStream {
    streams: WhiteStreams,
    chunk: Option<u64>,
    rng: Option<ChaCha8Rng>,
}

impl fmt::Debug for DitherStream {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.debug_struct("DitherStream")
            .field("chunk", &self.chunk)
            .finish()
    }
}

impl DitherStream {
    /// Triangular dither for absolute sample `index`, in LSB, on (−1, 1).
    #[inline]
    fn at(&mut self, index: u64) -> f64 {
        let chunk = index / DITHER_CHUNK;
        if self.chunk != Some(chunk) || self.rng.is_none() {
            let mut rng = self
                .streams
                .generator(WhiteStreams::stream_id(Domain::Dither, 0, chunk));
            rng.set_word_pos(4 * u128::from(index % DITHER_CHUNK));
            self.rng = Some(rng);
            self.chunk = Some(chunk);
        }
        let rng = self.rng.as_mut().expect("set above");
        // 53-bit uniforms on [0, 1) (exact in f64).
        let u1 = (rng.next_u64() >> 11) as f64 * (1.0 / (1u64 << 53) as f64);
        let u2 = (rng.next_u64() >> 11) as f64 * (1.0 / (1u64 << 53) as f64);
        (u1 - 0.5) + (u2 - 0.5)
    }
}

impl Quantiser {
    fn new(adc: &Adc) -> Quantiser {
        Quantiser {
            lo: adc.lo,
            hi: adc.hi,
            lsb: adc.lsb(),
            top: ((1u64 << adc.bits) - 1) as f64,
            shift: -adc.code_range().0,
            dither: (adc.dither == Dither::Tpdf).then(|| DitherStream {
                streams: WhiteStreams::new(adc.seed),
                chunk: None,
                rng: None,
            }),
            next: adc.first_sample,
        }
    }

    /// Absolute index of the sample the next [`code`](Quantiser::code) call quantises.
    pub fn next_index(&self) -> u64 {
        self.next
    }

    /// The code for physical `v` (finite, in the unit) at the next absolute index, and whether
    /// `v` lay outside the range (clamped and to be counted as clipped).
    #[inline]
    pub fn code(&mut self, v: f64) -> (i64, bool) {
        let mut x = (v - self.lo) / self.lsb;
        if let Some(d) = &mut self.dither {
            x += d.at(self.next);
        }
        self.next += 1;
        let k = (x + 0.5).floor().clamp(0.0, self.top) as i64;
        (k - self.shift, v < self.lo || v > self.hi)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;
    use rand_distr::{Distribution, StandardNormal};
    use statrs::distribution::{ChiSquared, ContinuousCDF, Normal};

    /// Fixed seed for every random input here.
    const SEED: u64 = 0xADC0_0001;
    /// z for a two-sided false-failure probability of 1e−6 (REFERENCES §11).
    const Z6: f64 = 4.8916;

    fn adc(bits: u32, lo: f64, hi: f64, coding: Option<Coding>, dither: Dither) -> Adc {
        Adc::new(bits, lo, hi, coding, dither).unwrap()
    }

    fn gaussian(n: usize, mean: f64, sigma: f64, seed: u64) -> Vec<f64> {
        let mut rng = ChaCha8Rng::seed_from_u64(seed);
        (0..n)
            .map(|_| {
                let z: f64 = StandardNormal.sample(&mut rng);
                mean + sigma * z
            })
            .collect()
    }

    fn codes(a: &Adc, x: &[f64]) -> Vec<i64> {
        let mut q = a.quantiser();
        x.iter().map(|&v| q.code(v).0).collect()
    }

    /// REFERENCES §9 check values [V]: 16 bits over 2 V: Q = 30.52 µV, Q/√12 = 8.81 µV,
    /// Q/√(6·fs) = 56.9 nV/√Hz at 48 kS/s and 40.2 at 96 kS/s; 24 bits: 34.4 nV RMS,
    /// 0.222 nV/√Hz at 48 kS/s (to the printed digits).
    #[test]
    fn lsb_and_noise_match_the_reference_check_values() {
        let a = adc(16, -1.0, 1.0, None, Dither::None);
        assert_eq!(a.lsb(), 2.0 / 65536.0);
        assert!((a.lsb() / 30.52e-6 - 1.0).abs() < 0.5e-2 / 30.52);
        assert!((a.quantisation_noise_rms() - 8.81e-6).abs() < 0.005e-6);
        assert!((a.quantisation_noise_density(48e3) - 56.9e-9).abs() < 0.05e-9);
        assert!((a.quantisation_noise_density(96e3) - 40.2e-9).abs() < 0.05e-9);
        let b = adc(24, -1.0, 1.0, None, Dither::None);
        assert!((b.quantisation_noise_rms() - 34.4e-9).abs() < 0.05e-9);
        assert!((b.quantisation_noise_density(48e3) - 0.222e-9).abs() < 0.0005e-9);
        // 12 bits over ±1.65 V: 3.3 V / 4096, exact in binary.
        assert_eq!(adc(12, -1.65, 1.65, None, Dither::None).lsb(), 3.3 / 4096.0);
        // TPDF adds Q²/4 (REFERENCES §9): three times the undithered Q²/12.
        let t = adc(16, -1.0, 1.0, None, Dither::Tpdf);
        let q = t.lsb();
        assert!((t.added_noise_variance() - q * q / 4.0).abs() <= 1e-15 * q * q);
        assert!((t.added_noise_psd(48e3) - q * q / (2.0 * 48e3)).abs() <= 1e-12 * q * q / 48e3);
        assert!(
            (a.added_noise_psd(48e3).sqrt() - a.quantisation_noise_density(48e3)).abs()
                <= 1e-12 * a.lsb()
        );
    }

    /// The mapping of the module docs at the centre and the ends of a range, both codings.
    #[test]
    fn codes_at_centre_and_ends() {
        let q = 3.3 / 4096.0;
        for (coding, shift) in [(Coding::Offset, 0), (Coding::Twos, -2048)] {
            let a = adc(12, -1.65, 1.65, Some(coding), Dither::None);
            let mut z = a.quantiser();
            let c = |z: &mut Quantiser, v| z.code(v);
            assert_eq!(c(&mut z, 0.0), (2048 + shift, false), "{coding}: centre");
            assert_eq!(
                a.level(2048 + shift),
                0.0,
                "{coding}: level of the centre code"
            );
            assert_eq!(c(&mut z, -1.65), (shift, false), "{coding}: bottom");
            assert_eq!(a.level(shift), -1.65);
            // The top of the range reads the top code, level hi − Q, and is not clipping.
            assert_eq!(c(&mut z, 1.65), (4095 + shift, false), "{coding}: top");
            assert!((a.level(4095 + shift) - (1.65 - q)).abs() < 1e-15);
            // Transitions at (k − ½)Q above lo; ties round up.
            assert_eq!(c(&mut z, -1.65 + 0.49 * q).0, shift);
            assert_eq!(c(&mut z, -1.65 + 0.51 * q).0, 1 + shift);
            assert_eq!(c(&mut z, 0.5 * q).0, 2049 + shift);
            assert_eq!(c(&mut z, -0.49 * q).0, 2048 + shift);
            // Beyond the range: clamped to the end codes and flagged.
            assert_eq!(c(&mut z, 2.0), (4095 + shift, true));
            assert_eq!(c(&mut z, -1.7), (shift, true));
            assert_eq!(a.code_range(), (shift, 4095 + shift));
        }
        // Default coding: twos for a bipolar range, offset for a unipolar one.
        assert_eq!(adc(8, -1.0, 1.0, None, Dither::None).coding(), Coding::Twos);
        assert_eq!(
            adc(8, 0.0, 3.3, None, Dither::None).coding(),
            Coding::Offset
        );
        assert_eq!(
            adc(8, -3.3, 0.0, None, Dither::None).coding(),
            Coding::Offset
        );
        let u = adc(10, 0.0, 3.3, None, Dither::None);
        assert_eq!(codes(&u, &[0.0, 3.3 / 2.0, 3.3]), [0, 512, 1023]);
    }

    #[test]
    fn containers_are_the_smallest_that_hold_the_codes() {
        let c = |bits, coding| adc(bits, -1.0, 1.0, Some(coding), Dither::None).container();
        assert_eq!(c(1, Coding::Offset), Container::U8);
        assert_eq!(c(8, Coding::Offset), Container::U8);
        assert_eq!(c(9, Coding::Offset), Container::U16);
        assert_eq!(c(16, Coding::Twos), Container::I16);
        assert_eq!(c(17, Coding::Twos), Container::I32);
        assert_eq!(c(32, Coding::Offset), Container::U32);
        assert_eq!(c(8, Coding::Twos), Container::I8);
        // End codes survive the container.
        for bits in [1, 8, 12, 16, 24, 32] {
            for coding in [Coding::Twos, Coding::Offset] {
                let a = adc(bits, -1.0, 1.0, Some(coding), Dither::None);
                let k = a.container();
                let (lo, hi) = a.code_range();
                for code in [lo, hi] {
                    let mut b = Vec::new();
                    k.put_le(code, &mut b);
                    assert_eq!(b.len(), k.bytes());
                    let mut w = [0u8; 8];
                    w[..b.len()].copy_from_slice(&b);
                    let mut back = i64::from_le_bytes(w);
                    if k.is_signed() && b[b.len() - 1] & 0x80 != 0 {
                        back -= 1i64 << (8 * b.len());
                    }
                    assert_eq!(back, code, "{bits} {coding}");
                }
            }
        }
        assert_eq!(Container::from_extension(".U16"), Some(Container::U16));
        assert_eq!(Container::from_extension("i24"), None);
    }

    #[test]
    fn bad_settings_are_refused_with_the_option() {
        let opt = |r: Result<Adc>| match r {
            Err(e @ Error::Setting { .. }) => e.describe("", &|s| format!("--{}", s.name())),
            other => panic!("expected an option error, got {other:?}"),
        };
        let opt = |r: Result<Adc>| opt(r).trim_start().to_string();
        assert!(opt(Adc::new(0, -1.0, 1.0, None, Dither::None)).starts_with("--bits"));
        assert!(opt(Adc::new(33, -1.0, 1.0, None, Dither::None)).contains("got 33"));
        assert!(opt(Adc::new(8, 1.0, -1.0, None, Dither::None)).starts_with("--range"));
        assert!(opt(Adc::new(8, 1.0, 1.0, None, Dither::None)).starts_with("--range"));
        assert!(
            opt(Adc::new(8, f64::NEG_INFINITY, 1.0, None, Dither::None)).starts_with("--range")
        );
        assert!(opt(Adc::new(32, -1e308, 1e308, None, Dither::None)).starts_with("--range"));
        assert!("tpdf".parse::<Dither>().is_ok() && "rect".parse::<Dither>().is_err());
        assert!("twos".parse::<Coding>().is_ok());
        let e = "unsigned".parse::<Coding>().unwrap_err().to_string();
        assert!(
            e.starts_with("setting code:") && e.contains("offset"),
            "{e}"
        );
    }

    #[test]
    fn ranges_parse_in_the_profile_unit() {
        assert_eq!(
            parse_range("-1.65V..1.65V", "V", None).unwrap(),
            (-1.65, 1.65)
        );
        assert_eq!(parse_range("0V..3.3V", "V", None).unwrap(), (0.0, 3.3));
        assert_eq!(
            parse_range(" -500 mV .. 500 mV ", "V", None).unwrap(),
            (-0.5, 0.5)
        );
        assert_eq!(parse_range("0..20mA", "A", None).unwrap(), (0.0, 0.02));
        assert!(
            parse_range("1V..-1V", "V", None)
                .unwrap_err()
                .contains("below")
        );
        assert!(
            parse_range("1V", "V", None)
                .unwrap_err()
                .contains("low..high")
        );
        assert!(
            parse_range("1Hz..2Hz", "V", None)
                .unwrap_err()
                .contains("low end")
        );
        assert!(
            parse_range("0V..1A", "V", None)
                .unwrap_err()
                .contains("high end")
        );
        assert!(parse_range("0V..3.3V", "A", None).is_err());
    }

    #[test]
    fn suggested_ranges_hold_the_samples() {
        let a = adc(12, -1.0, 1.0, None, Dither::None);
        assert_eq!(a.suggest_range(-1.234, 1.5), (-1.6, 1.6));
        let u = adc(12, 0.0, 3.3, None, Dither::None);
        let (lo, hi) = u.suggest_range(-0.2, 1.0);
        assert!(
            lo <= -0.2 && lo > -0.3 && (3.3..3.4).contains(&hi),
            "{lo} {hi}"
        );
    }

    /// Counts per code of Gaussian samples against the exact probability mass of each code's
    /// interval (offset code k covers lo + (k ∓ ½)Q; the end codes take the tails), by
    /// Pearson's χ² with codes of expected count < 5 pooled; the bound is χ²_{dof} at 1e−6.
    /// Both codings, through the same quantiser.
    #[test]
    fn code_histograms_follow_the_probability_mass() {
        let n = 1_000_000;
        let (mu, sigma) = (0.1, 0.3);
        let x = gaussian(n, mu, sigma, SEED);
        let normal = Normal::new(mu, sigma).unwrap();
        for coding in [Coding::Twos, Coding::Offset] {
            let a = adc(6, -1.0, 1.0, Some(coding), Dither::None);
            let (cmin, cmax) = a.code_range();
            let q = a.lsb();
            let mut counts = vec![0u64; (cmax - cmin + 1) as usize];
            for c in codes(&a, &x) {
                counts[(c - cmin) as usize] += 1;
            }
            let k_top = counts.len() - 1;
            let mass = |k: usize| {
                let lo_edge = if k == 0 {
                    f64::NEG_INFINITY
                } else {
                    -1.0 + (k as f64 - 0.5) * q
                };
                let hi_edge = if k == k_top {
                    f64::INFINITY
                } else {
                    -1.0 + (k as f64 + 0.5) * q
                };
                normal.cdf(hi_edge) - normal.cdf(lo_edge)
            };
            let (mut chi2, mut bins) = (0.0, 0usize);
            let (mut pool_obs, mut pool_exp) = (0.0, 0.0);
            for (k, &obs) in counts.iter().enumerate() {
                let exp = n as f64 * mass(k);
                if exp < 5.0 {
                    pool_obs += obs as f64;
                    pool_exp += exp;
                    continue;
                }
                chi2 += (obs as f64 - exp).powi(2) / exp;
                bins += 1;
            }
            if pool_exp > 0.0 {
                chi2 += (pool_obs - pool_exp).powi(2) / pool_exp.max(1e-300);
                bins += 1;
            }
            let dof = (bins - 1) as f64;
            let limit = ChiSquared::new(dof).unwrap().inverse_cdf(1.0 - 1e-6);
            assert!(
                chi2 < limit,
                "{coding}: χ² = {chi2:.1} over {bins} bins, limit {limit:.1} (seed {SEED})"
            );
            // The centre code holds the mass of the interval around 0: binomial bound.
            // Offset code 32 and twos code 0 both sit at index 32: the level 0 V.
            let centre = 32;
            assert_eq!(a.level(centre as i64 + cmin), 0.0);
            let p = mass(centre);
            let sd = (n as f64 * p * (1.0 - p)).sqrt();
            assert!(
                (counts[centre] as f64 - n as f64 * p).abs() < Z6 * sd,
                "{coding}: centre code count {} vs {:.1} (seed {SEED})",
                counts[centre],
                n as f64 * p
            );
        }
    }

    /// A slow ramp across the range fills every code with the same count (within one), the
    /// exact mass of a uniform input: a check with no statistics at all.
    #[test]
    fn a_slow_ramp_fills_every_code_equally() {
        let a = adc(8, -1.0, 1.0, Some(Coding::Offset), Dither::None);
        let per = 64usize;
        let n = 256 * per;
        let q = a.lsb();
        // Samples at the centres of n sub-intervals of [lo − Q/2, hi − Q/2).
        let x: Vec<f64> = (0..n)
            .map(|i| -1.0 - q / 2.0 + (i as f64 + 0.5) * q / per as f64)
            .collect();
        let mut counts = [0usize; 256];
        for c in codes(&a, &x) {
            counts[c as usize] += 1;
        }
        assert!(counts.iter().all(|&c| c.abs_diff(per) <= 1), "{counts:?}");
    }

    /// The error of a busy input (σ = 40 LSB) is uniform on ±Q/2: mean 0 and mean square
    /// Q²/12 (REFERENCES §9). The tolerance uses the uniform error's own fourth moment
    /// (var of the mean square = (Q⁴/80 − Q⁴/144)/n = Q⁴/(180n)) at z = 4.89 (1e−6); the
    /// Gaussian χ² band of REFERENCES §8 would be 1.6× wider.
    #[test]
    fn quantisation_noise_rms_is_q_over_root_12() {
        let n = 1_000_000;
        let a = adc(10, -1.0, 1.0, None, Dither::None);
        let q = a.lsb();
        let x = gaussian(n, 0.0, 40.0 * q, SEED + 1);
        let e: Vec<f64> = codes(&a, &x)
            .iter()
            .zip(&x)
            .map(|(&c, &v)| a.level(c) - v)
            .collect();
        let mean = e.iter().sum::<f64>() / n as f64;
        let ms = e.iter().map(|v| v * v).sum::<f64>() / n as f64;
        assert!(
            mean.abs() < Z6 * q / (12.0 * n as f64).sqrt(),
            "mean error {mean:e} (seed {})",
            SEED + 1
        );
        let want = q * q / 12.0;
        let sd = (q.powi(4) / (180.0 * n as f64)).sqrt();
        assert!(
            (ms - want).abs() < Z6 * sd,
            "mean square {ms:e} vs Q²/12 = {want:e} ± {:e} (seed {})",
            Z6 * sd,
            SEED + 1
        );
        assert!(e.iter().all(|v| v.abs() <= q / 2.0 * (1.0 + 1e-9)));
    }

    /// Exact distribution of the TPDF-dithered error at an input a fraction `f` of an LSB
    /// above a level: round(f + d) − f for d triangular on (−1, 1). Returns (mean, E[e²],
    /// E[e⁴]) in LSB units.
    fn tpdf_error_moments(f: f64) -> (f64, f64, f64) {
        // Triangular CDF on (−1, 1).
        let cdf = |t: f64| {
            if t <= -1.0 {
                0.0
            } else if t <= 0.0 {
                (t + 1.0).powi(2) / 2.0
            } else if t < 1.0 {
                1.0 - (1.0 - t).powi(2) / 2.0
            } else {
                1.0
            }
        };
        let (mut m1, mut m2, mut m4) = (0.0, 0.0, 0.0);
        for m in -2i32..=3 {
            let m = f64::from(m);
            // round(f + d) = m  ⇔  m − ½ ≤ f + d < m + ½.
            let p = cdf(m + 0.5 - f) - cdf(m - 0.5 - f);
            let e = m - f;
            m1 += p * e;
            m2 += p * e * e;
            m4 += p * e.powi(4);
        }
        (m1, m2, m4)
    }

    /// TPDF dither (REFERENCES §9: Wannamaker, Lipshitz & Vanderkooy 2000, from memory):
    /// at DC inputs anywhere within an LSB the error has mean 0 and variance Q²/4. The
    /// exact error distribution at each level (above) gives the tolerance: the mean within
    /// z·√(Q²/4/n), the mean square within z·√((E[e⁴] − E[e²]²)/n), z for 1e−6 split over the
    /// levels. Negative control: without dither the error at a DC level is a constant, far
    /// from Q²/12.
    #[test]
    fn tpdf_error_has_mean_zero_and_variance_q2_over_4_at_every_level() {
        let n = 200_000;
        let a = adc(8, -1.0, 1.0, None, Dither::Tpdf).with_seed(SEED);
        let q = a.lsb();
        let fracs = [0.0, 0.25, 0.5, 0.73];
        // Bonferroni over 4 levels × 2 moments: z for 1.25e−7 two-sided.
        let z = Normal::new(0.0, 1.0)
            .unwrap()
            .inverse_cdf(1.0 - 1.25e-7 / 2.0);
        let mut start = 0;
        let mut plain_errors = Vec::new();
        for (i, &f) in fracs.iter().enumerate() {
            let v = a.level(10 * i as i64) + f * q;
            let (m1, m2, m4) = tpdf_error_moments(f);
            assert!(
                m1.abs() < 1e-12 && (m2 - 0.25).abs() < 1e-12,
                "exact moments at {f}"
            );
            let mut z_q = a.clone().starting_at(start).quantiser();
            start += n as u64;
            let e: Vec<f64> = (0..n).map(|_| (a.level(z_q.code(v).0) - v) / q).collect();
            let mean = e.iter().sum::<f64>() / n as f64;
            let ms = e.iter().map(|x| x * x).sum::<f64>() / n as f64;
            assert!(
                mean.abs() < z * (m2 / n as f64).sqrt(),
                "level +{f} LSB: mean error {mean} LSB (seed {SEED})"
            );
            let sd = ((m4 - m2 * m2) / n as f64).sqrt();
            assert!(
                // At +½ LSB the error is ±½ LSB exactly, so sd = 0: allow f64 rounding.
                (ms - 0.25).abs() <= z * sd + 1e-12,
                "level +{f} LSB: mean square {ms} LSB² vs 0.25 ± {} (seed {SEED})",
                z * sd
            );
            let plain = adc(8, -1.0, 1.0, None, Dither::None);
            let mut p = plain.quantiser();
            plain_errors.push((plain.level(p.code(v).0) - v) / q);
        }
        // Negative control: undithered, the error at a DC level is the constant −f or 1 − f,
        // so its mean moves with the level (0, −0.25, +0.5, +0.27 LSB here).
        let span = plain_errors.iter().copied().fold(f64::MIN, f64::max)
            - plain_errors.iter().copied().fold(f64::MAX, f64::min);
        assert!(span > 0.7, "undithered errors {plain_errors:?}");
    }

    /// With TPDF dither the error is uncorrelated with the input and with the input's position
    /// within an LSB (E[e | x] = 0 for every x); without dither the error is a deterministic
    /// sawtooth of that position (correlation ≈ −1). Bound: |r| < z/√n (z for 1e−6 over two
    /// correlations).
    #[test]
    fn tpdf_error_is_not_correlated_with_the_input() {
        let n = 400_000;
        let a = adc(8, -1.0, 1.0, None, Dither::Tpdf).with_seed(SEED + 2);
        let q = a.lsb();
        let x = gaussian(n, 0.0, 0.2, SEED + 3);
        let corr = |u: &[f64], w: &[f64]| {
            let m = |s: &[f64]| s.iter().sum::<f64>() / s.len() as f64;
            let (mu, mw) = (m(u), m(w));
            let (mut suw, mut suu, mut sww) = (0.0, 0.0, 0.0);
            for (a, b) in u.iter().zip(w) {
                suw += (a - mu) * (b - mw);
                suu += (a - mu).powi(2);
                sww += (b - mw).powi(2);
            }
            suw / (suu * sww).sqrt()
        };
        let frac: Vec<f64> = x
            .iter()
            .map(|v| {
                let t = (v + 1.0) / q + 0.5;
                t - t.floor()
            })
            .collect();
        let err = |a: &Adc| -> Vec<f64> {
            codes(a, &x)
                .iter()
                .zip(&x)
                .map(|(&c, &v)| a.level(c) - v)
                .collect()
        };
        let e = err(&a);
        let bound = Normal::new(0.0, 1.0).unwrap().inverse_cdf(1.0 - 0.25e-6) / (n as f64).sqrt();
        let (r1, r2) = (corr(&e, &x), corr(&e, &frac));
        assert!(
            r1.abs() < bound,
            "corr(error, input) = {r1} (seed {})",
            SEED + 2
        );
        assert!(
            r2.abs() < bound,
            "corr(error, position) = {r2} (seed {})",
            SEED + 2
        );
        let e0 = err(&adc(8, -1.0, 1.0, None, Dither::None));
        assert!(corr(&e0, &frac) < -0.99, "undithered error is a sawtooth");
    }

    /// The dither of a sample depends only on the seed and its absolute index: a quantiser
    /// started at index 3000 gives the codes a run from 0 gave from 3000 on, across chunk
    /// boundaries; another seed gives other codes.
    #[test]
    fn dither_depends_only_on_the_absolute_index() {
        let a = adc(4, -1.0, 1.0, None, Dither::Tpdf).with_seed(9);
        let x = gaussian(10_000, 0.0, 0.3, SEED);
        let whole = codes(&a, &x);
        for start in [1usize, 2047, 2048, 3000, 9999] {
            let part = codes(&a.clone().starting_at(start as u64), &x[start..]);
            assert_eq!(part, whole[start..], "start {start}");
        }
        let other = codes(&a.clone().with_seed(10), &x);
        assert_ne!(other, whole);
    }
}
