//! Where the samples sit in a shard's file, by format: the header `generate` writes for a
//! given length (WAV and RF64, npy), the samples, and the WAV's pad byte. A shard is a
//! complete file of its format, so the joined file is the header for the whole run's length
//! followed by every shard's samples, and its header is the one a single run writes.

use std::fs::File;
use std::io::{BufRead, BufReader, Read, Write};
use std::sync::atomic::{AtomicBool, Ordering};

use super::check::Piece;
use crate::error::{Error, Result};
use crate::io::adc::Container;
use crate::io::manifest::Manifest;
use crate::io::sink::{Format, SampleFormat, npy_header, npy_shape, wav_header, wav_plan};
use crate::io::wav_info::WavInfo;

/// Bytes moved per read and write while copying samples (1 MiB): the memory a join holds.
const COPY_BYTES: usize = 1 << 20;
/// The longest CSV header line read (64 KiB): a header names a few columns per source.
const MAX_CSV_HEADER: u64 = 64 << 10;

/// How one run's files hold their samples.
#[derive(Debug, Clone)]
pub(super) enum Layout {
    /// RIFF/RF64 WAV: the header for the length (with the run's INFO comment), the frames,
    /// a pad byte to an even length.
    Wav {
        channels: u16,
        sample_format: SampleFormat,
        rate: u32,
        info: Option<WavInfo>,
    },
    /// numpy `.npy`: the header for the shape, then the values.
    Npy {
        descr: String,
        channels: u16,
        value_bytes: u64,
    },
    /// Headerless values.
    Raw { frame_bytes: u64 },
    /// A header line, then one line per frame.
    Csv,
}

impl Layout {
    /// The layout of the files a manifest describes; C headers are refused (their array
    /// text cannot be joined by copying).
    pub(super) fn of(m: &Manifest, shown: &str) -> Result<Layout> {
        let channels = m
            .extra
            .get("channels")
            .and_then(|c| c.as_u64())
            .unwrap_or(1) as u16;
        let value_bytes_of_format = match m.sample_format.parse::<SampleFormat>() {
            Ok(sf) => sf.bytes() as u64,
            Err(_) => Container::from_extension(&m.sample_format)
                .map(|c| c.bytes() as u64)
                .ok_or_else(|| {
                    Error::input(
                        shown,
                        format!(
                            "its manifest's sample_format {:?} is unknown",
                            m.sample_format
                        ),
                    )
                })?,
        };
        Ok(match m.format {
            // The comment the writer put in every shard: the run's unit, full scale, profile
            // name and seed, the same for every shard (none says where it starts).
            Format::Wav => Layout::Wav {
                channels,
                sample_format: m.sample_format.parse()?,
                rate: m.sample_rate_hz as u32,
                info: m.full_scale.map(|full_scale| WavInfo {
                    unit: m.unit,
                    full_scale,
                    profile: m.profile["name"].as_str().map(str::to_string),
                    seed: Some(m.seed),
                }),
            },
            Format::Npy => {
                let descr = m.extra.get("npy_dtype").and_then(|d| d.as_str());
                let descr = descr
                    .ok_or_else(|| Error::input(shown, "its manifest has no extra.npy_dtype"))?;
                // '<f4', '|u1' …: the width in bytes ends the dtype string (i24 is '<i4').
                let value_bytes = descr.get(2..).and_then(|w| w.parse().ok());
                let value_bytes = value_bytes.unwrap_or(value_bytes_of_format);
                Layout::Npy {
                    descr: descr.to_string(),
                    channels,
                    value_bytes,
                }
            }
            Format::Raw => Layout::Raw {
                frame_bytes: value_bytes_of_format * u64::from(channels),
            },
            Format::Csv => Layout::Csv,
            Format::C => {
                return Err(Error::input(
                    shown,
                    "is a C header: its array text is not joined by copying; join WAV, raw, \
                     npy or CSV shards, or generate the header in one run",
                ));
            }
        })
    }

