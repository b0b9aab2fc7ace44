//! [`Join`]: the shards of one run (`generate --shard K/N`, made on any number of machines)
//! put back into one file, byte for byte the file a single run writes, and its manifest —
//! without generating anything again, in bounded memory.
//!
//! Every shard is a complete file of its format with a manifest beside it. The manifests
//! say which part of which run each file is (`extra.shard`, `start_sample`, `samples`) and
//! carry the fingerprint of everything that decides the bytes ([`crate::io::manifest::fingerprint`]).
//! The steps: `check` reads the manifests and refuses shards of other runs, shards given
//! twice, missing shards and changed manifests; `layout` knows where each format keeps its
//! samples, checks each file's header and length, and copies the samples; `whole` writes the
//! manifest of the whole run. The joined file is the header for the whole run's length (WAV,
//! RF64 past 4 GiB; npy), every shard's samples in order and a WAV's pad byte.

mod check;
mod layout;
mod whole;

use std::fmt;
use std::io::{BufWriter, Write};
use std::path::{Path, PathBuf};
use std::sync::atomic::AtomicBool;

use crate::error::{Error, Result, Setting};
use crate::io::manifest::write_manifest;
use crate::io::sink::{Format, SampleFormat};
use crate::run::guard::{Read, Written, check_outputs};
use crate::run::{PendingFile, commit_all, manifest_path};

/// Joins the shards of one run into one file and its manifest, as a builder: the shard
/// files (in any order), then [`Join::to_path`].
///
/// ```no_run
/// use noisewright::Join;
///
/// let shards: Vec<String> = (0..8).map(|k| format!("noise-{k}.wav")).collect();
/// let report = Join::new(&shards).to_path("noise.wav")?;
/// assert_eq!(report.shards, 8);
/// print!("{report}");
/// # Ok::<(), noisewright::Error>(())
/// ```
#[derive(Debug, Clone)]
pub struct Join<'a> {
    shards: Vec<PathBuf>,
    interrupt: Option<&'a AtomicBool>,
}

/// What a join wrote.
#[derive(Debug, Clone)]
pub struct JoinReport {
    /// The joined file.
    pub path: PathBuf,
    /// Its manifest (`path.json`).
    pub manifest_path: PathBuf,
    /// How many shards went into it.
    pub shards: usize,
    /// Frames of the whole run (samples per channel).
    pub frames: u64,
    /// Bytes of the joined file.
    pub bytes: u64,
    /// The run's fingerprint, as every shard's manifest and the joined one record it.
    pub fingerprint: String,
    /// The text summary `join` prints.
    pub summary: String,
}

impl fmt::Display for JoinReport {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.summary)
    }
}

impl<'a> Join<'a> {
    /// A join of these shard files (each with its manifest beside it), in any order.
    pub fn new<P: AsRef<Path>>(shards: impl IntoIterator<Item = P>) -> Join<'a> {
        Join {
            shards: shards
                .into_iter()
                .map(|p| p.as_ref().to_path_buf())
                .collect(),
            interrupt: None,
        }
    }

    /// Polled between blocks: when it becomes true the join stops with
    /// [`Error::Interrupted`] and leaves no file under the target name.
    pub fn interrupt_on(mut self, flag: &'a AtomicBool) -> Self {
        self.interrupt = Some(flag);
        self
    }

    /// Writes the whole run to `path` (in the shards' format; an extension must agree with
    /// it) and its manifest `path.json`, both or neither. Refuses shards that are not every
    /// part of one run, each once, and a shard file that is truncated or changed
    /// ([`Error::Input`], naming the file and what is wrong).
    pub fn to_path(&self, path: impl AsRef<Path>) -> Result<JoinReport> {
        let path = path.as_ref();
        let pieces = self
            .shards
            .iter()
            .map(|p| check::read_piece(p))
            .collect::<Result<Vec<_>>>()?;
        let pieces = check::in_order(pieces)?;
        let first = &pieces[0];
        let layout = layout::Layout::of(&first.manifest, &first.shown())?;
        check_extension(path, first.manifest.format, &first.manifest.sample_format)?;
        let mp = manifest_path(path);
        let written = [
            Written {
                setting: Setting::Output,
                path,
                beside: None,
            },
            Written {
                setting: Setting::Output,
                path: &mp,
                beside: Some(path),
            },
        ];
        let read: Vec<Read> = pieces
            .iter()
            .flat_map(|p| {
                [
                    Read::new("a shard", &p.path),
                    Read::new("a shard's manifest", &p.manifest_path),
                ]
            })
            .collect();
        check_outputs(&written, &read)?;
        let never = AtomicBool::new(false);
        let interrupted = self.interrupt.unwrap_or(&never);
        let bytes = write_joined(&pieces, &layout, path, &mp, interrupted)?;
        let report = JoinReport {
            path: path.to_path_buf(),
            manifest_path: mp,
            shards: pieces.len(),
            frames: first.run_samples,
            bytes,
            fingerprint: first.fingerprint.clone(),
            summary: String::new(),
        };
        Ok(JoinReport {
            summary: summary(&report, &first.manifest),
            ..report
        })
    }
}

