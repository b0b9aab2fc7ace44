//! RIFF/WAVE writer for any `Write` (no `Seek`): the header is written first from the known
//! sample count.
//!
//! Layouts (Microsoft RIFF/WAVE 1.0 and Rev. 3; WAVEFORMATEXTENSIBLE; REFERENCES §10):
//!
//! | sample format | `fmt ` | other chunks | header bytes |
//! |---|---|---|---|
//! | i16 | PCM, tag 1, 16 bytes | – | 44 |
//! | i24, i32 | EXTENSIBLE, tag 0xFFFE, 40 bytes (cbSize 22, valid bits = container bits, channel mask, PCM SubFormat GUID) | – | 68 |
//! | f32 | IEEE float, tag 3, 18 bytes (cbSize 0) | `fact` (sample frames) | 58 |
//! | f32, more than 2 channels | EXTENSIBLE, 40 bytes, IEEE float SubFormat GUID | `fact` | 80 |
//!
//! EXTENSIBLE is used for PCM wider than 16 bits and for more than 2 channels, as Microsoft's
//! WAVEFORMATEXTENSIBLE documentation and its "Multiple channel audio data and WAVE files"
//! (2001) ask: WAVEFORMATEX cannot describe more than two channels or samples wider than 16
//! bits unambiguously (REFERENCES §10). EXTENSIBLE PCM carries no `fact` chunk: its data is
//! PCM (common practice). 64-bit float WAV is not offered (see [`wav_bytes`]).
//!
//! Frames are interleaved (channel 0, 1, …, N − 1 of frame 0, then frame 1), nBlockAlign =
//! N × container bytes. The channel mask is SPEAKER_FRONT_CENTER for mono and 0 for more
//! channels: 0 means no speaker positions, which is right for measurement channels that are
//! not loudspeaker feeds (WAVEFORMATEXTENSIBLE documentation).

use std::io::Write;

use super::{Buffered, CHUNK_SAMPLES, SampleFormat, Scaler, Sink, SinkReport, SinkSpec};
use crate::error::{Error, Result};

/// WAVE format tag for integer PCM (RIFF/WAVE 1.0).
const TAG_PCM: u16 = 1;
/// WAVE format tag for IEEE float (RIFF/WAVE Rev. 3).
const TAG_IEEE_FLOAT: u16 = 3;
/// WAVE format tag for WAVEFORMATEXTENSIBLE.
const TAG_EXTENSIBLE: u16 = 0xFFFE;
/// `dwChannelMask` for one channel: SPEAKER_FRONT_CENTER = 0x4 (Microsoft "Multiple channel
/// audio data and WAVE files", 2001; bit value from memory). Mono is played on the centre.
const MASK_FRONT_CENTER: u32 = 0x4;
/// KSDATAFORMAT_SUBTYPE_PCM, GUID 00000001-0000-0010-8000-00AA00389B71, in its stored byte
/// order: Data1 (u32), Data2 and Data3 (u16) little-endian, then Data4's 8 bytes as written
/// (REFERENCES §10; byte order per the GUID structure, from memory).
const GUID_PCM: [u8; 16] = [
    0x01, 0x00, 0x00, 0x00, 0x00, 0x00, 0x10, 0x00, 0x80, 0x00, 0x00, 0xAA, 0x00, 0x38, 0x9B, 0x71,
];
/// KSDATAFORMAT_SUBTYPE_IEEE_FLOAT, GUID 00000003-0000-0010-8000-00AA00389B71, stored like
/// [`GUID_PCM`].
const GUID_IEEE_FLOAT: [u8; 16] = [
    0x03, 0x00, 0x00, 0x00, 0x00, 0x00, 0x10, 0x00, 0x80, 0x00, 0x00, 0xAA, 0x00, 0x38, 0x9B, 0x71,
];
/// `dwChannelMask` for more than one channel: 0, no speaker positions.
const MASK_NONE: u32 = 0;

/// True when `fmt ` must be WAVEFORMATEXTENSIBLE: PCM wider than 16 bits or more than two
/// channels (Microsoft WAVEFORMATEXTENSIBLE documentation; REFERENCES §10).
fn extensible(sample_format: SampleFormat, channels: u16) -> bool {
    channels > 2 || matches!(sample_format, SampleFormat::I24 | SampleFormat::I32)
}

