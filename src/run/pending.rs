//! Output files written under a temporary name and renamed into place, so that an error, a
//! full disk or an interruption leaves nothing under the name the user asked for.
//!
//! Every file a subcommand writes goes through [`PendingFile`]; files that belong together
//! (a noise file and its manifest, the outputs of one `analyze`) are renamed together by
//! [`commit_all`], so either all of them land or none.
//!
//! A target that exists and is not a regular file (a device such as `/dev/null`, a named
//! pipe, a socket, also behind a symbolic link) is written directly: renaming a file over it
//! would replace the device or pipe with a plain file.

use std::fs;
use std::io::{self, Write};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};

use crate::error::{Error, Result};

/// A file being written under a temporary name beside its target
/// (`.NAME.partial-PID-N`, hidden, in the same folder so the rename cannot cross file
/// systems); renamed into place by [`PendingFile::commit`] or [`commit_all`], removed if
/// dropped before that (an error or an interruption).
#[derive(Debug)]
pub(crate) struct PendingFile {
    /// Where the bytes go: the temporary file, or the target itself when `direct`.
    tmp: PathBuf,
    target: PathBuf,
    committed: bool,
    /// The target is a device, pipe or socket, written in place (nothing to rename or
    /// remove).
    direct: bool,
}

impl PendingFile {
    /// Creates the temporary file, and the target's folder if it does not exist. Refuses a
    /// target that is an existing folder before anything is written, so a long run does not
    /// fail only at its rename.
    pub(crate) fn create(target: &Path) -> Result<PendingFile> {
        let shown = target.display();
        if target.is_dir() {
            return Err(Error::io(
                format!("creating {shown}"),
                io::Error::new(
                    io::ErrorKind::IsADirectory,
                    "a folder has that name; give the name of a file",
                ),
            ));
        }
        // Not opened here: a named pipe would see its writer come and go before the run.
        if is_direct_target(target) {
            return Ok(PendingFile {
                tmp: target.to_path_buf(),
                target: target.to_path_buf(),
                committed: false,
                direct: true,
            });
        }
        let dir = folder_of(target);
        // A path that exists but is not a folder (a file in the way) is left to the OS,
        // whose "Not a directory" names the problem.
        if !dir.exists() {
            fs::create_dir_all(&dir)
                .map_err(|e| Error::io(format!("creating folder {}", dir.display()), e))?;
        }
        let tmp = dir.join(temporary_name(target));
        fs::File::create(&tmp).map_err(|e| Error::io(format!("creating {shown}"), e))?;
        Ok(PendingFile {
            tmp,
            target: target.to_path_buf(),
            committed: false,
            direct: false,
        })
    }

    /// Whether the target is a device, pipe or socket written in place (see the module
    /// documentation): its bytes are not held back until [`commit_all`], and a file meant
    /// to sit beside it (a manifest) has no folder of its own to go to.
    pub(crate) fn is_direct(&self) -> bool {
        self.direct
    }

    /// The temporary file, opened for writing from its start.
    pub(crate) fn file(&self) -> Result<fs::File> {
        fs::OpenOptions::new()
            .write(true)
            .open(&self.tmp)
            .map_err(|e| Error::io(format!("opening {}", self.tmp.display()), e))
    }

    /// Writes `bytes` to the temporary file; an error names the target.
    pub(crate) fn write_all(&self, bytes: &[u8]) -> Result<()> {
        let mut f = self.file()?;
        f.write_all(bytes)
            .and_then(|()| f.flush())
            .map_err(|e| Error::io(format!("writing {}", self.target.display()), e))
    }

    /// Renames the temporary file into place (nothing to do for a direct target).
    pub(crate) fn commit(mut self) -> Result<()> {
        if self.direct {
            self.committed = true;
            return Ok(());
        }
        fs::rename(&self.tmp, &self.target)
            .map_err(|e| Error::io(format!("renaming into {}", self.target.display()), e))?;
        self.committed = true;
        Ok(())
    }
}

impl Drop for PendingFile {
    fn drop(&mut self) {
        if !self.committed && !self.direct {
            let _ = fs::remove_file(&self.tmp);
        }
    }
}

/// Commits `files` in order; when one rename fails, the targets already renamed are
/// removed again and the rest are dropped (their temporary files removed), so either every
/// file lands or none does. Put the file whose presence others rely on last (the noise
/// file after its manifest).
///
/// While it renames, it holds an exclusive advisory lock on each folder the files go to, so
/// two runs committing to the same names cannot interleave their renames: the files that
/// stand together at the end are one run's (its samples beside its own manifest).
pub(crate) fn commit_all(files: Vec<PendingFile>) -> Result<()> {
    let _locks = lock_folders(&files);
    let mut landed: Vec<PathBuf> = Vec::with_capacity(files.len());
    for f in files {
        let target = f.target.clone();
        if let Err(e) = f.commit() {
            for t in &landed {
                let _ = fs::remove_file(t);
            }
            return Err(e);
        }
        landed.push(target);
    }
    Ok(())
}

