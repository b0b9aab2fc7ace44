//! Shared helpers for the integration tests: χ² acceptance bands for density and variance
//! estimates, a band-by-band check of a Welch estimate against a designed density, the
//! Python reference, scratch folders, running the binary, raw f64 files and manifests, and a
//! white test profile.
//!
//! Each test binary uses only some of these.
#![allow(dead_code)]

use std::ffi::OsStr;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};
use std::sync::atomic::{AtomicUsize, Ordering};

use noisewright::analysis::welch::BandEstimate;
use statrs::distribution::{ChiSquared, ContinuousCDF};

/// Two-sided acceptance interval `[χ²_ν(p/2)/ν, χ²_ν(1−p/2)/ν]` for an estimate whose ratio to
/// the truth is distributed as χ²_ν/ν (a Welch bin or band, references §3; a variance, §8).
/// A correct estimate falls outside with probability `p_two_sided`.
///
/// # Panics
/// If `dof` is not positive and finite or `p_two_sided` is not in (0, 1).
pub fn chi2_band(dof: f64, p_two_sided: f64) -> (f64, f64) {
    assert!(dof > 0.0 && dof.is_finite(), "degrees of freedom {dof}");
    assert!(
        p_two_sided > 0.0 && p_two_sided < 1.0,
        "false-failure probability {p_two_sided}"
    );
    let chi2 = ChiSquared::new(dof).expect("positive degrees of freedom");
    (
        chi2.inverse_cdf(p_two_sided / 2.0) / dof,
        chi2.inverse_cdf(1.0 - p_two_sided / 2.0) / dof,
    )
}

/// Interval for `s²/σ²` where s² is a sample variance (mean removed) from `n_eff` independent
/// Gaussian samples: `(n−1)s²/σ² ~ χ²_{n−1}` (references §8), at two-sided false-failure
/// probability `p`. For correlated samples pass an effective count (e.g. `B_s·T`, §8).
pub fn variance_bounds(n_eff: f64, p: f64) -> (f64, f64) {
    chi2_band(n_eff - 1.0, p)
}

/// Decibels of a power ratio.
pub fn db(ratio: f64) -> f64 {
    10.0 * ratio.log10()
}

/// Checks every band's `psd_mean` against `expected(f_lo_hz, f_hi_hz)`, the mean designed
/// density over the band in the same unit²/Hz, with χ²_ν/ν acceptance intervals (ν from the
/// band, references §3). The total false-failure probability `p_total` is split evenly over
/// the bands (Bonferroni, §11).
///
/// On failure the message names the worst band (smallest two-sided tail probability), its
/// ratio and allowed interval in dB, how many bands failed, and `seed`, so the run can be
/// repeated.
pub fn check_bands_against(
    bands: &[BandEstimate],
    expected: &dyn Fn(f64, f64) -> f64,
    p_total: f64,
    seed: u64,
) -> Result<(), String> {
    if bands.is_empty() {
        return Err(format!("no bands to check (seed {seed})"));
    }
    let p_band = p_total / bands.len() as f64;
    let mut failed = 0usize;
    let mut worst: Option<(f64, String)> = None;
    for (i, band) in bands.iter().enumerate() {
        let want = expected(band.f_lo_hz, band.f_hi_hz);
        if !(want.is_finite() && want > 0.0) {
            return Err(format!(
                "band {i} ({:.6}..{:.6} Hz): expected density {want} is not positive (seed {seed})",
                band.f_lo_hz, band.f_hi_hz
            ));
        }
        let ratio = band.psd_mean / want;
        let (lo, hi) = chi2_band(band.dof, p_band);
        let outside = !(lo..=hi).contains(&ratio);
        if outside {
            failed += 1;
        }
        let chi2 = ChiSquared::new(band.dof).expect("positive degrees of freedom");
        let x = ratio * band.dof;
        let tail = 2.0 * chi2.cdf(x).min(chi2.sf(x));
        if worst.as_ref().is_none_or(|(t, _)| tail < *t) {
            let text = format!(
                "band {i} {:.6}..{:.6} Hz (bins {:?}, ν = {:.1}): measured/expected = {:+.3} dB, \
                 allowed {:+.3} / {:+.3} dB (p = {p_band:.3e} per band, {} bands)",
                band.f_lo_hz,
                band.f_hi_hz,
                band.bins,
                band.dof,
                db(ratio),
                db(lo),
                db(hi),
                bands.len()
            );
            worst = Some((tail, text));
        }
    }
    if failed == 0 {
        Ok(())
    } else {
        let (_, text) = worst.expect("at least one band");
        Err(format!(
            "{failed} of {} bands outside their χ² interval; worst: {text}; seed {seed}",
            bands.len()
        ))
    }
}