/// The RIFF size and data size fields are u32 (REFERENCES §10): the largest RIFF size.
const RIFF_SIZE_MAX: u64 = u32::MAX as u64;

/// The fixed part of a WAV file for one sample format.
#[derive(Debug, Clone, Copy)]
struct Layout {
    /// Bytes before the sample data (RIFF header, `fmt `, `fact`, `data` header).
    header: u64,
}

fn layout(sample_format: SampleFormat, channels: u16) -> Result<Layout> {
    if sample_format == SampleFormat::F32 && extensible(sample_format, channels) {
        // 12 + fmt (8+40) + fact (8+4) + data header (8)
        return Ok(Layout { header: 80 });
    }
    if extensible(sample_format, channels) {
        return Ok(Layout { header: 68 });
    }
    let header = match sample_format {
        // "RIFF"+size+"WAVE" (12) + fmt (8+16) + data header (8)
        SampleFormat::I16 => 44,
        // 12 + fmt (8+40) + data header (8)
        SampleFormat::I24 | SampleFormat::I32 => 68,
        // 12 + fmt (8+18) + fact (8+4) + data header (8)
        SampleFormat::F32 => 58,
        SampleFormat::F64 => return Err(f64_refused()),
    };
    Ok(Layout { header })
}

fn f64_refused() -> Error {
    Error::Unsupported(
        "64-bit float WAV is not offered: the format allows it, but many WAV readers and audio \
         tools cannot open it; use f32 WAV (24-bit significand), i32 WAV, or raw f64 output"
            .to_string(),
    )
}

/// Data bytes and the pad byte that makes the data chunk even (RIFF: the pad is not counted
/// in the chunk's size but is in the RIFF size).
fn data_and_pad(frames: u64, sample_format: SampleFormat, channels: u16) -> (u64, u64) {
    let data = frames.saturating_mul(u64::from(channels) * sample_format.bytes() as u64);
    (data, data % 2)
}

/// Total size in bytes of a WAV holding `frames` frames of `channels` samples in
/// `sample_format`: header, data and pad byte. Saturates at `u64::MAX` for absurd counts.
/// Errors for [`SampleFormat::F64`], which WAV output does not offer.
pub fn wav_bytes(frames: u64, sample_format: SampleFormat, channels: u16) -> Result<u64> {
    let l = layout(sample_format, channels)?;
    let (data, pad) = data_and_pad(frames, sample_format, channels);
    Ok(l.header.saturating_add(data).saturating_add(pad))
}

/// The most frames a WAV of `channels` channels in `sample_format` can hold under the 4 GiB
/// limit of the u32 RIFF size field. Errors for [`SampleFormat::F64`].
pub fn wav_max_frames(sample_format: SampleFormat, channels: u16) -> Result<u64> {
    let l = layout(sample_format, channels)?;
    let bytes = u64::from(channels) * sample_format.bytes() as u64;
    // RIFF size = file size − 8; take the largest frame count, then step back if the pad
    // byte pushes it over.
    let room = RIFF_SIZE_MAX - (l.header - 8);
    let mut frames = room / bytes;
    while wav_bytes(frames, sample_format, channels)? - 8 > RIFF_SIZE_MAX {
        frames -= 1;
    }
    Ok(frames)
}

/// Refuses (with [`Error::Unsupported`]) a WAV whose RIFF or data size would exceed the u32
/// fields of RIFF/WAVE, i.e. a file past 4 GiB. Nothing is written; call before opening.
pub fn check_wav_size(frames: u64, sample_format: SampleFormat, channels: u16) -> Result<()> {
    let total = wav_bytes(frames, sample_format, channels)?;
    // The RIFF size (total − 8) always exceeds the data size, so checking it covers both.
    if total - 8 <= RIFF_SIZE_MAX {
        return Ok(());
    }
    let max = wav_max_frames(sample_format, channels)?;
    Err(Error::Unsupported(format!(
        "a WAV of {frames} {sample_format} samples would be {total} bytes, but RIFF/WAV sizes \
         are 32-bit fields, which limits a WAV file to 4 GiB ({max} {sample_format} samples \
         at most); write raw output instead (no size limit), or ask for a shorter duration"
    )))
}

