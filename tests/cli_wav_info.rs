//! A WAV keeps its scale on its own: `generate` writes a RIFF `LIST`/`INFO` chunk whose
//! `ICMT` comment holds the unit, full scale, profile name and seed, right before `data`;
//! `analyze` takes the scale from it when no manifest is beside the file, and the manifest
//! wins when both are there. The chunk layout is checked by an independent walker in Python
//! (RIFF: Multimedia Programming Interface and Data Specifications 1.0, IBM/Microsoft 1991,
//! from memory), which also reads the file with the standard library's `wave` module and
//! scipy.io.wavfile; the samples are checked to be the raw output's bytes unchanged.

mod common;

use std::ffi::OsString;
use std::path::Path;

use common::{Scratch, WHITE, python_script, run, text};

/// Fixed seed of every run here, printed on failure.
const SEED: u64 = 7;
/// Samples per run: 20 000 at 48 kHz.
const SAMPLES: &str = "20000";

fn os(s: &str) -> OsString {
    OsString::from(s)
}

/// `generate PROFILE -o OUT --seed SEED --samples SAMPLES -q EXTRA…`, which must succeed.
fn generate(profile: &Path, out: &Path, extra: &[&str]) {
    let mut a = vec!["--samples", SAMPLES];
    a.extend_from_slice(extra);
    common::generate_seeded(profile, out, SEED, &a);
}

/// `analyze FILE --json EXTRA…`, which must succeed → (JSON, text summary of the same run).
fn analyze(file: &Path, extra: &[&str]) -> (serde_json::Value, String) {
    let dir = file.parent().expect("FILE is in a folder");
    let mut a: Vec<OsString> = vec![os("analyze"), file.into()];
    a.extend(extra.iter().map(|s| os(s)));
    let summary = run(&a, dir);
    a.push(os("--json"));
    let o = run(&a, dir);
    assert!(
        o.status.success() && summary.status.success(),
        "analyze {} {extra:?}: {} (seed {SEED})",
        file.display(),
        text(&o.stderr)
    );
    (
        serde_json::from_slice(&o.stdout).expect("analyze --json prints JSON"),
        text(&summary.stdout),
    )
}

fn num(v: &serde_json::Value, key: &str) -> f64 {
    v[key]
        .as_f64()
        .unwrap_or_else(|| panic!("key {key} missing or not a number in {v}"))
}

fn notes(j: &serde_json::Value) -> Vec<String> {
    j["notes"]
        .as_array()
        .map_or(Vec::new(), |a| a.iter().map(|n| n.to_string()).collect())
}

/// Moves `FILE.json` away (to `FILE.json.away`), so `FILE` stands alone.
fn hide_manifest(file: &Path) {
    let m = format!("{}.json", file.display());
    std::fs::rename(&m, format!("{m}.away")).expect("the manifest exists");
}

/// For 16-bit, 24-bit and float WAV: with its manifest and without it, `analyze` gives the
/// same scale and the same RMS in volts (to 1e−9 relative; both apply the same full scale, so
/// they are equal unless the comment lost digits), and says where the scale came from.
#[test]
fn a_lone_wav_analyzes_in_physical_units_from_its_comment() {
    let s = Scratch::new("lone");
    let prof = s.file("white.toml", WHITE);
    for sf in ["i16", "i24", "f32"] {
        let wav = s.path(&format!("w-{sf}.wav"));
        generate(&prof, &wav, &["--sample-format", sf]);
        let (with, _) = analyze(&wav, &[]);
        assert_eq!(with["file"]["scale_origin"], "manifest", "{sf}");
        hide_manifest(&wav);
        let (lone, summary) = analyze(&wav, &[]);
        assert_eq!(lone["file"]["scale_origin"], "info_comment", "{sf}");
        assert_eq!(lone["file"]["manifest"], false, "{sf}");
        assert_eq!(lone["unit"], "V", "{sf}");
        assert_eq!(
            lone["file"]["full_scale"], with["file"]["full_scale"],
            "{sf}"
        );
        for key in ["rms", "std", "mean"] {
            let (a, b) = (num(&lone, key), num(&with, key));
            assert!(
                (a - b).abs() <= 1e-9 * num(&with, "rms"),
                "{sf} {key}: {a:e} alone vs {b:e} with the manifest (seed {SEED})"
            );
        }
        assert!(
            summary.contains("(from the WAV's INFO comment, no manifest beside it)"),
            "{sf}: {summary}"
        );
        // The design check needs physical values: the comment is enough for a verdict.
        let (judged, _) = analyze(&wav, &["--profile", prof.to_str().unwrap()]);
        assert_eq!(judged["file"]["scale_origin"], "info_comment", "{sf}");
        assert!(judged["pass"].is_boolean(), "{sf}: {judged}");
    }
}

