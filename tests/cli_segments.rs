//! Segments (`generate --start`): pieces of a run, made separately and joined, equal the run
//! byte for byte, for every source kind. Bad starts are rows of tests/error_classes.rs.

mod common;

use std::path::Path;

use common::{Scratch, manifest, run};

const SEED: &str = "17";

/// Raw f64 samples of `profile` from sample `start`, `len` samples long.
fn piece(dir: &Path, profile: &str, start: u64, len: u64, extra: &[&str]) -> Vec<u8> {
    // A raw extension such as .f64 names its sample format, so codes or another
    // --sample-format go into a .bin file.
    let ext = if extra.contains(&"--bits") || extra.contains(&"--sample-format") {
        "bin"
    } else {
        "f64"
    };
    let name = format!("piece-{start}-{len}.{ext}");
    let (s, l) = (start.to_string(), len.to_string());
    let mut args = vec![
        "generate",
        profile,
        "-o",
        &name,
        "--seed",
        SEED,
        "--samples",
        &l,
        "-q",
    ];
    args.extend(["--start-sample", &s]);
    args.extend(extra);
    let out = run(&args, dir);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    std::fs::read(dir.join(&name)).unwrap()
}

/// The run from 0 of `total` samples equals its pieces at `cuts` joined end to end.
fn assert_pieces_join(dir: &Path, profile: &str, total: u64, cuts: &[u64], extra: &[&str]) {
    let whole = piece(dir, profile, 0, total, extra);
    let mut edges = vec![0];
    edges.extend_from_slice(cuts);
    edges.push(total);
    let mut joined = Vec::new();
    for w in edges.windows(2) {
        joined.extend(piece(dir, profile, w[0], w[1] - w[0], extra));
    }
    assert_eq!(joined.len(), whole.len());
    let first = joined.iter().zip(&whole).position(|(a, b)| a != b);
    assert!(
        first.is_none(),
        "seed {SEED}, cuts {cuts:?}: first differing byte {first:?}"
    );
}

const WHITE: &str = r#"
unit = "V"
sample_rate = "48 kHz"
[band]
low = "10 Hz"
high = "20 kHz"
[[floor]]
density = "10 nV/rtHz"
"#;

// band.low = 1 mHz at 48 kHz: a pyramid of many levels.
const DEEP: &str = r#"
unit = "V"
sample_rate = "48 kHz"
[band]
low = "1 mHz"
high = "20 kHz"
[[floor]]
density = "10 nV/rtHz"
corner = "10 Hz"
"#;

fn bursts_only(sampling: &str) -> String {
    format!(
        r#"
unit = "V"
sample_rate = "10 kHz"
[band]
low = "1 Hz"
high = "4 kHz"
[[burst]]
levels = ["0 uV", "2 uV", "5 uV"]
dwell = ["3 ms", "0.4 ms", "0.15 ms"]
sampling = "{sampling}"
"#
    )
}

const MIXED: &str = r#"
unit = "V"
sample_rate = "100 kHz"
[band]
low = "0.1 Hz"
high = "40 kHz"
order = 2
[[floor]]
density = "15 nV/rtHz"
corner = "50 Hz"
[[burst]]
name = "trap"
levels = ["0 uV", "2.5 uV"]
dwell = ["20 ms", "4 ms"]
[[burst]]
name = "fast trap"
levels = ["0 uV", "1 uV"]
dwell = ["0.05 ms", "0.02 ms"]
sampling = "mean"
"#;

/// One batch of the engine's top level (2·HOP·BATCH_PAIRS output samples).
const BATCH: u64 = 2 * 6144 * 4;

#[test]
fn white_pieces_join_to_the_run() {
    let s = Scratch::new("white");
    s.file("white.toml", WHITE);
    assert_pieces_join(&s.dir, "white.toml", 150_000, &[70_001], &[]);
    assert_pieces_join(&s.dir, "white.toml", 150_000, &[1, 2048, 99_999], &[]);
}

#[test]
fn deep_pyramid_pieces_join_at_block_and_chunk_boundaries() {
    let s = Scratch::new("deep");
    s.file("deep.toml", DEEP);
    // Inside, at and just before chunk (2048), block (6144) and batch boundaries of levels
    // 0 and 1 (level 1's batches start every 4·BATCH output samples).
    let cuts = [
        2047,
        2048,
        6143,
        6144,
        BATCH - 1,
        BATCH,
        BATCH + 1,
        4 * BATCH - 1,
        4 * BATCH,
        4 * BATCH + 3000,
    ];
    assert_pieces_join(&s.dir, "deep.toml", 4 * BATCH + 7000, &cuts, &[]);
}

#[test]
fn burst_pieces_join_for_instant_and_mean_sampling() {
    for sampling in ["instant", "mean"] {
        let s = Scratch::new(sampling);
        s.file("b.toml", &bursts_only(sampling));
        assert_pieces_join(&s.dir, "b.toml", 60_000, &[29_999], &[]);
        assert_pieces_join(&s.dir, "b.toml", 60_000, &[7, 12_345, 40_000], &[]);
    }
}