/// WAV-specific checks of a spec (called from [`SinkSpec::validate`]).
pub(super) fn validate(spec: &SinkSpec) -> Result<()> {
    layout(spec.sample_format, spec.channels)?;
    let rate = spec.sample_rate_hz;
    let bytes_per_second = rate * f64::from(spec.channels) * spec.sample_format.bytes() as f64;
    if rate.fract() != 0.0 || bytes_per_second > f64::from(u32::MAX) {
        return Err(Error::Unsupported(format!(
            "WAV stores the sample rate and byte rate as 32-bit whole numbers; {rate} Hz cannot \
             be written (use a whole sample rate, or raw output)"
        )));
    }
    let Some(frames) = spec.frames else {
        return Err(Error::Unsupported(
            "WAV output needs the total sample count before the first sample (its header \
             comes first); give a duration, or use raw or CSV output"
                .to_string(),
        ));
    };
    check_wav_size(frames, spec.sample_format, spec.channels)
}

/// The header bytes for a WAV of `frames` frames of `channels` samples. The spec must have
/// passed [`validate`], so every size fits its field.
fn header(frames: u64, sample_format: SampleFormat, sample_rate_hz: f64, channels: u16) -> Vec<u8> {
    let (data, pad) = data_and_pad(frames, sample_format, channels);
    let total = layout(sample_format, channels).expect("validated").header + data + pad;
    let container_bytes = sample_format.bytes() as u16;
    let block_align = channels * container_bytes;
    let rate = sample_rate_hz as u32;
    let bits = 8 * container_bytes;

    let mut h = Vec::with_capacity(68);
    h.extend_from_slice(b"RIFF");
    h.extend_from_slice(&((total - 8) as u32).to_le_bytes());
    h.extend_from_slice(b"WAVE");
    let (tag, fmt_len): (u16, u32) = match sample_format {
        _ if extensible(sample_format, channels) => (TAG_EXTENSIBLE, 40),
        SampleFormat::I16 => (TAG_PCM, 16),
        _ => (TAG_IEEE_FLOAT, 18),
    };
    let float = sample_format == SampleFormat::F32;
    h.extend_from_slice(b"fmt ");
    h.extend_from_slice(&fmt_len.to_le_bytes());
    h.extend_from_slice(&tag.to_le_bytes()); // wFormatTag
    h.extend_from_slice(&channels.to_le_bytes()); // nChannels
    h.extend_from_slice(&rate.to_le_bytes()); // nSamplesPerSec
    h.extend_from_slice(&(rate * u32::from(block_align)).to_le_bytes()); // nAvgBytesPerSec
    h.extend_from_slice(&block_align.to_le_bytes()); // nBlockAlign
    h.extend_from_slice(&bits.to_le_bytes()); // wBitsPerSample (container)
    match tag {
        TAG_IEEE_FLOAT => {
            h.extend_from_slice(&0u16.to_le_bytes()); // cbSize
            h.extend_from_slice(b"fact");
            h.extend_from_slice(&4u32.to_le_bytes());
            h.extend_from_slice(&(frames as u32).to_le_bytes()); // dwSampleLength
        }
        TAG_EXTENSIBLE => {
            h.extend_from_slice(&22u16.to_le_bytes()); // cbSize
            h.extend_from_slice(&bits.to_le_bytes()); // wValidBitsPerSample
            let mask = if channels == 1 {
                MASK_FRONT_CENTER
            } else {
                MASK_NONE
            };
            h.extend_from_slice(&mask.to_le_bytes()); // dwChannelMask
            h.extend_from_slice(if float { &GUID_IEEE_FLOAT } else { &GUID_PCM }); // SubFormat
            if float {
                h.extend_from_slice(b"fact");
                h.extend_from_slice(&4u32.to_le_bytes());
                h.extend_from_slice(&(frames as u32).to_le_bytes()); // dwSampleLength
            }
        }
        _ => {}
    }
    h.extend_from_slice(b"data");
    h.extend_from_slice(&(data as u32).to_le_bytes());
    debug_assert_eq!(h.len() as u64, total - data - pad);
    h
}

/// WAV writer: i16 PCM, i24/i32 EXTENSIBLE PCM, f32 IEEE float, interleaved frames of
/// [`SinkSpec::channels`] samples (see the module docs).
///
/// Needs a full scale and the sample count ([`SinkSpec::frames`]); writing more samples
/// than announced, or finishing with fewer, is an error because the header would be wrong.
#[derive(Debug)]
pub struct WavSink<W: Write> {
    out: Buffered<W>,
    scaler: Scaler,
    frames: u64,
    channels: u16,
    pad: bool,
}

