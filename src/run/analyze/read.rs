//! Reading a capture: the manifest beside a file, its header, its length, and passes over its
//! physical samples (a file's on a read-ahead thread).

use std::fs;
use std::io::{BufReader, Read};
use std::path::Path;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::mpsc;

use crate::error::{Error, Result};
use crate::io::sink::{Format, SampleFormat};
use crate::io::source::{Scale, SourceOptions, StreamInfo, Values, open_source};
use crate::io::wav_info::WavInfo;
use crate::profile::Unit;

/// Samples read per block.
pub(super) const BLOCK: usize = 1 << 16;
/// Blocks read ahead of the analysis in a pass over a file.
const READ_AHEAD: usize = 3;

/// Where the samples come from.
pub(super) enum Capture<'a> {
    /// A file, opened anew for each pass.
    File {
        path: &'a Path,
        options: SourceOptions,
    },
    /// Physical samples in memory, in `unit`, at `rate_hz` samples per second.
    Memory {
        samples: &'a [f64],
        rate_hz: f64,
        unit: Unit,
        name: String,
    },
}

fn open_file(path: &Path) -> Result<fs::File> {
    if path.is_dir() {
        return Err(Error::input(
            path.display().to_string(),
            "is a folder; expected a capture file (WAV, CSV or raw)",
        ));
    }
    fs::File::open(path)
        .map_err(|e| Error::input(path.display().to_string(), format!("cannot open: {e}")))
}

/// Refuses a non-finite value in `block` (frames of `channels` values, or one channel's
/// samples when `channels` is 1; the `done`th frame of the capture is its first), then scales
/// it to physical values. `channel` names the one channel picked, if any, in messages.
fn checked(
    block: &mut [f64],
    done: u64,
    name: &str,
    scale: &Scale,
    channels: usize,
    channel: Option<usize>,
) -> Result<()> {
    if let Some(i) = block.iter().position(|v| !v.is_finite()) {
        let frame = done + (i / channels) as u64;
        let which = match (channel, channels) {
            (Some(k), _) => format!(" of channel {k}"),
            (None, 1) => String::new(),
            (None, c) => format!(" of channel {}", i % c),
        };
        return Err(Error::input(
            name,
            format!(
                "sample {frame}{which} is {}; only finite samples can be analysed",
                block[i]
            ),
        ));
    }
    if scale.gain != 1.0 {
        block.iter_mut().for_each(|v| *v *= scale.gain);
    }
    Ok(())
}

