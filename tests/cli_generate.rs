//! CLI tests of `noisewright generate`: outputs, manifest, honesty about scale and clipping.
//! Bad input is in tests/error_classes.rs; signals, unwritable outputs, a full disk and
//! closed pipes are in `cli_faults.rs`.

mod common;

use std::path::Path;
use std::process::{Command, Output};

use common::{Scratch, WHITE, manifest, outputs, read_f64, run, run_ok, text};

/// `generate PROFILE ARGS…` in `dir` on [`WHITE`], written there as `w.toml`; it must
/// succeed.
fn generate_white(dir: &Scratch, args: &[&str]) -> Output {
    let p = dir.file("w.toml", WHITE);
    let mut all = vec!["generate", p.to_str().unwrap()];
    all.extend_from_slice(args);
    run_ok(&all, dir)
}

#[test]
fn every_bundled_profile_generates_a_wav_and_its_manifest() {
    let dir = Scratch::new("bundled");
    let profiles = Path::new(env!("CARGO_MANIFEST_DIR")).join("profiles");
    let mut count = 0;
    for entry in std::fs::read_dir(&profiles).unwrap() {
        let path = entry.unwrap().path();
        if path.extension().is_none_or(|e| e != "toml") {
            continue;
        }
        count += 1;
        let stem = path.file_stem().unwrap().to_string_lossy().into_owned();
        let out = dir.join(format!("{stem}.wav"));
        let o = run(
            &[
                "generate",
                path.to_str().unwrap(),
                "-o",
                out.to_str().unwrap(),
                "--samples",
                "50000",
            ],
            &dir,
        );
        assert!(o.status.success(), "{stem}: {}", text(&o.stderr));
        let reader = hound::WavReader::open(&out).unwrap();
        assert_eq!(reader.len(), 50_000, "{stem}");
        let manifest = manifest(&dir.join(format!("{stem}.wav")));
        assert_eq!(manifest["samples"], 50_000, "{stem}");
        assert_eq!(manifest["seed"], 1, "{stem}");
        assert!(manifest["full_scale"].as_f64().unwrap() > 0.0, "{stem}");
        let summary = text(&o.stdout);
        assert!(summary.contains("expected RMS"), "{stem}: {summary}");
        assert!(summary.contains("seed"), "{stem}: {summary}");
    }
    assert!(count >= 3, "expected the bundled scenarios, found {count}");
}

#[test]
fn default_output_goes_to_out_folder_named_after_the_profile() {
    let dir = Scratch::new("default-out");
    let p = dir.file("bench.toml", WHITE);
    run_ok(
        &["generate", p.to_str().unwrap(), "--duration", "0.1s"],
        &dir,
    );
    assert!(dir.join("out/bench.wav").is_file());
    assert!(dir.join("out/bench.wav.json").is_file());
}

#[test]
fn same_seed_same_bytes_other_seed_other_bytes() {
    let dir = Scratch::new("determinism");
    let mut files = Vec::new();
    for (name, seed) in [("a.raw", "5"), ("b.raw", "5"), ("c.raw", "6")] {
        generate_white(&dir, &["-o", name, "--seed", seed, "--samples", "30000"]);
        files.push(std::fs::read(dir.join(name)).unwrap());
    }
    assert_eq!(files[0].len(), 30_000 * 4);
    assert_eq!(files[0], files[1]);
    assert_ne!(files[0], files[2]);
}

#[test]
fn csv_and_raw_carry_physical_units_by_default() {
    let dir = Scratch::new("physical");
    generate_white(&dir, &["-o", "n.csv", "--samples", "1000"]);
    let csv = std::fs::read_to_string(dir.join("n.csv")).unwrap();
    let mut lines = csv.lines();
    assert!(lines.next().unwrap().contains("time_s"));
    let values: Vec<f64> = lines
        .map(|l| l.split(',').nth(1).unwrap().parse().unwrap())
        .collect();
    assert_eq!(values.len(), 1000);
    // 10 nV/√Hz over ~20 kHz is ~1.4 µV RMS: the values are volts, not normalised.
    let rms = (values.iter().map(|v| v * v).sum::<f64>() / 1000.0).sqrt();
    assert!(rms > 0.5e-6 && rms < 5e-6, "rms {rms}");
    let m = manifest(&dir.join("n.csv"));
    assert!(m["full_scale"].is_null());
    assert_eq!(m["unit"], "V");
}

#[test]
fn clipping_is_an_error_naming_a_full_scale_that_holds_the_noise() {
    let dir = Scratch::new("clip");
    let p = dir.file("w.toml", WHITE);
    let args = [
        "generate",
        p.to_str().unwrap(),
        "-o",
        "c.wav",
        "--full-scale",
        "1uV",
        "--samples",
        "20000",
    ];
    let o = run(&args, &dir);
    assert_eq!(o.status.code(), Some(1), "{}", text(&o.stderr));
    let err = text(&o.stderr);
    assert!(err.contains("full scale of at least"), "{err}");
    assert!(
        outputs(&dir, &[]).is_empty(),
        "left behind: {:?}",
        outputs(&dir, &[])
    );

    let o = run_ok(&[&args[..], &["--allow-clipping"]].concat(), &dir);
    let m = manifest(&dir.join("c.wav"));
    assert!(m["clipped"].as_u64().unwrap() > 0);
    assert!(text(&o.stdout).contains("clipped"));
}

