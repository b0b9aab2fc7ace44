//! RIFF/WAVE reader on any `Read` (no `Seek`): PCM 16/24/32-bit and IEEE float 32/64-bit,
//! with plain (`fmt ` tags 1 and 3) or WAVE_FORMAT_EXTENSIBLE (tag 0xFFFE, PCM or float
//! SubFormat GUID) headers (Microsoft RIFF/WAVE 1.0 and Rev. 3; WAVEFORMATEXTENSIBLE;
//! REFERENCES §10), in a RIFF or an RF64 container (EBU Tech 3306, also under ITU-R
//! BS.2088's id BW64: the `ds64` chunk's 64-bit data size replaces the `data` chunk's
//! 0xFFFFFFFF).
//!
//! Chunks before `data` that are not `fmt ` (`fact`, `LIST`, `JUNK`, ...) are skipped, with
//! their pad byte; a `LIST` chunk of type `INFO` up to [`MAX_LIST_BYTES`] is read first for
//! noisewright's INFO comment ([`crate::io::wav_info`]), which [`StreamInfo::wav_info`]
//! hands on. A `data` size of 0xFFFFFFFF or 0 (placeholders of writers that stream) is
//! read to the end of the stream, with a note; a size of 0 is a placeholder only when `data`
//! is the last chunk, so a 0 followed by another chunk's header (a four-character code,
//! RIFF's chunk id, and a size that fits the file) is an empty chunk and refused. A stream
//! that ends before the announced data size is an error that says how much is missing; so is
//! a stream ending inside a sample. When the file's length is known
//! ([`SourceOptions::length_bytes`]) a size past its end is reported as such before any
//! sample is read, and bytes after the samples (other chunks) get a note.

use std::io::Read;

use super::{SampleSource, SourceOptions, StreamInfo, Values, check_rate, decode_le, read_full};
use crate::error::{Error, Result};
use crate::io::sink::{Format, SampleFormat};
use crate::io::wav_info::{MAX_LIST_BYTES, WavInfo};

/// WAVE format tag for integer PCM.
const TAG_PCM: u16 = 1;
/// WAVE format tag for IEEE float.
const TAG_IEEE_FLOAT: u16 = 3;
/// WAVE format tag for WAVEFORMATEXTENSIBLE.
const TAG_EXTENSIBLE: u16 = 0xFFFE;
/// The last 14 bytes shared by the KSDATAFORMAT_SUBTYPE GUIDs
/// `0000000X-0000-0010-8000-00AA00389B71` in stored order (REFERENCES §10, from memory).
const GUID_TAIL: [u8; 14] = [
    0x00, 0x00, 0x00, 0x00, 0x10, 0x00, 0x80, 0x00, 0x00, 0xAA, 0x00, 0x38, 0x9B, 0x71,
];
/// Bytes read per block.
const READ_BYTES: usize = 1 << 20;

/// Streaming WAV reader; see the module docs.
#[derive(Debug)]
pub struct WavSource<R: Read> {
    input: R,
    info: StreamInfo,
    name: String,
    /// Data bytes still to read; `None` when reading to the end of the stream.
    remaining: Option<u64>,
    /// Bytes per frame (all channels).
    frame_bytes: usize,
    sample_format: SampleFormat,
    buf: Vec<u8>,
    /// Byte offset of the `data` chunk's header in the file, for messages.
    data_at: u64,
    /// Data bytes the header announces (`None`: read to the end).
    announced: Option<u64>,
    /// Data bytes read so far.
    read: u64,
    /// Bytes read ahead of the samples (to look for a chunk header), handed out first.
    lead: Vec<u8>,
}

fn le16(b: &[u8]) -> u16 {
    u16::from_le_bytes([b[0], b[1]])
}

fn le32(b: &[u8]) -> u32 {
    u32::from_le_bytes([b[0], b[1], b[2], b[3]])
}

/// A chunk's header: its id, its size in bytes (without the pad byte) and the byte offset of
/// the header in the file.
struct Chunk {
    id: [u8; 4],
    size: u32,
    at: u64,
}

/// What the file says before its `data` chunk.
struct Preamble {
    /// The first 12 bytes: "RIFF", "RF64" or "BW64", a size, "WAVE".
    head: [u8; 12],
    /// The container has 64-bit sizes (RF64 or BW64).
    rf64: bool,
    /// The `ds64` chunk's data size in bytes (RF64 and BW64 only).
    ds64_data: Option<u64>,
    /// (sample format, channels, rate in Hz) from the `fmt ` chunk, once read.
    fmt: Option<(SampleFormat, u16, u32)>,
    /// Notes for [`StreamInfo::notes`].
    notes: Vec<String>,
    /// What a `LIST`/`INFO` chunk's comment says, for [`StreamInfo::wav_info`].
    wav_info: Option<std::result::Result<WavInfo, String>>,
}