/// The longest part of a target's name kept in its temporary name, bytes: a name the file
/// system only just takes must still leave room for the dot, the suffix and the counter.
const KEPT_NAME_BYTES: usize = 64;

/// The temporary name of `target`: `.NAME.partial-PID-N`, NAME cut to [`KEPT_NAME_BYTES`]
/// (at a character boundary) and N counting the files this process has made, so two files
/// of one process never share it, even when their names start alike.
fn temporary_name(target: &Path) -> String {
    static MADE: AtomicU64 = AtomicU64::new(0);
    let name = target
        .file_name()
        .map_or("output".into(), |n| n.to_string_lossy().into_owned());
    let mut cut = name.len().min(KEPT_NAME_BYTES);
    while !name.is_char_boundary(cut) {
        cut -= 1;
    }
    let n = MADE.fetch_add(1, Ordering::Relaxed);
    format!(".{}.partial-{}-{n}", &name[..cut], std::process::id())
}

/// Whether `target` exists and is a device, pipe or socket (also behind a symbolic link),
/// which is written in place rather than replaced by a renamed file.
pub(crate) fn is_direct_target(target: &Path) -> bool {
    fs::metadata(target).is_ok_and(|m| !m.is_file() && !m.is_dir())
}

/// Takes an exclusive advisory lock (`flock`) on each folder that `files` are renamed
/// into, in the order of their canonical paths so that two runs cannot each wait for the
/// other; the locks end when the returned files are dropped, or with the process. A folder
/// that cannot be opened for reading (no read permission) or locked (a system without
/// `flock`) is committed to without its lock.
fn lock_folders(files: &[PendingFile]) -> Vec<fs::File> {
    let mut folders: Vec<PathBuf> = files
        .iter()
        .filter(|f| !f.direct)
        .filter_map(|f| fs::canonicalize(folder_of(&f.target)).ok())
        .collect();
    folders.sort();
    folders.dedup();
    folders
        .iter()
        .filter_map(|d| {
            let f = fs::File::open(d).ok()?;
            lock(&f).then_some(f)
        })
        .collect()
}

/// Takes an exclusive advisory lock on `f` (`flock`, released when `f` is closed), waiting
/// for another holder; false when it cannot be taken (or on systems without it).
fn lock(f: &fs::File) -> bool {
    #[cfg(unix)]
    {
        use std::os::fd::AsRawFd;
        // SAFETY: flock only acts on the open descriptor of `f`, which outlives the call.
        unsafe { libc::flock(f.as_raw_fd(), libc::LOCK_EX) == 0 }
    }
    #[cfg(not(unix))]
    {
        let _ = f;
        false
    }
}