/// Makes sure `python3` can import the reference libraries (numpy, scipy): on first use in a
/// test binary, when they are missing, installs the versions pinned in
/// `tests/python/requirements.txt` with pip (CI installs them up front in `.ci/run`). Returns
/// why the reference is unavailable if Python is missing or the install fails.
pub fn ensure_python_reference() -> Result<(), String> {
    static READY: std::sync::OnceLock<Result<(), String>> = std::sync::OnceLock::new();
    READY
        .get_or_init(|| {
            let probe = || {
                std::process::Command::new("python3")
                    .args(["-c", "import numpy, scipy.signal, scipy.io.wavfile"])
                    .output()
            };
            match probe() {
                Err(e) => return Err(format!("python3 was not found ({e})")),
                Ok(o) if o.status.success() => return Ok(()),
                Ok(_) => {}
            }
            let req = concat!(env!("CARGO_MANIFEST_DIR"), "/tests/python/requirements.txt");
            eprintln!("installing the test reference libraries: python3 -m pip install -r {req}");
            let install = std::process::Command::new("python3")
                .args([
                    "-m",
                    "pip",
                    "install",
                    "--quiet",
                    "--disable-pip-version-check",
                    "-r",
                    req,
                ])
                .output()
                .map_err(|e| format!("could not run pip ({e})"))?;
            if !install.status.success() {
                return Err(format!(
                    "pip could not install {req}: {}",
                    String::from_utf8_lossy(&install.stderr).trim()
                ));
            }
            match probe() {
                Ok(o) if o.status.success() => Ok(()),
                _ => Err("numpy/scipy still cannot be imported after pip install".into()),
            }
        })
        .clone()
}

/// What a cross-check does when the reference is unavailable: fail with how to install it,
/// unless `NOISEWRIGHT_SKIP_PYTHON=1` (then say it skipped and return `None`).
pub fn reference_unavailable<T>(why: &str) -> Option<T> {
    if std::env::var("NOISEWRIGHT_SKIP_PYTHON").as_deref() == Ok("1") {
        println!("skipped the SciPy comparison (NOISEWRIGHT_SKIP_PYTHON=1): {why}");
        None
    } else {
        panic!(
            "the SciPy reference is unavailable: {why}\n\
             install it with `python3 -m pip install -r tests/python/requirements.txt` \
             (.ci/run does), or set NOISEWRIGHT_SKIP_PYTHON=1 to skip this comparison"
        )
    }
}

/// Runs `tests/python/<script>` with `args` and returns its stdout, or `None` when the
/// reference is skipped. Exit status 3 from a script means numpy/scipy is missing; any other
/// failure panics with the script's stderr and `context` (say, the seed).
pub fn python_script(script: &str, args: &[std::ffi::OsString], context: &str) -> Option<String> {
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/python")
        .join(script);
    if let Err(why) = ensure_python_reference() {
        return reference_unavailable(&why);
    }
    let out = match std::process::Command::new("python3")
        .arg(&path)
        .args(args)
        .output()
    {
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => {
            return reference_unavailable(&format!("python3 was not found ({e})"));
        }
        Err(e) => panic!("could not run python3 {}: {e}", path.display()),
        Ok(out) => out,
    };
    let stderr = String::from_utf8_lossy(&out.stderr);
    if out.status.code() == Some(3) {
        return reference_unavailable(stderr.trim());
    }
    assert!(
        out.status.success(),
        "{} failed ({}): {stderr} ({context})",
        path.display(),
        out.status
    );
    Some(String::from_utf8_lossy(&out.stdout).into_owned())
}