impl<R: Read> WavSource<R> {
    /// Reads the header up to the start of the samples.
    pub fn new(mut input: R, options: &SourceOptions) -> Result<WavSource<R>> {
        let name = options.name.clone();
        let bad = |m: String| Error::input(name.clone(), m);
        let (head, rf64) = read_riff_head(&mut input, &name)?;
        // Byte offset in the file of what is read next, for messages.
        let mut pos: u64 = 12;
        let ds64_data = if rf64 {
            Some(read_ds64(&mut input, &name, &mut pos)?)
        } else {
            None
        };
        let mut pre = Preamble {
            head,
            rf64,
            ds64_data,
            fmt: None,
            notes: Vec::new(),
            wav_info: None,
        };
        loop {
            let mut ch = [0u8; 8];
            let got = read_full(&mut input, &mut ch, &name)?;
            let at = pos;
            if got < 8 {
                let missing = if pre.fmt.is_none() { "fmt " } else { "data" };
                return Err(bad(format!(
                    "truncated: the file ends at byte {} before its \"{missing}\" chunk",
                    at + got as u64
                )));
            }
            pos += 8;
            let chunk = Chunk {
                id: [ch[0], ch[1], ch[2], ch[3]],
                size: le32(&ch[4..8]),
                at,
            };
            match &chunk.id {
                b"fmt " => pre.fmt = Some(read_fmt_chunk(&mut input, &name, &chunk, &mut pos)?),
                b"data" => return WavSource::open_data(input, options, name, &chunk, pre),
                b"LIST" if chunk.size <= MAX_LIST_BYTES && pre.wav_info.is_none() => {
                    let body = read_body(&mut input, &name, &chunk, &mut pos)?;
                    pre.wav_info = WavInfo::from_list(&body);
                }
                _ => skip_chunk(&mut input, &name, &chunk, &mut pos)?,
            }
        }
    }

    /// The reader at the start of the samples of the `data` chunk `chunk`, with what the
    /// header said before it in `pre`.
    fn open_data(
        input: R,
        options: &SourceOptions,
        name: String,
        chunk: &Chunk,
        pre: Preamble,
    ) -> Result<WavSource<R>> {
        let bad = |m: String| Error::input(name.clone(), m);
        let at = chunk.at;
        let mut notes = pre.notes;
        let Some((sample_format, channels, rate)) = pre.fmt else {
            return Err(bad(format!(
                "the \"data\" chunk at byte {at} comes before any \"fmt \" chunk; \
                 the format must be known before the samples"
            )));
        };
        let frame_bytes = sample_format.bytes() * channels as usize;
        let mut input = input;
        let length = options.length_bytes;
        let remaining = data_bytes(pre.ds64_data, chunk, frame_bytes, &name, length)?;
        let lead = match remaining {
            Some(n) => {
                after_the_samples(chunk.at + 8 + n, n, length, &mut notes);
                Vec::new()
            }
            None => placeholder(&mut input, chunk, length, &name, &mut notes)?,
        };
        let mut sample_rate_hz = f64::from(rate);
        if let Some(r) = options.rate_hz {
            let r = check_rate(r, "\u{1}rate\u{1}", &name)?;
            if r != sample_rate_hz {
                // A note is printed text, not an error: it keeps its words.
                notes.push(format!(
                    "sample rate {} Hz from --rate replaces the header's {rate} Hz",
                    super::short(r)
                ));
            }
            sample_rate_hz = r;
        }
        check_rate(sample_rate_hz, "the header", &name)?;
        if pre.rf64 {
            notes.push(format!(
                "{} container (64-bit sizes, EBU Tech 3306)",
                String::from_utf8_lossy(&pre.head[0..4])
            ));
        }
        let info = StreamInfo {
            format: Format::Wav,
            sample_format: Some(sample_format),
            sample_rate_hz,
            frames: remaining.map(|b| b / frame_bytes as u64),
            channels,
            values: Values::Digital,
            notes,
            wav_info: pre.wav_info,
        };
        Ok(WavSource {
            input,
            info,
            name,
            remaining,
            frame_bytes,
            sample_format,
            buf: vec![0u8; READ_BYTES - READ_BYTES % frame_bytes],
            data_at: at,
            announced: remaining,
            read: 0,
            lead,
        })
    }
}

/// The note on bytes after a `data` chunk's `n` bytes of samples, which end at byte `end`
/// (its pad byte aside), when the file's `length` says there are some.
fn after_the_samples(end: u64, n: u64, length: Option<u64>, notes: &mut Vec<String>) {
    let end = end + (n & 1);
    if let Some(len) = length.filter(|&l| l > end) {
        notes.push(format!(
            "{} bytes after the \"data\" chunk (byte {end} to {len}) are not read as samples",
            len - end
        ));
    }
}

