//! The one check of a run's output paths, made before anything is written (before any folder
//! is made): each names a file, not a folder; each name fits the file system; and none is the
//! same file as a file the run reads, or as another of its outputs. Every command passes its
//! whole list of outputs through [`check_outputs`].
//!
//! "The same file" is file identity, not spelling: on unix the device and inode that the path
//! leads to (through symbolic links; a hard link shares the inode of its twin), elsewhere the
//! canonical path. An output that does not exist yet is resolved as it will be made: its
//! longest existing prefix made canonical, then its remaining parts as written (a `..` undoes
//! the folder before it, as it will once the missing folders are created). Only regular files
//! count as inputs: writing to a device or a pipe replaces nothing, and such an output is
//! written in place (see `pending`).

use std::ffi::OsString;
use std::fs;
use std::path::{Component, Path, PathBuf};

use crate::error::{Error, Result, Setting};

/// A file a run reads.
pub(crate) struct Read<'a> {
    /// What it is, for messages: `the profile`, `the capture` …
    pub(crate) what: &'static str,
    pub(crate) path: &'a Path,
    /// How messages name it (as the user gave it).
    pub(crate) shown: String,
}

impl<'a> Read<'a> {
    /// The file at `path`, named in messages as `path` is written.
    pub(crate) fn new(what: &'static str, path: &'a Path) -> Read<'a> {
        Read {
            what,
            path,
            shown: path.display().to_string(),
        }
    }
}

/// A file a run writes.
pub(crate) struct Written<'a> {
    /// The setting that names it (for the manifest beside a file, that file's setting).
    pub(crate) setting: Setting,
    pub(crate) path: &'a Path,
    /// The output a file is named after (the manifest beside `OUT`), for messages.
    pub(crate) beside: Option<&'a Path>,
}

impl Written<'_> {
    /// How messages name it: the path, or `the manifest beside OUT, OUT.json`.
    fn shown(&self) -> String {
        match self.beside {
            Some(b) => format!(
                "the manifest beside {}, {},",
                b.display(),
                self.path.display()
            ),
            None => self.path.display().to_string(),
        }
    }
}

