//! Shards (`generate --shard K/N`) made by real job runners — GNU parallel two at a time,
//! `xargs -P 2` — and put back by `join`: the joined file is the single run byte for byte in
//! WAV (odd lengths with their pad byte), raw (ADC codes with dither too), npy (several
//! channels) and CSV (source columns), its manifest says what the single run's says, and an
//! outside reader (numpy, SciPy) opens it. Every way a set of shards can be wrong is refused
//! with the file and the fault named, exit 2, and nothing left behind.

mod common;

use std::path::Path;
use std::process::Command;

use common::{Scratch, manifest, outputs, run, run_ok, text};
use serde_json::Value;

const SEED: &str = "29";
const BIN: &str = env!("CARGO_BIN_EXE_noisewright");

// Invented scenario: a sensor front end with a flicker corner, a two-level burst, a test
// tone and an offset, at 48 kHz.
const MONO: &str = r#"
name = "shard test front end"
unit = "V"
sample_rate = "48 kHz"
offset = "2 uV"
[band]
low = "1 Hz"
high = "20 kHz"
order = 2
[[floor]]
density = "12 nV/rtHz"
corner = "40 Hz"
[[burst]]
name = "trap"
levels = ["0 uV", "1.5 uV"]
dwell = ["6 ms", "1 ms"]
[[tone]]
frequency = "1.5 kHz"
rms = "3 uV"
"#;

// Invented scenario: the same front end seen on two correlated channels.
const STEREO: &str = r#"
name = "shard test pair"
unit = "V"
sample_rate = "48 kHz"
channels = 2
correlation = [[1, 0.4], [0.4, 1]]
[band]
low = "1 Hz"
high = "20 kHz"
[[floor]]
density = "12 nV/rtHz"
corner = "40 Hz"
"#;