/// Reads past a placeholder size (0xFFFFFFFF or 0) of the `data` chunk `chunk`: refuses a 0
/// followed by another chunk's header, else notes that the samples run to the end of the
/// stream. Returns the bytes read ahead, which are samples.
fn placeholder<R: Read>(
    input: &mut R,
    chunk: &Chunk,
    length: Option<u64>,
    name: &str,
    notes: &mut Vec<String>,
) -> Result<Vec<u8>> {
    let mut lead = Vec::new();
    if chunk.size == 0 {
        let mut next = [0u8; 8];
        let got = read_full(input, &mut next, name)?;
        let start = chunk.at + 8;
        // A chunk id is four printable ASCII characters, the first not a space (RIFF's
        // FOURCC); its size must fit what the file has left, when that is known.
        let id = &next[..4];
        let fits = |size: u32| length.is_none_or(|l| start + 8 + u64::from(size) <= l);
        if got == 8
            && id.iter().all(|b| (0x20..0x7F).contains(b))
            && id[0] != b' '
            && fits(le32(&next[4..8]))
        {
            return Err(Error::input(
                name,
                format!(
                    "the \"data\" chunk at byte {} has size 0 and is followed by a {:?} \
                     chunk at byte {start}: a size of 0 means \"to the end of the file\" only \
                     when \"data\" is the last chunk, so this file holds no samples",
                    chunk.at,
                    String::from_utf8_lossy(id)
                ),
            ));
        }
        lead.extend_from_slice(&next[..got]);
    }
    notes.push(format!(
        "the data size field is a streaming placeholder ({:#x}); read to the end of the file",
        chunk.size
    ));
    Ok(lead)
}

/// The 12-byte RIFF header, and whether the container is RF64 (or BW64).
fn read_riff_head<R: Read>(input: &mut R, name: &str) -> Result<([u8; 12], bool)> {
    let bad = |m: String| Error::input(name, m);
    let mut head = [0u8; 12];
    let got = read_full(input, &mut head, name)?;
    if got < 12 {
        return Err(bad(format!(
            "not a WAV file: {got} bytes, shorter than the 12-byte RIFF header"
        )));
    }
    // ITU-R BS.2088's BW64 uses RF64's layout under its own id (REFERENCES §10).
    let rf64 = &head[0..4] == b"RF64" || &head[0..4] == b"BW64";
    if !(&head[0..4] == b"RIFF" || rf64) || &head[8..12] != b"WAVE" {
        return Err(bad(format!(
            "not a WAV file: it starts with {:?}, not \"RIFF....WAVE\" or \"RF64....WAVE\"",
            String::from_utf8_lossy(&head[..4])
        )));
    }
    Ok((head, rf64))
}

/// The data size in bytes from the `ds64` chunk that must follow "WAVE" in an RF64 file;
/// `pos` (the byte offset of what is read next) moves past the chunk.
fn read_ds64<R: Read>(input: &mut R, name: &str, pos: &mut u64) -> Result<u64> {
    let bad = |m: String| Error::input(name, m);
    // RF64 (EBU Tech 3306, from memory of its layout): a ds64 chunk first after "WAVE"
    // holds the 64-bit riffSize, dataSize and sampleCount (then a table of other large
    // chunks); the u32 data size is then 0xFFFFFFFF and stands for ds64's dataSize.
    let mut ch = [0u8; 8];
    if read_full(input, &mut ch, name)? < 8 || &ch[0..4] != b"ds64" {
        return Err(bad(
            "an RF64 file must have a \"ds64\" chunk at byte 12, right after \"WAVE\" \
             (EBU Tech 3306); this one does not"
                .to_string(),
        ));
    }
    let size = le32(&ch[4..8]);
    const DS64_MAX: u32 = 1 << 20;
    if !(28..=DS64_MAX).contains(&size) {
        return Err(bad(format!(
            "the \"ds64\" chunk at byte 12 is {size} bytes; expected 28 to {DS64_MAX}"
        )));
    }
    let mut body = vec![0u8; size as usize + (size as usize & 1)];
    let got = read_full(input, &mut body, name)?;
    if got < size as usize {
        return Err(bad(format!(
            "truncated inside the \"ds64\" chunk at byte 12: it announces {size} bytes \
             but the file ends at byte {}",
            20 + got
        )));
    }
    *pos += 8 + body.len() as u64;
    let le64 = |at: usize| u64::from_le_bytes(body[at..at + 8].try_into().expect("8"));
    Ok(le64(8))
}