impl<W: Write> WavSink<W> {
    /// Validates `spec` (see [`SinkSpec::validate`]) and prepares the header; nothing is
    /// written to `out` until the first `write` or `finish`.
    pub fn new(spec: &SinkSpec, out: W) -> Result<WavSink<W>> {
        spec.validate()?;
        if spec.format != super::Format::Wav {
            return Err(Error::Unsupported(format!(
                "a WAV writer was asked for {} output",
                spec.format
            )));
        }
        let frames = spec.frames.expect("validated");
        let mut out = Buffered::new(out, "writing WAV");
        out.buf.extend_from_slice(&header(
            frames,
            spec.sample_format,
            spec.sample_rate_hz,
            spec.channels,
        ));
        Ok(WavSink {
            out,
            scaler: Scaler::new(spec),
            frames,
            channels: spec.channels,
            pad: data_and_pad(frames, spec.sample_format, spec.channels).1 == 1,
        })
    }

    /// Samples announced: frames × channels.
    fn samples(&self) -> u64 {
        self.frames * u64::from(self.channels)
    }

    fn count_error(&self, got: u64) -> Error {
        Error::io(
            "writing WAV",
            std::io::Error::new(
                std::io::ErrorKind::InvalidInput,
                format!(
                    "the WAV header announced {} samples but {got} were given; \
                     the file would be inconsistent",
                    self.samples()
                ),
            ),
        )
    }
}

impl<W: Write> Sink for WavSink<W> {
    fn write(&mut self, samples: &[f64]) -> Result<()> {
        self.out.ensure_open()?;
        let done = self.scaler.report.samples;
        let after = done + samples.len() as u64;
        if after > self.samples() {
            return Err(self.count_error(after));
        }
        self.scaler.check_finite(samples)?;
        for chunk in samples.chunks(CHUNK_SAMPLES) {
            self.scaler.encode_le(chunk, &mut self.out.buf);
            self.out.maybe_flush()?;
        }
        Ok(())
    }

    fn finish(&mut self) -> Result<SinkReport> {
        self.out.ensure_open()?;
        let done = self.scaler.report.samples;
        if done != self.samples() {
            self.out.finished = true;
            return Err(self.count_error(done));
        }
        if self.pad {
            self.out.buf.push(0);
        }
        self.out.close()?;
        Ok(self.scaler.report)
    }
}

#[cfg(test)]
mod tests {
    use super::super::test_util::*;
    use super::super::{Format, open_sink};
    use super::*;
    use std::io::Cursor;

    const FS48K: [u8; 4] = [0x80, 0xBB, 0x00, 0x00]; // 48000 = 0x0000BB80, little-endian

    fn wav(sf: SampleFormat, full_scale: f64, x: &[f64]) -> (Vec<u8>, SinkReport) {
        render(
            &spec(Format::Wav, sf, Some(full_scale), Some(x.len() as u64)),
            x,
        )
        .unwrap()
    }

    /// Golden bytes, field by field from the RIFF/WAVE 1.0 `fmt ` layout (REFERENCES §10).
    #[test]
    fn pcm16_mono_two_samples_golden_bytes() {
        // 0.5/2 · 32767 = 8191.75 → 8192; −1/2 · 32767 = −16383.5 → −16384 (half away from 0).
        let (b, r) = wav(SampleFormat::I16, 2.0, &[0.5, -1.0]);
        let mut want = Vec::new();
        want.extend_from_slice(b"RIFF");
        want.extend_from_slice(&[40, 0, 0, 0]); // file 48 bytes − 8
        want.extend_from_slice(b"WAVE");
        want.extend_from_slice(b"fmt ");
        want.extend_from_slice(&[16, 0, 0, 0]); // chunk size
        want.extend_from_slice(&[1, 0]); // wFormatTag = 1 (PCM)
        want.extend_from_slice(&[1, 0]); // nChannels = 1
        want.extend_from_slice(&FS48K); // nSamplesPerSec
        want.extend_from_slice(&[0x00, 0x77, 0x01, 0x00]); // nAvgBytesPerSec = 96000
        want.extend_from_slice(&[2, 0]); // nBlockAlign = 1 ch × 2 bytes
        want.extend_from_slice(&[16, 0]); // wBitsPerSample
        want.extend_from_slice(b"data");
        want.extend_from_slice(&[4, 0, 0, 0]);
        want.extend_from_slice(&[0x00, 0x20]); // 8192 = 0x2000
        want.extend_from_slice(&[0x00, 0xC0]); // −16384 = 0xC000
        assert_eq!(b, want);
        assert_eq!(b.len() as u64, wav_bytes(2, SampleFormat::I16, 1).unwrap());
        assert_eq!((r.samples, r.clipped, r.peak_abs), (2, 0, 1.0));
    }