/// The folder of one test under the system's temporary folder, named
/// `noisewright-<test binary>-<pid>-<tag>-<n>` (unique per process, tag and call). It is
/// removed with its contents when the test passes; when the test panics it is kept for
/// inspection and its path is printed.
///
/// It dereferences to its path, so `s.join(name)` and `&s` as a `&Path` work.
pub struct Scratch {
    /// The folder.
    pub dir: PathBuf,
}

impl Scratch {
    /// Creates (empties) the folder for `tag`.
    pub fn new(tag: &str) -> Scratch {
        static COUNTER: AtomicUsize = AtomicUsize::new(0);
        let id = COUNTER.fetch_add(1, Ordering::Relaxed);
        let dir = std::env::temp_dir().join(format!(
            "noisewright-{}-{}-{tag}-{id}",
            test_binary(),
            std::process::id()
        ));
        let _ = std::fs::remove_dir_all(&dir);
        std::fs::create_dir_all(&dir)
            .unwrap_or_else(|e| panic!("cannot create {}: {e}", dir.display()));
        Scratch { dir }
    }

    /// A path inside the folder.
    pub fn path(&self, name: &str) -> PathBuf {
        self.dir.join(name)
    }

    /// Writes `body` to `name` inside the folder and returns its path.
    pub fn file(&self, name: &str, body: &str) -> PathBuf {
        let p = self.path(name);
        std::fs::write(&p, body).unwrap_or_else(|e| panic!("cannot write {}: {e}", p.display()));
        p
    }
}

impl std::ops::Deref for Scratch {
    type Target = Path;

    fn deref(&self) -> &Path {
        &self.dir
    }
}

impl AsRef<Path> for Scratch {
    fn as_ref(&self) -> &Path {
        &self.dir
    }
}

impl Drop for Scratch {
    fn drop(&mut self) {
        if std::thread::panicking() {
            eprintln!(
                "kept the scratch folder {} for inspection",
                self.dir.display()
            );
        } else {
            let _ = std::fs::remove_dir_all(&self.dir);
        }
    }
}

/// The name of the running test binary without cargo's hash (`cli_generate`), or `test`.
fn test_binary() -> String {
    std::env::current_exe()
        .ok()
        .and_then(|p| {
            let stem = p.file_stem()?.to_string_lossy().into_owned();
            Some(
                stem.split_once('-')
                    .map_or(stem.clone(), |(name, _)| name.to_string()),
            )
        })
        .unwrap_or_else(|| "test".into())
}

/// The noisewright binary built for these tests, ready for arguments.
pub fn bin() -> Command {
    Command::new(env!("CARGO_BIN_EXE_noisewright"))
}

/// Runs the noisewright binary with `args` in the folder `cwd` and returns its exit status
/// and output.
pub fn run<S: AsRef<OsStr>>(args: &[S], cwd: &Path) -> Output {
    bin()
        .args(args)
        .current_dir(cwd)
        .output()
        .expect("the noisewright binary runs")
}

/// `generate PROFILE -o OUT --seed SEED -q EXTRA…` in OUT's folder, which must succeed
/// (panics with stderr and the seed otherwise).
pub fn generate_seeded(profile: &Path, out: &Path, seed: u64, extra: &[&str]) {
    let mut a: Vec<std::ffi::OsString> = vec![
        "generate".into(),
        profile.into(),
        "-o".into(),
        out.into(),
        "--seed".into(),
        seed.to_string().into(),
        "-q".into(),
    ];
    a.extend(extra.iter().map(std::ffi::OsString::from));
    let o = run(&a, out.parent().expect("OUT is in a folder"));
    assert!(
        o.status.success(),
        "generate {extra:?}: {} (seed {seed})",
        text(&o.stderr)
    );
}

