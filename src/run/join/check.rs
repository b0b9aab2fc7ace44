//! The shards' manifests read and checked: each is a shard whose manifest is as `generate`
//! wrote it, and together they are every part of one run, each once, in order.

use std::path::{Path, PathBuf};

use crate::error::{Error, Result};
use crate::io::manifest::{
    FINGERPRINT_EXTRA_KEYS, FINGERPRINT_KEYS, MAX_MANIFEST_BYTES, Manifest, fingerprint,
};
use crate::profile::read_limited;
use crate::run::manifest_path;
use crate::run::shard::Shard;

/// One shard: its file, its manifest and where it sits in the run.
#[derive(Debug)]
pub(super) struct Piece {
    /// The shard's file, as given.
    pub(super) path: PathBuf,
    /// Its manifest (`path.json`).
    pub(super) manifest_path: PathBuf,
    /// The manifest.
    pub(super) manifest: Manifest,
    /// The manifest as JSON, for the keys the fingerprint hashes.
    doc: serde_json::Value,
    pub(super) fingerprint: String,
    pub(super) shard: Shard,
    /// Frames of the whole run.
    pub(super) run_samples: u64,
}

impl Piece {
    /// How messages name the shard: its file as given.
    pub(super) fn shown(&self) -> String {
        self.path.display().to_string()
    }

    /// The first frame and the frames of the shard, of the run from 0.
    pub(super) fn span(&self) -> (u64, u64) {
        (self.manifest.start_sample, self.manifest.samples)
    }
}

/// Reads the manifest beside `path` and checks it is a shard's, unchanged since it was
/// written (its fingerprint matches its keys) and placed where its index puts it.
pub(super) fn read_piece(path: &Path) -> Result<Piece> {
    let shown = path.display().to_string();
    let mp = manifest_path(path);
    if !path.is_file() {
        return Err(Error::input(
            &shown,
            "no such file (expected a shard's file)",
        ));
    }
    if !mp.is_file() {
        return Err(Error::input(
            &shown,
            format!(
                "has no manifest beside it ({}): join learns from it which part of which run \
                 the file is; generate \u{1}shard\u{1} writes it",
                mp.display()
            ),
        ));
    }
    let text = read_limited(&mp, MAX_MANIFEST_BYTES, "a manifest is a short JSON text")
        .map_err(|e| Error::input(mp.display().to_string(), e.to_string()))?;
    let mp_shown = mp.display().to_string();
    let named = |message: String| Error::input(&mp_shown, message);
    let doc: serde_json::Value =
        serde_json::from_str(&text).map_err(|e| named(format!("not valid JSON: {e}")))?;
    let manifest: Manifest = serde_json::from_value(doc.clone()).map_err(|e| {
        named(format!(
            "not a manifest as generate writes it ({e}); join reads the manifests of \
             generate \u{1}shard\u{1}"
        ))
    })?;
    let shard = &doc["extra"]["shard"];
    let (Some(index), Some(count), Some(run_samples)) = (
        shard["index"].as_u64(),
        shard["count"].as_u64(),
        shard["run_samples"].as_u64(),
    ) else {
        return Err(named(
            "is not a shard's manifest: it has no extra.shard with index, count and \
             run_samples (the file was made without generate \u{1}shard\u{1})"
                .into(),
        ));
    };
    let recorded = doc["extra"]["fingerprint"].as_str().unwrap_or_default();
    let computed = fingerprint(&doc);
    if recorded != computed {
        return Err(named(format!(
            "its extra.fingerprint {recorded:?} does not match its keys ({computed}): the \
             manifest was changed after generate wrote it"
        )));
    }
    let shard = Shard::new(index, count)
        .map_err(|_| named(format!("extra.shard says shard {index} of {count}")))?;
    let piece = Piece {
        path: path.to_path_buf(),
        manifest_path: mp,
        manifest,
        doc,
        fingerprint: computed,
        shard,
        run_samples,
    };
    let want = shard.part(run_samples).ok();
    if want != Some(piece.span()) {
        let (first, n) = piece.span();
        return Err(named(format!(
            "says shard {shard} of a run of {run_samples} samples, but samples {first}.. \
             ({n} samples); that shard is {}",
            want.map_or("impossible".into(), |(a, b)| format!(
                "samples {a}.. ({b} samples)"
            ))
        )));
    }
    Ok(piece)
}

