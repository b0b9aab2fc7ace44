//! CLI tests of multi-channel output: the multi-channel WAV header byte by byte, CSV columns
//! and the manifest's channel keys; and of `analyze` on multi-channel captures: every channel
//! judged, the correlation matrix and coherence against numpy/SciPy and against the profile,
//! `--channel`, and the fitted correlation. Bad `channels`/`correlation` keys are rows of
//! tests/error_classes.rs.

mod common;

use std::ffi::{OsStr, OsString};
use std::path::{Path, PathBuf};
use std::process::Output;

use common::{Scratch, manifest, python_script, read_f64, run, run_ok, text, write_f64};
use serde_json::Value;

fn profile(channels: &str) -> String {
    format!(
        "sample_rate = \"8 kHz\"\n{channels}\n[band]\nlow = \"10 Hz\"\nhigh = \"3 kHz\"\n\
         [[floor]]\ndensity = \"10 nV/rtHz\"\n"
    )
}

fn generate(dir: &Scratch, keys: &str, out: &str, extra: &[&str]) -> Output {
    let p = dir.file("p.toml", &profile(keys));
    let o = dir.path(out);
    let mut args: Vec<&std::ffi::OsStr> = vec![
        "generate".as_ref(),
        p.as_os_str(),
        "-o".as_ref(),
        o.as_os_str(),
        "--seed".as_ref(),
        "3".as_ref(),
    ];
    args.extend(extra.iter().map(|s| std::ffi::OsStr::new(*s)));
    run(&args, dir)
}

/// The WAVE header of a 3-channel 16-bit file, field by field against WAVEFORMATEXTENSIBLE
/// (Microsoft WAVEFORMATEXTENSIBLE documentation and "Multiple channel audio data and WAVE
/// files"; REFERENCES §10): more than two channels needs tag 0xFFFE, cbSize 22, valid bits,
/// channel mask (0 = no speaker positions) and the PCM SubFormat GUID. The data holds the
/// same interleaved frames as 3-channel raw i16 output.
#[test]
fn three_channel_wav_has_an_extensible_header_byte_by_byte() {
    let dir = Scratch::new("wav");
    let keys = "channels = 3\ncorrelation = 0.5";
    let args = [
        "--samples",
        "5",
        "--sample-format",
        "i16",
        "--full-scale",
        "1uV",
        "--allow-clipping",
    ];
    assert!(generate(&dir, keys, "x.wav", &args).status.success());
    assert!(generate(&dir, keys, "x.i16", &args).status.success());
    let b = std::fs::read(dir.path("x.wav")).unwrap();
    let data = 5 * 3 * 2u32;
    // The INFO comment's LIST chunk sits between `fmt ` and `data` (tests/cli_wav_info.rs
    // checks it); without it the header is 68 bytes.
    let d = common::wav_data_chunk_at(&b);
    assert_eq!(&b[60..64], b"LIST");
    let list = d - 60;
    let mut want = Vec::new();
    want.extend_from_slice(b"RIFF");
    // RIFF size, pad-free (30 even)
    want.extend_from_slice(&(68 + list as u32 - 8 + data).to_le_bytes());
    want.extend_from_slice(b"WAVE");
    want.extend_from_slice(b"fmt ");
    want.extend_from_slice(&40u32.to_le_bytes());
    want.extend_from_slice(&0xFFFEu16.to_le_bytes()); // wFormatTag EXTENSIBLE
    want.extend_from_slice(&3u16.to_le_bytes()); // nChannels
    want.extend_from_slice(&8000u32.to_le_bytes()); // nSamplesPerSec
    want.extend_from_slice(&(8000u32 * 6).to_le_bytes()); // nAvgBytesPerSec = rate × align
    want.extend_from_slice(&6u16.to_le_bytes()); // nBlockAlign = 3 × 2
    want.extend_from_slice(&16u16.to_le_bytes()); // wBitsPerSample
    want.extend_from_slice(&22u16.to_le_bytes()); // cbSize
    want.extend_from_slice(&16u16.to_le_bytes()); // wValidBitsPerSample
    want.extend_from_slice(&0u32.to_le_bytes()); // dwChannelMask
    want.extend_from_slice(&[
        0x01, 0x00, 0x00, 0x00, 0x00, 0x00, 0x10, 0x00, 0x80, 0x00, 0x00, 0xAA, 0x00, 0x38, 0x9B,
        0x71,
    ]); // KSDATAFORMAT_SUBTYPE_PCM
    assert_eq!(&b[..60], &want[..]);
    assert_eq!(&b[d..d + 4], b"data");
    assert_eq!(&b[d + 4..d + 8], &data.to_le_bytes());
    let raw = std::fs::read(dir.path("x.i16")).unwrap();
    assert_eq!(&b[d + 8..], &raw[..]);
    assert_eq!(b.len(), 68 + list + data as usize);
}