#[test]
fn a_rate_change_is_reported_not_silent() {
    let dir = Scratch::new("rate");
    let o = generate_white(
        &dir,
        &["-o", "r.raw", "--rate", "96 kHz", "--samples", "1000"],
    );
    assert!(text(&o.stdout).contains("replaces the profile's 48 kHz"));
    let m = manifest(&dir.join("r.raw"));
    assert_eq!(m["sample_rate_hz"], 96_000.0);
    assert!(m["notes"][0].as_str().unwrap().contains("96 kHz"));
}

#[test]
fn a_coarse_integer_format_is_flagged_against_the_lowest_density() {
    // 16 bits at a full scale of 100 mV: Q = 0.1/32767 V, Q/√(6 fs) = 5.68679 nV/√Hz, 4.9 dB
    // below 10 nV/√Hz (uniform quantisation error model, IEEE Std 1241; REFERENCES §9).
    let dir = Scratch::new("quant");
    let args = |fs: &'static str| {
        [
            "-o",
            "q.wav",
            "--sample-format",
            "i16",
            "--full-scale",
            fs,
            "--samples",
            "1000",
        ]
    };
    let o = generate_white(&dir, &args("100mV"));
    assert!(
        text(&o.stdout).contains(
            "the 16-bit quantisation noise (5.68679 nV/√Hz) is only 4.9 dB below the lowest \
             density in the band"
        ),
        "{}",
        text(&o.stdout)
    );
    // At 1 V half a code step, 15.3 µV, is above 10 × the 1.48 µV RMS: every code would be
    // 0, which is refused before anything is written.
    let o = run(
        &[
            &["generate", dir.join("w.toml").to_str().unwrap()][..],
            &args("1V")[..],
        ]
        .concat(),
        &dir,
    );
    assert_eq!(o.status.code(), Some(2), "{}", text(&o.stderr));
    assert!(
        text(&o.stderr).contains("every stored value would be 0"),
        "{}",
        text(&o.stderr)
    );
}

#[test]
fn loop_writes_one_period_and_says_so() {
    let dir = Scratch::new("loop");
    let o = generate_white(&dir, &["--loop", "-o", "l.f64", "--samples", "4800"]);
    let x = read_f64(&dir.join("l.f64"));
    assert_eq!(x.len(), 4800);
    // One period of a sum of Fourier-frequency sinusoids with no DC: the mean is zero to
    // rounding (REFERENCES §1.1).
    let mean = x.iter().sum::<f64>() / x.len() as f64;
    let rms = (x.iter().map(|v| v * v).sum::<f64>() / x.len() as f64).sqrt();
    assert!(mean.abs() < 1e-12 * rms, "mean {mean}, rms {rms}");
    let m = manifest(&dir.join("l.f64"));
    assert_eq!(m["loop"], true);
    assert!(text(&o.stdout).contains("loop buffer"));
}

#[test]
fn thread_count_does_not_change_the_bytes() {
    // Several pyramid levels (1/f down to 0.5 Hz) and several batches of the top level, so
    // every level's work is split between threads.
    let dir = Scratch::new("threads");
    let p = dir.file(
        "f.toml",
        r#"
name = "cli threads"
sample_rate = "48 kHz"
[band]
low = "0.5 Hz"
high = "24 kHz"
order = 0
[[floor]]
density = "4 nV/rtHz"
corner = "100 Hz"
"#,
    );
    let mut files = Vec::new();
    for threads in ["1", "2", "3"] {
        let name = format!("t{threads}.raw");
        run_ok(
            &[
                "generate",
                p.to_str().unwrap(),
                "-o",
                &name,
                "--samples",
                "200000",
                "--threads",
                threads,
                "--quiet",
            ],
            &dir,
        );
        files.push(std::fs::read(dir.join(&name)).unwrap());
    }
    assert_eq!(files[0].len(), 200_000 * 4);
    assert_eq!(files[0], files[1], "1 vs 2 threads (seed 1)");
    assert_eq!(files[0], files[2], "1 vs 3 threads (seed 1)");
}

#[test]
fn a_named_pipe_gets_the_samples_in_place_and_no_manifest_beside_it() {
    // A rig reading from a FIFO (or /dev/null, a device) must keep its pipe: renaming a
    // finished temporary file over it would replace the pipe with a plain file.
    use std::os::unix::fs::FileTypeExt;
    let dir = Scratch::new("fifo");
    let p = dir.file("w.toml", WHITE);
    let fifo = dir.join("rig.raw");
    let made = Command::new("mkfifo").arg(&fifo).status();
    if !made.is_ok_and(|s| s.success()) {
        eprintln!("skipped: mkfifo is not available here");
        return;
    }
    let reader = {
        let fifo = fifo.clone();
        std::thread::spawn(move || std::fs::read(fifo).unwrap())
    };
    let ps = p.to_str().unwrap();
    let args = ["--samples", "20000", "--seed", "4"];
    let out = run(
        &[&["generate", ps, "-o", "rig.raw"][..], &args[..]].concat(),
        &dir,
    );
    assert!(out.status.success(), "{}", text(&out.stderr));
    // Before joining the reader: had the pipe been replaced, it would wait for good.
    assert!(std::fs::metadata(&fifo).unwrap().file_type().is_fifo());
    let piped = reader.join().unwrap();
    assert!(text(&out.stdout).contains("no manifest: rig.raw is a device or pipe"));
    assert_eq!(outputs(&dir, &[]), ["rig.raw"], "nothing beside the pipe");
    let file = run(
        &[&["generate", ps, "-o", "file.raw"][..], &args[..]].concat(),
        &dir,
    );
    assert!(file.status.success(), "{}", text(&file.stderr));
    assert_eq!(piped.len(), 20000 * 4, "f32 raw");
    assert!(piped == std::fs::read(dir.join("file.raw")).unwrap());
}