/// (sample format, channels, rate) from the `fmt ` chunk `chunk`, whose body is read next;
/// `pos` moves past it and its pad byte.
fn read_fmt_chunk<R: Read>(
    input: &mut R,
    name: &str,
    chunk: &Chunk,
    pos: &mut u64,
) -> Result<(SampleFormat, u16, u32)> {
    let bad = |m: String| Error::input(name, m);
    let (at, size) = (chunk.at, chunk.size);
    if !(16..=1024).contains(&size) {
        return Err(bad(format!(
            "the \"fmt \" chunk at byte {at} is {size} bytes; expected 16 to 1024"
        )));
    }
    let mut body = vec![0u8; size as usize + (size as usize & 1)];
    let got = read_full(input, &mut body, name)?;
    if got < size as usize {
        return Err(bad(format!(
            "truncated inside the \"fmt \" chunk at byte {at}: it announces \
             {size} bytes but the file ends at byte {}",
            *pos + got as u64
        )));
    }
    *pos += body.len() as u64;
    parse_fmt(&body[..size as usize], name, at)
}

/// The bytes of samples the `data` chunk `chunk` holds (`None`: read to the end of the
/// stream, with a note), from its size field or, in RF64, from `ds64_data`; a whole number of
/// `frame_bytes`-byte frames.
fn data_bytes(
    ds64_data: Option<u64>,
    chunk: &Chunk,
    frame_bytes: usize,
    name: &str,
    length: Option<u64>,
) -> Result<Option<u64>> {
    let bad = |m: String| Error::input(name, m);
    let (at, size) = (chunk.at, chunk.size);
    // A size past the end of a file of known length: missing bytes, whatever the frame size.
    let announced = match (ds64_data, size) {
        (Some(data), u32::MAX) => Some(data),
        (_, 0 | u32::MAX) => None,
        _ => Some(u64::from(size)),
    };
    if let (Some(n), Some(len)) = (announced, length)
        && at + 8 + n > len
    {
        let short = at + 8 + n - len;
        return Err(bad(format!(
            "truncated: the \"data\" chunk at byte {at} announces {n} bytes of samples but \
             the file ends at byte {len} ({short} missing, about {} samples)",
            short / frame_bytes as u64
        )));
    }
    Ok(if let (Some(data), u32::MAX) = (ds64_data, size) {
        if data % frame_bytes as u64 != 0 {
            return Err(bad(format!(
                "the \"ds64\" chunk announces {data} data bytes for the \
                 \"data\" chunk at byte {at}, not a whole number of \
                 {frame_bytes}-byte frames"
            )));
        }
        Some(data)
    } else if size == u32::MAX || size == 0 {
        None
    } else {
        if size as usize % frame_bytes != 0 {
            return Err(bad(format!(
                "the \"data\" chunk at byte {at} holds {size} bytes, not a \
                 whole number of {frame_bytes}-byte frames"
            )));
        }
        Some(u64::from(size))
    })
}

/// The body of the chunk `chunk` (its pad byte read and dropped); `pos` moves past them.
fn read_body<R: Read>(input: &mut R, name: &str, chunk: &Chunk, pos: &mut u64) -> Result<Vec<u8>> {
    let size = chunk.size as usize;
    let mut body = vec![0u8; size + (size & 1)];
    let got = read_full(input, &mut body, name)?;
    if got < size {
        return Err(Error::input(
            name,
            format!(
                "truncated inside the {:?} chunk at byte {} before the samples: it announces \
                 {size} bytes but the file ends at byte {}",
                String::from_utf8_lossy(&chunk.id),
                chunk.at,
                *pos + got as u64
            ),
        ));
    }
    *pos += body.len() as u64;
    body.truncate(size);
    Ok(body)
}

/// Skips the chunk `chunk` (not `fmt ` or `data`) and its pad byte; `pos` moves past them.
fn skip_chunk<R: Read>(input: &mut R, name: &str, chunk: &Chunk, pos: &mut u64) -> Result<()> {
    let bad = |m: String| Error::input(name, m);
    let (id, size, at) = (chunk.id, chunk.size, chunk.at);
    // Skip the chunk and its pad byte.
    let skip = u64::from(size) + u64::from(size & 1);
    let skipped = std::io::copy(&mut input.take(skip), &mut std::io::sink())
        .map_err(|e| Error::io(format!("reading {name}"), e))?;
    if skipped < u64::from(size) {
        return Err(bad(format!(
            "truncated inside the {:?} chunk at byte {at} before the samples: it \
             announces {size} bytes but the file ends at byte {}",
            String::from_utf8_lossy(&id),
            *pos + skipped
        )));
    }
    *pos += skip;
    Ok(())
}