    /// Golden bytes for WAVEFORMATEXTENSIBLE (REFERENCES §10: cbSize 22, valid bits,
    /// channel mask, SubFormat GUID) with packed 3-byte samples.
    #[test]
    fn pcm24_extensible_two_samples_golden_bytes() {
        // 0.5 · 8388607 = 4194303.5 → 4194304 = 0x400000; −0.25 · 8388607 → −2097152 = 0xE00000.
        let (b, _) = wav(SampleFormat::I24, 1.0, &[0.5, -0.25]);
        let mut want = Vec::new();
        want.extend_from_slice(b"RIFF");
        want.extend_from_slice(&[66, 0, 0, 0]); // 74 − 8
        want.extend_from_slice(b"WAVE");
        want.extend_from_slice(b"fmt ");
        want.extend_from_slice(&[40, 0, 0, 0]);
        want.extend_from_slice(&[0xFE, 0xFF]); // wFormatTag = 0xFFFE (EXTENSIBLE)
        want.extend_from_slice(&[1, 0]); // nChannels
        want.extend_from_slice(&FS48K);
        want.extend_from_slice(&[0x80, 0x32, 0x02, 0x00]); // 144000 = 48000 × 3
        want.extend_from_slice(&[3, 0]); // nBlockAlign
        want.extend_from_slice(&[24, 0]); // wBitsPerSample (container)
        want.extend_from_slice(&[22, 0]); // cbSize
        want.extend_from_slice(&[24, 0]); // wValidBitsPerSample
        want.extend_from_slice(&[4, 0, 0, 0]); // dwChannelMask = SPEAKER_FRONT_CENTER
        // SubFormat KSDATAFORMAT_SUBTYPE_PCM 00000001-0000-0010-8000-00AA00389B71
        want.extend_from_slice(&[1, 0, 0, 0, 0, 0, 0x10, 0]);
        want.extend_from_slice(&[0x80, 0, 0, 0xAA, 0, 0x38, 0x9B, 0x71]);
        want.extend_from_slice(b"data");
        want.extend_from_slice(&[6, 0, 0, 0]);
        want.extend_from_slice(&[0x00, 0x00, 0x40]);
        want.extend_from_slice(&[0x00, 0x00, 0xE0]);
        assert_eq!(b, want);
        assert_eq!(b.len() as u64, wav_bytes(2, SampleFormat::I24, 1).unwrap());
    }

    /// Golden bytes for IEEE float: tag 3, cbSize 0 and a `fact` chunk (Rev. 3 rule quoted in
    /// REFERENCES §10). The second sample is 1.5 × full scale and clips to −1.0.
    #[test]
    fn float32_two_samples_golden_bytes_with_fact_chunk() {
        let (b, r) = wav(SampleFormat::F32, 1.0, &[0.5, -1.5]);
        let mut want = Vec::new();
        want.extend_from_slice(b"RIFF");
        want.extend_from_slice(&[58, 0, 0, 0]); // 66 − 8
        want.extend_from_slice(b"WAVE");
        want.extend_from_slice(b"fmt ");
        want.extend_from_slice(&[18, 0, 0, 0]);
        want.extend_from_slice(&[3, 0]); // wFormatTag = 3 (IEEE float)
        want.extend_from_slice(&[1, 0]);
        want.extend_from_slice(&FS48K);
        want.extend_from_slice(&[0x00, 0xEE, 0x02, 0x00]); // 192000 = 48000 × 4
        want.extend_from_slice(&[4, 0]);
        want.extend_from_slice(&[32, 0]);
        want.extend_from_slice(&[0, 0]); // cbSize = 0
        want.extend_from_slice(b"fact");
        want.extend_from_slice(&[4, 0, 0, 0]);
        want.extend_from_slice(&[2, 0, 0, 0]); // dwSampleLength = 2 frames
        want.extend_from_slice(b"data");
        want.extend_from_slice(&[8, 0, 0, 0]);
        want.extend_from_slice(&[0x00, 0x00, 0x00, 0x3F]); // 0.5f32 = 0x3F000000
        want.extend_from_slice(&[0x00, 0x00, 0x80, 0xBF]); // −1.0f32 = 0xBF800000
        assert_eq!(b, want);
        assert_eq!((r.clipped, r.peak_abs), (1, 1.5));
    }