/// Writes the joined file and its manifest under temporary names and commits both; returns
/// the joined file's length in bytes.
fn write_joined(
    pieces: &[check::Piece],
    layout: &layout::Layout,
    path: &Path,
    mp: &Path,
    interrupted: &AtomicBool,
) -> Result<u64> {
    let total = pieces[0].run_samples;
    let shown = path.display().to_string();
    let named = |e: Error| match e {
        Error::Io { context, source } if context.starts_with("writing") => Error::Io {
            context: format!("{context} {shown}"),
            source,
        },
        other => other,
    };
    let pending = PendingFile::create(path)?;
    let manifest = PendingFile::create(mp)?;
    let file = pending.file()?;
    let mut out = BufWriter::with_capacity(crate::io::sink::FLUSH_BYTES, &file);
    let header = layout.header(total)?;
    out.write_all(&header)
        .map_err(|e| named(Error::io("writing", e)))?;
    let mut csv_header = None;
    for p in pieces {
        layout::copy_samples(p, layout, &mut csv_header, &mut out, interrupted).map_err(named)?;
    }
    layout::finish(layout, total, &mut out).map_err(named)?;
    out.flush().map_err(|e| named(Error::io("writing", e)))?;
    drop(out);
    let bytes = file
        .metadata()
        .map_err(|e| Error::io(format!("reading back {shown}"), e))?
        .len();
    let doc = whole::whole_manifest(pieces, layout)?;
    write_manifest(&doc, BufWriter::new(manifest.file()?)).map_err(|e| match e {
        Error::Io { context, source } => Error::Io {
            context: format!("{context} to {}", mp.display()),
            source,
        },
        other => other,
    })?;
    // The joined file last: where it exists, its manifest does too.
    commit_all(vec![manifest, pending])?;
    Ok(bytes)
}

/// Refuses an output whose extension names another format (or raw sample type) than the
/// shards': a join copies bytes and does not convert.
fn check_extension(path: &Path, format: Format, sample_format: &str) -> Result<()> {
    let Some(ext) = path.extension().map(|e| e.to_string_lossy().to_lowercase()) else {
        return Ok(());
    };
    let named = Format::from_extension(&ext);
    let raw_type = SampleFormat::from_extension(&ext)
        .map(|s| s.name().to_string())
        .or_else(|| crate::io::adc::Container::from_extension(&ext).map(|c| c.name().into()));
    let fits = match named {
        None => true,
        Some(f) if f != format => false,
        Some(_) => raw_type.is_none_or(|t| t == sample_format),
    };
    if fits {
        return Ok(());
    }
    Err(Error::setting(
        Setting::Output,
        format!(
            "{} names a .{ext} file, but the shards are {format} files of {sample_format} \
             samples; join copies their bytes and does not convert: name it .{}",
            path.display(),
            match format {
                Format::Raw => format!("{sample_format}, .raw or .bin"),
                f => f.name().to_string(),
            }
        ),
    ))
}

/// The summary `join` prints.
fn summary(r: &JoinReport, m: &crate::io::manifest::Manifest) -> String {
    format!(
        "noisewright {}: joined {} shards -> {}\n  samples         {} at {} Hz ({} s), \
         {} {}\n  bytes           {}\n  seed            {}\n  fingerprint     {}\n  \
         manifest        {}\n",
        env!("CARGO_PKG_VERSION"),
        r.shards,
        r.path.display(),
        r.frames,
        m.sample_rate_hz,
        r.frames as f64 / m.sample_rate_hz,
        m.format,
        m.sample_format,
        r.bytes,
        m.seed,
        r.fingerprint,
        r.manifest_path.display()
    )
}