impl Capture<'_> {
    /// The container of a capture file, from its extension: `.wav`, `.csv`, `.npy`, `.h`
    /// (refused by the readers), anything else raw.
    pub(super) fn format_of(path: &Path) -> Format {
        match path
            .extension()
            .map(|e| e.to_string_lossy().to_ascii_lowercase())
            .as_deref()
        {
            Some("wav") => Format::Wav,
            Some("csv") => Format::Csv,
            Some("npy") => Format::Npy,
            // Not read: named so the refusal says why instead of reading a header as samples.
            Some("h") => Format::C,
            _ => Format::Raw,
        }
    }

    /// The length in bytes of the regular file at `path`; `None` when it cannot be looked at
    /// (opening it then says why) or is a folder. Refuses a pipe, device or socket: the
    /// capture is read twice (statistics, then the density against them), and a stream gives
    /// its bytes once.
    pub(super) fn length_of(path: &Path) -> Result<Option<u64>> {
        let Ok(m) = fs::metadata(path) else {
            return Ok(None);
        };
        if m.is_file() {
            return Ok(Some(m.len()));
        }
        if m.is_dir() {
            return Ok(None);
        }
        Err(Error::input(
            path.display().to_string(),
            "is a pipe, device or socket, not a file: analyze reads a capture twice (its \
             statistics, then its density against them) and a stream cannot be read twice; \
             write it to a file first",
        ))
    }

    /// What the INFO comment of the WAV at `path` says ([`StreamInfo::wav_info`]); `None`
    /// also when its header cannot be read (the analysis's own read of it says why).
    pub(super) fn wav_comment(
        path: &Path,
        length_bytes: Option<u64>,
        name: &str,
    ) -> Option<std::result::Result<WavInfo, String>> {
        let options = SourceOptions {
            format: Format::Wav,
            sample_format: None,
            rate_hz: None,
            fallback_rate_hz: None,
            name: name.to_string(),
            length_bytes,
            channels: None,
        };
        let file = fs::File::open(path).ok()?;
        open_source(BufReader::new(file), &options)
            .ok()?
            .info()
            .wav_info
            .clone()
    }

    /// How the report names the container: the file's format, or `memory`.
    pub(super) fn container(&self, info: &StreamInfo) -> &'static str {
        match self {
            Capture::File { .. } => info.format.name(),
            Capture::Memory { .. } => "memory",
        }
    }

    /// What the header says (samples in memory: 64-bit floats in their unit).
    pub(super) fn header(&self) -> Result<StreamInfo> {
        match self {
            Capture::File { path, options } => {
                Ok(open_source(open_file(path)?, options)?.info().clone())
            }
            Capture::Memory {
                samples,
                rate_hz,
                unit,
                ..
            } => {
                if !(rate_hz.is_finite() && *rate_hz > 0.0) {
                    return Err(Error::setting(
                        crate::Setting::Rate,
                        format!("expected a positive sample rate, got {rate_hz} Hz"),
                    ));
                }
                Ok(StreamInfo {
                    format: Format::Raw,
                    sample_format: Some(SampleFormat::F64),
                    sample_rate_hz: *rate_hz,
                    frames: Some(samples.len() as u64),
                    channels: 1,
                    values: Values::Physical(*unit),
                    notes: Vec::new(),
                    wav_info: None,
                })
            }
        }
    }

    /// Samples in the capture, known or estimated before reading it: the header's count, the
    /// size of a raw file or of a WAV whose header does not say (an upper bound), or the
    /// lines of a CSV file.
    pub(super) fn sample_count(&self, info: &StreamInfo) -> Result<u64> {
        if let Some(n) = info.frames {
            return Ok(n);
        }
        let Capture::File { path, .. } = self else {
            unreachable!("samples in memory have a length");
        };
        match info.format {
            Format::Raw | Format::Wav => {
                let len = fs::metadata(path)
                    .map_err(|e| Error::io(format!("reading {}", path.display()), e))?
                    .len();
                let frame =
                    info.sample_format.map_or(1, |s| s.bytes()) * usize::from(info.channels);
                Ok(len / frame.max(1) as u64)
            }
            _ => {
                // Count newlines (an upper bound: headers, comments and blank lines count too).
                let mut r = BufReader::with_capacity(1 << 16, open_file(path)?);
                let mut buf = vec![0u8; 1 << 16];
                let mut lines = 0u64;
                loop {
                    let n = r
                        .read(&mut buf)
                        .map_err(|e| Error::io(format!("reading {}", path.display()), e))?;
                    if n == 0 {
                        break;
                    }
                    lines += buf[..n].iter().filter(|&&b| b == b'\n').count() as u64;
                }
                Ok(lines.saturating_sub(1).max(1))
            }
        }
    }

    /// One pass over channel `channel` of the capture (0 for one channel): every physical
    /// sample goes to `each`, in order.
    pub(super) fn pass(
        &self,
        channel: usize,
        scale: &Scale,
        interrupted: &AtomicBool,
        each: &mut dyn FnMut(&[f64]),
    ) -> Result<()> {
        self.any_pass(Some(channel), scale, interrupted, each)
    }

    /// One pass over every channel of the capture: its physical samples go to `each` frame by
    /// frame (interleaved), whole frames at a time.
    pub(super) fn frames(
        &self,
        scale: &Scale,
        interrupted: &AtomicBool,
        each: &mut dyn FnMut(&[f64]),
    ) -> Result<()> {
        self.any_pass(None, scale, interrupted, each)
    }

    fn any_pass(
        &self,
        channel: Option<usize>,
        scale: &Scale,
        interrupted: &AtomicBool,
        each: &mut dyn FnMut(&[f64]),
    ) -> Result<()> {
        match self {
            Capture::File { path, options } => {
                file_pass(path, options, scale, interrupted, channel, each)
            }
            Capture::Memory { samples, name, .. } => {
                let mut block = Vec::with_capacity(BLOCK.min(samples.len()));
                for (i, chunk) in samples.chunks(BLOCK).enumerate() {
                    if interrupted.load(Ordering::Relaxed) {
                        return Err(Error::Interrupted);
                    }
                    block.clear();
                    block.extend_from_slice(chunk);
                    checked(&mut block, (i * BLOCK) as u64, name, scale, 1, None)?;
                    each(&block);
                }
                Ok(())
            }
        }
    }
}

/// One pass over a capture file: channel `pick` of it, or every channel frame by frame.
///
/// A reader thread opens, reads, decodes, picks, checks and scales the file block by block
/// while `each` analyses the block before; blocks go back and forth through two channels, so
/// at most `READ_AHEAD + 1` blocks are held.
fn file_pass(
    path: &Path,
    options: &SourceOptions,
    scale: &Scale,
    interrupted: &AtomicBool,
    pick: Option<usize>,
    each: &mut dyn FnMut(&[f64]),
) -> Result<()> {
    let (full_tx, full_rx) = mpsc::sync_channel::<Vec<f64>>(READ_AHEAD);
    let (empty_tx, empty_rx) = mpsc::channel::<Vec<f64>>();
    for _ in 0..=READ_AHEAD {
        empty_tx
            .send(Vec::with_capacity(BLOCK))
            .expect("the receiver is alive");
    }
    std::thread::scope(|threads| {
        let reader = threads.spawn(move || -> Result<()> {
            let mut src = open_source(open_file(path)?, options)?;
            let channels = usize::from(src.info().channels.max(1));
            let frames = (BLOCK / channels).max(1);
            let mut all = Vec::new();
            let mut done: u64 = 0;
            // The analysis hands every block back until it stops early.
            while let Ok(mut block) = empty_rx.recv() {
                if interrupted.load(Ordering::Relaxed) {
                    return Err(Error::Interrupted);
                }
                let n = match (pick, channels) {
                    (Some(k), c) if c > 1 => {
                        let n = src.read_block(&mut all, frames)?;
                        block.clear();
                        block.extend(all.iter().skip(k).step_by(c));
                        checked(&mut block, done, &options.name, scale, 1, Some(k))?;
                        n / c
                    }
                    _ => {
                        let n = src.read_block(&mut block, frames)?;
                        checked(&mut block, done, &options.name, scale, channels, None)?;
                        n / channels
                    }
                };
                if n == 0 {
                    break;
                }
                done += n as u64;
                if full_tx.send(block).is_err() {
                    break;
                }
            }
            Ok(())
        });
        for block in full_rx {
            each(&block);
            // The reader may have stopped already; then the block is simply dropped.
            let _ = empty_tx.send(block);
        }
        reader
            .join()
            .unwrap_or_else(|panic| std::panic::resume_unwind(panic))
    })
}