/// Two 16-bit channels keep the plain PCM header (tag 1): WAVEFORMATEX describes stereo
/// 16-bit PCM exactly (REFERENCES §10).
#[test]
fn two_channel_16_bit_wav_keeps_the_pcm_header() {
    let dir = Scratch::new("wav2");
    let args = ["--samples", "4", "--sample-format", "i16"];
    assert!(
        generate(&dir, "channels = 2", "x.wav", &args)
            .status
            .success()
    );
    let b = std::fs::read(dir.path("x.wav")).unwrap();
    // 44 header bytes and the INFO comment's LIST chunk before `data`.
    assert_eq!(b.len(), common::wav_data_chunk_at(&b) + 8 + 4 * 2 * 2);
    assert_eq!(&b[36..40], b"LIST");
    assert_eq!(&b[20..22], &1u16.to_le_bytes());
    assert_eq!(&b[22..24], &2u16.to_le_bytes());
    assert_eq!(&b[32..34], &4u16.to_le_bytes());
}

#[test]
fn csv_has_one_column_per_channel_and_the_manifest_names_the_channels() {
    let dir = Scratch::new("csv");
    let out = generate(
        &dir,
        "channels = 2\ncorrelation = 0.25",
        "x.csv",
        &["--samples", "3"],
    );
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = std::fs::read_to_string(dir.path("x.csv")).unwrap();
    let lines: Vec<&str> = text.lines().collect();
    assert_eq!(lines[0], "time_s,ch0_value_V,ch1_value_V");
    assert_eq!(lines.len(), 4);
    assert!(lines[2].starts_with("0.000125,"));
    let m = manifest(&dir.path("x.csv"));
    assert_eq!(m["samples"], 3);
    assert_eq!(m["extra"]["channels"], 2);
    assert_eq!(m["extra"]["correlation"][0][1], 0.25);
    assert_eq!(m["profile"]["correlation"][1][0], 0.25);
    assert_eq!(
        m["extra"]["expected_rms_per_channel"]
            .as_array()
            .unwrap()
            .len(),
        2
    );
}

// ---------------- analyze: captures of several channels ----------------
//
// An invented scenario: a three-axis sensor whose axes share one density (a 10 nV/√Hz floor
// with a 100 Hz 1/f corner) and are correlated as [[1, 0.6, 0.1], [0.6, 1, −0.3],
// [0.1, −0.3, 1]].

/// The seed of the generated captures (printed in every failure message).
const SEED: &str = "23";

const AXES: &str = "channels = 3\ncorrelation = [[1, 0.6, 0.1], [0.6, 1, -0.3], [0.1, -0.3, 1]]";

fn axes_profile(correlation_keys: &str) -> String {
    format!(
        "# invented scenario: a three-axis sensor\nsample_rate = \"8 kHz\"\n{correlation_keys}\n\
         [band]\nlow = \"10 Hz\"\nhigh = \"3 kHz\"\n[[floor]]\ndensity = \"10 nV/rtHz\"\n\
         corner = \"100 Hz\"\n"
    )
}

