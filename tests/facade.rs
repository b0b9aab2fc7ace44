//! The library's facade used from outside the crate, against the command it stands behind:
//! `Generator` gives the raw f64 samples `generate` writes, and `Render` writes the same bytes,
//! manifest and summary as `generate`, for every bundled profile and every format.

mod common;

use std::path::{Path, PathBuf};

use common::{Scratch, read_f64, run_ok};

use noisewright::io::sink::SampleFormat;
use noisewright::{Error, Generator, Profile, Render, Setting};

/// Seed of every run here.
const SEED: u64 = 11;

fn bundled_profiles() -> Vec<PathBuf> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("profiles");
    let mut v: Vec<PathBuf> = std::fs::read_dir(dir)
        .expect("profiles/")
        .map(|e| e.expect("entry").path())
        .filter(|p| p.extension().is_some_and(|e| e == "toml"))
        .collect();
    v.sort();
    assert!(v.len() >= 8, "bundled profiles: {v:?}");
    v
}

/// Runs `generate` with `args` (it must succeed); returns its standard output.
fn generate(args: &[&str]) -> Vec<u8> {
    let mut all = vec!["generate"];
    all.extend_from_slice(args);
    run_ok(&all, Path::new(env!("CARGO_MANIFEST_DIR"))).stdout
}

/// Pulls `n` frames in uneven chunks (1, then sizes that straddle the engine's blocks).
fn pull(g: &mut Generator, frames: usize) -> Vec<f64> {
    let ch = g.channels();
    let mut out = vec![0.0; frames * ch];
    let mut done = 0;
    for size in [1, 4095, 8192, 7723].iter().cycle() {
        if done == frames {
            break;
        }
        let k = (*size).min(frames - done);
        g.fill(&mut out[done * ch..(done + k) * ch]);
        done += k;
    }
    out
}

fn assert_bits_equal(a: &[f64], b: &[f64], what: &str) {
    assert_eq!(a.len(), b.len(), "{what}: lengths");
    if let Some(i) = (0..a.len()).find(|&i| a[i].to_bits() != b[i].to_bits()) {
        panic!(
            "{what}: sample {i} differs: {} vs {} (seed {SEED})",
            a[i], b[i]
        );
    }
}

#[test]
fn generator_gives_generates_raw_f64_samples_for_every_bundled_profile() {
    let dir = Scratch::new("generator");
    for p in bundled_profiles() {
        let file = dir.join("a.f64");
        let frames = 30_011;
        generate(&[
            p.to_str().unwrap(),
            "--samples",
            &frames.to_string(),
            "--seed",
            &SEED.to_string(),
            "-o",
            file.to_str().unwrap(),
        ]);
        let cli = read_f64(&file);
        let profile = Profile::from_path(&p).unwrap();
        let lib = pull(&mut Generator::new(&profile, SEED).unwrap(), frames);
        assert_bits_equal(&lib, &cli, &p.display().to_string());
    }
}

#[test]
fn generator_starting_at_is_generates_segment_also_with_channels() {
    let dir = Scratch::new("segment");
    let path = dir.join("three.toml");
    // Invented scenario: a three-sensor array with one correlated pair and a tone.
    std::fs::write(
        &path,
        "sample_rate = \"48 kHz\"\nchannels = 3\n\
         correlation = [[1, 0.6, 0.1], [0.6, 1, -0.3], [0.1, -0.3, 1]]\n\
         [band]\nlow = \"5 Hz\"\nhigh = \"20 kHz\"\n\
         [[floor]]\ndensity = \"10 nV/rtHz\"\ncorner = \"50 Hz\"\n\
         [[tone]]\nfrequency = \"1 kHz\"\npeak = \"1 uV\"\n",
    )
    .unwrap();
    let profile = Profile::from_path(&path).unwrap();
    for start in [0u64, 77_777] {
        let file = dir.join("seg.f64");
        generate(&[
            path.to_str().unwrap(),
            "--samples",
            "20000",
            "--start-sample",
            &start.to_string(),
            "--seed",
            &SEED.to_string(),
            "-o",
            file.to_str().unwrap(),
        ]);
        let cli = read_f64(&file);
        let mut g = Generator::starting_at(&profile, SEED, start).unwrap();
        assert_eq!(g.channels(), 3);
        assert_bits_equal(&pull(&mut g, 20_000), &cli, &format!("start {start}"));
    }
}

