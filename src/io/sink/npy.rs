//! numpy's `.npy` array file, written for any `Write` (no `Seek`): the header first, from the
//! known sample count, then the samples in C order.
//!
//! Layout (numpy's documented format, NEP 1 and the `numpy.lib.format` docs): the magic
//! `\x93NUMPY`, the version (1, 0), the header length as a little-endian u16, then the header
//! — a Python literal dict `{'descr': '<f4', 'fortran_order': False, 'shape': (N,), }` padded
//! with spaces and ended by `\n` so that the data starts at a multiple of 64 bytes. Version
//! 2.0 (a u32 header length) is used only when the header would not fit a u16. Our headers
//! are always short, so every file is version 1.0 in practice.
//!
//! * dtype ([`npy_descr`]): `<f4`, `<f8`, `<i2`, `<i4` for f32, f64, i16, i32; **i24 codes
//!   are stored as `<i4`** (numpy has no 3-byte integer), holding the i24 code values
//!   (±8388607 at full scale).
//! * shape ([`npy_shape`]): `(frames,)` for one channel, `(frames, channels)` for more; the
//!   interleaved frames are exactly the row-major (C order) layout of that array.
//! * values: the same as raw output of the same run — digital with a full scale (floats in
//!   ±1.0, integer codes by the shared [`Scaler`]), physical without one (floats only).

use std::io::Write;

use super::{Buffered, CHUNK_SAMPLES, Format, SampleFormat, Scaler, Sink, SinkReport, SinkSpec};
use crate::error::{Error, Result};

/// The magic string that starts every `.npy` file (NEP 1).
const MAGIC: &[u8; 6] = b"\x93NUMPY";
/// The data starts at a multiple of this many bytes (`numpy.lib.format`: 64 since numpy
/// 1.14; earlier files used 16, which readers accept either way).
const ALIGN: usize = 64;

/// The numpy dtype string of a sample format: `'<f4'`, `'<f8'`, `'<i2'`, `'<i4'`; i24 codes
/// are stored as `'<i4'`.
pub fn npy_descr(sample_format: SampleFormat) -> &'static str {
    match sample_format {
        SampleFormat::F32 => "<f4",
        SampleFormat::F64 => "<f8",
        SampleFormat::I16 => "<i2",
        SampleFormat::I24 | SampleFormat::I32 => "<i4",
    }
}

/// The `descr` of the array `spec` describes: the ADC container's (`'|u1'`, `'<u2'`, …) for
/// ADC codes, else [`npy_descr`] of the sample format.
pub fn npy_spec_descr(spec: &SinkSpec) -> &'static str {
    match &spec.adc {
        Some(adc) => adc.container().npy_descr(),
        None => npy_descr(spec.sample_format),
    }
}

/// Bytes per stored value in a `.npy` file: i24 takes 4 (see [`npy_descr`]).
fn stored_bytes(sample_format: SampleFormat) -> usize {
    match sample_format {
        SampleFormat::I24 => 4,
        sf => sf.bytes(),
    }
}

/// The array shape for `frames` frames of `channels` channels: `[frames]` for one channel,
/// `[frames, channels]` for more.
pub fn npy_shape(frames: u64, channels: u16) -> Vec<u64> {
    if channels == 1 {
        vec![frames]
    } else {
        vec![frames, u64::from(channels)]
    }
}

/// The complete `.npy` preamble for an array of dtype `descr` and `shape`: magic, version,
/// header length and the padded header dict, a multiple of 64 bytes long. A pure function.
pub fn npy_header(descr: &str, shape: &[u64]) -> Vec<u8> {
    // Python's repr of a tuple: "(3,)" for one element, "(3, 2)" for more.
    let dims: Vec<String> = shape.iter().map(u64::to_string).collect();
    let tuple = match dims.len() {
        1 => format!("({},)", dims[0]),
        _ => format!("({})", dims.join(", ")),
    };
    let dict = format!("{{'descr': '{descr}', 'fortran_order': False, 'shape': {tuple}, }}");
    // Version 1.0: magic (6) + version (2) + u16 length (2); 2.0 has a u32 length (4).
    let padded = |prefix: usize| {
        let unpadded = prefix + dict.len() + 1; // + the final '\n'
        dict.len() + 1 + (ALIGN - unpadded % ALIGN) % ALIGN
    };
    let (major, prefix) = if padded(10) <= usize::from(u16::MAX) {
        (1u8, 10)
    } else {
        (2u8, 12)
    };
    let len = padded(prefix);
    let mut h = Vec::with_capacity(prefix + len);
    h.extend_from_slice(MAGIC);
    h.extend_from_slice(&[major, 0]);
    if major == 1 {
        h.extend_from_slice(&(len as u16).to_le_bytes());
    } else {
        h.extend_from_slice(&(len as u32).to_le_bytes());
    }
    h.extend_from_slice(dict.as_bytes());
    h.resize(prefix + len - 1, b' ');
    h.push(b'\n');
    h
}

