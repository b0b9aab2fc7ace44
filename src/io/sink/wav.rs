//! RIFF/WAVE writer for any `Write` (no `Seek`): the header is written first from the known
//! sample count. A file whose RIFF size would pass the u32 field (4 GiB) is written as RF64.
//!
//! Layouts (Microsoft RIFF/WAVE 1.0 and Rev. 3; WAVEFORMATEXTENSIBLE; REFERENCES §10):
//!
//! | sample format | `fmt ` | other chunks | header bytes (RIFF / RF64) |
//! |---|---|---|---|
//! | i16 | PCM, tag 1, 16 bytes | – | 44 / 80 |
//! | i24, i32 | EXTENSIBLE, tag 0xFFFE, 40 bytes (cbSize 22, valid bits = container bits, channel mask, PCM SubFormat GUID) | – | 68 / 104 |
//! | f32 | IEEE float, tag 3, 18 bytes (cbSize 0) | `fact` (sample frames) | 58 / 94 |
//! | f32, more than 2 channels | EXTENSIBLE, 40 bytes, IEEE float SubFormat GUID | `fact` | 80 / 116 |
//!
//! The header bytes above are without the INFO comment. A WAV written with a full scale (every
//! WAV `generate` writes) also carries a `LIST`/`INFO` chunk with its unit, full scale,
//! profile name and seed ([`crate::io::wav_info`]), right before `data`: the header grows by
//! that chunk's length (even, so `data` stays on an even offset). Readers skip chunks they do
//! not know (RIFF), so every WAV reader still opens the file; `analyze` reads the comment
//! when no manifest is beside the file.
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
//!
//! # RF64 (EBU Tech 3306)
//!
//! When the RIFF size (file length − 8) of the plain layout would exceed `u32::MAX`, the file
//! becomes RF64 as EBU Tech 3306 lays it out (REFERENCES §10; field order from memory of the
//! standard): the id `"RF64"` replaces `"RIFF"`, the RIFF size field and the `data` chunk's
//! size field hold 0xFFFFFFFF, and a `ds64` chunk (28 bytes: riffSize, dataSize and
//! sampleCount as u64, then a u32 table length of 0) comes first after `"WAVE"`. A `fact`
//! chunk's u32 sample count holds the frames while they fit and 0xFFFFFFFF beyond (the real
//! count is ds64's sampleCount). Below the limit the file stays plain RIFF, byte for byte as
//! before, since far more readers open RIFF than RF64. [`wav_plan`] makes the decision as a
//! pure function of the content; [`wav_header`] writes the bytes.

use std::io::Write;

use serde::Serialize;

use super::{Buffered, CHUNK_SAMPLES, SampleFormat, Scaler, Sink, SinkReport, SinkSpec};
use crate::error::{Error, Result, Setting};
use crate::io::wav_info::WavInfo;

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
/// Channels of the mono helpers ([`wav_bytes`], [`wav_max_frames`], [`check_wav_size`]).
const CHANNELS: u16 = 1;

/// True when `fmt ` must be WAVEFORMATEXTENSIBLE: PCM wider than 16 bits or more than two
/// channels (Microsoft WAVEFORMATEXTENSIBLE documentation; REFERENCES §10).
fn extensible(sample_format: SampleFormat, channels: u16) -> bool {
    channels > 2 || matches!(sample_format, SampleFormat::I24 | SampleFormat::I32)
}

/// The RIFF size and data size fields are u32 (REFERENCES §10): the largest RIFF size.
const RIFF_SIZE_MAX: u64 = u32::MAX as u64;
/// Bytes of the `ds64` chunk of RF64, its 8-byte chunk header included: riffSize, dataSize,
/// sampleCount (u64 each) and tableLength (u32) = 28 body bytes (EBU Tech 3306, from memory).
const DS64_CHUNK_BYTES: u64 = 8 + 28;
/// What RF64 puts in the u32 size fields whose true value is in `ds64` (EBU Tech 3306).
const RF64_SIZE_MARKER: u32 = u32::MAX;

/// The container of a WAV file.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize)]
pub enum WavContainer {
    /// Plain RIFF/WAVE with u32 sizes (files up to 4 GiB).
    #[serde(rename = "RIFF")]
    Riff,
    /// RF64 (EBU Tech 3306): u64 sizes in a `ds64` chunk, for files past 4 GiB.
    #[serde(rename = "RF64")]
    Rf64,
}