/// Generates `out` from the profile text `profile` (saved as `name`), 4 s, seed [`SEED`]
/// unless `extra` gives one.
fn capture(dir: &Scratch, name: &str, profile: &str, out: &str, extra: &[&str]) -> PathBuf {
    let p = dir.file(name, profile);
    let o = dir.path(out);
    let mut args: Vec<&OsStr> = vec![
        "generate".as_ref(),
        p.as_os_str(),
        "-o".as_ref(),
        o.as_os_str(),
        "--duration".as_ref(),
        "4s".as_ref(),
    ];
    if !extra.contains(&"--seed") {
        args.extend([OsStr::new("--seed"), OsStr::new(SEED)]);
    }
    args.extend(extra.iter().map(OsStr::new));
    run_ok(&args, dir);
    o
}

/// `analyze --json` of `file` with `args`; its exit code and the JSON object.
fn analyze_json(dir: &Scratch, file: &Path, args: &[&str]) -> (i32, Value, String) {
    let mut a: Vec<&OsStr> = vec!["analyze".as_ref(), file.as_os_str(), "--json".as_ref()];
    a.extend(args.iter().map(OsStr::new));
    let o = run(&a, dir);
    let stderr = text(&o.stderr);
    let json = serde_json::from_slice(&o.stdout)
        .unwrap_or_else(|e| panic!("analyze printed no JSON ({e}): {stderr} (seed {SEED})"));
    (o.status.code().unwrap_or(-1), json, stderr)
}

/// The Welch bins of a band from its edges in the JSON: low = (start − ½)·Δf, high =
/// (end − ½)·Δf.
fn band_bins(b: &Value, df: f64) -> std::ops::Range<usize> {
    let at = |k: &str| (b[k].as_f64().unwrap() / df + 0.5).round() as usize;
    at("low_hz")..at("high_hz")
}

/// The measured matrix is `numpy.corrcoef`'s and the coherence `scipy.signal.coherence`'s on
/// the same samples less the same line (band sums of `scipy.signal.csd` and `welch` for bands
/// wider than a bin), to 1e−9.
#[test]
fn correlation_and_coherence_agree_with_numpy_and_scipy() {
    let dir = Scratch::new("corr-ref");
    let x = capture(
        &dir,
        "p.toml",
        &axes_profile(AXES),
        "x.f64",
        &["--sample-format", "f64"],
    );
    let (code, j, stderr) = analyze_json(&dir, &x, &[]);
    assert_eq!(code, 0, "{stderr}");
    let seg = j["density"]["segment_length"].as_u64().unwrap() as usize;
    let out = dir.path("ref.f64");
    let args: Vec<OsString> = vec![
        x.clone().into_os_string(),
        out.clone().into_os_string(),
        "8000".into(),
        "3".into(),
        seg.to_string().into(),
    ];
    let context = format!("seed {SEED}");
    let Some(stdout) = python_script("correlation_ref.py", &args, &context) else {
        return;
    };
    println!("{}", stdout.trim());
    let v = read_f64(&out);
    let bins = seg / 2 + 1;
    assert_eq!(v.len(), 9 + 3 * 3 * bins + 3 * bins);
    let c = &j["correlation"];
    for i in 0..3 {
        for k in 0..3 {
            let ours = c["matrix"][i][k].as_f64().unwrap();
            assert!(
                (ours - v[3 * i + k]).abs() < 1e-9,
                "r[{i}][{k}] {ours} vs numpy {} ({context})",
                v[3 * i + k]
            );
        }
    }
    let welch = |ch: usize| &v[9 + 9 * bins + ch * bins..9 + 9 * bins + (ch + 1) * bins];
    // SciPy's one-sided densities double every bin but DC and Nyquist: undo it, so the band
    // sums weigh every bin's |X|² alike, as analyze's do.
    let one_sided = |k: usize| if k == 0 || k == bins - 1 { 1.0 } else { 2.0 };
    let df = 8000.0 / seg as f64;
    let (mut single, mut wide) = (0, 0);
    for (pair, p) in c["pairs"].as_array().unwrap().iter().enumerate() {
        let (a, b) = (
            p["channels"][0].as_u64().unwrap() as usize,
            p["channels"][1].as_u64().unwrap() as usize,
        );
        let base = 9 + pair * 3 * bins;
        let coh = &v[base..base + bins];
        let (re, im) = (
            &v[base + bins..base + 2 * bins],
            &v[base + 2 * bins..base + 3 * bins],
        );
        for band in p["coherence"].as_array().unwrap() {
            let r = band_bins(band, df);
            let ours = band["coherence"].as_f64().unwrap();
            let want = if r.len() == 1 {
                single += 1;
                coh[r.start]
            } else {
                wide += 1;
                let s = |x: &[f64]| r.clone().map(|k| x[k] / one_sided(k)).sum::<f64>();
                (s(re).powi(2) + s(im).powi(2)) / (s(welch(a)) * s(welch(b)))
            };
            assert!(
                (ours - want).abs() < 1e-9,
                "pair {a}-{b}, bins {r:?}: coherence {ours} vs SciPy {want} ({context})"
            );
        }
    }
    assert!(
        single >= 3 && wide >= 3,
        "{single} one-bin and {wide} wider bands"
    );
}