/// `.npy` writer (see the module docs). Needs the sample count ([`SinkSpec::frames`]);
/// writing more samples than announced, or finishing with fewer, is an error because the
/// header's shape would be wrong.
#[derive(Debug)]
pub struct NpySink<W: Write> {
    out: Buffered<W>,
    scaler: Scaler,
    /// Samples announced: frames × channels.
    samples: u64,
}

impl<W: Write> NpySink<W> {
    /// Validates `spec` (see [`SinkSpec::validate`]) and prepares the header; nothing is
    /// written to `out` until the first `write` or `finish`.
    pub fn new(spec: &SinkSpec, out: W) -> Result<NpySink<W>> {
        spec.validate()?;
        if spec.format != Format::Npy {
            return Err(Error::Unsupported(format!(
                "an npy writer was asked for {} output",
                spec.format
            )));
        }
        let frames = spec.frames.expect("validated");
        let samples = spec.announced_samples()?;
        let mut out = Buffered::new(out, "writing npy");
        out.buf.extend_from_slice(&npy_header(
            npy_spec_descr(spec),
            &npy_shape(frames, spec.channels),
        ));
        Ok(NpySink {
            out,
            scaler: Scaler::new(spec),
            samples,
        })
    }

    fn count_error(&self, got: u64) -> Error {
        Error::io(
            "writing npy",
            std::io::Error::new(
                std::io::ErrorKind::InvalidInput,
                format!(
                    "the npy header announced {} samples but {got} were given; the file \
                     would be inconsistent",
                    self.samples
                ),
            ),
        )
    }
}

impl<W: Write + Send> Sink for NpySink<W> {
    fn write(&mut self, samples: &[f64]) -> Result<()> {
        self.out.ensure_open()?;
        let after = self.scaler.report.samples + samples.len() as u64;
        if after > self.samples {
            return Err(self.count_error(after));
        }
        self.scaler.check_finite(samples)?;
        for chunk in samples.chunks(CHUNK_SAMPLES) {
            if self.scaler.sample_format == SampleFormat::I24 && self.scaler.adc.is_none() {
                // i24 codes widened to '<i4' (numpy has no 3-byte integer).
                self.out
                    .buf
                    .reserve(chunk.len() * stored_bytes(SampleFormat::I24));
                for &x in chunk {
                    let code = self.scaler.code(x);
                    self.out.buf.extend_from_slice(&code.to_le_bytes());
                }
                self.scaler.report.samples += chunk.len() as u64;
            } else {
                self.scaler.encode_le(chunk, &mut self.out.buf);
            }
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
        self.out.close()?;
        Ok(self.scaler.report)
    }
}

#[cfg(test)]
mod tests {
    use super::super::test_util::*;
    use super::*;

    /// Golden bytes from the `numpy.lib.format` description: magic, version 1.0, u16 header
    /// length, the dict (57 bytes) padded with spaces to end in '\n' at byte 128 (10 + 118:
    /// 64 is too short for 10 + 57 + 1).
    #[test]
    fn a_mono_f32_file_has_the_documented_preamble() {
        let s = spec(Format::Npy, SampleFormat::F32, Some(2.0), Some(2));
        let (b, r) = render(&s, &[1.0, -3.0]).unwrap();
        let dict = b"{'descr': '<f4', 'fortran_order': False, 'shape': (2,), }";
        let mut want = Vec::new();
        want.extend_from_slice(b"\x93NUMPY\x01\x00");
        want.extend_from_slice(&118u16.to_le_bytes());
        want.extend_from_slice(dict);
        assert_eq!(dict.len(), 57);
        want.resize(127, b' ');
        want.push(b'\n');
        want.extend_from_slice(&0.5f32.to_le_bytes());
        want.extend_from_slice(&(-1.0f32).to_le_bytes()); // clipped
        assert_eq!(b, want);
        assert_eq!((r.samples, r.clipped), (2, 1));
    }