#[test]
fn generator_refuses_a_start_past_the_engines_last_with_render_s_words() {
    let last = noisewright::synth::MAX_START - 1;
    for channels in ["", "channels = 2\n"] {
        let p = Profile::from_toml_str(
            &format!(
                "sample_rate = \"8 kHz\"\n{channels}[band]\nlow = \"10 Hz\"\nhigh = \"3 kHz\"\n\
                 [[floor]]\ndensity = \"10 nV/rtHz\"\n"
            ),
            "inline",
        )
        .unwrap();
        let e = Generator::starting_at(&p, 1, last + 1)
            .err()
            .expect("refused");
        let r = Render::new(&p)
            .samples(1)
            .start_sample(last + 1)
            .to_writer(std::io::sink());
        assert_eq!(e.to_string(), r.unwrap_err().to_string());
        assert!(e.to_string().contains(&format!("sample {last}")), "{e}");
    }
}

/// The outputs compared: file name, the command's options (U: the profile's unit), and the
/// same run as a Render.
type Case = (
    &'static str,
    &'static [&'static str],
    fn(Render<'_>) -> Render<'_>,
);

const CASES: [Case; 9] = [
    ("a.wav", &[], |r| r),
    (
        "a.wav",
        &["--sample-format", "i24", "--level", "-26dBFS"],
        |r| r.sample_format(SampleFormat::I24).level_dbfs(-26.0),
    ),
    // 10 µ of the profile's unit: the voltage profiles clip (allowed), and the pA noise of the
    // current profile still reaches a code (a run whose every code is 0 is refused).
    (
        "a.wav",
        &[
            "--sample-format",
            "i16",
            "--full-scale",
            "10uU",
            "--allow-clipping",
        ],
        |r| {
            r.sample_format(SampleFormat::I16)
                .full_scale(1e-5)
                .allow_clipping(true)
        },
    ),
    ("a.csv", &["--columns", "sources"], |r| {
        r.source_columns(true)
    }),
    ("a.f32", &["--start-sample", "123457"], |r| {
        r.start_sample(123_457)
    }),
    ("a.npy", &["--rate", "2MHz"], |r| r.rate_hz(2e6)),
    ("a.h", &[], |r| r),
    (
        "a.raw",
        &[
            "--bits",
            "12",
            "--range=-2mU..2mU",
            "--dither",
            "tpdf",
            "--allow-clipping",
        ],
        |r| {
            r.adc(12, -2e-3, 2e-3)
                .dither(noisewright::io::adc::Dither::Tpdf)
                .allow_clipping(true)
        },
    ),
    ("b.wav", &["--loop"], |r| r.loop_buffer(true)),
];

#[test]
fn render_writes_generates_bytes_manifest_and_summary_for_every_bundled_profile() {
    let dir = Scratch::new("render");
    // One thread per profile (each with its own folders): the runs are independent.
    std::thread::scope(|scope| {
        for (k, p) in bundled_profiles().into_iter().enumerate() {
            let base = dir.join(k.to_string());
            scope.spawn(move || render_cases(&p, &base));
        }
    });
}