    #[test]
    fn odd_data_gets_a_pad_byte_counted_in_riff_size_only() {
        let (b, _) = wav(SampleFormat::I24, 1.0, &[0.1, 0.2, 0.3]);
        assert_eq!(b.len(), 68 + 9 + 1);
        assert_eq!(u32::from_le_bytes(b[4..8].try_into().unwrap()), 78 - 8);
        assert_eq!(&b[60..64], b"data");
        assert_eq!(u32::from_le_bytes(b[64..68].try_into().unwrap()), 9);
        assert_eq!(*b.last().unwrap(), 0);
        let r = hound::WavReader::new(Cursor::new(&b)).unwrap();
        assert_eq!(r.len(), 3);
    }

    /// Every WAV sample format read back by an independent reader (the hound crate) gives
    /// the codes the quantiser rule predicts, within half an LSB of the physical input.
    #[test]
    fn every_wav_format_reads_back_with_hound() {
        let n = 10_007; // odd, so i24 needs the pad byte
        let full_scale = 2.0;
        // Full scale = 2.86σ: about 0.4 % clip (two-sided normal tail), ~40 samples here.
        let x = gaussian(n, 0.7, SEED);
        for sf in [
            SampleFormat::I16,
            SampleFormat::I24,
            SampleFormat::I32,
            SampleFormat::F32,
        ] {
            let (b, rep) = wav(sf, full_scale, &x);
            assert_eq!(b.len() as u64, wav_bytes(n as u64, sf, 1).unwrap(), "{sf}");
            let mut rd = hound::WavReader::new(Cursor::new(&b)).expect("hound opens it");
            let s = rd.spec();
            assert_eq!((s.channels, s.sample_rate), (1, 48_000), "{sf}");
            assert_eq!(s.bits_per_sample as usize, 8 * sf.bytes(), "{sf}");
            let clip = |v: f64| (v / full_scale).clamp(-1.0, 1.0);
            let clipped = x.iter().filter(|v| v.abs() > full_scale).count() as u64;
            assert_eq!(rep.clipped, clipped, "{sf} (seed {SEED})");
            if sf == SampleFormat::F32 {
                let got: Vec<f32> = rd.samples::<f32>().map(|v| v.unwrap()).collect();
                assert_eq!(got.len(), n);
                for (g, v) in got.iter().zip(&x) {
                    assert_eq!(*g, clip(*v) as f32, "{sf}");
                }
                continue;
            }
            let m = f64::from(sf.full_scale_code().unwrap());
            let got: Vec<i32> = rd.samples::<i32>().map(|v| v.unwrap()).collect();
            assert_eq!(got.len(), n, "{sf}");
            for (g, v) in got.iter().zip(&x) {
                let d = clip(*v);
                assert_eq!(*g, (d * m).round() as i32, "{sf}");
                // Independent of the rounding rule: within half an LSB (+ f64 rounding).
                assert!(
                    (f64::from(*g) / m - d).abs() <= 0.5 / m * (1.0 + 1e-9),
                    "{sf}"
                );
            }
        }
    }

    #[test]
    fn f64_wav_is_refused_with_a_reason() {
        let e = open_sink(
            &spec(Format::Wav, SampleFormat::F64, Some(1.0), Some(2)),
            Vec::new(),
        )
        .err()
        .unwrap();
        assert!(matches!(e, Error::Unsupported(_)));
        let m = e.to_string();
        assert!(m.contains("readers") && m.contains("raw f64"), "{m}");
        assert!(wav_bytes(1, SampleFormat::F64, 1).is_err());
    }