/// With both, the manifest wins: a manifest edited to twice the full scale gives twice the
/// RMS, and a note says the comment disagrees.
#[test]
fn the_manifest_wins_over_the_comment() {
    let s = Scratch::new("wins");
    let prof = s.file("white.toml", WHITE);
    let wav = s.path("w.wav");
    generate(&prof, &wav, &["--sample-format", "i24"]);
    let (plain, _) = analyze(&wav, &[]);
    assert!(notes(&plain).iter().all(|n| !n.contains("INFO comment")));
    let m_path = format!("{}.json", wav.display());
    let mut m: serde_json::Value =
        serde_json::from_slice(&std::fs::read(&m_path).unwrap()).unwrap();
    let fs = num(&m, "full_scale");
    m["full_scale"] = serde_json::json!(2.0 * fs);
    std::fs::write(&m_path, serde_json::to_vec(&m).unwrap()).unwrap();
    let (j, _) = analyze(&wav, &[]);
    assert_eq!(j["file"]["scale_origin"], "manifest");
    assert_eq!(num(&j["file"], "full_scale"), 2.0 * fs);
    let ratio = num(&j, "rms") / num(&plain, "rms");
    assert!((ratio - 2.0).abs() <= 1e-12, "ratio {ratio} (seed {SEED})");
    let n = notes(&j);
    assert!(
        n.iter()
            .any(|n| n.contains("INFO comment says") && n.contains("manifest is used")),
        "{n:?}"
    );
}

/// The chunk as an independent walker sees it: `fmt `, `LIST` (type `INFO`: `ISFT`, `ICMT`,
/// NUL-terminated, even sizes) and `data` last; the RIFF size is the file length − 8; the
/// comment reads as written; `wave` and scipy.io.wavfile read the samples without a warning;
/// the data chunk holds exactly the bytes of the raw `.i16` output of the same run.
#[test]
fn the_list_chunk_is_standard_and_the_samples_are_unchanged() {
    let s = Scratch::new("chunks");
    let prof = s.file("white.toml", WHITE);
    let wav = s.path("w.wav");
    let raw = s.path("w.i16");
    generate(&prof, &wav, &["--sample-format", "i16"]);
    generate(
        &prof,
        &raw,
        &["--sample-format", "i16", "--level", "-20dBFS"],
    );
    let m = common::manifest(&wav);
    let fs = num(&m, "full_scale");
    assert_eq!(fs, num(&common::manifest(&raw), "full_scale"));
    let Some(out) = python_script(
        "wav_chunks.py",
        &[os("walk"), wav.clone().into()],
        &format!("seed {SEED}"),
    ) else {
        return;
    };
    let w: serde_json::Value = serde_json::from_str(out.trim()).unwrap();
    let ids: Vec<&str> = w["chunks"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c["id"].as_str().unwrap())
        .collect();
    assert_eq!(ids, ["fmt ", "LIST", "data"], "{w}");
    assert_eq!(num(&w, "riff_size") + 8.0, num(&w, "length"));
    assert_eq!(w["list_type"], "INFO");
    for c in w["chunks"].as_array().unwrap() {
        assert_eq!(
            num(c, "at") as u64 % 2,
            0,
            "{c}: chunks start on even offsets"
        );
    }
    assert_eq!(w["info"]["ISFT"]["text"], "noisewright");
    let comment = format!(
        "noisewright unit=V full_scale={} seed={SEED} profile=cli white",
        if (1e-4..1e16).contains(&fs) {
            format!("{fs}")
        } else {
            format!("{fs:e}")
        }
    );
    assert_eq!(w["info"]["ICMT"]["text"], comment.as_str());
    assert_eq!(w["info"]["ICMT"]["nul"], true);
    assert_eq!(num(&w["info"]["ICMT"], "size") as usize, comment.len() + 1);
    assert_eq!(w["wave"]["frames"], 20_000);
    assert_eq!(w["scipy"]["n"], 20_000);
    assert_eq!(w["scipy"]["warnings"], serde_json::json!([]));
    assert_eq!(w["wave"]["first"], w["scipy"]["first"]);
    let b = std::fs::read(&wav).unwrap();
    let at = num(&w, "data_at") as usize;
    assert_eq!(&b[at..], &std::fs::read(&raw).unwrap()[..]);
}