/// The folder a target is written in (`.` for a bare file name).
fn folder_of(target: &Path) -> PathBuf {
    match target.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => PathBuf::from("."),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_named_pipe_is_written_in_place_and_stays_a_pipe() {
        use std::os::unix::fs::FileTypeExt;
        let d = scratch("fifo");
        let fifo = d.join("rig.raw");
        let made = std::process::Command::new("mkfifo").arg(&fifo).status();
        if !made.is_ok_and(|s| s.success()) {
            eprintln!("skipped: mkfifo is not available here");
            return;
        }
        let reader = {
            let fifo = fifo.clone();
            std::thread::spawn(move || fs::read(fifo).unwrap())
        };
        let p = PendingFile::create(&fifo).unwrap();
        assert!(p.is_direct());
        p.write_all(b"abc").unwrap();
        commit_all(vec![p]).unwrap();
        assert_eq!(reader.join().unwrap(), b"abc");
        assert!(fs::metadata(&fifo).unwrap().file_type().is_fifo());
        assert_eq!(names(&d), ["rig.raw"], "no temporary file beside the pipe");
        // A regular file is still written under a temporary name first.
        assert!(
            !PendingFile::create(&d.join("plain.raw"))
                .unwrap()
                .is_direct()
        );
        fs::remove_dir_all(&d).unwrap();
    }

    fn scratch(tag: &str) -> PathBuf {
        let d =
            std::env::temp_dir().join(format!("noisewright-pending-{}-{tag}", std::process::id()));
        let _ = fs::remove_dir_all(&d);
        fs::create_dir_all(&d).unwrap();
        d
    }

    fn names(dir: &Path) -> Vec<String> {
        let mut v: Vec<String> = fs::read_dir(dir)
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
            .collect();
        v.sort();
        v
    }

    #[test]
    fn a_dropped_file_leaves_nothing_and_a_committed_one_lands() {
        let d = scratch("drop");
        {
            let p = PendingFile::create(&d.join("a.raw")).unwrap();
            p.write_all(b"abc").unwrap();
            assert_eq!(
                names(&d).len(),
                1,
                "the temporary file exists while writing"
            );
        }
        assert!(names(&d).is_empty(), "left behind: {:?}", names(&d));
        let p = PendingFile::create(&d.join("a.raw")).unwrap();
        p.write_all(b"abc").unwrap();
        p.commit().unwrap();
        assert_eq!(names(&d), ["a.raw"]);
        assert_eq!(fs::read(d.join("a.raw")).unwrap(), b"abc");
        fs::remove_dir_all(&d).unwrap();
    }

    #[test]
    fn commit_all_removes_what_landed_when_a_later_rename_fails() {
        let d = scratch("all");
        let first = PendingFile::create(&d.join("x.json")).unwrap();
        first.write_all(b"{}").unwrap();
        let second = PendingFile::create(&d.join("x.raw")).unwrap();
        second.write_all(b"data").unwrap();
        // A folder appears under the second name after the check in create: its rename
        // fails, and the first file, already renamed, must go again.
        fs::create_dir(d.join("x.raw")).unwrap();
        let e = commit_all(vec![first, second]).unwrap_err();
        assert!(e.to_string().contains("x.raw"), "{e}");
        assert_eq!(names(&d), ["x.raw"], "only the folder may remain");
        assert!(d.join("x.raw").is_dir());
        fs::remove_dir_all(&d).unwrap();
    }

    /// Four writers commit a manifest and a data file to the same two names at once, 200
    /// times: after each round the two files hold the same writer's bytes. Without the
    /// folder lock the renames interleave (one writer's data beside another's manifest) in
    /// some rounds.
    #[test]
    fn concurrent_commits_to_one_name_leave_one_writers_pair() {
        const WRITERS: usize = 4;
        let d = scratch("race");
        let (data, manifest) = (d.join("o.raw"), d.join("o.raw.json"));
        let together = std::sync::Barrier::new(WRITERS);
        let mixed = AtomicU64::new(0);
        std::thread::scope(|scope| {
            for w in 0..WRITERS {
                let (data, manifest, together, mixed) = (&data, &manifest, &together, &mixed);
                scope.spawn(move || {
                    for round in 0..200 {
                        let m = PendingFile::create(manifest).unwrap();
                        m.write_all(format!("{w}").as_bytes()).unwrap();
                        let p = PendingFile::create(data).unwrap();
                        p.write_all(format!("{w}").as_bytes()).unwrap();
                        together.wait();
                        commit_all(vec![m, p]).unwrap();
                        together.wait();
                        if w == 0 && fs::read(manifest).unwrap() != fs::read(data).unwrap() {
                            eprintln!(
                                "round {round}: the data of one writer, the manifest of another"
                            );
                            mixed.fetch_add(1, Ordering::Relaxed);
                        }
                        together.wait();
                    }
                });
            }
        });
        assert_eq!(mixed.load(Ordering::Relaxed), 0, "rounds with a mixed pair");
        assert_eq!(
            names(&d),
            ["o.raw", "o.raw.json"],
            "no temporary file is left"
        );
        fs::remove_dir_all(&d).unwrap();
    }

    #[test]
    fn a_long_name_keeps_a_short_temporary_name_and_each_is_unique() {
        let long = format!("{}.raw", "é".repeat(100));
        let a = temporary_name(Path::new(&long));
        let b = temporary_name(Path::new(&format!("{long}.json")));
        assert_ne!(a, b);
        // 32 two-byte characters (64 bytes) of the name are kept, then the suffix.
        let kept = format!(".{}.partial-{}-", "é".repeat(32), std::process::id());
        assert!(a.starts_with(&kept) && b.starts_with(&kept), "{a} / {b}");
        assert!(a.len() < kept.len() + 21, "{a}");
        let short = temporary_name(Path::new("dir/o.raw"));
        assert!(short.starts_with(&format!(".o.raw.partial-{}-", std::process::id())));
    }

    #[test]
    fn a_folder_under_the_target_name_is_refused_before_writing() {
        let d = scratch("dir");
        fs::create_dir(d.join("out.wav")).unwrap();
        let e = PendingFile::create(&d.join("out.wav")).unwrap_err();
        assert_eq!(e.exit_code(), 1);
        assert!(e.to_string().contains("out.wav"), "{e}");
        assert!(e.to_string().contains("folder"), "{e}");
        assert_eq!(names(&d), ["out.wav"]);
        fs::remove_dir_all(&d).unwrap();
    }
}