/// (sample format, channels, rate) from a `fmt ` chunk body; `at` is the chunk's byte offset
/// in the file, for messages.
fn parse_fmt(b: &[u8], name: &str, at: u64) -> Result<(SampleFormat, u16, u32)> {
    let bad = |m: String| Error::input(name, format!("the \"fmt \" chunk at byte {at}: {m}"));
    let mut tag = le16(&b[0..2]);
    let channels = le16(&b[2..4]);
    let rate = le32(&b[4..8]);
    let block_align = le16(&b[12..14]);
    let bits = le16(&b[14..16]);
    if tag == TAG_EXTENSIBLE {
        if b.len() < 40 || le16(&b[16..18]) < 22 {
            return Err(bad(
                "WAVE_FORMAT_EXTENSIBLE header shorter than its 22-byte extension".to_string(),
            ));
        }
        let valid = le16(&b[18..20]);
        let guid = &b[24..40];
        if guid[2..] != GUID_TAIL || guid[1] != 0 {
            return Err(bad(format!(
                "WAVE_FORMAT_EXTENSIBLE with an unknown SubFormat GUID {guid:02x?}; only PCM \
                 and IEEE float are read"
            )));
        }
        tag = u16::from(guid[0]);
        if valid != 0 && valid != bits && tag == TAG_PCM {
            // Valid bits below the container: the low bits are zero, values are still the
            // container's codes (common practice), so decode by container size.
            if valid > bits {
                return Err(bad(format!(
                    "{valid} valid bits do not fit a {bits}-bit container"
                )));
            }
        }
    }
    let sf = match (tag, bits) {
        (TAG_PCM, 16) => SampleFormat::I16,
        (TAG_PCM, 24) => SampleFormat::I24,
        (TAG_PCM, 32) => SampleFormat::I32,
        (TAG_IEEE_FLOAT, 32) => SampleFormat::F32,
        (TAG_IEEE_FLOAT, 64) => SampleFormat::F64,
        (TAG_PCM, b) => {
            return Err(bad(format!(
                "{b}-bit PCM is not read; 16, 24 and 32-bit PCM are"
            )));
        }
        (TAG_IEEE_FLOAT, b) => {
            return Err(bad(format!(
                "{b}-bit float is not read; 32 and 64-bit float are"
            )));
        }
        (t, _) => {
            return Err(bad(format!(
                "format tag {t:#06x} is not read (compressed audio?); only PCM (1), IEEE \
                 float (3) and EXTENSIBLE (0xFFFE) with those are"
            )));
        }
    };
    if channels == 0 {
        return Err(bad(
            "the header says 0 channels; expected at least 1".to_string()
        ));
    }
    if usize::from(block_align) != sf.bytes() * usize::from(channels) {
        return Err(bad(format!(
            "block align {block_align} does not match {channels} channel(s) of {} bytes",
            sf.bytes()
        )));
    }
    if rate == 0 {
        return Err(bad("the header says a sample rate of 0 Hz".to_string()));
    }
    Ok((sf, channels, rate))
}

impl<R: Read> SampleSource for WavSource<R> {
    fn info(&self) -> &StreamInfo {
        &self.info
    }

    fn read_block(&mut self, out: &mut Vec<f64>, max: usize) -> Result<usize> {
        out.clear();
        let fb = self.frame_bytes;
        let want_frames = max.min(self.buf.len() / fb).max(1);
        let mut want = want_frames * fb;
        if let Some(rem) = self.remaining {
            want = want.min(rem as usize);
        }
        if want == 0 {
            return Ok(0);
        }
        // Bytes read ahead of the samples come first.
        let lead = self.lead.len().min(want);
        self.buf[..lead].copy_from_slice(&self.lead[..lead]);
        self.lead.drain(..lead);
        let got = lead + read_full(&mut self.input, &mut self.buf[lead..want], &self.name)?;
        let whole = got - got % fb;
        // The data chunk's samples start 8 bytes after its header.
        let end = self.data_at + 8 + self.read + got as u64;
        if got < want {
            if let (Some(rem), Some(total)) = (self.remaining, self.announced) {
                let short = rem - got as u64;
                return Err(Error::input(
                    &self.name,
                    format!(
                        "truncated: the \"data\" chunk at byte {} announces {total} bytes of \
                         samples but the file ends at byte {end} ({short} missing, about {} \
                         samples)",
                        self.data_at,
                        short / fb as u64
                    ),
                ));
            }
            if got % fb != 0 {
                return Err(Error::input(
                    &self.name,
                    format!(
                        "truncated: the file ends at byte {end}, inside a {fb}-byte sample frame"
                    ),
                ));
            }
        }
        self.read += whole as u64;
        // Every channel, frame by frame (interleaved, as stored).
        let b = self.sample_format.bytes();
        decode_le(&self.buf[..whole], self.sample_format, b, out);
        if let Some(rem) = self.remaining.as_mut() {
            *rem -= whole as u64;
        }
        Ok(out.len())
    }
}

#[cfg(test)]
mod tests {
    use super::super::open_source;
    use super::*;
    use crate::io::sink::{SinkSpec, open_sink};
    use crate::profile::Unit;

    fn opts() -> SourceOptions {
        SourceOptions {
            format: Format::Wav,
            sample_format: None,
            rate_hz: None,
            fallback_rate_hz: None,
            name: "t.wav".into(),
            length_bytes: None,
            channels: None,
        }
    }