    #[test]
    fn headers_align_to_64_bytes_for_every_dtype_and_shape() {
        for sf in SampleFormat::ALL {
            for (frames, ch) in [(0u64, 1u16), (7, 1), (123_456_789_012, 1), (10, 2), (3, 16)] {
                let h = npy_header(npy_descr(sf), &npy_shape(frames, ch));
                assert_eq!(h.len() % 64, 0, "{sf} {frames}x{ch}");
                assert_eq!(&h[..8], b"\x93NUMPY\x01\x00");
                let len = usize::from(u16::from_le_bytes([h[8], h[9]]));
                assert_eq!(len + 10, h.len());
                assert_eq!(*h.last().unwrap(), b'\n');
                let text = std::str::from_utf8(&h[10..]).unwrap();
                let shape = if ch == 1 {
                    format!("({frames},)")
                } else {
                    format!("({frames}, {ch})")
                };
                assert!(text.contains(&format!("'shape': {shape}")), "{text}");
                assert!(text.contains(&format!("'descr': '{}'", npy_descr(sf))));
            }
        }
        assert_eq!(npy_descr(SampleFormat::I24), "<i4");
        assert_eq!(npy_descr(SampleFormat::F64), "<f8");
    }

    /// Past a 65535-byte header numpy's format switches to version 2.0 with a u32 length.
    #[test]
    fn an_oversized_header_uses_version_2() {
        let shape = vec![1u64; 20_000]; // "(1, 1, ...)" is about 60 kB; add more
        let long = [shape.clone(), shape].concat();
        let h = npy_header("<f4", &long);
        assert_eq!(&h[..8], b"\x93NUMPY\x02\x00");
        let len = u32::from_le_bytes(h[8..12].try_into().unwrap()) as usize;
        assert_eq!(len + 12, h.len());
        assert_eq!(h.len() % 64, 0);
    }

    /// i24 codes are widened to 4 bytes; two channels are interleaved rows.
    #[test]
    fn i24_is_stored_as_i4_and_channels_as_rows() {
        let mut s = spec(Format::Npy, SampleFormat::I24, Some(1.0), Some(2));
        s.channels = 2;
        let (b, _) = render(&s, &[1.0, -1.0, 0.5, 0.0]).unwrap();
        assert_eq!(b.len(), 128 + 16);
        assert!(std::str::from_utf8(&b[10..128]).unwrap().contains("(2, 2)"));
        let v: Vec<i32> = b[128..]
            .chunks_exact(4)
            .map(|c| i32::from_le_bytes(c.try_into().unwrap()))
            .collect();
        // 0.5 · 8388607 = 4194303.5 → 4194304 (half away from zero).
        assert_eq!(v, [8_388_607, -8_388_607, 4_194_304, 0]);
    }

    #[test]
    fn the_sample_count_is_required_and_kept() {
        let e = open_sink_err(spec(Format::Npy, SampleFormat::F32, None, None));
        assert!(e.contains("sample count"), "{e}");
        let s = spec(Format::Npy, SampleFormat::F32, None, Some(3));
        let mut sink = super::super::open_sink(&s, Vec::new()).unwrap();
        sink.write(&[0.0, 1.0]).unwrap();
        assert!(sink.write(&[0.0, 1.0]).is_err());
        let e = sink.finish().unwrap_err();
        assert!(e.to_string().contains("announced 3 samples but 2"), "{e}");
    }

    fn open_sink_err(s: SinkSpec) -> String {
        let e = super::super::open_sink(&s, Vec::new()).err().unwrap();
        assert_eq!(e.exit_code(), 2);
        e.to_string()
    }
}