impl WavContainer {
    /// The file's first four bytes as text: `"RIFF"` or `"RF64"` (also the manifest's name).
    pub fn name(self) -> &'static str {
        match self {
            WavContainer::Riff => "RIFF",
            WavContainer::Rf64 => "RF64",
        }
    }
}

/// The sizes of one WAV file, decided before any byte is written ([`wav_plan`]).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct WavPlan {
    /// RIFF or RF64.
    pub container: WavContainer,
    /// Bytes before the first sample (every chunk header up to and including `data`'s).
    pub header_bytes: u64,
    /// Bytes of samples: frames × channels × bytes per sample.
    pub data_bytes: u64,
    /// 1 when the data chunk needs a pad byte to end on an even offset, else 0 (RIFF: the pad
    /// is not counted in the chunk's size but is in the RIFF size).
    pub pad_bytes: u64,
    /// File length − 8: the RIFF size field (RIFF) or ds64's riffSize (RF64).
    pub riff_size: u64,
    /// Sample frames (one sample per channel): the `fact` count, ds64's sampleCount.
    pub frames: u64,
}

impl WavPlan {
    /// Length of the whole file in bytes.
    pub fn total_bytes(&self) -> u64 {
        self.riff_size + 8
    }
}

/// The INFO comment a WAV of `spec` carries: its unit, full scale, profile name and seed;
/// `None` without a full scale (such a spec is refused for WAV).
pub fn wav_info_of(spec: &SinkSpec) -> Option<WavInfo> {
    Some(WavInfo {
        unit: spec.unit,
        full_scale: spec.full_scale?,
        profile: spec.profile_name.clone(),
        seed: spec.seed,
    })
}

/// Bytes before the samples of the plain RIFF layout of `sample_format`, without the INFO
/// comment.
fn riff_header_bytes(sample_format: SampleFormat, channels: u16) -> Result<u64> {
    if sample_format == SampleFormat::F32 && extensible(sample_format, channels) {
        // 12 + fmt (8+40) + fact (8+4) + data header (8)
        return Ok(80);
    }
    if sample_format == SampleFormat::I16 && extensible(sample_format, channels) {
        return Ok(68);
    }
    Ok(match sample_format {
        // "RIFF"+size+"WAVE" (12) + fmt (8+16) + data header (8)
        SampleFormat::I16 => 44,
        // 12 + fmt (8+40) + data header (8)
        SampleFormat::I24 | SampleFormat::I32 => 68,
        // 12 + fmt (8+18) + fact (8+4) + data header (8)
        SampleFormat::F32 => 58,
        SampleFormat::F64 => return Err(f64_refused()),
    })
}

fn f64_refused() -> Error {
    Error::setting(
        Setting::SampleFormat,
        "64-bit float WAV is not offered: the format allows it, but many WAV readers and audio \
         tools cannot open it; use f32 WAV (24-bit significand), i32 WAV, or raw f64 output",
    )
}

fn too_large(frames: u64, channels: u16, sample_format: SampleFormat) -> Error {
    Error::Unsupported(format!(
        "a WAV of {frames} frames of {channels} {sample_format} channel(s) would be larger \
         than 2^64 bytes, beyond even RF64's 64-bit sizes; ask for a shorter \u{1}duration\u{1} or \
         fewer \u{1}samples\u{1}"
    ))
}