/// The example of the issue: three verdicts and a matrix within its limits of the design;
/// with ρ01 changed from 0.6 to 0.3 the capture fails, naming that pair alone.
#[test]
fn three_axes_pass_their_profile_and_fail_a_changed_coefficient() {
    let dir = Scratch::new("corr-verdict");
    let p = axes_profile(AXES);
    let x = capture(
        &dir,
        "p.toml",
        &p,
        "x.wav",
        &["--sample-format", "f32", "--full-scale", "5uV"],
    );
    let good = dir.path("p.toml");
    let (code, j, stderr) = analyze_json(&dir, &x, &["--profile", good.to_str().unwrap()]);
    assert_eq!(code, 0, "{stderr} (seed {SEED})");
    assert_eq!(j["pass"], true);
    let channels = j["channels"].as_array().unwrap();
    assert_eq!(channels.len(), 3);
    for (k, c) in channels.iter().enumerate() {
        assert_eq!(c["channel"], k);
        assert_eq!(c["comparison"]["pass"], true, "channel {k} (seed {SEED})");
        // Each channel carries the keys of a capture of one channel.
        for key in ["density", "comparison", "rms", "histogram", "spurs", "dc"] {
            assert!(c.get(key).is_some(), "channel {k} lacks {key}");
        }
    }
    let c = &j["correlation"];
    assert_eq!(c["pass"], true, "(seed {SEED})");
    // 3 pairs, each with its matrix entry and its bands inside 10 Hz .. 3 kHz.
    let judged = c["pairs"][0]["coherence"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|b| b["designed"].is_number())
        .count();
    assert_eq!(c["tests"], 3 * (1 + judged));
    let alpha = c["false_alarm_per_test"].as_f64().unwrap();
    assert!((alpha * (3 * (1 + judged)) as f64 - 1e-3).abs() < 1e-15);
    for p in c["pairs"].as_array().unwrap() {
        let designed = p["designed"].as_f64().unwrap();
        assert!(p["p_value"].as_f64().unwrap() >= alpha, "{p} (seed {SEED})");
        println!(
            "pair {}: r {} (95 % {} .. {}), designed {designed}",
            p["channels"], p["correlation"], p["ci95_lo"], p["ci95_hi"]
        );
    }

    // ρ01 = 0.3: pair (0, 1) fails, named; the others and every channel's density still pass.
    let changed = dir.file(
        "p3.toml",
        &p.replace("[1, 0.6, 0.1], [0.6, 1", "[1, 0.3, 0.1], [0.3, 1"),
    );
    let (code, j, stderr) = analyze_json(&dir, &x, &["--profile", changed.to_str().unwrap()]);
    assert_eq!(code, 1, "{stderr} (seed {SEED})");
    assert!(stderr.contains("channels 0 and 1"), "{stderr}");
    assert!(
        !stderr.contains("channels 1 and 2") && !stderr.contains("channels 0 and 2"),
        "{stderr}"
    );
    assert_eq!(j["pass"], false);
    let pairs = j["correlation"]["pairs"].as_array().unwrap();
    assert_eq!(pairs[0]["pass"], false);
    assert_eq!(
        (pairs[1]["pass"].clone(), pairs[2]["pass"].clone()),
        (Value::Bool(true), Value::Bool(true))
    );
    for c in j["channels"].as_array().unwrap() {
        assert_eq!(c["comparison"]["pass"], true);
    }
}

