//! numpy `.npy` arrays as `generate` writes them (format versions 1.0 to 3.0, C order): one
//! channel of shape `(N,)` or N frames of C channels of shape `(N, C)`, dtype `<f4`, `<f8`,
//! `<i2` or `<i4`; a manifest that says `i24` marks `<i4` values as 24-bit codes widened to
//! four bytes. The samples after the header are read as a raw file is, with the header's
//! frame count. The format: numpy's `numpy.lib.format` documentation (NEP 1).

use std::io::Read;

use super::{RawSource, SampleSource, SourceOptions, StreamInfo, echo, read_full};
use crate::error::{Error, Result};
use crate::io::sink::{Format, SampleFormat};

/// What an `.npy` header says: dtype, order and shape.
#[derive(Debug, Clone, PartialEq)]
struct Header {
    descr: String,
    fortran_order: bool,
    shape: Vec<u64>,
}

/// The text after `'key':` in a header dict, up to the next `,` outside brackets or the end.
fn field<'a>(dict: &'a str, key: &str) -> Option<&'a str> {
    let at = dict.find(&format!("'{key}'"))? + key.len() + 2;
    let rest = dict[at..].trim_start().strip_prefix(':')?.trim_start();
    let mut depth = 0i32;
    let end = rest
        .char_indices()
        .find(|&(_, c)| {
            match c {
                '(' | '[' => depth += 1,
                ')' | ']' => depth -= 1,
                _ => {}
            }
            depth < 0 || (depth == 0 && (c == ',' || c == '}'))
        })
        .map_or(rest.len(), |(i, c)| if c == ')' { i + 1 } else { i });
    Some(rest[..end].trim())
}

/// Parses the header dict `{'descr': '<f4', 'fortran_order': False, 'shape': (N, C), }`.
fn parse_header(dict: &str) -> Option<Header> {
    let descr = field(dict, "descr")?.trim_matches(['\'', '"']).to_string();
    let fortran_order = match field(dict, "fortran_order")? {
        "True" => true,
        "False" => false,
        _ => return None,
    };
    let shape = field(dict, "shape")?
        .trim_start_matches('(')
        .trim_end_matches(')')
        .split(',')
        .map(str::trim)
        .filter(|s| !s.is_empty())
        .map(|s| s.trim_end_matches('L').parse::<u64>().ok())
        .collect::<Option<Vec<u64>>>()?;
    Some(Header {
        descr,
        fortran_order,
        shape,
    })
}

/// Reads the header of an `.npy` stream: the magic, the version and the dict.
fn read_header<R: Read>(input: &mut R, name: &str) -> Result<Header> {
    let bad = |why: String| Error::input(name, why);
    let mut pre = [0u8; 8];
    let got = read_full(input, &mut pre, name)?;
    if got < 6 || &pre[..6] != b"\x93NUMPY" {
        return Err(bad(
            "not a .npy file: it does not start with numpy's magic bytes \\x93NUMPY".into(),
        ));
    }
    if got < 8 {
        return Err(bad("truncated inside its npy header".into()));
    }
    let len = match pre[6] {
        1 => {
            let mut b = [0u8; 2];
            read_full(input, &mut b, name)?;
            usize::from(u16::from_le_bytes(b))
        }
        2 | 3 => {
            let mut b = [0u8; 4];
            read_full(input, &mut b, name)?;
            u32::from_le_bytes(b) as usize
        }
        v => return Err(bad(format!("npy format version {v}: expected 1, 2 or 3"))),
    };
    if len > 1 << 20 {
        return Err(bad(format!(
            "npy header of {len} bytes: expected at most 1 MiB"
        )));
    }
    let mut text = vec![0u8; len];
    if read_full(input, &mut text, name)? < len {
        return Err(bad("truncated inside its npy header".into()));
    }
    let dict = String::from_utf8_lossy(&text);
    parse_header(&dict).ok_or_else(|| {
        bad(format!(
            "npy header {:?}: expected a dict with 'descr', 'fortran_order' and 'shape'",
            echo(dict.trim())
        ))
    })
}

/// The sample format of a dtype; `i24` (from a manifest) turns `<i4` into widened 24-bit
/// codes, read 4 bytes apart.
fn sample_format_of(descr: &str, stated: Option<SampleFormat>) -> Option<(SampleFormat, usize)> {
    Some(match descr {
        "<f4" => (SampleFormat::F32, 4),
        "<f8" => (SampleFormat::F64, 8),
        "<i2" => (SampleFormat::I16, 2),
        "<i4" if stated == Some(SampleFormat::I24) => (SampleFormat::I24, 4),
        "<i4" => (SampleFormat::I32, 4),
        _ => return None,
    })
}