    /// The bytes before the samples of a file of `frames` frames (none for raw; CSV's header
    /// line is the shards' own).
    pub(super) fn header(&self, frames: u64) -> Result<Vec<u8>> {
        match self {
            Layout::Wav {
                channels,
                sample_format,
                rate,
                info,
            } => wav_header(frames, *channels, *sample_format, *rate, info.as_ref()),
            Layout::Npy {
                descr, channels, ..
            } => Ok(npy_header(descr, &npy_shape(frames, *channels))),
            Layout::Raw { .. } | Layout::Csv => Ok(Vec::new()),
        }
    }

    /// Bytes of samples of `frames` frames, and of the pad after them (a WAV's data chunk
    /// ends on an even offset); `None` for CSV, whose lines vary in length.
    pub(super) fn data_bytes(&self, frames: u64) -> Result<Option<(u64, u64)>> {
        Ok(match self {
            Layout::Wav {
                channels,
                sample_format,
                info,
                ..
            } => {
                let plan = wav_plan(frames, *channels, *sample_format, info.as_ref())?;
                Some((plan.data_bytes, plan.pad_bytes))
            }
            Layout::Npy {
                channels,
                value_bytes,
                ..
            } => Some((frames * u64::from(*channels) * value_bytes, 0)),
            Layout::Raw { frame_bytes } => Some((frames * frame_bytes, 0)),
            Layout::Csv => None,
        })
    }
}

/// Copies a shard's samples into `out` after checking that its file is a complete file of
/// its length: the header `generate` writes, then exactly the samples (and pad). For CSV,
/// `csv_header` is the header line every shard must start with (the first shard's, taken
/// when `None`), and the shard must hold one whole line per frame.
pub(super) fn copy_samples(
    piece: &Piece,
    layout: &Layout,
    csv_header: &mut Option<Vec<u8>>,
    out: &mut dyn Write,
    interrupted: &AtomicBool,
) -> Result<u64> {
    let shown = piece.shown();
    let frames = piece.span().1;
    let file = File::open(&piece.path).map_err(|e| Error::io(format!("opening {shown}"), e))?;
    let len = file
        .metadata()
        .map_err(|e| Error::io(format!("reading {shown}"), e))?
        .len();
    let mut reader = BufReader::with_capacity(COPY_BYTES, file);
    let Some((data, pad)) = layout.data_bytes(frames)? else {
        return copy_csv(&mut reader, &shown, frames, csv_header, out, interrupted);
    };
    let header = layout.header(frames)?;
    let want = header.len() as u64 + data + pad;
    if len != want {
        let how = if len < want {
            "truncated"
        } else {
            "longer than it should be"
        };
        return Err(Error::input(
            &shown,
            format!(
                "is {how}: it holds {len} bytes, but a shard of {frames} samples in this \
                 format is {want} bytes (header {} + samples {data} + pad {pad})",
                header.len()
            ),
        ));
    }
    let mut found = vec![0; header.len()];
    read_fully(&mut reader, &mut found, &shown)?;
    if found != header {
        return Err(Error::input(
            &shown,
            format!(
                "its header is not the one generate writes for {frames} samples as its \
                 manifest describes them: the file was changed, or its manifest belongs to \
                 another file"
            ),
        ));
    }
    copy_exact(&mut reader, data, &shown, out, interrupted)?;
    Ok(data)
}

/// Copies `n` bytes from `reader` to `out` in bounded pieces.
fn copy_exact(
    reader: &mut dyn Read,
    mut n: u64,
    shown: &str,
    out: &mut dyn Write,
    interrupted: &AtomicBool,
) -> Result<()> {
    let mut buf = vec![0; COPY_BYTES];
    while n > 0 {
        if interrupted.load(Ordering::Relaxed) {
            return Err(Error::Interrupted);
        }
        let k = n.min(COPY_BYTES as u64) as usize;
        read_fully(reader, &mut buf[..k], shown)?;
        out.write_all(&buf[..k])
            .map_err(|e| Error::io("writing the joined file", e))?;
        n -= k as u64;
    }
    Ok(())
}

/// Fills `buf`, naming the shard as truncated when it ends first.
fn read_fully(reader: &mut dyn Read, buf: &mut [u8], shown: &str) -> Result<()> {
    reader.read_exact(buf).map_err(|e| match e.kind() {
        std::io::ErrorKind::UnexpectedEof => Error::input(
            shown,
            "is truncated: it ended while its samples were being read",
        ),
        _ => Error::io(format!("reading {shown}"), e),
    })
}