/// A WAV written by scipy.io.wavfile.write (no comment) analyzes as before: digital values
/// without a manifest, volts with `--full-scale`. The same file with another program's
/// `ICMT` comment, or a noisewright comment with a broken full scale, is read alike, the
/// comment ignored with a note.
#[test]
fn wav_files_without_our_comment_analyze_as_before() {
    let s = Scratch::new("foreign");
    let wav = s.path("scipy.wav");
    if python_script(
        "wav_chunks.py",
        &[os("scipy-write"), wav.clone().into()],
        "numpy seed 11",
    )
    .is_none()
    {
        return;
    }
    let (j, _) = analyze(&wav, &[]);
    assert_eq!(
        (j["unit"].as_str(), j["file"]["scale_origin"].as_str()),
        (Some("FS"), Some("none"))
    );
    assert!(notes(&j).iter().all(|n| !n.contains("INFO comment")));
    let (v, _) = analyze(&wav, &["--full-scale", "2V"]);
    assert_eq!(v["file"]["scale_origin"], "--full-scale");
    let ratio = num(&v, "rms") / num(&j, "rms");
    assert!((ratio - 2.0).abs() < 1e-12, "{ratio}");
    let b = std::fs::read(&wav).unwrap();
    let data_at = b.windows(4).position(|w| w == b"data").unwrap();
    for (comment, why) in [
        (&b"take five"[..], "is not one noisewright writes"),
        (&b"noisewright unit=V full_scale=-3"[..], "malformed word"),
    ] {
        let mut text = comment.to_vec();
        text.push(0);
        if text.len() % 2 == 1 {
            text.push(0);
        }
        let mut list = b"INFOICMT".to_vec();
        list.extend_from_slice(&((comment.len() + 1) as u32).to_le_bytes());
        list.extend_from_slice(&text);
        let mut c = b[..data_at].to_vec();
        c.extend_from_slice(b"LIST");
        c.extend_from_slice(&(list.len() as u32).to_le_bytes());
        c.extend_from_slice(&list);
        c.extend_from_slice(&b[data_at..]);
        let riff = (c.len() - 8) as u32;
        c[4..8].copy_from_slice(&riff.to_le_bytes());
        let f = s.path("commented.wav");
        std::fs::write(&f, &c).unwrap();
        let (k, _) = analyze(&f, &[]);
        assert_eq!(k["file"]["scale_origin"], "none", "{why}");
        assert_eq!(num(&k, "rms"), num(&j, "rms"), "{why}");
        let n = notes(&k);
        assert!(
            n.iter()
                .any(|n| n.contains(why) && n.contains("INFO comment is ignored")),
            "{why}: {n:?}"
        );
    }
}