    fn written(sf: SampleFormat, x: &[f64]) -> Vec<u8> {
        let spec = SinkSpec {
            format: Format::Wav,
            sample_format: sf,
            sample_rate_hz: 44_100.0,
            full_scale: Some(1.0),
            frames: Some(x.len() as u64),
            channels: 1,
            start_frame: 0,
            unit: Unit::Volt,
            adc: None,
            name: None,
            provenance: Vec::new(),
            profile_name: None,
            seed: None,
        };
        let mut b = Vec::new();
        {
            let mut s = open_sink(&spec, &mut b).unwrap();
            s.write(x).unwrap();
            s.finish().unwrap();
        }
        b
    }

    fn read_all(bytes: &[u8]) -> Result<(StreamInfo, Vec<f64>)> {
        read_with(bytes, &opts())
    }

    /// As [`read_all`], the file's length known as for a regular file.
    fn read_file(bytes: &[u8]) -> Result<(StreamInfo, Vec<f64>)> {
        let o = SourceOptions {
            length_bytes: Some(bytes.len() as u64),
            ..opts()
        };
        read_with(bytes, &o)
    }

    fn read_with(bytes: &[u8], o: &SourceOptions) -> Result<(StreamInfo, Vec<f64>)> {
        let mut src = open_source(bytes, o)?;
        let mut all = Vec::new();
        let mut block = Vec::new();
        while src.read_block(&mut block, 1000)? > 0 {
            all.extend_from_slice(&block);
        }
        Ok((src.info().clone(), all))
    }

    /// Every format our writer makes reads back to the codes it wrote: integer codes exactly
    /// as code/(2^(b−1)−1) (the writer's rule), f32 exactly.
    #[test]
    fn our_wav_files_read_back() {
        let x: Vec<f64> = (0..3001)
            .map(|i| ((i * 37) % 201) as f64 / 100.0 - 1.0)
            .collect();
        for sf in [
            SampleFormat::I16,
            SampleFormat::I24,
            SampleFormat::I32,
            SampleFormat::F32,
        ] {
            let (info, y) = read_all(&written(sf, &x)).unwrap();
            assert_eq!(info.sample_format, Some(sf));
            assert_eq!(info.sample_rate_hz, 44_100.0);
            assert_eq!(info.frames, Some(3001));
            assert_eq!(y.len(), 3001);
            let max = sf.full_scale_code().map_or(1.0, f64::from);
            for (a, b) in x.iter().zip(&y) {
                let want = if sf.is_integer() {
                    (a * max).round() / max
                } else {
                    f64::from(*a as f32)
                };
                assert_eq!(*b, want, "{sf}");
            }
        }
    }

    #[test]
    fn truncated_and_malformed_files_are_named() {
        let b = written(SampleFormat::I16, &[0.1; 100]);
        let e = read_all(&b[..b.len() - 11]).unwrap_err();
        assert!(e.to_string().contains("truncated"), "{e}");
        assert_eq!(e.exit_code(), 2);
        let e = read_all(&b[..30]).unwrap_err();
        assert!(e.to_string().contains("truncated"), "{e}");
        let e = read_all(b"RIFX\0\0\0\0WAVE").unwrap_err();
        assert!(e.to_string().contains("not a WAV"), "{e}");
        let e = read_all(b"RIFF").unwrap_err();
        assert!(e.to_string().starts_with("t.wav: not a WAV"), "{e}");
        // A compressed format tag.
        let mut c = b.clone();
        c[20] = 0x55;
        let e = read_all(&c).unwrap_err();
        assert!(e.to_string().contains("format tag"), "{e}");
    }

