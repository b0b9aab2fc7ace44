//! Moving blocks from the engine to the sink: statistics on the way, the progress bar, and
//! the per-source columns beside the totals.

use std::io::{self, IsTerminal};
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::{Arc, Mutex};

use crate::analysis::stats::RunningStats;
use crate::error::{Error, Result};
use crate::io::sink::Sink;
use crate::profile::Profile;

/// Samples produced and written per step.
const CHUNK: usize = crate::run::generator::BLOCK_SAMPLES;
/// Runs longer than this many samples show a progress bar (when stderr is a terminal).
const PROGRESS_MIN_SAMPLES: u64 = 1 << 23;

/// Runs the engine into the sink: `samples` frames (None: until interrupted) of
/// `channel_stats.len()` interleaved channels, in blocks of [`block_frames`]`(frames_hint)`
/// frames; `stats` over every sample, `channel_stats` per channel (only kept for more than one
/// channel).
///
/// With `overlap` (a pool of two or more threads), the statistics, the encoding and the
/// writing of each block run as a job on the rayon pool while this thread makes the next
/// block (the engine stays on the calling thread, inside the pool). The blocks, their order
/// and so the bytes are the same either way.
#[allow(clippy::too_many_arguments)]
pub(super) fn pump(
    engine: &mut dyn FnMut(&mut [f64]),
    frames_hint: &dyn Fn(usize) -> usize,
    sink: &mut dyn Sink,
    samples: Option<u64>,
    stats: &mut RunningStats,
    channel_stats: &mut [RunningStats],
    interrupted: &AtomicBool,
    progress: &indicatif::ProgressBar,
    overlap: bool,
) -> Result<()> {
    let ch = channel_stats.len().max(1);
    let mut blocks = Blocks {
        samples,
        done: 0,
        frames: block_frames(ch, frames_hint),
    };
    let mut tally = Tally {
        stats,
        channel_stats,
        column: Vec::new(),
        written: 0,
        progress,
    };
    if !overlap {
        let mut buf = vec![0.0; blocks.frames * ch];
        while let Some(n) = blocks.next_len() {
            if interrupted.load(Ordering::Relaxed) {
                return Err(Error::Interrupted);
            }
            let block = &mut buf[..n * ch];
            engine(block);
            tally.take(block, sink)?;
        }
        return Ok(());
    }
    // Two buffers: while this thread makes the next block (its FFTs and draws spread over
    // the pool), the previous one is tallied and written as a job of the same pool, which
    // an idle worker takes; no extra thread competes with the engine for the cores.
    let mut fill = vec![0.0; blocks.frames * ch];
    let mut full = vec![0.0; blocks.frames * ch];
    let mut pending = 0;
    loop {
        if interrupted.load(Ordering::Relaxed) {
            return Err(Error::Interrupted);
        }
        let next = blocks.next_len();
        if next.is_none() && pending == 0 {
            return Ok(());
        }
        let mut written = Ok(());
        rayon::in_place_scope(|scope| {
            if pending > 0 {
                let (block, tally, sink, written) =
                    (&full[..pending], &mut tally, &mut *sink, &mut written);
                scope.spawn(move |_| *written = tally.take(block, sink));
            }
            if let Some(n) = next {
                engine(&mut fill[..n * ch]);
            }
        });
        written?;
        match next {
            Some(n) => {
                std::mem::swap(&mut fill, &mut full);
                pending = n * ch;
            }
            None => return Ok(()),
        }
    }
}

/// Frames per block for `ch` channels: about [`CHUNK`] samples, at least
/// [`MIN_BLOCK_FRAMES`] frames, rounded by `hint` to what the engine hands out without a copy.
pub(super) fn block_frames(ch: usize, hint: &dyn Fn(usize) -> usize) -> usize {
    hint((CHUNK / ch).max(MIN_BLOCK_FRAMES))
}