/// A CSV shard's rows after its header line, checked to be `frames` whole lines.
fn copy_csv(
    reader: &mut BufReader<File>,
    shown: &str,
    frames: u64,
    csv_header: &mut Option<Vec<u8>>,
    out: &mut dyn Write,
    interrupted: &AtomicBool,
) -> Result<u64> {
    let mut line = Vec::new();
    (&mut *reader)
        .take(MAX_CSV_HEADER)
        .read_until(b'\n', &mut line)
        .map_err(|e| Error::io(format!("reading {shown}"), e))?;
    match csv_header {
        None if line.ends_with(b"\n") && line.starts_with(b"time_s,") => {
            out.write_all(&line)
                .map_err(|e| Error::io("writing the joined file", e))?;
            *csv_header = Some(line);
        }
        Some(h) if *h == line => {}
        _ => {
            return Err(Error::input(
                shown,
                "does not start with the header line of the first shard's CSV (time_s and \
                 the same value columns): the file was changed, or its manifest belongs to \
                 another file",
            ));
        }
    }
    let (mut rows, mut bytes, mut last) = (0u64, 0u64, b'\n');
    loop {
        if interrupted.load(Ordering::Relaxed) {
            return Err(Error::Interrupted);
        }
        let chunk = reader
            .fill_buf()
            .map_err(|e| Error::io(format!("reading {shown}"), e))?;
        let Some(&end) = chunk.last() else { break };
        rows += chunk.iter().filter(|&&b| b == b'\n').count() as u64;
        out.write_all(chunk)
            .map_err(|e| Error::io("writing the joined file", e))?;
        let k = chunk.len();
        (bytes, last) = (bytes + k as u64, end);
        reader.consume(k);
    }
    if rows != frames || last != b'\n' {
        let part = if last != b'\n' {
            " and a part of one"
        } else {
            ""
        };
        return Err(Error::input(
            shown,
            format!(
                "holds {rows} whole rows{part} after its header, but its manifest says \
                 {frames} samples: the file is truncated or was changed"
            ),
        ));
    }
    Ok(bytes)
}

/// Writes the pad byte of a WAV whose samples end on an odd offset.
pub(super) fn finish(layout: &Layout, frames: u64, out: &mut dyn Write) -> Result<()> {
    if let Some((_, pad)) = layout.data_bytes(frames)? {
        out.write_all(&vec![0; pad as usize])
            .map_err(|e| Error::io("writing the joined file", e))?;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A whole run past 4 GiB gets the RF64 header the WAV writer would write (EBU Tech
    /// 3306), though every shard is a plain RIFF file: the header follows the whole length.
    #[test]
    fn the_whole_header_follows_the_whole_length() {
        let info = WavInfo {
            unit: crate::profile::Unit::Volt,
            full_scale: 0.5,
            profile: Some("hiss".into()),
            seed: Some(3),
        };
        let layout = Layout::Wav {
            channels: 1,
            sample_format: SampleFormat::F32,
            rate: 1_000_000,
            info: Some(info.clone()),
        };
        let shard = 100_000_000; // 400 MB: RIFF
        let whole = 16 * shard; // 6.4 GB: RF64
        assert_eq!(&layout.header(shard).unwrap()[..4], b"RIFF");
        let h = layout.header(whole).unwrap();
        assert_eq!(&h[..4], b"RF64");
        assert_eq!(
            h,
            wav_header(whole, 1, SampleFormat::F32, 1_000_000, Some(&info)).unwrap()
        );
        assert_eq!(layout.data_bytes(whole).unwrap(), Some((4 * whole, 0)));
        // i24 mono: an odd number of frames has an odd data size and a pad byte.
        let i24 = Layout::Wav {
            channels: 1,
            sample_format: SampleFormat::I24,
            rate: 48_000,
            info: None,
        };
        assert_eq!(i24.data_bytes(7).unwrap(), Some((21, 1)));
        let npy = Layout::Npy {
            descr: "<i2".into(),
            channels: 2,
            value_bytes: 2,
        };
        assert_eq!(npy.header(9).unwrap(), npy_header("<i2", &[9, 2]));
        assert_eq!(npy.data_bytes(9).unwrap(), Some((36, 0)));
    }
}