/// A capture whose channel 1 is twice too large (its density 6 dB high) fails on that channel
/// only: scaling one channel leaves every correlation and coherence as it was.
#[test]
fn one_channel_with_the_wrong_density_fails_alone() {
    let dir = Scratch::new("corr-one");
    let x = capture(
        &dir,
        "p.toml",
        &axes_profile(AXES),
        "x.f64",
        &["--sample-format", "f64"],
    );
    let mut v = read_f64(&x);
    v.iter_mut().skip(1).step_by(3).for_each(|s| *s *= 2.0);
    write_f64(&x, &v);
    let p = dir.path("p.toml");
    let (code, j, stderr) = analyze_json(&dir, &x, &["--profile", p.to_str().unwrap()]);
    assert_eq!(code, 1, "{stderr} (seed {SEED})");
    assert!(stderr.contains("channel 1 does not match"), "{stderr}");
    assert!(
        !stderr.contains("channel 0") && !stderr.contains("channel 2"),
        "{stderr}"
    );
    let verdicts: Vec<&Value> = j["channels"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| &c["comparison"]["pass"])
        .collect();
    assert_eq!(
        verdicts,
        [&Value::Bool(true), &Value::Bool(false), &Value::Bool(true)]
    );
    assert_eq!(j["correlation"]["pass"], true, "(seed {SEED})");
    // The library's facade gives the same per channel.
    let report = noisewright::Analysis::of_path(&x)
        .profile_path(&p)
        .run()
        .unwrap();
    let passed: Vec<bool> = report.channels.iter().map(|c| c.verdict.passed()).collect();
    assert_eq!(passed, [true, false, true]);
    assert!(!report.verdict.passed());
    assert_eq!(report.correlation.as_ref().and_then(|c| c.pass), Some(true));
    let svg = report.correlation.as_ref().unwrap().coherence_svg();
    assert!(svg.contains("coherence, 3 of 3 pairs"), "{svg}");
    // The text names it in the channel's line and prints its band table alone.
    let o = run(
        &[
            "analyze".as_ref(),
            x.as_os_str(),
            "--profile".as_ref(),
            p.as_os_str(),
        ],
        &dir,
    );
    let t = text(&o.stdout);
    assert!(
        t.contains("  channel 1\n") && !t.contains("  channel 0\n"),
        "{t}"
    );
}

/// ρ = 1 (a singular matrix): the two channels are one signal, measured as 1 within an
/// interval that holds 1, with coherence 1 in every band, and they pass the profile.
#[test]
fn perfectly_correlated_channels_measure_one() {
    let dir = Scratch::new("corr-one-one");
    let keys = "channels = 2\ncorrelation = 1";
    let x = capture(
        &dir,
        "p.toml",
        &axes_profile(keys),
        "x.f64",
        &["--sample-format", "f64"],
    );
    let p = dir.path("p.toml");
    let (code, j, stderr) = analyze_json(&dir, &x, &["--profile", p.to_str().unwrap()]);
    assert_eq!(code, 0, "{stderr} (seed {SEED})");
    let pair = &j["correlation"]["pairs"][0];
    let r = pair["correlation"].as_f64().unwrap();
    assert!((r - 1.0).abs() < 1e-12, "{r}");
    let (lo, hi) = (
        pair["ci95_lo"].as_f64().unwrap(),
        pair["ci95_hi"].as_f64().unwrap(),
    );
    assert!(lo <= r && r <= hi && hi >= 1.0 - 1e-12, "{lo} .. {hi}");
    for b in pair["coherence"].as_array().unwrap() {
        assert!(b["coherence"].as_f64().unwrap() > 1.0 - 1e-9, "{b}");
    }
}