/// The container and sizes of a WAV holding `frames` frames of `channels` channels in
/// `sample_format`, with the INFO comment `info` if any: plain RIFF while its RIFF size (file
/// length − 8) fits the u32 field, RF64 (EBU Tech 3306, see the module docs) beyond. A pure
/// function; errors for [`SampleFormat::F64`] (not offered), 0 channels, and sizes past 2^64
/// bytes.
pub fn wav_plan(
    frames: u64,
    channels: u16,
    sample_format: SampleFormat,
    info: Option<&WavInfo>,
) -> Result<WavPlan> {
    let list_bytes = info.map_or(0, |i| i.list_chunk().len() as u64);
    let riff_header = riff_header_bytes(sample_format, channels)? + list_bytes;
    if channels == 0 {
        return Err(Error::Unsupported(
            "channels: expected at least 1 channel".into(),
        ));
    }
    let frame_bytes = u64::from(channels) * sample_format.bytes() as u64;
    let data_bytes = frames
        .checked_mul(frame_bytes)
        .ok_or_else(|| too_large(frames, channels, sample_format))?;
    let pad_bytes = data_bytes % 2;
    let riff_size_for = |header: u64| {
        (header - 8)
            .checked_add(data_bytes)
            .and_then(|v| v.checked_add(pad_bytes))
            // Room for the 8 bytes before the size, so the file length is a u64 too.
            .filter(|v| *v <= u64::MAX - 8)
            .ok_or_else(|| too_large(frames, channels, sample_format))
    };
    let riff_size = riff_size_for(riff_header)?;
    let (container, header_bytes, riff_size) = if riff_size <= RIFF_SIZE_MAX {
        (WavContainer::Riff, riff_header, riff_size)
    } else {
        let header = riff_header + DS64_CHUNK_BYTES;
        (WavContainer::Rf64, header, riff_size_for(header)?)
    };
    Ok(WavPlan {
        container,
        header_bytes,
        data_bytes,
        pad_bytes,
        riff_size,
        frames,
    })
}

/// Total size in bytes of a mono WAV without an INFO comment holding `frames` samples in
/// `sample_format`: header, data and pad byte (RF64 past 4 GiB, see [`wav_plan`]). Saturates at `u64::MAX` for
/// counts beyond 64-bit sizes. Errors for [`SampleFormat::F64`], which WAV output does not
/// offer.
pub fn wav_bytes(frames: u64, sample_format: SampleFormat) -> Result<u64> {
    riff_header_bytes(sample_format, CHANNELS)?;
    Ok(wav_plan(frames, CHANNELS, sample_format, None).map_or(u64::MAX, |p| p.total_bytes()))
}

/// The most samples a mono **plain RIFF** WAV in `sample_format` without an INFO comment can
/// hold under the 4 GiB limit of its u32 RIFF size field; one more and the file is written as
/// RF64 (a comment's `LIST` chunk moves the limit down by its length). Errors for
/// [`SampleFormat::F64`].
pub fn wav_max_frames(sample_format: SampleFormat) -> Result<u64> {
    let header = riff_header_bytes(sample_format, CHANNELS)?;
    let bytes = u64::from(CHANNELS) * sample_format.bytes() as u64;
    // RIFF size = file size − 8; take the largest frame count, then step back if the pad
    // byte pushes it over.
    let room = RIFF_SIZE_MAX - (header - 8);
    let mut frames = room / bytes;
    while wav_plan(frames, CHANNELS, sample_format, None)?.container != WavContainer::Riff {
        frames -= 1;
    }
    Ok(frames)
}

/// Refuses (with [`Error::Unsupported`]) a mono WAV whose size would pass even RF64's 64-bit
/// fields (and f64, which WAV output does not offer). A WAV past 4 GiB is fine: it is written
/// as RF64. Nothing is written; call before opening.
pub fn check_wav_size(frames: u64, sample_format: SampleFormat) -> Result<()> {
    wav_plan(frames, CHANNELS, sample_format, None).map(|_| ())
}

/// WAV-specific checks of a spec (called from [`SinkSpec::validate`]).
pub(super) fn validate(spec: &SinkSpec) -> Result<()> {
    riff_header_bytes(spec.sample_format, spec.channels)?;
    let rate = spec.sample_rate_hz;
    let bytes_per_second = rate * f64::from(spec.channels) * spec.sample_format.bytes() as f64;
    if rate.fract() != 0.0 || bytes_per_second > f64::from(u32::MAX) {
        return Err(Error::Unsupported(format!(
            "WAV stores the sample rate and byte rate as 32-bit whole numbers; {rate} Hz cannot \
             be written: use a whole number of Hz (the profile's sample_rate or \u{1}rate\u{1}), or raw \
             output"
        )));
    }
    let Some(frames) = spec.frames else {
        return Err(Error::Unsupported(
            "WAV output needs the total sample count before the first sample (its header \
             comes first); give \u{1}duration\u{1} (not inf) or \u{1}samples\u{1}, or use raw or CSV output"
                .to_string(),
        ));
    };
    wav_plan(
        frames,
        spec.channels,
        spec.sample_format,
        wav_info_of(spec).as_ref(),
    )
    .map(|_| ())
}