/// Streaming `.npy` reader: the header read now, the samples as a raw file's.
#[derive(Debug)]
pub struct NpySource<R: Read> {
    raw: RawSource<R>,
}

impl<R: Read> NpySource<R> {
    /// Reads the header; the rate comes from `options` (the command line or a manifest).
    pub fn new(mut input: R, options: &SourceOptions) -> Result<NpySource<R>> {
        let name = options.name.as_str();
        let h = read_header(&mut input, name)?;
        let (sample_format, stride) = sample_format_of(&h.descr, options.sample_format)
            .ok_or_else(|| {
                Error::input(
                    name,
                    format!(
                        "npy dtype {:?}: analyze reads little-endian '<f4', '<f8', '<i2' or \
                         '<i4' samples (ADC code arrays are not analysed)",
                        echo(&h.descr)
                    ),
                )
            })?;
        let (frames, channels) = match h.shape[..] {
            [n] => (n, 1),
            [n, c] if (1..=u64::from(u16::MAX)).contains(&c) => (n, c as u16),
            _ => {
                return Err(Error::input(
                    name,
                    format!(
                        "npy shape {:?}: expected (samples,) or (samples, channels)",
                        h.shape
                    ),
                ));
            }
        };
        if h.fortran_order && channels > 1 {
            return Err(Error::input(
                name,
                "npy array in Fortran order: expected C order (frames stored one after another)",
            ));
        }
        let raw_options = SourceOptions {
            format: Format::Raw,
            sample_format: Some(sample_format),
            channels: Some(channels),
            ..options.clone()
        };
        let mut raw = RawSource::with_stride(input, &raw_options, stride)?;
        raw.set_header(Format::Npy, frames);
        Ok(NpySource { raw })
    }
}

impl<R: Read> SampleSource for NpySource<R> {
    fn info(&self) -> &StreamInfo {
        self.raw.info()
    }

    fn read_block(&mut self, out: &mut Vec<f64>, max: usize) -> Result<usize> {
        self.raw.read_block(out, max)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::io::sink::npy_header;

    fn options() -> SourceOptions {
        SourceOptions {
            format: Format::Npy,
            sample_format: None,
            rate_hz: Some(10.0),
            fallback_rate_hz: None,
            name: "x.npy".into(),
            length_bytes: None,
            channels: None,
        }
    }

    #[test]
    fn the_writers_header_reads_back_with_its_frames_and_channels() {
        let mut bytes = npy_header("<i2", &[2, 3]);
        for c in [1i16, 2, 3, 4, 5, -32767] {
            bytes.extend(c.to_le_bytes());
        }
        let mut s = NpySource::new(&bytes[..], &options()).unwrap();
        assert_eq!((s.info().channels, s.info().frames), (3, Some(2)));
        assert_eq!(s.info().format, Format::Npy);
        let mut out = Vec::new();
        s.read_block(&mut out, 10).unwrap();
        assert_eq!(out.len(), 6);
        assert_eq!(out[5], -1.0);
        assert_eq!(out[0], 1.0 / 32767.0);
    }

    #[test]
    fn widened_24_bit_codes_read_at_their_own_scale() {
        let mut bytes = npy_header("<i4", &[2]);
        for c in [8_388_607i32, -4] {
            bytes.extend(c.to_le_bytes());
        }
        let o = SourceOptions {
            sample_format: Some(SampleFormat::I24),
            ..options()
        };
        let mut s = NpySource::new(&bytes[..], &o).unwrap();
        let mut out = Vec::new();
        s.read_block(&mut out, 10).unwrap();
        assert_eq!(out, [1.0, -4.0 / 8_388_607.0]);
    }

    #[test]
    fn what_is_not_an_array_of_samples_is_refused_by_name() {
        let e = |b: Vec<u8>| NpySource::new(&b[..], &options()).unwrap_err().to_string();
        assert!(e(b"RIFF....".to_vec()).contains("magic"));
        assert!(e(npy_header("<u2", &[4])).contains("'<f4'"));
        assert!(e(npy_header("<f4", &[2, 2, 2])).contains("(samples, channels)"));
        assert!(e(b"\x93NUMPY\x01\x00\x04\x00{}  ".to_vec()).contains("'descr'"));
    }
}
