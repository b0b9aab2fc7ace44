//! Whole runs as library calls: [`Generator`] pulls a profile's samples into the caller's
//! buffers, [`Render`] does everything `generate` does (engine, scale, ADC codes, formats,
//! manifest, summary), [`Analysis`] everything `analyze` does (reading, measuring, judging,
//! fitting, drawing), [`Join`] the shards of a run back into one file, and [`budget`] what `budget` adds to the budget itself (bands from text,
//! its text and chart). The command line only turns its flags into these calls.

pub mod analyze;
pub mod budget;
mod generator;
mod guard;
pub mod join;
mod pending;
pub mod render;
pub mod shard;

use std::io;
use std::path::{Path, PathBuf};

use crate::error::{Error, Result, Setting};

pub use analyze::{Analysis, AnalysisReport, Verdict};
pub use generator::Generator;
pub use join::{Join, JoinReport};
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

/// Most worker threads a run may ask for, by [`Setting::Threads`] or by the environment
/// variable `RAYON_NUM_THREADS`: far above any machine's useful count, and low enough that a
/// mistyped count is refused at once instead of after tens of seconds spent starting
/// threads (or a panic inside the thread pool when the system runs out of them).
pub const MAX_THREADS: usize = 1024;

/// The environment variable that sizes the default pool (read by rayon; 0 means one thread
/// per core, rayon's documented default).
const THREADS_VARIABLE: &str = "RAYON_NUM_THREADS";

/// Refuses a pool of no threads or of more than [`MAX_THREADS`] ([`Setting::Threads`]);
/// `None` is the default pool, whose size `RAYON_NUM_THREADS` may set: a value there that is
/// not a whole number from 0 to [`MAX_THREADS`] is refused too ([`Error::Unsupported`], naming
/// the variable). A caller may check this before reading a profile, so the settings' errors
/// come first.
pub fn check_threads(threads: Option<usize>) -> Result<()> {
    match threads {
        Some(0) => Err(Error::setting(
            Setting::Threads,
            "expected a whole number of threads of at least 1, got 0",
        )),
        Some(n) if n > MAX_THREADS => Err(Error::setting(
            Setting::Threads,
            format!("expected a whole number of threads from 1 to {MAX_THREADS}, got {n}"),
        )),
        Some(_) => Ok(()),
        None => check_threads_variable(std::env::var_os(THREADS_VARIABLE)),
    }
}

/// The check of `RAYON_NUM_THREADS` (its value, if set) for [`check_threads`].
fn check_threads_variable(value: Option<std::ffi::OsString>) -> Result<()> {
    let Some(value) = value else { return Ok(()) };
    let text = value.to_string_lossy();
    match text.trim().parse::<usize>() {
        _ if text.is_empty() => Ok(()),
        Ok(n) if n <= MAX_THREADS => Ok(()),
        _ => Err(Error::Unsupported(format!(
            "the environment variable {THREADS_VARIABLE} is {text:?}: expected a whole number \
             of worker threads from 1 to {MAX_THREADS} (0, or unset: one per core)"
        ))),
    }
}

/// The manifest beside an output file: the file's name with `.json` appended.
pub fn manifest_path(path: &Path) -> PathBuf {
    let mut s = path.as_os_str().to_owned();
    s.push(".json");
    PathBuf::from(s)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn thread_counts_past_the_limit_are_refused_by_flag_and_by_variable() {
        assert!(check_threads(Some(1)).is_ok());
        assert!(check_threads(Some(MAX_THREADS)).is_ok());
        let e = check_threads(Some(MAX_THREADS + 1)).unwrap_err();
        assert!(e.cli_text().contains("--threads"), "{e}");
        assert!(e.to_string().contains("from 1 to 1024, got 1025"), "{e}");
        assert_eq!(e.exit_code(), 2);
        for ok in [
            None,
            Some(""),
            Some("0"),
            Some("1"),
            Some(" 8 "),
            Some("1024"),
        ] {
            assert!(check_threads_variable(ok.map(Into::into)).is_ok(), "{ok:?}");
        }
        for bad in ["100000", "1025", "-1", "four", "2.5"] {
            let e = check_threads_variable(Some(bad.into())).unwrap_err();
            let text = e.to_string();
            assert!(
                text.contains("RAYON_NUM_THREADS") && text.contains(bad),
                "{text}"
            );
            assert_eq!(e.exit_code(), 2);
        }
    }
}