/// The header bytes (everything before the first sample) of a WAV holding `frames` frames of
/// `channels` channels in `sample_format` at `sample_rate_hz` (whole samples per second),
/// with the INFO comment `info` (a `LIST` chunk right before `data`) if any: RIFF or RF64 as
/// [`wav_plan`] decides. A pure function. Errors as [`wav_plan`], and when the byte rate
/// `rate × channels × bytes` does not fit its u32 field.
pub fn wav_header(
    frames: u64,
    channels: u16,
    sample_format: SampleFormat,
    sample_rate_hz: u32,
    info: Option<&WavInfo>,
) -> Result<Vec<u8>> {
    let plan = wav_plan(frames, channels, sample_format, info)?;
    let container_bytes = sample_format.bytes() as u16;
    let block_align = channels * container_bytes;
    let byte_rate = sample_rate_hz
        .checked_mul(u32::from(block_align))
        .ok_or_else(|| {
            Error::Unsupported(format!(
                "WAV stores the byte rate as a 32-bit number; {sample_rate_hz} Hz × \
                 {block_align} bytes per frame does not fit (use raw output)"
            ))
        })?;
    let bits = 8 * container_bytes;
    let rf64 = plan.container == WavContainer::Rf64;
    // A u32 size field: the value, or RF64's marker when the true value is in ds64.
    let field = |v: u64| {
        if rf64 { RF64_SIZE_MARKER } else { v as u32 }
    };

    let mut h = Vec::with_capacity(plan.header_bytes as usize);
    h.extend_from_slice(if rf64 { b"RF64" } else { b"RIFF" });
    h.extend_from_slice(&field(plan.riff_size).to_le_bytes());
    h.extend_from_slice(b"WAVE");
    if rf64 {
        h.extend_from_slice(b"ds64");
        h.extend_from_slice(&((DS64_CHUNK_BYTES - 8) as u32).to_le_bytes());
        h.extend_from_slice(&plan.riff_size.to_le_bytes()); // riffSize (low, high)
        h.extend_from_slice(&plan.data_bytes.to_le_bytes()); // dataSize
        h.extend_from_slice(&plan.frames.to_le_bytes()); // sampleCount
        h.extend_from_slice(&0u32.to_le_bytes()); // tableLength: no other large chunk
    }
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
    h.extend_from_slice(&sample_rate_hz.to_le_bytes()); // nSamplesPerSec
    h.extend_from_slice(&byte_rate.to_le_bytes()); // nAvgBytesPerSec
    h.extend_from_slice(&block_align.to_le_bytes()); // nBlockAlign
    h.extend_from_slice(&bits.to_le_bytes()); // wBitsPerSample (container)
    match tag {
        TAG_IEEE_FLOAT => {
            h.extend_from_slice(&0u16.to_le_bytes()); // cbSize
            h.extend_from_slice(b"fact");
            h.extend_from_slice(&4u32.to_le_bytes());
            // dwSampleLength: the frames while they fit, else the marker (ds64 has them).
            let n = u32::try_from(plan.frames).unwrap_or(RF64_SIZE_MARKER);
            h.extend_from_slice(&n.to_le_bytes());
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
                let n = u32::try_from(plan.frames).unwrap_or(RF64_SIZE_MARKER);
                h.extend_from_slice(&n.to_le_bytes()); // dwSampleLength
            }
        }
        _ => {}
    }
    if let Some(i) = info {
        h.extend_from_slice(&i.list_chunk());
    }
    h.extend_from_slice(b"data");
    h.extend_from_slice(&field(plan.data_bytes).to_le_bytes());
    debug_assert_eq!(h.len() as u64, plan.header_bytes);
    Ok(h)
}