    #[test]
    fn wav_needs_frames_and_a_whole_rate() {
        let e = open_sink(
            &spec(Format::Wav, SampleFormat::I16, Some(1.0), None),
            Vec::new(),
        )
        .err()
        .unwrap();
        assert!(e.to_string().contains("sample count"), "{e}");
        let mut s = spec(Format::Wav, SampleFormat::I16, Some(1.0), Some(2));
        s.sample_rate_hz = 44_100.5;
        assert!(matches!(s.validate(), Err(Error::Unsupported(_))));
        s.sample_rate_hz = 2e9; // byte rate 4e9 fits u32 for i16 …
        assert!(s.validate().is_ok());
        s.sample_format = SampleFormat::I24; // … 6e9 does not
        assert!(s.validate().is_err());
    }

    /// The limits below are hand arithmetic on `RIFF size = header − 8 + data + pad ≤ 2^32 − 1`.
    #[test]
    fn the_4_gib_limit_is_computed_exactly() {
        // i16: 36 + 2f ≤ 4294967295 → f ≤ 2147483629
        assert_eq!(wav_max_frames(SampleFormat::I16, 1).unwrap(), 2_147_483_629);
        // f32: 50 + 4f → f ≤ 1073741811
        assert_eq!(wav_max_frames(SampleFormat::F32, 1).unwrap(), 1_073_741_811);
        // i32: 60 + 4f → f ≤ 1073741808
        assert_eq!(wav_max_frames(SampleFormat::I32, 1).unwrap(), 1_073_741_808);
        // i24: 60 + 3f + pad: f = 1431655745 gives 3f = 4294967235 (odd) + pad → one too many.
        assert_eq!(wav_max_frames(SampleFormat::I24, 1).unwrap(), 1_431_655_744);
        for sf in [
            SampleFormat::I16,
            SampleFormat::I24,
            SampleFormat::I32,
            SampleFormat::F32,
        ] {
            let max = wav_max_frames(sf, 1).unwrap();
            assert!(check_wav_size(max, sf, 1).is_ok(), "{sf}");
            assert!(
                wav_bytes(max, sf, 1).unwrap() - 8 <= u64::from(u32::MAX),
                "{sf}"
            );
            let e = check_wav_size(max + 1, sf, 1).unwrap_err();
            assert!(matches!(e, Error::Unsupported(_)));
            let m = e.to_string();
            assert!(
                m.contains("4 GiB") && m.contains("raw") && m.contains("shorter"),
                "{m}"
            );
        }
        assert_eq!(wav_bytes(u64::MAX, SampleFormat::I32, 1).unwrap(), u64::MAX);
    }

    /// 2^30 f32 samples (exactly 4 GiB of data) are refused at open, before any byte is
    /// written.
    #[test]
    fn oversized_wav_is_refused_before_writing() {
        struct Counting(u64);
        impl Write for Counting {
            fn write(&mut self, b: &[u8]) -> std::io::Result<usize> {
                self.0 += b.len() as u64;
                Ok(b.len())
            }
            fn flush(&mut self) -> std::io::Result<()> {
                Ok(())
            }
        }
        let mut out = Counting(0);
        let s = spec(Format::Wav, SampleFormat::F32, Some(1.0), Some(1 << 30));
        let e = open_sink(&s, &mut out).err().unwrap();
        assert!(e.to_string().contains("4 GiB"), "{e}");
        assert_eq!(e.exit_code(), 2);
        assert_eq!(out.0, 0);
    }

    #[test]
    fn wrong_sample_count_is_an_error() {
        let s = spec(Format::Wav, SampleFormat::I16, Some(1.0), Some(3));
        // Too few.
        let mut sink = open_sink(&s, Vec::new()).unwrap();
        sink.write(&[0.0, 0.1]).unwrap();
        let e = sink.finish().unwrap_err();
        assert!(e.to_string().contains("announced 3 samples but 2"), "{e}");
        // Too many: refused at the write that would overrun.
        let mut sink = open_sink(&s, Vec::new()).unwrap();
        sink.write(&[0.0, 0.1]).unwrap();
        let e = sink.write(&[0.2, 0.3]).unwrap_err();
        assert!(e.to_string().contains("but 4"), "{e}");
        sink.write(&[0.2]).unwrap();
        assert_eq!(sink.finish().unwrap().samples, 3);
    }

    #[test]
    fn empty_wav_is_a_valid_file() {
        let (b, r) = wav(SampleFormat::F32, 1.0, &[]);
        assert_eq!((b.len(), r.samples), (58, 0));
        assert_eq!(hound::WavReader::new(Cursor::new(&b)).unwrap().len(), 0);
    }
}