/// Every case of [`CASES`] for the profile at `p`, compared in folders below `base`.
fn render_cases(p: &Path, base: &Path) {
    let profile = Profile::from_path(p).unwrap();
    for (name, options, setup) in CASES {
        // Burst profiles have no loop buffer, nor have tones that miss whole cycles.
        if options.contains(&"--loop") && !(profile.bursts.is_empty() && profile.tones.is_empty()) {
            continue;
        }
        let (cli_dir, lib_dir) = (base.join("cli"), base.join("lib"));
        for d in [&cli_dir, &lib_dir] {
            let _ = std::fs::remove_dir_all(d);
            std::fs::create_dir_all(d).unwrap();
        }
        let cli_file = cli_dir.join(name);
        // U stands for the profile's unit in the options' quantities.
        let unit = profile.unit.symbol();
        let options: Vec<String> = options.iter().map(|o| o.replace('U', unit)).collect();
        let mut args = vec![p.to_str().unwrap(), "--samples", "24000", "--seed", "11"];
        args.extend(options.iter().map(String::as_str));
        args.extend_from_slice(&["-o", cli_file.to_str().unwrap()]);
        let summary = generate(&args);
        let render = setup(Render::new(&profile).seed(SEED).samples(24_000));
        let report = render.to_path(lib_dir.join(name)).unwrap();
        let what = format!("{} {options:?}", p.display());
        for f in [name.to_string(), format!("{name}.json")] {
            let (a, b) = (
                std::fs::read(cli_dir.join(&f)).unwrap(),
                std::fs::read(lib_dir.join(&f)).unwrap(),
            );
            assert!(a == b, "{what}: {f} differs");
        }
        // The report holds the manifest it wrote.
        let written: serde_json::Value =
            serde_json::from_slice(&std::fs::read(lib_dir.join(format!("{name}.json"))).unwrap())
                .unwrap();
        assert_eq!(report.manifest.as_ref(), Some(&written), "{what}: manifest");
        let summary = String::from_utf8(summary).unwrap();
        assert_eq!(
            report.summary.replace(lib_dir.to_str().unwrap(), "OUT"),
            summary.replace(cli_dir.to_str().unwrap(), "OUT"),
            "{what}: summary"
        );
    }
}

#[test]
fn render_streams_to_a_writer_what_generate_streams_to_standard_output() {
    let profile = Profile::from_path(&bundled_profiles()[0]).unwrap();
    let p = bundled_profiles()[0].clone();
    let cli = generate(&[p.to_str().unwrap(), "--samples", "5000", "-o", "-"]);
    let buffer = std::sync::Arc::new(std::sync::Mutex::new(Vec::new()));
    struct Shared(std::sync::Arc<std::sync::Mutex<Vec<u8>>>);
    impl std::io::Write for Shared {
        fn write(&mut self, b: &[u8]) -> std::io::Result<usize> {
            self.0.lock().unwrap().extend_from_slice(b);
            Ok(b.len())
        }
        fn flush(&mut self) -> std::io::Result<()> {
            Ok(())
        }
    }
    let report = Render::new(&profile)
        .samples(5000)
        .to_writer(Shared(buffer.clone()))
        .unwrap();
    assert_eq!(*buffer.lock().unwrap(), cli);
    assert_eq!(report.frames, 5000);
    assert!(report.path.is_none() && report.manifest_path.is_none() && report.manifest.is_none());
}

#[test]
fn render_refuses_bad_settings_naming_the_setting_in_library_words() {
    let profile = Profile::from_path(&bundled_profiles()[0]).unwrap();
    let dir = Scratch::new("refuse");
    let e = Render::new(&profile)
        .samples(0)
        .to_path(dir.join("a.wav"))
        .unwrap_err();
    assert!(
        matches!(
            e,
            Error::Setting {
                setting: Setting::Samples,
                ..
            }
        ),
        "{e:?}"
    );
    assert_eq!(
        e.to_string(),
        "setting samples: expected at least one sample, got 0"
    );
    assert_eq!(e.exit_code(), 2);
    let e = Render::new(&profile)
        .bits(12)
        .to_path(dir.join("a.raw"))
        .unwrap_err();
    let text = e.to_string();
    assert!(text.starts_with("setting bits: needs range,"), "{text}");
    assert!(!text.contains("--") && !text.contains('\u{1}'), "{text}");
    // The command line names the same settings by its flags.
    let cli = e.describe("option", &|s| format!("--{}", s.name().replace('_', "-")));
    assert!(cli.starts_with("option --bits: needs --range,"), "{cli}");
    assert!(!dir.join("a.raw").exists() && !dir.join("a.wav").exists());
}