/// Fewest frames per block, however many channels (a block holds about [`CHUNK`] samples).
const MIN_BLOCK_FRAMES: usize = 1024;

/// The lengths, in frames, of the run's consecutive blocks.
struct Blocks {
    samples: Option<u64>,
    done: u64,
    frames: usize,
}

impl Blocks {
    /// Frames in the next block; `None` when the run is complete.
    fn next_len(&mut self) -> Option<usize> {
        let n = match self.samples {
            Some(total) if self.done >= total => return None,
            Some(total) => ((total - self.done) as usize).min(self.frames),
            None => self.frames,
        };
        self.done += n as u64;
        Some(n)
    }
}

/// What happens to each block after the engine: statistics, the sink, the progress bar.
struct Tally<'a> {
    stats: &'a mut RunningStats,
    channel_stats: &'a mut [RunningStats],
    column: Vec<f64>,
    /// Frames written so far.
    written: u64,
    progress: &'a indicatif::ProgressBar,
}

impl Tally<'_> {
    fn take(&mut self, block: &[f64], sink: &mut dyn Sink) -> Result<()> {
        self.stats.push(block);
        let ch = self.channel_stats.len();
        if ch > 1 {
            for (k, s) in self.channel_stats.iter_mut().enumerate() {
                self.column.clear();
                self.column.extend(block.iter().skip(k).step_by(ch));
                s.push(&self.column);
            }
        }
        sink.write(block)?;
        self.written += (block.len() / ch.max(1)) as u64;
        self.progress.set_position(self.written);
        Ok(())
    }
}

/// A progress bar on standard error for a long run (`shown` asked for, and stderr a
/// terminal); a hidden one otherwise.
pub(super) fn progress_bar(samples: Option<u64>, shown: bool) -> indicatif::ProgressBar {
    match samples {
        Some(n) if shown && n >= PROGRESS_MIN_SAMPLES && io::stderr().is_terminal() => {
            let bar = indicatif::ProgressBar::new(n);
            if let Ok(style) = indicatif::ProgressStyle::with_template(
                "{bar:40} {percent:>3}% {pos}/{len} samples, {eta} left",
            ) {
                bar.set_style(style);
            }
            bar
        }
        _ => indicatif::ProgressBar::hidden(),
    }
}

/// Hands the engine's per-source parts of each block to the CSV writer beside the totals
/// (`--columns sources`): the engine fills `parts` with the block it has just produced.
pub(super) struct SourcesSink {
    pub(super) inner: Box<dyn Sink>,
    pub(super) parts: Arc<Mutex<Vec<Vec<f64>>>>,
}

/// The per-source parts, also after a panic elsewhere poisoned the lock (they are plain data).
pub(super) fn lock(parts: &Mutex<Vec<Vec<f64>>>) -> std::sync::MutexGuard<'_, Vec<Vec<f64>>> {
    parts
        .lock()
        .unwrap_or_else(std::sync::PoisonError::into_inner)
}

impl Sink for SourcesSink {
    fn write(&mut self, samples: &[f64]) -> Result<()> {
        let parts = lock(&self.parts);
        let slices: Vec<&[f64]> = parts.iter().map(|p| &p[..samples.len()]).collect();
        self.inner.write_sources(samples, &slices)
    }

    fn finish(&mut self) -> Result<crate::io::sink::SinkReport> {
        self.inner.finish()
    }
}

/// The names of the `--columns sources` columns: the Gaussian sum, each burst, each tone, and
/// `offset` when the profile's offset is not 0 (the order of [`crate::synth::Generator::fill_sources`]).
pub(super) fn source_names(profile: &Profile) -> Vec<String> {
    std::iter::once("gaussian".to_string())
        .chain(profile.bursts.iter().map(|b| b.name.clone()))
        .chain(profile.tones.iter().map(|t| t.name.clone()))
        .chain((profile.offset != 0.0).then(|| "offset".to_string()))
        .collect()
}
