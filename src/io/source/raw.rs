//! Headerless little-endian samples: f32, f64, i16, i24 (3 bytes packed), i32, one channel or
//! several interleaved frame by frame. The sample format, the rate and the channel count come
//! from the options (the command line, a manifest or a profile).

use std::io::Read;

use super::{SampleSource, SourceOptions, StreamInfo, Values, check_rate, decode_le, read_full};
use crate::error::{Error, Result, Setting};
use crate::io::sink::{Format, SampleFormat};

/// Bytes read per block (a multiple of 2, 3, 4 and 8).
const READ_BYTES: usize = 3 << 18;

/// Streaming raw reader. Integer codes read as digital values; floats as stored, their
/// meaning [`Values::Unknown`] (a manifest or `--full-scale` decides).
#[derive(Debug)]
pub struct RawSource<R: Read> {
    input: R,
    info: StreamInfo,
    name: String,
    sample_format: SampleFormat,
    /// Bytes from one stored value to the next (the sample format's size, or 4 for 24-bit
    /// codes widened to four bytes in an `.npy` array).
    stride: usize,
    /// Bytes per frame (every channel).
    frame_bytes: usize,
    buf: Vec<u8>,
    /// Bytes read so far.
    read: u64,
}

impl<R: Read> RawSource<R> {
    /// Needs `options.sample_format` and `options.rate_hz`.
    pub fn new(input: R, options: &SourceOptions) -> Result<RawSource<R>> {
        let stride = options.sample_format.map_or(1, |f| f.bytes());
        RawSource::with_stride(input, options, stride)
    }

    /// [`RawSource::new`] with values `stride` bytes apart (at least the sample format's
    /// size; each value in the low bytes, little-endian).
    pub(super) fn with_stride(
        input: R,
        options: &SourceOptions,
        stride: usize,
    ) -> Result<RawSource<R>> {
        let name = options.name.clone();
        let sample_format = options.sample_format.ok_or_else(|| {
            Error::setting(
                Setting::SampleFormat,
                format!(
                    "{name} is a raw file: say how its samples are stored (f32, f64, i16, i24 \
                     or i32), or keep its manifest beside it"
                ),
            )
        })?;
        let rate = options.rate_hz.or(options.fallback_rate_hz).ok_or_else(|| {
            Error::setting(
                Setting::Rate,
                format!(
                    "{name} is a raw file: give its sample rate, e.g. \u{1}rate\u{1} 48kHz, or keep its \
                     manifest beside it"
                ),
            )
        })?;
        let info = StreamInfo {
            format: Format::Raw,
            sample_format: Some(sample_format),
            sample_rate_hz: check_rate(rate, "\u{1}rate\u{1}", &name)?,
            frames: None,
            channels: options.channels.unwrap_or(1).max(1),
            values: if sample_format.is_integer() {
                Values::Digital
            } else {
                Values::Unknown
            },
            notes: Vec::new(),
            wav_info: None,
        };
        let stride = stride.max(sample_format.bytes());
        let frame_bytes = stride * usize::from(info.channels);
        Ok(RawSource {
            input,
            info,
            name,
            sample_format,
            stride,
            frame_bytes,
            buf: vec![0u8; READ_BYTES],
            read: 0,
        })
    }
}

impl<R: Read> RawSource<R> {
    /// Marks the stream as read from a container with a header (`format`) that announced
    /// `frames` frames.
    pub(super) fn set_header(&mut self, format: Format, frames: u64) {
        self.info.format = format;
        self.info.frames = Some(frames);
    }
}

impl<R: Read> SampleSource for RawSource<R> {
    fn info(&self) -> &StreamInfo {
        &self.info
    }

    fn read_block(&mut self, out: &mut Vec<f64>, max: usize) -> Result<usize> {
        out.clear();
        let b = self.stride;
        let fb = self.frame_bytes;
        let want = max
            .max(1)
            .saturating_mul(fb)
            .min((self.buf.len() / fb).max(1) * fb);
        if self.buf.len() < want {
            self.buf.resize(want, 0);
        }
        let got = read_full(&mut self.input, &mut self.buf[..want], &self.name)?;
        if got % fb != 0 && got % b == 0 {
            let end = self.read + got as u64;
            return Err(Error::input(
                &self.name,
                format!(
                    "truncated: the file ends at byte {end}, inside a frame of {} channels \
                     (its length is not a whole number of frames; is the channel count right?)",
                    self.info.channels
                ),
            ));
        }
        if got % b != 0 {
            let end = self.read + got as u64;
            return Err(Error::input(
                &self.name,
                format!(
                    "truncated: the file ends at byte {end}, inside a {b}-byte {} sample at byte \
                     {} (its length is not a whole number of samples; is \u{1}sample_format\u{1} right?)",
                    self.sample_format,
                    end - end % b as u64
                ),
            ));
        }
        self.read += got as u64;
        decode_le(&self.buf[..got], self.sample_format, self.stride, out);
        Ok(out.len())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn channels_come_interleaved_in_whole_frames() {
        let o = SourceOptions {
            format: Format::Raw,
            sample_format: Some(SampleFormat::I16),
            rate_hz: Some(10.0),
            fallback_rate_hz: None,
            name: "x.i16".into(),
            length_bytes: None,
            channels: Some(3),
        };
        let bytes: Vec<u8> = [1i16, 2, 3, 4, 5, 6]
            .iter()
            .flat_map(|c| c.to_le_bytes())
            .collect();
        let mut s = RawSource::new(&bytes[..], &o).unwrap();
        assert_eq!(s.info().channels, 3);
        let mut v = Vec::new();
        // One frame asked for: three values.
        assert_eq!(s.read_block(&mut v, 1).unwrap(), 3);
        assert_eq!(v, [1.0 / 32767.0, 2.0 / 32767.0, 3.0 / 32767.0]);
        assert_eq!(s.read_block(&mut v, 9).unwrap(), 3);
        assert_eq!(s.read_block(&mut v, 9).unwrap(), 0);
        let mut s = RawSource::new(&bytes[..4 * 2], &o).unwrap();
        let e = s.read_block(&mut v, 9).unwrap_err();
        assert!(
            e.to_string().contains("inside a frame of 3 channels"),
            "{e}"
        );
    }

    #[test]
    fn partial_sample_is_an_error_and_options_are_required() {
        let o = SourceOptions {
            format: Format::Raw,
            sample_format: Some(SampleFormat::I24),
            rate_hz: Some(10.0),
            fallback_rate_hz: None,
            name: "x.i24".into(),
            length_bytes: None,
            channels: None,
        };
        let bytes = [0u8; 3 * 5 + 2];
        let mut s = RawSource::new(&bytes[..], &o).unwrap();
        let e = s.read_block(&mut Vec::new(), 100).unwrap_err();
        assert!(e.to_string().contains("x.i24: truncated"), "{e}");
        let mut s = RawSource::new(&bytes[..15], &o).unwrap();
        let mut v = Vec::new();
        assert_eq!(s.read_block(&mut v, 100).unwrap(), 5);
        assert_eq!(s.read_block(&mut v, 100).unwrap(), 0);
        let e = RawSource::new(
            &bytes[..],
            &SourceOptions {
                rate_hz: None,
                ..o.clone()
            },
        )
        .unwrap_err();
        assert!(e.cli_text().contains("--rate"), "{e}");
        let e = RawSource::new(
            &bytes[..],
            &SourceOptions {
                sample_format: None,
                ..o
            },
        )
        .unwrap_err();
        assert!(e.cli_text().contains("--sample-format"), "{e}");
    }
}