/// What a file is, for comparing two paths: device and inode on unix, the canonical path
/// elsewhere.
#[derive(Debug, PartialEq, Eq)]
struct FileId(#[cfg(unix)] (u64, u64), #[cfg(not(unix))] PathBuf);

/// The identity of the regular file at `path` (following symbolic links); `None` when there
/// is none, or it is a folder, device, pipe or socket.
fn regular_file_id(path: &Path) -> Option<FileId> {
    let m = fs::metadata(path).ok()?;
    if !m.is_file() {
        return None;
    }
    #[cfg(unix)]
    {
        use std::os::unix::fs::MetadataExt;
        Some(FileId((m.dev(), m.ino())))
    }
    #[cfg(not(unix))]
    {
        fs::canonicalize(path).ok().map(FileId)
    }
}

/// Where an output path leads once its missing folders are made.
struct Resolved {
    /// Its longest existing prefix, canonical.
    known: PathBuf,
    /// The names after it that do not exist yet (folders to make, then the file).
    missing: Vec<OsString>,
    /// The whole path: `known` with the remaining parts applied.
    full: PathBuf,
}

/// Resolves `path` (see the module documentation); `None` when the working folder cannot be
/// read.
fn resolve(path: &Path) -> Option<Resolved> {
    let abs = std::path::absolute(path).ok()?;
    let parts: Vec<Component> = abs.components().collect();
    let mut prefix = PathBuf::new();
    let mut at = 0;
    while at < parts.len() {
        let next = prefix.join(parts[at]);
        if fs::metadata(&next).is_err() {
            break;
        }
        prefix = next;
        at += 1;
    }
    let known = fs::canonicalize(&prefix).ok()?;
    let mut full = known.clone();
    let mut missing = Vec::new();
    for part in &parts[at..] {
        match part {
            Component::ParentDir => {
                full.pop();
            }
            Component::Normal(n) => {
                full.push(n);
                missing.push(n.to_os_string());
            }
            _ => {}
        }
    }
    Some(Resolved {
        known,
        missing,
        full,
    })
}

/// Refuses a path that names a folder rather than a file: one that is empty, ends with a
/// separator, or whose last part is `.` or `..`.
fn refuse_folder_name(w: &Written) -> Result<()> {
    let text = w.path.as_os_str().to_string_lossy();
    let last = text.rsplit(std::path::is_separator).next().unwrap_or("");
    let why = if text.is_empty() {
        "is empty".to_string()
    } else if last.is_empty() {
        format!("{text:?} ends with a path separator, so it names a folder")
    } else if last == "." || last == ".." {
        format!("{text:?} names a folder")
    } else {
        return Ok(());
    };
    Err(Error::setting(
        w.setting,
        format!(
            "{why}; expected the name of a file, e.g. {}",
            example(w.setting, w.path)
        ),
    ))
}

/// A file name under the folder `path` names, for the message of [`refuse_folder_name`].
fn example(setting: Setting, path: &Path) -> String {
    let name = match setting {
        Setting::Plot => "density.svg",
        Setting::AllanPlot => "allan.svg",
        Setting::Report => "report.html",
        Setting::Fit => "fitted.toml",
        _ => "noise.wav",
    };
    let text = path.as_os_str().to_string_lossy();
    match text.trim_end_matches(std::path::is_separator) {
        "" => format!("{text}{name}"),
        d => format!("{d}{}{name}", std::path::MAIN_SEPARATOR),
    }
}

/// Whether asking for `path` fails because its last name is longer than its folder's file
/// system allows (ENAMETOOLONG; unix only).
fn name_too_long(path: &Path) -> bool {
    #[cfg(unix)]
    {
        fs::symlink_metadata(path).is_err_and(|e| e.raw_os_error() == Some(libc::ENAMETOOLONG))
    }
    #[cfg(not(unix))]
    {
        let _ = path;
        false
    }
}

/// Refuses a name the output's file system cannot hold (asked of the folder it will go in,
/// so a name too long fails now, not at the rename after the whole run).
fn refuse_long_names(w: &Written, r: &Resolved) -> Result<()> {
    for name in &r.missing {
        if !name_too_long(&r.known.join(name)) {
            continue;
        }
        let what = match w.beside {
            Some(b) => format!(
                "the manifest beside {} needs a name of {} bytes (the output's name and \
                 \".json\")",
                b.display(),
                name.len()
            ),
            None => format!("{} has a name of {} bytes", w.path.display(), name.len()),
        };
        return Err(Error::setting(
            w.setting,
            format!(
                "{what}, longer than the file system of {} allows; choose a shorter name",
                r.known.display()
            ),
        ));
    }
    Ok(())
}

/// Checks every output of a run against the others and against every file the run reads
/// (see the module documentation), in order: the first output at fault is named, with the
/// setting that gave it, and nothing has been written.
pub(crate) fn check_outputs(written: &[Written], read: &[Read]) -> Result<()> {
    let inputs: Vec<(&Read, FileId)> = read
        .iter()
        .filter_map(|r| regular_file_id(r.path).map(|id| (r, id)))
        .collect();
    let mut seen: Vec<(&Written, PathBuf, Option<FileId>)> = Vec::new();
    for w in written {
        refuse_folder_name(w)?;
        let Some(r) = resolve(w.path) else { continue };
        refuse_long_names(w, &r)?;
        // A device, pipe or folder under that name is not replaced by the run.
        if fs::metadata(&r.full).is_ok_and(|m| !m.is_file()) {
            continue;
        }
        let id = regular_file_id(&r.full);
        if let Some((input, _)) = inputs.iter().find(|(_, i)| Some(i) == id.as_ref()) {
            return Err(Error::setting(
                w.setting,
                format!(
                    "{} is the same file as {} {}: writing it would destroy that input; \
                     choose another name",
                    w.shown(),
                    input.what,
                    input.shown
                ),
            ));
        }
        let twin = seen
            .iter()
            .find(|(_, full, other)| *full == r.full || (id.is_some() && *other == id));
        if let Some((other, _, _)) = twin {
            return Err(Error::setting(
                w.setting,
                format!(
                    "{} is the same file as {} written for {}; give each output its own name",
                    w.shown(),
                    other.shown().trim_end_matches(','),
                    other.setting.mark()
                ),
            ));
        }
        seen.push((w, r.full, id));
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A fresh folder holding `p.toml`, made the base of relative paths by joining.
    fn scratch(tag: &str) -> PathBuf {
        let d =
            std::env::temp_dir().join(format!("noisewright-guard-{}-{tag}", std::process::id()));
        let _ = fs::remove_dir_all(&d);
        fs::create_dir_all(&d).unwrap();
        fs::write(d.join("p.toml"), "x").unwrap();
        d
    }

    fn out(setting: Setting, path: &Path) -> Written<'_> {
        Written {
            setting,
            path,
            beside: None,
        }
    }

    fn check(d: &Path, outputs: &[&str]) -> Result<()> {
        let paths: Vec<PathBuf> = outputs.iter().map(|o| d.join(o)).collect();
        let written: Vec<Written> = paths.iter().map(|p| out(Setting::Output, p)).collect();
        let profile = d.join("p.toml");
        check_outputs(&written, &[Read::new("the profile", &profile)])
    }

    #[test]
    fn every_spelling_and_link_of_an_input_is_refused_and_nothing_is_made() {
        let d = scratch("spell");
        fs::hard_link(d.join("p.toml"), d.join("hard.toml")).unwrap();
        #[cfg(unix)]
        std::os::unix::fs::symlink(d.join("p.toml"), d.join("soft.toml")).unwrap();
        fs::create_dir(d.join("sub")).unwrap();
        let mut same = vec![
            "p.toml",
            "./p.toml",
            "sub/../p.toml",
            "new/../p.toml",
            "hard.toml",
        ];
        if cfg!(unix) {
            same.push("soft.toml");
        }
        for o in same {
            let e = check(&d, &[o]).unwrap_err();
            assert_eq!(e.exit_code(), 2, "{o}");
            assert!(
                e.to_string().contains("same file as the profile"),
                "{o}: {e}"
            );
        }
        assert!(!d.join("new").exists(), "no folder is made by the check");
        for o in ["q.toml", "new/p.toml", "sub/p.toml", "p.toml.json"] {
            check(&d, &[o]).unwrap_or_else(|e| panic!("{o}: {e}"));
        }
        fs::remove_dir_all(&d).unwrap();
    }

    #[test]
    fn two_outputs_on_one_file_are_refused_naming_both_settings() {
        let d = scratch("twins");
        let (a, b) = (d.join("x.svg"), d.join("sub/../x.svg"));
        let e =
            check_outputs(&[out(Setting::Plot, &a), out(Setting::Report, &b)], &[]).unwrap_err();
        let text = e.cli_text();
        assert!(text.starts_with("option --report: "), "{text}");
        assert!(text.contains("written for --plot"), "{text}");
        check_outputs(
            &[
                out(Setting::Plot, &a),
                out(Setting::Report, &d.join("x.html")),
            ],
            &[],
        )
        .unwrap();
        fs::remove_dir_all(&d).unwrap();
    }

    #[test]
    fn a_folder_name_is_refused_with_a_file_name_to_use() {
        for (given, example) in [
            ("name/", "name/density.svg"),
            ("a/b/.", "a/b/./density.svg"),
            ("..", "../density.svg"),
        ] {
            let e = check_outputs(&[out(Setting::Plot, Path::new(given))], &[]).unwrap_err();
            let text = e.cli_text();
            assert!(text.contains(&format!("{given:?}")), "{text}");
            assert!(text.contains(&format!("e.g. {example}")), "{text}");
        }
    }

    #[test]
    fn a_name_the_file_system_cannot_hold_is_refused_before_any_folder_is_made() {
        let d = scratch("long");
        // 255 bytes is the usual limit of a name (common practice: ext4, xfs, tmpfs, btrfs).
        let long = format!("new/{}.raw", "n".repeat(252));
        let e = check(&d, &[&long]).unwrap_err();
        assert!(e.to_string().contains("has a name of 256 bytes"), "{e}");
        assert!(!d.join("new").exists());
        let fits = format!("{}.raw", "n".repeat(246));
        check(&d, &[&fits]).unwrap();
        fs::remove_dir_all(&d).unwrap();
    }
}