/// [`run`], which must succeed: panics with the command line, the exit status and stderr
/// otherwise.
pub fn run_ok<S: AsRef<OsStr>>(args: &[S], cwd: &Path) -> Output {
    let o = run(args, cwd);
    assert!(
        o.status.success(),
        "noisewright {} failed ({}): {}",
        args.iter()
            .map(|a| a.as_ref().to_string_lossy())
            .collect::<Vec<_>>()
            .join(" "),
        o.status,
        text(&o.stderr)
    );
    o
}

/// The byte offset of the `data` chunk's header in the RIFF/RF64 WAV `b`, found by walking
/// its chunks from byte 12 (each an id, a u32 size and the body padded to an even length;
/// RIFF/WAVE 1.0): WAV files carry `fact`, `ds64` or a `LIST` chunk before their samples.
pub fn wav_data_chunk_at(b: &[u8]) -> usize {
    let mut at = 12;
    while &b[at..at + 4] != b"data" {
        let size = u32::from_le_bytes(b[at + 4..at + 8].try_into().unwrap()) as usize;
        at += 8 + size + (size & 1);
    }
    at
}

/// Bytes (a program's stdout or stderr) as text, invalid UTF-8 replaced.
pub fn text(b: &[u8]) -> String {
    String::from_utf8_lossy(b).into_owned()
}

/// A test profile from its TOML text, which must parse (errors name the file `<test>`).
pub fn profile(text: &str) -> noisewright::profile::Profile {
    noisewright::profile::parse_profile(text, "<test>")
        .unwrap_or_else(|e| panic!("the test profile does not parse: {e}"))
}

/// Names in the folder `dir` other than the profiles (`*.toml`) and the names in `keep`,
/// sorted: what a run left there.
pub fn outputs(dir: &Path, keep: &[&str]) -> Vec<String> {
    let mut v: Vec<String> = std::fs::read_dir(dir)
        .unwrap_or_else(|e| panic!("cannot list {}: {e}", dir.display()))
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| !n.ends_with(".toml") && !keep.contains(&n.as_str()))
        .collect();
    v.sort();
    v
}

/// Writes `x` as raw little-endian f64 (the `.f64` sample format) to `path`.
pub fn write_f64(path: &Path, x: &[f64]) {
    let bytes: Vec<u8> = x.iter().flat_map(|v| v.to_le_bytes()).collect();
    std::fs::write(path, bytes).unwrap_or_else(|e| panic!("cannot write {}: {e}", path.display()));
}

/// The values of a raw little-endian f64 file (the `.f64` sample format).
pub fn read_f64(path: &Path) -> Vec<f64> {
    std::fs::read(path)
        .unwrap_or_else(|e| panic!("cannot read {}: {e}", path.display()))
        .chunks_exact(8)
        .map(|b| f64::from_le_bytes(b.try_into().unwrap()))
        .collect()
}

/// The JSON manifest written beside the output `path` (`path` + `.json`).
pub fn manifest(path: &Path) -> serde_json::Value {
    let mut p = path.as_os_str().to_owned();
    p.push(".json");
    let p = PathBuf::from(p);
    let bytes = std::fs::read(&p).unwrap_or_else(|e| panic!("cannot read {}: {e}", p.display()));
    serde_json::from_slice(&bytes).unwrap_or_else(|e| panic!("{} is not JSON: {e}", p.display()))
}

/// A white test profile: a 10 nV/√Hz floor in volts, band 10 Hz – 20 kHz with a brick-wall
/// (order 0) upper edge, sample rate 48 kHz.
pub const WHITE: &str = r#"
name = "cli white"
unit = "V"
sample_rate = "48 kHz"
[band]
low = "10 Hz"
high = "20 kHz"
order = 0
[[floor]]
density = "10 nV/rtHz"
"#;