/// WAV writer of interleaved frames of [`SinkSpec::channels`] samples: i16 PCM, i24/i32
/// EXTENSIBLE PCM, f32 IEEE float (EXTENSIBLE past two channels); RIFF, or RF64 past
/// 4 GiB (see the module docs).
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
        let info = wav_info_of(spec);
        let plan = wav_plan(frames, spec.channels, spec.sample_format, info.as_ref())?;
        let mut out = Buffered::new(out, "writing WAV");
        // validate() checked the rate is a whole number whose byte rate fits a u32.
        let rate = spec.sample_rate_hz as u32;
        out.buf.extend_from_slice(&wav_header(
            frames,
            spec.channels,
            spec.sample_format,
            rate,
            info.as_ref(),
        )?);
        Ok(WavSink {
            out,
            scaler: Scaler::new(spec),
            frames,
            channels: spec.channels,
            pad: plan.pad_bytes == 1,
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

impl<W: Write + Send> Sink for WavSink<W> {
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

    /// The INFO comment's `LIST` chunk of a test spec (volts, no profile name or seed):
    /// 72 bytes, its layout checked byte by byte in `crate::io::wav_info`.
    fn list(full_scale: f64) -> Vec<u8> {
        let c = WavInfo {
            unit: crate::profile::Unit::Volt,
            full_scale,
            profile: None,
            seed: None,
        }
        .list_chunk();
        assert_eq!(c.len(), 72);
        c
    }

    /// Golden bytes, field by field from the RIFF/WAVE 1.0 `fmt ` layout (REFERENCES §10).
    #[test]
    fn pcm16_mono_two_samples_golden_bytes() {
        // 0.5/2 · 32767 = 8191.75 → 8192; −1/2 · 32767 = −16383.5 → −16384 (half away from 0).
        let (b, r) = wav(SampleFormat::I16, 2.0, &[0.5, -1.0]);
        let mut want = Vec::new();
        want.extend_from_slice(b"RIFF");
        want.extend_from_slice(&[112, 0, 0, 0]); // file 48 + 72 bytes − 8
        want.extend_from_slice(b"WAVE");
        want.extend_from_slice(b"fmt ");
        want.extend_from_slice(&[16, 0, 0, 0]); // chunk size
        want.extend_from_slice(&[1, 0]); // wFormatTag = 1 (PCM)
        want.extend_from_slice(&[1, 0]); // nChannels = 1
        want.extend_from_slice(&FS48K); // nSamplesPerSec
        want.extend_from_slice(&[0x00, 0x77, 0x01, 0x00]); // nAvgBytesPerSec = 96000
        want.extend_from_slice(&[2, 0]); // nBlockAlign = 1 ch × 2 bytes
        want.extend_from_slice(&[16, 0]); // wBitsPerSample
        want.extend_from_slice(&list(2.0)); // INFO comment, right before data
        want.extend_from_slice(b"data");
        want.extend_from_slice(&[4, 0, 0, 0]);
        want.extend_from_slice(&[0x00, 0x20]); // 8192 = 0x2000
        want.extend_from_slice(&[0x00, 0xC0]); // −16384 = 0xC000
        assert_eq!(b, want);
        assert_eq!(
            b.len() as u64,
            wav_bytes(2, SampleFormat::I16).unwrap() + 72
        );
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
        want.extend_from_slice(&[138, 0, 0, 0]); // 74 + 72 − 8
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
        want.extend_from_slice(&list(1.0));
        want.extend_from_slice(b"data");
        want.extend_from_slice(&[6, 0, 0, 0]);
        want.extend_from_slice(&[0x00, 0x00, 0x40]);
        want.extend_from_slice(&[0x00, 0x00, 0xE0]);
        assert_eq!(b, want);
        assert_eq!(
            b.len() as u64,
            wav_bytes(2, SampleFormat::I24).unwrap() + 72
        );
    }

    /// Golden bytes for IEEE float: tag 3, cbSize 0 and a `fact` chunk (Rev. 3 rule quoted in
    /// REFERENCES §10). The second sample is 1.5 × full scale and clips to −1.0.
    #[test]
    fn float32_two_samples_golden_bytes_with_fact_chunk() {
        let (b, r) = wav(SampleFormat::F32, 1.0, &[0.5, -1.5]);
        let mut want = Vec::new();
        want.extend_from_slice(b"RIFF");
        want.extend_from_slice(&[130, 0, 0, 0]); // 66 + 72 − 8
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
        want.extend_from_slice(&list(1.0));
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
        assert_eq!(b.len(), 68 + 72 + 9 + 1);
        assert_eq!(u32::from_le_bytes(b[4..8].try_into().unwrap()), 150 - 8);
        assert_eq!(&b[132..136], b"data");
        assert_eq!(u32::from_le_bytes(b[136..140].try_into().unwrap()), 9);
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
            assert_eq!(
                b.len() as u64,
                wav_bytes(n as u64, sf).unwrap() + 72,
                "{sf}"
            );
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
        assert!(matches!(
            e,
            Error::Setting {
                setting: Setting::SampleFormat,
                ..
            }
        ));
        let m = e.to_string();
        assert!(m.contains("readers") && m.contains("raw f64"), "{m}");
        assert!(wav_bytes(1, SampleFormat::F64).is_err());
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
    fn the_riff_limit_is_computed_exactly() {
        // i16: 36 + 2f ≤ 4294967295 → f ≤ 2147483629
        assert_eq!(wav_max_frames(SampleFormat::I16).unwrap(), 2_147_483_629);
        // f32: 50 + 4f → f ≤ 1073741811
        assert_eq!(wav_max_frames(SampleFormat::F32).unwrap(), 1_073_741_811);
        // i32: 60 + 4f → f ≤ 1073741808
        assert_eq!(wav_max_frames(SampleFormat::I32).unwrap(), 1_073_741_808);
        // i24: 60 + 3f + pad: f = 1431655745 gives 3f = 4294967235 (odd) + pad → one too many.
        assert_eq!(wav_max_frames(SampleFormat::I24).unwrap(), 1_431_655_744);
        for sf in [
            SampleFormat::I16,
            SampleFormat::I24,
            SampleFormat::I32,
            SampleFormat::F32,
        ] {
            let max = wav_max_frames(sf).unwrap();
            let p = wav_plan(max, 1, sf, None).unwrap();
            assert_eq!(p.container, WavContainer::Riff, "{sf}");
            assert!(p.riff_size <= u64::from(u32::MAX), "{sf}");
            assert_eq!(p.total_bytes(), wav_bytes(max, sf).unwrap());
            let q = wav_plan(max + 1, 1, sf, None).unwrap();
            assert_eq!(q.container, WavContainer::Rf64, "{sf}");
            // RF64 adds the 36-byte ds64 chunk and nothing else.
            assert_eq!(q.header_bytes, p.header_bytes + 36, "{sf}");
            assert_eq!(
                q.riff_size,
                q.header_bytes - 8 + q.data_bytes + q.pad_bytes,
                "{sf}"
            );
            assert!(check_wav_size(max + 1, sf).is_ok(), "{sf}");
        }
        // Only sizes past 2^64 bytes are refused.
        let e = check_wav_size(u64::MAX / 2, SampleFormat::I32).unwrap_err();
        assert!(matches!(e, Error::Unsupported(_)) && e.to_string().contains("2^64"));
        assert_eq!(wav_bytes(u64::MAX, SampleFormat::I32).unwrap(), u64::MAX);
    }

    fn u32_at(h: &[u8], at: usize) -> u32 {
        u32::from_le_bytes(h[at..at + 4].try_into().unwrap())
    }

    fn u64_at(h: &[u8], at: usize) -> u64 {
        u64::from_le_bytes(h[at..at + 8].try_into().unwrap())
    }

    /// One frame past the RIFF limit, every field of the RF64 header (EBU Tech 3306 layout,
    /// REFERENCES §10): the marker 0xFFFFFFFF in the RIFF and data sizes, the true sizes in
    /// ds64. Expected numbers are hand arithmetic: header = RIFF header + 36; data = frames ×
    /// bytes; riffSize = header − 8 + data + pad. No sample is written.
    #[test]
    fn rf64_header_fields_at_the_switch_over() {
        // (format, frames = RIFF max + 1, header bytes, data bytes, riffSize, offset of "data")
        let cases = [
            (
                SampleFormat::I16,
                2_147_483_630u64,
                80usize,
                4_294_967_260u64,
                4_294_967_332u64,
                72usize,
            ),
            (
                SampleFormat::F32,
                1_073_741_812,
                94,
                4_294_967_248,
                4_294_967_334,
                86,
            ),
            (
                SampleFormat::I32,
                1_073_741_809,
                104,
                4_294_967_236,
                4_294_967_332,
                96,
            ),
            // 3 × 1431655745 = 4294967235 is odd: one pad byte, counted in riffSize only.
            (
                SampleFormat::I24,
                1_431_655_745,
                104,
                4_294_967_235,
                4_294_967_332,
                96,
            ),
        ];
        for (sf, frames, header, data, riff, data_at) in cases {
            let h = wav_header(frames, 1, sf, 48_000, None).unwrap();
            assert_eq!(h.len(), header, "{sf}");
            assert_eq!(&h[0..4], b"RF64", "{sf}");
            assert_eq!(u32_at(&h, 4), u32::MAX, "{sf}: RIFF size marker");
            assert_eq!(&h[8..12], b"WAVE");
            assert_eq!(&h[12..16], b"ds64", "{sf}: ds64 first after WAVE");
            assert_eq!(u32_at(&h, 16), 28, "{sf}: ds64 size");
            assert_eq!(u64_at(&h, 20), riff, "{sf}: riffSize");
            assert_eq!(u64_at(&h, 28), data, "{sf}: dataSize");
            assert_eq!(u64_at(&h, 36), frames, "{sf}: sampleCount");
            assert_eq!(u32_at(&h, 44), 0, "{sf}: table length");
            assert_eq!(&h[48..52], b"fmt ", "{sf}");
            assert_eq!(u32_at(&h, 60), 48_000, "{sf}: rate");
            assert_eq!(&h[data_at..data_at + 4], b"data", "{sf}");
            assert_eq!(u32_at(&h, data_at + 4), u32::MAX, "{sf}: data size marker");
            if sf == SampleFormat::F32 {
                assert_eq!(&h[74..78], b"fact");
                assert_eq!(
                    u32_at(&h, 82),
                    frames as u32,
                    "fact holds frames below 2^32"
                );
            }
            // The plan says the same, and the file length is riffSize + 8.
            let p = wav_plan(frames, 1, sf, None).unwrap();
            assert_eq!((p.data_bytes, p.riff_size), (data, riff), "{sf}");
            assert_eq!(p.total_bytes(), header as u64 + data + data % 2, "{sf}");
            // One frame less is plain RIFF, with the true sizes in the u32 fields.
            let h = wav_header(frames - 1, 1, sf, 48_000, None).unwrap();
            assert_eq!(&h[0..4], b"RIFF", "{sf}");
            assert_eq!(h.len(), header - 36, "{sf}");
            let p = wav_plan(frames - 1, 1, sf, None).unwrap();
            assert_eq!(u64::from(u32_at(&h, 4)), p.riff_size, "{sf}");
            assert_eq!(u64::from(u32_at(&h, data_at - 32)), p.data_bytes, "{sf}");
        }
        // Past 2^32 frames (i16 mono, 8 GiB + ε), fact-less i16 still carries the true
        // sampleCount in ds64; an f32 file's fact count becomes the marker.
        let n = (1u64 << 32) + 5;
        let h = wav_header(n, 1, SampleFormat::I16, 48_000, None).unwrap();
        assert_eq!(u64_at(&h, 36), n);
        assert_eq!(u64_at(&h, 28), 2 * n);
        let h = wav_header(n, 1, SampleFormat::F32, 48_000, None).unwrap();
        assert_eq!(u32_at(&h, 82), u32::MAX);
        assert_eq!(u64_at(&h, 36), n);
    }

    /// 2^30 f32 samples (exactly 4 GiB of data) open as RF64; the first bytes written are
    /// the RF64 header, then the samples.
    #[test]
    fn a_wav_past_4_gib_is_written_as_rf64() {
        let frames = 1u64 << 30;
        let s = spec(Format::Wav, SampleFormat::F32, Some(1.0), Some(frames));
        let mut out = Vec::new();
        {
            let mut sink = open_sink(&s, &mut out).unwrap();
            sink.write(&vec![0.5; 20_000]).unwrap();
            // Dropped unfinished: the header and whatever reached the writer is there.
        }
        let info = wav_info_of(&s);
        let h = wav_header(frames, 1, SampleFormat::F32, 48_000, info.as_ref()).unwrap();
        assert_eq!(&out[..h.len()], &h[..]);
        assert_eq!(&out[0..4], b"RF64");
        assert_eq!(&out[h.len()..h.len() + 4], &0.5f32.to_le_bytes());
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
        assert_eq!((b.len(), r.samples), (58 + 72, 0));
        assert_eq!(hound::WavReader::new(Cursor::new(&b)).unwrap().len(), 0);
    }
}
