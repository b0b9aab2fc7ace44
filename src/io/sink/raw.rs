//! Headerless little-endian samples: f32, f64, i16, i24 (3 bytes packed), i32.

use std::io::Write;

use super::{Buffered, CHUNK_SAMPLES, Format, Scaler, Sink, SinkReport, SinkSpec};
use crate::error::{Error, Result};

/// Raw writer: each sample as its little-endian bytes, nothing else. With a full scale the
/// stored values are digital (floats in ±1.0, integer codes per the module rule); without one
/// (float formats only) they are the physical values in the spec's unit. [`SinkSpec::frames`]
/// is not needed and not checked.
#[derive(Debug)]
pub struct RawSink<W: Write> {
    out: Buffered<W>,
    scaler: Scaler,
}

impl<W: Write> RawSink<W> {
    /// Validates `spec` (see [`SinkSpec::validate`]); writes nothing yet.
    pub fn new(spec: &SinkSpec, out: W) -> Result<RawSink<W>> {
        spec.validate()?;
        if spec.format != Format::Raw {
            return Err(Error::Unsupported(format!(
                "a raw writer was asked for {} output",
                spec.format
            )));
        }
        Ok(RawSink {
            out: Buffered::new(out, "writing raw samples"),
            scaler: Scaler::new(spec),
        })
    }
}

impl<W: Write + Send> Sink for RawSink<W> {
    fn write(&mut self, samples: &[f64]) -> Result<()> {
        self.out.ensure_open()?;
        self.scaler.check_finite(samples)?;
        for chunk in samples.chunks(CHUNK_SAMPLES) {
            self.scaler.encode_le(chunk, &mut self.out.buf);
            self.out.maybe_flush()?;
        }
        Ok(())
    }

    fn finish(&mut self) -> Result<SinkReport> {
        self.out.ensure_open()?;
        self.out.close()?;
        Ok(self.scaler.report)
    }
}

#[cfg(test)]
mod tests {
    use super::super::SampleFormat;
    use super::super::test_util::*;
    use super::*;

    /// Decodes little-endian samples of `sf` into f64 (codes as integers).
    fn decode(b: &[u8], sf: SampleFormat) -> Vec<f64> {
        b.chunks_exact(sf.bytes())
            .map(|c| match sf {
                SampleFormat::F32 => f64::from(f32::from_le_bytes(c.try_into().unwrap())),
                SampleFormat::F64 => f64::from_le_bytes(c.try_into().unwrap()),
                SampleFormat::I16 => f64::from(i16::from_le_bytes(c.try_into().unwrap())),
                // Sign-extend the 3 bytes by placing them in the top of an i32.
                SampleFormat::I24 => f64::from(i32::from_le_bytes([0, c[0], c[1], c[2]]) >> 8),
                SampleFormat::I32 => f64::from(i32::from_le_bytes(c.try_into().unwrap())),
            })
            .collect()
    }

    #[test]
    fn raw_round_trips_every_format() {
        let n = 50_000; // several 16 Ki-sample chunks
        // A power of two, so x/full_scale and x·(1/full_scale) agree exactly.
        let full_scale = 0.5;
        // 0.5 V = 3.33σ: about 0.09 % clip (two-sided normal tail), ~40 samples here.
        let x = gaussian(n, 0.15, SEED);
        for sf in SampleFormat::ALL {
            let s = spec(Format::Raw, sf, Some(full_scale), None);
            let (b, r) = render(&s, &x).unwrap();
            assert_eq!(b.len(), n * sf.bytes(), "{sf}");
            assert_eq!(r.samples, n as u64);
            let over = x.iter().filter(|v| v.abs() > full_scale).count() as u64;
            assert!(over > 0, "seed {SEED}: nothing clipped");
            assert_eq!(r.clipped, over, "{sf}");
            let got = decode(&b, sf);
            for (g, v) in got.iter().zip(&x) {
                let d = (v / full_scale).clamp(-1.0, 1.0);
                match sf.full_scale_code() {
                    Some(m) => {
                        let m = f64::from(m);
                        // Within half an LSB of the digital value (REFERENCES §9: ideal
                        // quantiser), plus f64 rounding of the product.
                        assert!((g / m - d).abs() <= 0.5 / m * (1.0 + 1e-9), "{sf}: {g} {d}");
                    }
                    None if sf == SampleFormat::F64 => assert_eq!(*g, d, "{sf}"),
                    None => assert_eq!(*g, f64::from(d as f32), "{sf}"),
                }
            }
        }
        // Physical float output is bit-exact (f64) or the nearest f32.
        let (b, _) = render(&spec(Format::Raw, SampleFormat::F64, None, None), &x).unwrap();
        assert_eq!(decode(&b, SampleFormat::F64), x);
        let (b, _) = render(&spec(Format::Raw, SampleFormat::F32, None, None), &x).unwrap();
        let want: Vec<f64> = x.iter().map(|&v| f64::from(v as f32)).collect();
        assert_eq!(decode(&b, SampleFormat::F32), want);
    }

    #[test]
    fn i24_is_three_bytes_twos_complement() {
        let s = spec(Format::Raw, SampleFormat::I24, Some(1.0), None);
        let (b, _) = render(&s, &[1.0, -1.0, 0.0]).unwrap();
        // ±8388607 = ±0x7FFFFF; −0x7FFFFF = 0x800001 in 24-bit two's complement.
        assert_eq!(b, [0xFF, 0xFF, 0x7F, 0x01, 0x00, 0x80, 0x00, 0x00, 0x00]);
    }

    #[test]
    fn f32_beyond_its_range_is_clipped_and_counted() {
        let s = spec(Format::Raw, SampleFormat::F32, None, None);
        let (b, r) = render(&s, &[1e39, -1e39, 1.0]).unwrap();
        assert_eq!(r.clipped, 2);
        assert_eq!(
            decode(&b, SampleFormat::F32)[..2],
            [f64::from(f32::MAX), -f64::from(f32::MAX)]
        );
    }
}