#[test]
fn mixed_pieces_join_in_every_format_and_with_source_columns() {
    let s = Scratch::new("mixed");
    s.file("mixed.toml", MIXED);
    assert_pieces_join(&s.dir, "mixed.toml", 120_000, &[BATCH, 100_001], &[]);
    // Integer codes at the default level: the scale depends on the profile only.
    let i16 = ["--sample-format", "i16"];
    assert_pieces_join(&s.dir, "mixed.toml", 120_000, &[33_333, 66_666], &i16);
    // CSV pieces join by dropping every header but the first (`tail -n +2`).
    let csv = |start: u64, len: u64| -> String {
        let name = format!("c{start}.csv");
        let (a, b) = (start.to_string(), len.to_string());
        let out = run(
            &[
                "generate",
                "mixed.toml",
                "-o",
                &name,
                "--seed",
                SEED,
                "--samples",
                &b,
                "--start-sample",
                &a,
                "--columns",
                "sources",
                "-q",
            ],
            &s.dir,
        );
        assert!(
            out.status.success(),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
        std::fs::read_to_string(s.path(&name)).unwrap()
    };
    let whole = csv(0, 30_000);
    let mut joined = csv(0, 10_000);
    for (a, n) in [(10_000, 5), (10_005, 19_995)] {
        let p = csv(a, n);
        joined.push_str(p.split_once('\n').unwrap().1);
    }
    assert!(joined == whole, "seed {SEED}: joined CSV differs");
}

#[test]
fn adc_codes_with_tpdf_dither_pieces_join_to_the_run() {
    let s = Scratch::new("adc");
    s.file("mixed.toml", MIXED);
    let adc = [
        "--bits",
        "12",
        "--range",
        "-20uV..20uV",
        "--dither",
        "tpdf",
        "--format",
        "raw",
    ];
    assert_pieces_join(&s.dir, "mixed.toml", 50_000, &[2047, 2048, 30_001], &adc);
}

/// Tones, an offset and three correlated channels on top of [`MIXED`]'s sources: every part
/// depends on the absolute sample index only, so pieces join as for a mono noise run.
#[test]
fn tones_offset_and_channels_pieces_join_to_the_run() {
    let s = Scratch::new("tones");
    let profile = format!(
        "offset = \"-3 uV\"\nchannels = 3\ncorrelation = [[1, 0.6, -0.2], [0.6, 1, 0.3], \
         [-0.2, 0.3, 1]]\n{MIXED}\n[[tone]]\nfrequency = \"997 Hz\"\npeak = \"40 uV\"\n\
         phase = 30\n[[tone]]\nfrequency = \"31.25 kHz\"\nrms = \"5 uV\"\n"
    );
    s.file("tones.toml", &profile);
    assert_pieces_join(&s.dir, "tones.toml", 60_000, &[2047, 49_153], &[]);
    let adc = [
        "--bits",
        "16",
        "--range",
        "-200uV..200uV",
        "--dither",
        "tpdf",
        "--format",
        "raw",
    ];
    assert_pieces_join(&s.dir, "tones.toml", 40_000, &[12_289], &adc);
}

#[test]
fn a_start_far_out_equals_a_nearer_start_with_its_lead_dropped() {
    let s = Scratch::new("far");
    s.file(
        "mixed.toml",
        MIXED
            .replace("0.05 ms", "5 s")
            .replace("0.02 ms", "2 s")
            .as_str(),
    );
    let n0 = 10_000_000_000u64;
    let lead = BATCH + 100;
    let far = piece(&s.dir, "mixed.toml", n0, 4000, &[]);
    let near = piece(&s.dir, "mixed.toml", n0 - lead, lead + 4000, &[]);
    assert!(far == near[8 * lead as usize..], "seed {SEED}, start {n0}");
}

#[test]
fn a_start_time_is_its_sample_and_is_recorded() {
    let s = Scratch::new("time");
    s.file("white.toml", WHITE);
    let by_sample = piece(&s.dir, "white.toml", 120_000, 1000, &[]);
    let out = run(
        &[
            "generate",
            "white.toml",
            "-o",
            "t.f64",
            "--seed",
            SEED,
            "--samples",
            "1000",
            "--start",
            "2.5 s",
        ],
        &s.dir,
    );
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    assert_eq!(std::fs::read(s.path("t.f64")).unwrap(), by_sample);
    let summary = String::from_utf8_lossy(&out.stdout);
    assert!(
        summary.contains("start           sample 120000 (2.5 s)"),
        "{summary}"
    );
    let m = manifest(&s.path("t.f64"));
    assert_eq!(m["start_sample"], 120_000);
    assert_eq!(m["start_s"], 2.5);
    // The CSV's time column is the whole run's: it starts at T.
    let out = run(
        &[
            "generate",
            "white.toml",
            "-o",
            "t.csv",
            "--samples",
            "3",
            "--start",
            "1 h",
        ],
        &s.dir,
    );
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let csv = std::fs::read_to_string(s.path("t.csv")).unwrap();
    let rows: Vec<&str> = csv
        .lines()
        .skip(1)
        .map(|l| l.split(',').next().unwrap())
        .collect();
    assert_eq!(
        rows,
        [
            "3600",
            &format!("{}", 172_800_001.0 / 48_000.0),
            &format!("{}", 172_800_002.0 / 48_000.0)
        ]
    );
}