/// Puts the pieces in the run's order and checks they are one run's every shard, each once.
pub(super) fn in_order(mut pieces: Vec<Piece>) -> Result<Vec<Piece>> {
    let Some(first) = pieces.first() else {
        return Err(Error::Unsupported(
            "join needs at least one shard file".into(),
        ));
    };
    for p in &pieces[1..] {
        same_run(first, p)?;
    }
    pieces.sort_by_key(|p| p.shard.index);
    for w in pieces.windows(2) {
        let (a, b) = (&w[0], &w[1]);
        if a.shard.index == b.shard.index {
            return Err(Error::input(
                b.shown(),
                format!(
                    "is shard {} again: {} is that shard too; give each shard once",
                    b.shard,
                    a.shown()
                ),
            ));
        }
        if b.shard.index != a.shard.index + 1 {
            let (start, n) = a.span();
            let missing = (a.shard.index + 1..b.shard.index)
                .map(|k| format!("{k}/{}", a.shard.count))
                .collect::<Vec<_>>()
                .join(", ");
            return Err(Error::input(
                b.shown(),
                format!(
                    "(shard {}, from sample {}) does not follow {} (shard {}, which ends at \
                     sample {}): shard {missing} is missing",
                    b.shard,
                    b.span().0,
                    a.shown(),
                    a.shard,
                    start + n
                ),
            ));
        }
    }
    let count = pieces[0].shard.count;
    let (lo, hi) = (pieces[0].shard.index, pieces[pieces.len() - 1].shard.index);
    let (edge, missing) = match (lo, hi) {
        (0, h) if h == count - 1 => return Ok(pieces),
        (0, h) => (&pieces[pieces.len() - 1], (h + 1, count - 1)),
        (l, _) => (&pieces[0], (0, l - 1)),
    };
    let which = match missing {
        (a, b) if a == b => format!("shard {a}/{count} is missing"),
        (a, b) => format!("shards {a}/{count} to {b}/{count} are missing"),
    };
    Err(Error::input(
        edge.shown(),
        format!(
            "is shard {}, but {which}: the run was cut into {count} shards and every one is \
             needed",
            edge.shard
        ),
    ))
}

/// Refuses `p` when it is not a part of the same run as `first`, naming what differs.
fn same_run(first: &Piece, p: &Piece) -> Result<()> {
    let other = first.shown();
    if p.fingerprint != first.fingerprint {
        let differs = FINGERPRINT_KEYS
            .iter()
            .map(|k| (k.to_string(), &p.doc[k], &first.doc[k]))
            .chain(FINGERPRINT_EXTRA_KEYS.iter().map(|k| {
                (
                    format!("extra.{k}"),
                    &p.doc["extra"][k],
                    &first.doc["extra"][k],
                )
            }))
            .find(|(k, a, b)| a != b && !(k == "extra.adc" && same_adc(a, b)));
        let what = match differs {
            Some((k, a, _)) if k == "seed" => {
                format!("has seed {a}, {other} has seed {}", first.manifest.seed)
            }
            Some((k, _, _)) if k == "profile" => {
                format!("was made from another profile than {other} (their profile keys differ)")
            }
            Some((k, a, b)) => format!("has {k} = {a}, {other} has {b}"),
            None => format!("has another fingerprint than {other}"),
        };
        return Err(Error::input(
            p.shown(),
            format!(
                "is not a part of the same run: it {what}; join puts together the shards of \
                 one run (same profile, seed and settings)"
            ),
        ));
    }
    if p.shard.count != first.shard.count || p.run_samples != first.run_samples {
        return Err(Error::input(
            p.shown(),
            format!(
                "is shard {} of a run of {} samples, but {other} is shard {} of a run of {} \
                 samples: they are parts of different cuts or lengths",
                p.shard, p.run_samples, first.shard, first.run_samples
            ),
        ));
    }
    Ok(())
}

/// Two ADC descriptions that differ only in where their file starts.
fn same_adc(a: &serde_json::Value, b: &serde_json::Value) -> bool {
    let strip = |v: &serde_json::Value| {
        let mut v = v.clone();
        if let Some(o) = v.as_object_mut() {
            o.remove("first_sample");
        }
        v
    };
    strip(a) == strip(b)
}