    #[test]
    fn streaming_placeholder_reads_to_the_end() {
        let mut b = ten_samples();
        b[40..44].copy_from_slice(&u32::MAX.to_le_bytes());
        let (info, y) = read_all(&b).unwrap();
        assert_eq!(y.len(), 10);
        assert_eq!(info.frames, None);
        assert!(info.notes[0].contains("placeholder"));
    }
    /// A small RF64 file built by hand from the EBU Tech 3306 layout (REFERENCES §10):
    /// "RF64", size marker, "WAVE", ds64 (riffSize, dataSize, sampleCount, table length 0),
    /// a PCM `fmt `, a `data` chunk whose size is the marker. Its samples read back exactly.
    #[test]
    fn a_small_rf64_file_reads_back() {
        let codes: [i16; 5] = [0, 16_384, -16_384, 32_767, -32_767];
        let data: Vec<u8> = codes.iter().flat_map(|c| c.to_le_bytes()).collect();
        let mut b = Vec::new();
        b.extend_from_slice(b"RF64");
        b.extend_from_slice(&u32::MAX.to_le_bytes());
        b.extend_from_slice(b"WAVE");
        b.extend_from_slice(b"ds64");
        b.extend_from_slice(&28u32.to_le_bytes());
        let riff_size = 4 + 36 + 24 + 8 + data.len() as u64;
        b.extend_from_slice(&riff_size.to_le_bytes());
        b.extend_from_slice(&(data.len() as u64).to_le_bytes());
        b.extend_from_slice(&(codes.len() as u64).to_le_bytes());
        b.extend_from_slice(&0u32.to_le_bytes());
        b.extend_from_slice(b"fmt ");
        b.extend_from_slice(&16u32.to_le_bytes());
        b.extend_from_slice(&1u16.to_le_bytes()); // PCM
        b.extend_from_slice(&1u16.to_le_bytes()); // mono
        b.extend_from_slice(&8000u32.to_le_bytes());
        b.extend_from_slice(&16000u32.to_le_bytes());
        b.extend_from_slice(&2u16.to_le_bytes());
        b.extend_from_slice(&16u16.to_le_bytes());
        b.extend_from_slice(b"data");
        b.extend_from_slice(&u32::MAX.to_le_bytes());
        b.extend_from_slice(&data);
        assert_eq!(b.len() as u64, riff_size + 8);
        // A trailing chunk after the data is not read as samples: ds64 gives the size.
        b.extend_from_slice(b"LIST\x04\0\0\0abcd");
        let (info, y) = read_all(&b).unwrap();
        assert_eq!(info.frames, Some(5));
        assert_eq!(info.sample_rate_hz, 8000.0);
        assert_eq!(info.sample_format, Some(SampleFormat::I16));
        assert!(
            info.notes.iter().any(|n| n.contains("RF64")),
            "{:?}",
            info.notes
        );
        let want: Vec<f64> = codes.iter().map(|&c| f64::from(c) / 32_767.0).collect();
        assert_eq!(y, want);
        // BW64 is the same layout under another id.
        let mut c = b.clone();
        c[0..4].copy_from_slice(b"BW64");
        assert_eq!(read_all(&c).unwrap().1, want);
        // Without ds64 first it is refused with the reason.
        let mut c = b.clone();
        c[12..16].copy_from_slice(b"JUNK");
        let e = read_all(&c).unwrap_err();
        assert!(e.to_string().contains("ds64"), "{e}");
        assert_eq!(e.exit_code(), 2);
    }

    /// The header our writer makes past 4 GiB, followed by only a few samples: the reader
    /// takes the frame count from ds64 (first after "WAVE", the INFO comment after `fmt `)
    /// and the comment, and then reports the file as truncated.
    #[test]
    fn our_rf64_header_reads_its_64_bit_sizes() {
        let frames = (1u64 << 31) + 3; // i16: 4 GiB + 6 bytes of data
        let comment = WavInfo {
            unit: Unit::Ampere,
            full_scale: 2.5e-3,
            profile: Some("big".into()),
            seed: Some(9),
        };
        let mut b =
            crate::io::sink::wav_header(frames, 1, SampleFormat::I16, 48_000, Some(&comment))
                .unwrap();
        assert_eq!((&b[0..4], &b[12..16]), (&b"RF64"[..], &b"ds64"[..]));
        assert_eq!(&b[72..76], b"LIST");
        b.extend_from_slice(&[0u8; 64]);
        let mut src = open_source(&b[..], &opts()).unwrap();
        assert_eq!(src.info().frames, Some(frames));
        assert_eq!(src.info().wav_info, Some(Ok(comment)));
        let mut block = Vec::new();
        assert_eq!(src.read_block(&mut block, 32).unwrap(), 32);
        let e = loop {
            match src.read_block(&mut block, 1000) {
                Ok(0) => panic!("no truncation reported"),
                Ok(_) => {}
                Err(e) => break e,
            }
        };
        assert!(e.to_string().contains("truncated"), "{e}");
    }

    /// Our 16-bit file of 10 samples without its INFO comment is 44 + 20 bytes; its `data`
    /// chunk is at byte 36 with the size at bytes 40..44 (RIFF/WAVE 1.0 layout).
    fn ten_samples() -> Vec<u8> {
        let w = written(SampleFormat::I16, &[0.5; 10]);
        let mut b = crate::io::sink::wav_header(10, 1, SampleFormat::I16, 44_100, None).unwrap();
        b.extend_from_slice(&w[w.len() - 20..]);
        assert_eq!((b.len(), &b[36..40]), (64, &b"data"[..]));
        b
    }