/// The run's options as arguments after the profile (the length and seed included).
fn options<'a>(samples: &'a str, extra: &[&'a str]) -> Vec<&'a str> {
    let mut v = vec!["--samples", samples, "--seed", SEED, "-q"];
    v.extend_from_slice(extra);
    v
}

/// Runs `program args` in `dir`, which must succeed.
fn tool(dir: &Path, program: &str, args: &[&str]) {
    let out = Command::new(program)
        .args(args)
        .current_dir(dir)
        .output()
        .unwrap_or_else(|e| panic!("cannot run {program} (Debian package for it?): {e}"));
    assert!(
        out.status.success(),
        "{program} {args:?} failed ({}): {}{}",
        out.status,
        text(&out.stdout),
        text(&out.stderr)
    );
}

/// Makes `count` shards named `pattern` ({shard} in it) with GNU parallel, two jobs at a
/// time, one job per shard index.
fn shards_by_parallel(dir: &Path, profile: &str, pattern: &str, count: u64, opts: &[&str]) {
    let shard = format!("{{}}/{count}");
    let mut args = vec![
        "--will-cite",
        "--halt",
        "now,fail=1",
        "-j",
        "2",
        BIN,
        "generate",
    ];
    args.extend([profile, "-o", pattern, "--shard", &shard]);
    args.extend_from_slice(opts);
    args.push(":::");
    let indexes: Vec<String> = (0..count).map(|k| k.to_string()).collect();
    args.extend(indexes.iter().map(String::as_str));
    tool(dir, "parallel", &args);
}

/// Makes `count` shards named `pattern` with `xargs -P 2`, one index per job.
fn shards_by_xargs(dir: &Path, profile: &str, pattern: &str, count: u64, opts: &[&str]) {
    let list: String = (0..count).map(|k| format!("{k}/{count}\n")).collect();
    std::fs::write(dir.join("indexes.txt"), list).unwrap();
    let mut args = vec!["-a", "indexes.txt", "-P", "2", "-n", "1", BIN, "generate"];
    args.extend([profile, "-o", pattern]);
    args.extend_from_slice(opts);
    // xargs puts the index last: `--shard` must come just before it.
    args.push("--shard");
    tool(dir, "xargs", &args);
}

/// The shard files of `pattern`, in the order a shell glob lists them (not the run's).
fn shard_files(pattern: &str, count: u64) -> Vec<String> {
    let width = (count - 1).to_string().len();
    let mut v: Vec<String> = (0..count)
        .map(|k| pattern.replace("{shard}", &format!("{k:0width$}")))
        .collect();
    v.sort();
    v.reverse(); // join takes them in any order
    v
}

/// Joins `files` into `out` and checks it against the single run `single`: the same bytes,
/// and a manifest that says what the single run's says (the measured moments to rounding)
/// and that it was joined from `files.len()` shards.
fn join_and_compare(dir: &Path, files: &[String], out: &str, single: &str) {
    let mut args = vec!["join"];
    args.extend(files.iter().map(String::as_str));
    args.extend(["-o", out]);
    let o = run_ok(&args, dir);
    let summary = text(&o.stdout);
    assert!(
        summary.contains(&format!("joined {} shards", files.len())),
        "{summary}"
    );
    let (a, b) = (
        std::fs::read(dir.join(single)).unwrap(),
        std::fs::read(dir.join(out)).unwrap(),
    );
    assert_eq!(a.len(), b.len(), "{out} against {single} (seed {SEED})");
    let first = a.iter().zip(&b).position(|(x, y)| x != y);
    assert!(
        first.is_none(),
        "{out}: first differing byte {first:?} (seed {SEED})"
    );
    compare_manifests(
        &manifest(&dir.join(single)),
        &manifest(&dir.join(out)),
        files.len(),
    );
}

/// Sums of n ≈ 10^5 terms in f64 agree to n·ε ≈ 2·10^-11 relative at worst (Higham,
/// "Accuracy and Stability of Numerical Algorithms", §4.2, recursive summation bound), so
/// the moments combined from the shards must agree with the single run's to 10^-10.
const ROUNDING: f64 = 1e-10;

/// Equal but for `extra.joined` and the measured moments, which agree to [`ROUNDING`].
fn compare_manifests(single: &Value, joined: &Value, shards: usize) {
    let (mut a, mut b) = (single.clone(), joined.clone());
    assert_eq!(b["extra"]["joined"]["shards"], shards, "{joined:#}");
    b["extra"].as_object_mut().unwrap().remove("joined");
    assert!(b["extra"].get("shard").is_none());
    let close = |x: &Value, y: &Value, what: &str| {
        let (x, y) = (x.as_f64().unwrap(), y.as_f64().unwrap());
        assert!(
            (x - y).abs() <= ROUNDING * x.abs().max(y.abs()).max(1e-300),
            "{what}: single {x:e}, joined {y:e} (seed {SEED})"
        );
    };
    for key in ["measured_rms", "measured_std", "measured_mean"] {
        close(&a[key], &b[key], key);
        (a[key], b[key]) = (Value::Null, Value::Null);
    }
    let m = "measured_rms_per_channel";
    if let Some(list) = a["extra"][m].as_array().cloned() {
        for (i, x) in list.iter().enumerate() {
            close(x, &b["extra"][m][i], m);
        }
        (a["extra"][m], b["extra"][m]) = (Value::Null, Value::Null);
    }
    if let Some(bursts) = a["extra"]["bursts"].as_array().cloned() {
        for (i, burst) in bursts.iter().enumerate() {
            let occ = &burst["measured_occupancy"];
            for (j, x) in occ.as_array().unwrap().iter().enumerate() {
                close(
                    x,
                    &b["extra"]["bursts"][i]["measured_occupancy"][j],
                    "occupancy",
                );
            }
            a["extra"]["bursts"][i]["measured_occupancy"] = Value::Null;
            b["extra"]["bursts"][i]["measured_occupancy"] = Value::Null;
        }
    }
    assert_eq!(
        a, b,
        "the joined manifest says something else than the single run's"
    );
}

/// The done-when case: 8 shards by GNU parallel, two at a time, in each joinable format.
#[test]
fn eight_shards_by_gnu_parallel_join_to_the_single_run_in_every_format() {
    let s = Scratch::new("parallel");
    s.file("mono.toml", MONO);
    s.file("stereo.toml", STEREO);
    let n = "100003";
    let sources = ["--columns", "sources"];
    let i16 = ["--sample-format", "i16"];
    for (profile, ext, extra) in [
        ("mono.toml", "wav", &[][..]),
        ("mono.toml", "f64", &[][..]),
        ("stereo.toml", "npy", &i16[..]),
        ("mono.toml", "csv", &sources[..]),
    ] {
        let opts = options(n, extra);
        let single = format!("single.{ext}");
        let mut args = vec!["generate", profile, "-o", &single];
        args.extend_from_slice(&opts);
        run_ok(&args, &s);
        let pattern = format!("part-{{shard}}.{ext}");
        shards_by_parallel(&s, profile, &pattern, 8, &opts);
        let m = manifest(&s.path(&pattern.replace("{shard}", "5")));
        assert_eq!(m["extra"]["shard"]["index"], 5);
        assert_eq!(m["extra"]["shard"]["count"], 8);
        assert_eq!(m["extra"]["shard"]["run_samples"], 100_003);
        // 100003 = 8·12500 + 3: shards 0–2 have 12501 samples, so shard 5 starts at
        // 3·12501 + 2·12500.
        assert_eq!(m["start_sample"], 3 * 12_501 + 2 * 12_500);
        assert_eq!(m["samples"], 12_500);
        let joined = format!("joined.{ext}");
        join_and_compare(&s, &shard_files(&pattern, 8), &joined, &single);
    }
    outside_readers_open(&s, 100_003);
}

/// numpy and SciPy (outside references) read the joined npy and WAV: the shape and length
/// of the whole run, and the npy's values are the shards' values one after another.
fn outside_readers_open(dir: &Path, frames: usize) {
    if let Err(why) = common::ensure_python_reference() {
        return common::reference_unavailable(&why).unwrap_or(());
    }
    let script = format!(
        "import numpy as np, scipy.io.wavfile as w\n\
         j = np.load('joined.npy')\n\
         assert j.shape == ({frames}, 2), j.shape\n\
         parts = np.concatenate([np.load('part-%d.npy' % k) for k in range(8)])\n\
         assert np.array_equal(parts, j)\n\
         rate, x = w.read('joined.wav')\n\
         assert rate == 48000 and x.shape == ({frames},), (rate, x.shape)\n\
         print('ok')\n"
    );
    tool(dir, "python3", &["-c", &script]);
}

/// Another split and another runner: 5 shards by `xargs -P 2`, of a WAV of 24-bit codes
/// whose odd lengths need a pad byte, and of raw ADC codes with TPDF dither.
#[test]
fn five_shards_by_xargs_join_to_the_single_run() {
    let s = Scratch::new("xargs");
    s.file("mono.toml", MONO);
    let i24 = ["--sample-format", "i24"];
    let adc = [
        "--bits",
        "12",
        "--range",
        "-100uV..100uV",
        "--code",
        "offset",
        "--dither",
        "tpdf",
    ];
    for (ext, extra) in [("wav", &i24[..]), ("u16", &adc[..])] {
        let opts = options("77777", extra);
        let single = format!("single.{ext}");
        let mut args = vec!["generate", "mono.toml", "-o", &single];
        args.extend_from_slice(&opts);
        run_ok(&args, &s);
        let pattern = format!("x{{shard}}.{ext}");
        shards_by_xargs(&s, "mono.toml", &pattern, 5, &opts);
        let joined = format!("joined.{ext}");
        join_and_compare(&s, &shard_files(&pattern, 5), &joined, &single);
    }
}

/// The library: `Render::shard` and `Join` do what the commands do.
#[test]
fn the_library_makes_and_joins_shards() {
    use noisewright::run::shard::Shard;
    use noisewright::{Join, Profile, Render};
    let s = Scratch::new("library");
    let profile = Profile::from_toml_str(MONO, "mono.toml").unwrap();
    let single = s.path("single.npy");
    Render::new(&profile)
        .seed(5)
        .samples(30_001)
        .to_path(&single)
        .unwrap();
    let mut files = Vec::new();
    for k in 0..3 {
        let r = Render::new(&profile)
            .seed(5)
            .samples(30_001)
            .shard(Shard::new(k, 3).unwrap())
            .to_path(s.path("lib-{shard}.npy"))
            .unwrap();
        files.push(r.path.unwrap());
    }
    let report = Join::new(&files).to_path(s.path("joined.npy")).unwrap();
    assert_eq!((report.shards, report.frames), (3, 30_001));
    assert_eq!(
        std::fs::read(&single).unwrap(),
        std::fs::read(s.path("joined.npy")).unwrap(),
        "seed 5"
    );
    assert_eq!(
        report.fingerprint,
        manifest(&single)["extra"]["fingerprint"]
    );
}

/// A refused join: exit 2, the message names `file` and says `what`, and the folder holds
/// what it held before (no joined file, manifest or temporary file).
fn refused(dir: &Path, args: &[&str], file: &str, what: &str) {
    let before = outputs(dir, &[]);
    let o = run(args, dir);
    let err = text(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{args:?}: {err}");
    assert!(err.contains(file) && err.contains(what), "{args:?}: {err}");
    assert_eq!(outputs(dir, &[]), before, "{args:?} left files behind");
}

/// Four raw shards and a CSV and a WAV set of the same run, then every fault.
#[test]
fn broken_sets_of_shards_are_refused_naming_the_file() {
    let s = Scratch::new("refused");
    s.file("mono.toml", MONO);
    s.file("other.toml", &MONO.replace("12 nV/rtHz", "13 nV/rtHz"));
    let opts = options("20000", &[]);
    for ext in ["f64", "csv", "wav"] {
        shards_by_parallel(&s, "mono.toml", &format!("s-{{shard}}.{ext}"), 4, &opts);
    }
    let make = |profile: &str, out: &str, shard: &str, seed: &str, extra: &[&str]| {
        let mut args = vec!["generate", profile, "-o", out, "--shard", shard];
        args.extend(["--samples", "20000", "--seed", seed, "-q"]);
        args.extend_from_slice(extra);
        run_ok(&args, &s);
    };
    make("mono.toml", "seed7-1.f64", "1/4", "7", &[]);
    make("other.toml", "other-1.f64", "1/4", SEED, &[]);
    make("mono.toml", "cut3-1.f64", "1/3", SEED, &[]);
    make(
        "mono.toml",
        "loud-1.f64",
        "1/4",
        SEED,
        &["--full-scale", "1mV"],
    );
    let set = |names: &[&str]| -> Vec<String> { names.iter().map(|n| n.to_string()).collect() };
    let join = |files: Vec<String>, out: &str| -> Vec<String> {
        let mut v = vec!["join".to_string()];
        v.extend(files);
        v.extend(["-o".into(), out.into()]);
        v
    };
    let cases: Vec<(Vec<String>, &str, &str)> = vec![
        (
            set(&["s-0.f64", "s-1.f64", "s-3.f64"]),
            "s-3.f64",
            "shard 2/4 is missing",
        ),
        (
            set(&["s-0.f64", "s-1.f64", "s-2.f64"]),
            "s-2.f64",
            "shard 3/4 is missing",
        ),
        (
            set(&["s-1.f64", "s-2.f64", "s-3.f64"]),
            "s-1.f64",
            "shard 0/4 is missing",
        ),
        (
            set(&["s-0.f64", "s-1.f64", "s-1.f64", "s-2.f64", "s-3.f64"]),
            "s-1.f64",
            "is shard 1/4 again",
        ),
        (
            set(&["s-0.f64", "seed7-1.f64", "s-2.f64", "s-3.f64"]),
            "seed7-1.f64",
            "has seed 7",
        ),
        (
            set(&["s-0.f64", "other-1.f64", "s-2.f64", "s-3.f64"]),
            "other-1.f64",
            "another profile",
        ),
        (
            set(&["s-0.f64", "cut3-1.f64", "s-2.f64", "s-3.f64"]),
            "cut3-1.f64",
            "different cuts",
        ),
        (
            set(&["s-0.f64", "loud-1.f64", "s-2.f64", "s-3.f64"]),
            "loud-1.f64",
            "full_scale",
        ),
    ];
    for (files, file, what) in cases {
        let args = join(files, "whole.f64");
        let args: Vec<&str> = args.iter().map(String::as_str).collect();
        refused(&s, &args, file, what);
    }
    broken_files_are_refused(&s);
}

/// Shards whose file or manifest was damaged after `generate` wrote them.
fn broken_files_are_refused(s: &Scratch) {
    let all = |ext: &str| -> Vec<String> { (0..4).map(|k| format!("s-{k}.{ext}")).collect() };
    let join_args = |files: &[String], out: &str| -> Vec<String> {
        let mut v = vec!["join".to_string()];
        v.extend(files.iter().cloned());
        v.extend(["-o".into(), out.into()]);
        v
    };
    let check = |files: &[String], out: &str, file: &str, what: &str| {
        let args = join_args(files, out);
        let args: Vec<&str> = args.iter().map(String::as_str).collect();
        refused(s, &args, file, what);
    };
    // A truncated WAV shard (one byte short) and a CSV shard cut inside a row.
    let cut = |name: &str, keep: usize| {
        let bytes = std::fs::read(s.path(name)).unwrap();
        std::fs::write(s.path(name), &bytes[..keep]).unwrap();
        bytes
    };
    let wav = cut(
        "s-2.wav",
        std::fs::metadata(s.path("s-2.wav")).unwrap().len() as usize - 1,
    );
    check(&all("wav"), "whole.wav", "s-2.wav", "is truncated");
    std::fs::write(s.path("s-2.wav"), wav).unwrap();
    let len = std::fs::metadata(s.path("s-1.csv")).unwrap().len() as usize;
    let csv = cut("s-1.csv", len - 7);
    check(&all("csv"), "whole.csv", "s-1.csv", "truncated");
    std::fs::write(s.path("s-1.csv"), csv).unwrap();
    // A manifest edited to move its shard (a gap and an overlap with its neighbours).
    let mp = s.path("s-2.f64.json");
    let original = std::fs::read_to_string(&mp).unwrap();
    let mut m: Value = serde_json::from_str(&original).unwrap();
    m["start_sample"] = (m["start_sample"].as_u64().unwrap() + 10).into();
    std::fs::write(&mp, serde_json::to_string_pretty(&m).unwrap()).unwrap();
    check(&all("f64"), "whole.f64", "s-2.f64.json", "says shard 2/4");
    // An edited seed no longer matches the manifest's fingerprint.
    m = serde_json::from_str(&original).unwrap();
    m["seed"] = 30.into();
    std::fs::write(&mp, serde_json::to_string_pretty(&m).unwrap()).unwrap();
    check(
        &all("f64"),
        "whole.f64",
        "s-2.f64.json",
        "was changed after generate",
    );
    std::fs::write(&mp, original).unwrap();
    // A file made without --shard, a format that is not joined, a conversion.
    run_ok(
        &[
            "generate",
            "mono.toml",
            "-o",
            "plain.f64",
            "--samples",
            "10",
            "-q",
        ],
        s,
    );
    check(
        &["plain.f64".into()],
        "whole.f64",
        "plain.f64.json",
        "is not a shard",
    );
    check(&all("wav"), "whole.npy", "whole.npy", "does not convert");
    // C headers are made as shards but not joined.
    for k in ["0/2", "1/2"] {
        let args = [
            "generate",
            "mono.toml",
            "-o",
            "h{shard}.h",
            "--samples",
            "10",
            "--shard",
            k,
            "-q",
        ];
        run_ok(&args, s);
    }
    check(
        &["h0.h".into(), "h1.h".into()],
        "whole.h",
        "h0.h",
        "is a C header",
    );
    // The output is one of the shards.
    check(&all("f64"), "s-0.f64", "s-0.f64", "shard");
    // Undamaged again, the set joins.
    run_ok(
        &join_args(&all("f64"), "whole.f64")
            .iter()
            .map(String::as_str)
            .collect::<Vec<_>>(),
        s,
    );
}

/// `--shard` beside a start, a loop or an endless stream, and impossible K/N, are refused
/// before anything is made.
#[test]
fn shard_settings_that_cannot_work_are_refused() {
    let s = Scratch::new("settings");
    s.file("mono.toml", MONO);
    for (extra, what) in [
        (
            &["--shard", "8/8", "--samples", "100"][..],
            "shard 8/8 does not exist",
        ),
        (&["--shard", "3", "--samples", "100"][..], "expected K/N"),
        (&["--shard", "0/0", "--samples", "100"][..], "N = 0"),
        (
            &["--shard", "1/4", "--start-sample", "5"][..],
            "cannot be used with --start",
        ),
        (
            &["--shard", "1/4", "--loop"][..],
            "cannot be used with --loop",
        ),
        (
            &["--shard", "1/4", "--samples", "3"][..],
            "more than it has samples",
        ),
    ] {
        let mut args = vec!["generate", "mono.toml", "-o", "x-{shard}.f64"];
        args.extend_from_slice(extra);
        let o = run(&args, &s);
        let err = text(&o.stderr);
        assert_eq!(o.status.code(), Some(2), "{extra:?}: {err}");
        assert!(
            err.contains("--shard") && err.contains(what),
            "{extra:?}: {err}"
        );
        assert!(outputs(&s, &[]).is_empty(), "{extra:?}");
    }
    // Without -o, a shard goes to out/<profile stem>-<index>.wav.
    run_ok(
        &[
            "generate",
            "mono.toml",
            "--samples",
            "100",
            "--shard",
            "1/2",
            "-q",
        ],
        &s,
    );
    assert_eq!(
        outputs(&s.path("out"), &[]),
        ["mono-1.wav", "mono-1.wav.json"]
    );
    let o = run(
        &[
            "generate",
            "mono.toml",
            "-o",
            "-",
            "--duration",
            "inf",
            "--shard",
            "0/2",
        ],
        &s,
    );
    assert_eq!(o.status.code(), Some(2));
    assert!(
        text(&o.stderr).contains("without an end"),
        "{}",
        text(&o.stderr)
    );
}
