//! Whole runs as library calls: [`Generator`] pulls a profile's samples into the caller's
//! buffers, [`Render`] does everything `generate` does (engine, scale, ADC codes, formats,
//! manifest, summary), [`Analysis`] everything `analyze` does (reading, measuring, judging,
//! fitting, drawing), and [`budget`] what `budget` adds to the budget itself (bands from text,
//! its text and chart). The command line only turns its flags into these calls.

pub mod analyze;
pub mod budget;
mod generator;
mod guard;
mod pending;
pub mod render;

use std::io;
use std::path::{Path, PathBuf};

use crate::error::{Error, Result, Setting};

pub use analyze::{Analysis, AnalysisReport, Verdict};
pub use generator::Generator;
pub(crate) use pending::{PendingFile, commit_all, is_direct_target};
pub use render::{Render, RenderReport};

/// Runs `f` on a worker of a rayon pool of `threads` threads (`None`: the global pool's size,
/// all cores or `RAYON_NUM_THREADS`). A caller already on a worker keeps its pool when
/// `threads` is `None`.
///
/// From a thread outside any pool, every parallel step is handed to the pool and waited for
/// (a wake-up across threads each time); `generate` made two such steps per batch then, and
/// at 2^24 samples on two cores that cost about a quarter of its wall time (0.24 s against
/// 0.18 s, measured 2026-12-03).
pub(crate) fn on_pool<T: Send>(
    threads: Option<usize>,
    f: impl FnOnce() -> Result<T> + Send,
) -> Result<T> {
    let n = match threads {
        None if rayon::current_thread_index().is_some() => return f(),
        None => rayon::current_num_threads(),
        Some(n) => n,
    };
    rayon::ThreadPoolBuilder::new()
        .num_threads(n)
        .build()
        .map_err(|e| match threads {
            Some(_) => Error::setting(Setting::Threads, format!("cannot start {n} threads: {e}")),
            None => Error::io(
                format!("starting {n} worker threads"),
                io::Error::other(e.to_string()),
            ),
        })?
        .install(f)
}

/// Refuses a pool of no threads ([`Setting::Threads`]); `None` is the default pool. A caller
/// may check this before reading a profile, so the settings' errors come first.
pub fn check_threads(threads: Option<usize>) -> Result<()> {
    match threads {
        Some(0) => Err(Error::setting(
            Setting::Threads,
            "expected a whole number of threads of at least 1, got 0",
        )),
        _ => Ok(()),
    }
}

/// The manifest beside an output file: the file's name with `.json` appended.
pub fn manifest_path(path: &Path) -> PathBuf {
    let mut s = path.as_os_str().to_owned();
    s.push(".json");
    PathBuf::from(s)
}