    /// Our writer's INFO comment comes back from the header; a file without one says
    /// nothing, another program's comment and a malformed one are reasons, and a `LIST`
    /// chunk too large to be ours is skipped unread. The samples read the same in every case.
    #[test]
    fn the_info_comment_is_read_before_the_samples() {
        let x = [0.25, -0.5, 0.75];
        let (info, y) = read_file(&written(SampleFormat::F32, &x)).unwrap();
        let want = WavInfo {
            unit: Unit::Volt,
            full_scale: 1.0,
            profile: None,
            seed: None,
        };
        assert_eq!(info.wav_info, Some(Ok(want)));
        assert_eq!(y, x);
        let plain = ten_samples();
        let (info, plain_y) = read_file(&plain).unwrap();
        assert_eq!(info.wav_info, None);
        // A LIST chunk spliced in before "data" at byte 36, the RIFF size grown to match.
        let with_list = |list: &[u8]| {
            let mut b = plain[..36].to_vec();
            b.extend_from_slice(list);
            b.extend_from_slice(&plain[36..]);
            let riff = (b.len() - 8) as u32;
            b[4..8].copy_from_slice(&riff.to_le_bytes());
            b
        };
        let foreign = b"LIST\x16\0\0\0INFOICMT\x0a\0\0\0take five\0";
        let (info, y) = read_file(&with_list(foreign)).unwrap();
        let why = info.wav_info.unwrap().unwrap_err();
        assert!(
            why.contains("\"take five\" is not one noisewright writes"),
            "{why}"
        );
        assert_eq!(y, plain_y);
        let bad = WavInfo {
            unit: Unit::Volt,
            full_scale: 1.0,
            profile: None,
            seed: None,
        }
        .list_chunk();
        let text_at = bad.len() - 32; // "noisewright unit=V full_scale=1\0"
        let mut bad = bad;
        bad[text_at + 19..text_at + 22].copy_from_slice(b"fxl");
        let (info, y) = read_file(&with_list(&bad)).unwrap();
        let why = info.wav_info.unwrap().unwrap_err();
        assert!(why.contains("no full_scale="), "{why}");
        assert_eq!(y, plain_y);
        let mut huge = b"LIST".to_vec();
        huge.extend_from_slice(&(MAX_LIST_BYTES + 2).to_le_bytes());
        huge.extend_from_slice(&vec![0u8; MAX_LIST_BYTES as usize + 2]);
        huge[8..12].copy_from_slice(b"INFO");
        let (info, y) = read_file(&with_list(&huge)).unwrap();
        assert_eq!((info.wav_info, y), (None, plain_y));
    }

    /// A size of 0 is a placeholder only for the last chunk: with samples to the end it reads
    /// them (length known or not); followed by a chunk it is refused, naming both.
    #[test]
    fn a_zero_data_size_is_a_placeholder_only_at_the_end() {
        let mut b = ten_samples();
        b[40..44].copy_from_slice(&0u32.to_le_bytes());
        for (info, y) in [read_all(&b).unwrap(), read_file(&b).unwrap()] {
            assert_eq!(y, [16384.0 / 32767.0; 10]);
            assert_eq!(info.frames, None);
            assert_eq!(
                info.notes,
                [
                    "the data size field is a streaming placeholder (0x0); read to the end of the file"
                ]
            );
        }
        let mut c = b[..44].to_vec();
        c.extend_from_slice(b"LIST\x14\0\0\0");
        c.extend_from_slice(&b[44..]);
        for e in [read_all(&c).unwrap_err(), read_file(&c).unwrap_err()] {
            assert_eq!(
                e.to_string(),
                "t.wav: the \"data\" chunk at byte 36 has size 0 and is followed by a \"LIST\" \
                 chunk at byte 44: a size of 0 means \"to the end of the file\" only when \
                 \"data\" is the last chunk, so this file holds no samples"
            );
            assert_eq!(e.exit_code(), 2);
        }
        // Nothing after the header: no samples, no error from the reader.
        let (_, y) = read_file(&b[..44]).unwrap();
        assert!(y.is_empty());
    }

    /// With the file's length known, a size past its end is a truncation (not a frame
    /// mismatch), and bytes after the samples get a note.
    #[test]
    fn data_sizes_are_held_to_the_files_length() {
        let mut b = ten_samples();
        b[40..44].copy_from_slice(&1001u32.to_le_bytes());
        let e = read_file(&b).unwrap_err();
        assert_eq!(
            e.to_string(),
            "t.wav: truncated: the \"data\" chunk at byte 36 announces 1001 bytes of samples \
             but the file ends at byte 64 (981 missing, about 490 samples)"
        );
        // Without the length the size is judged alone.
        assert!(
            read_all(&b)
                .unwrap_err()
                .to_string()
                .contains("whole number")
        );
        let mut b = ten_samples();
        b[40..44].copy_from_slice(&12u32.to_le_bytes());
        let (info, y) = read_file(&b).unwrap();
        assert_eq!(y.len(), 6);
        assert_eq!(
            info.notes,
            ["8 bytes after the \"data\" chunk (byte 56 to 64) are not read as samples"]
        );
        let (info, _) = read_file(&ten_samples()).unwrap();
        assert!(info.notes.is_empty(), "{:?}", info.notes);
    }
}