/// The containers: a 3-channel WAV and CSV read as three channels, `--channel` restricts the
/// analysis (the matrix follows), and a channel the capture lacks is refused.
#[test]
fn every_container_gives_every_channel_and_channel_picks() {
    let dir = Scratch::new("corr-containers");
    let p = axes_profile(AXES);
    let wav = capture(
        &dir,
        "p.toml",
        &p,
        "x.wav",
        &["--sample-format", "i24", "--full-scale", "5uV"],
    );
    let csv = capture(&dir, "p.toml", &p, "x.csv", &[]);
    // The same run as the WAV, as an .npy array of shape (N, 3) with its codes widened to
    // four bytes: every number of the analysis must be the WAV's.
    let npy = capture(
        &dir,
        "p.toml",
        &p,
        "x.npy",
        &["--sample-format", "i24", "--full-scale", "5uV"],
    );
    let prof = dir.path("p.toml");
    let pa = prof.to_str().unwrap();
    let mut jsons = Vec::new();
    for f in [&wav, &csv, &npy] {
        let (code, j, stderr) = analyze_json(&dir, f, &["--profile", pa]);
        assert_eq!(code, 0, "{}: {stderr} (seed {SEED})", f.display());
        assert_eq!(j["channels"].as_array().unwrap().len(), 3);
        jsons.push(j);
    }
    assert_eq!(jsons[0]["correlation"], jsons[2]["correlation"]);
    let (wav_ch, npy_ch) = (&jsons[0]["channels"], &jsons[2]["channels"]);
    for (k, (w, n)) in wav_ch
        .as_array()
        .unwrap()
        .iter()
        .zip(npy_ch.as_array().unwrap())
        .enumerate()
    {
        for key in ["density", "std", "mean", "pass"] {
            assert_eq!(
                w[key], n[key],
                "channel {k} {key}: the .npy reads as the WAV"
            );
        }
    }
    // Without its manifest the CSV's column names (`ch0_value_V` …) still say volts.
    let bare = dir.path("bare.csv");
    std::fs::copy(&csv, &bare).unwrap();
    let (code, j, stderr) = analyze_json(&dir, &bare, &["--profile", pa]);
    assert_eq!(code, 0, "{stderr} (seed {SEED})");
    assert_eq!(
        (j["unit"].as_str(), j["channels"].as_array().map(Vec::len)),
        (Some("V"), Some(3))
    );
    let (code, j, stderr) = analyze_json(
        &dir,
        &wav,
        &["--profile", pa, "--channel", "2", "--channel", "0"],
    );
    assert_eq!(code, 0, "{stderr}");
    assert_eq!(j["correlation"]["channels"], serde_json::json!([0, 2]));
    assert_eq!(
        j["correlation"]["pairs"][0]["designed"]
            .as_f64()
            .map(|d| (d * 1e3).round()),
        Some(100.0)
    );
    let o = run(
        &[
            "analyze".as_ref(),
            wav.as_os_str(),
            "--channel".as_ref(),
            "3".as_ref(),
        ],
        &dir,
    );
    assert_eq!(o.status.code(), Some(2));
    assert!(text(&o.stderr).contains("--channel"), "{}", text(&o.stderr));
}

/// `--fit` adds the measured matrix; `generate` takes the fitted profile and its output
/// passes that profile, correlation included.
#[test]
fn the_fitted_profile_regenerates_the_correlation() {
    let dir = Scratch::new("corr-fit");
    let x = capture(
        &dir,
        "p.toml",
        &axes_profile(AXES),
        "x.f64",
        &["--sample-format", "f64"],
    );
    let fit = dir.path("fit.toml");
    let (code, j, stderr) = analyze_json(&dir, &x, &["--fit", fit.to_str().unwrap()]);
    assert_eq!(code, 0, "{stderr}");
    let fitted = noisewright::Profile::from_path(&fit).unwrap();
    assert_eq!(fitted.channels, 3);
    for i in 0..3 {
        for k in 0..3 {
            let m = j["correlation"]["matrix"][i][k].as_f64().unwrap();
            assert!((fitted.correlation[i][k] - m).abs() < 1e-12, "{i},{k}");
        }
    }
    let y = capture(
        &dir,
        "fit2.toml",
        &std::fs::read_to_string(&fit).unwrap(),
        "y.f64",
        &["--sample-format", "f64", "--seed", "24"],
    );
    let (code, j, stderr) = analyze_json(&dir, &y, &["--profile", fit.to_str().unwrap()]);
    assert_eq!(code, 0, "{stderr} (seeds {SEED}, 24)");
    assert_eq!(j["correlation"]["pass"], true);
}
