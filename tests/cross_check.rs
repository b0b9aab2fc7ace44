//! The binary's output checked against an independent reference library, SciPy (numpy 2.3.5,
//! scipy 1.16.3, the versions `.ci/run` installs), and against hound:
//!
//! * the density of a generated record, estimated by `scipy.signal.welch`, against the
//!   library's designed density, band by band with χ² intervals (references §3, Bonferroni
//!   over the bands as in §11), with negative controls 1 dB off;
//! * WAV files of every sample format read by `scipy.io.wavfile.read` and by hound, against
//!   the raw writer's codes for the same run and against the physical samples at the
//!   manifest's full scale (WAV layout: references §10).
//!
//! The binary is run as a user would run it; the designed density comes from the library
//! (`parse_profile` + `design_profile`) on the same profile text.

mod common;

use std::ffi::OsString;
use std::path::Path;

use common::{Scratch, bin, check_bands_against, chi2_band, db, manifest, read_f64};
use noisewright::analysis::welch::{BandEstimate, Spectrum, welch};
use noisewright::profile::parse_profile;
use noisewright::synth::design_profile;
use realfft::RealFftPlanner;

/// Fixed seed of every generated file in this test binary (printed in failure messages).
const SEED: u64 = 20_261_203;

/// Total false-failure probability of each statistical check (references §3 design value).
const P_FAIL: f64 = 1e-6;

/// The profile of the generated records. Invented demo scenario: an audio-rate bench
/// amplifier with a 10 nV/√Hz input floor, a 1/f rise below a 1 kHz corner and the thermal
/// noise of a 2.2 kΩ source at 25 °C; band 1 Hz to 20 kHz, second-order roll-off.
const PROFILE: &str = r#"
name = "cross-check bench amplifier"
unit = "V"
sample_rate = "48 kHz"

[band]
low = "1 Hz"
high = "20 kHz"
order = 2

[[floor]]
name = "input stage"
density = "10 nV/rtHz"
corner = "1 kHz"

[[resistor]]
name = "source"
resistance = "2.2 kOhm"
temperature = "25 C"
"#;

/// Sample rate of [`PROFILE`] in Hz.
const FS: f64 = 48_000.0;
/// Samples in the record whose density is checked.
const RECORD: usize = 1 << 22;
/// Welch segment length L: bins of fs/L = 2.93 Hz, K = 511 segments at 50 % overlap.
const SEG_LEN: usize = 1 << 14;
/// Lowest bin checked: bins below 3 sit in the Hann main lobe of DC (references §3).
const K_MIN: usize = 3;
/// Logarithmic bands per decade of frequency.
const BANDS_PER_DECADE: usize = 10;
/// Sub-bin grid of the Welch expectation: the kernel and the density are sampled every
/// 1/SUB_BINS of a bin.
const SUB_BINS: usize = 16;
/// Half width, in bins, of the Hann kernel kept in the Welch expectation.
const KERNEL_HALF_BINS: usize = 64;
/// Samples of each WAV file: odd, so the 3-byte i24 data chunk has odd length and needs the
/// RIFF pad byte (references §10, a rule marked from memory there).
const WAV_SAMPLES: usize = 20_001;

// ---------------------------------------------------------------------------------------------
// Plumbing: scratch folder, the binary, Python.

/// A scratch folder holding [`PROFILE`] as `profile.toml`.
fn scratch(tag: &str) -> Scratch {
    let s = Scratch::new(tag);
    s.file("profile.toml", PROFILE);
    s
}

/// Runs `noisewright generate PROFILE -o OUT --seed SEED --quiet EXTRA…` with OUT in the
/// scratch folder and returns the manifest written next to it (OUT.json).
fn generate(s: &Scratch, out: &str, extra: &[&str]) -> serde_json::Value {
    let o = bin()
        .arg("generate")
        .arg(s.path("profile.toml"))
        .arg("-o")
        .arg(s.path(out))
        .args(["--seed", &SEED.to_string(), "--quiet"])
        .args(extra)
        .output()
        .expect("the noisewright binary runs");
    assert!(
        o.status.success(),
        "generate -o {out} {extra:?} failed ({}): {} (seed {SEED})",
        o.status,
        String::from_utf8_lossy(&o.stderr)
    );
    manifest(&s.path(out))
}

/// Runs `tests/python/<script>` with `args` (see [`common::python_script`]).
fn python(script: &str, args: &[OsString]) -> Option<String> {
    common::python_script(script, args, &format!("seed {SEED}"))
}

// ---------------------------------------------------------------------------------------------
// The expected value of a Welch estimate of a known density.

/// The expected value of every bin k = 0..=L/2 of the Welch estimate (periodic Hann window,
/// segments of `seg_len` = L samples, any overlap, one-sided scaling of references §3) of
/// stationary noise with one-sided density `psd` (unit²/Hz on 0 ≤ f ≤ fs/2), in unit²/Hz.
///
/// Exact math: with the autocovariance written through the two-sided density
/// (Wiener–Khinchin, common practice), `E|X_k|² = ∫_period S₂(f)·|Ŵ(f − f_k)|² df`, where Ŵ is
/// the window's DTFT. In bins (ν = (f − f_k)/Δf) and with §3's scaling this is
/// `E[P_k] = (c_k/2)·∫ S(fold(f_k + νΔf))·K(ν) dν`, `K(ν) = |Ŵ(ν)|²/(L·Σw²)`, with c_k = 2
/// inside and 1 at DC and Nyquist, and fold mapping the periodic, even density onto
/// [0, fs/2]. Parseval gives `∫_period K dν = 1`. K is sampled exactly at ν = j/P by an FFT
/// of the window zero-padded to L·P, and the integral is the rectangle rule on that grid over
/// |ν| ≤ R bins; the kernel weight beyond R is asserted below 1e−9.
///
/// This differs from the density at the bin itself where the density is curved: the Hann
/// kernel's second moment is 1/3 bin² (computed from the kernel), so a 1/f density reads
/// about 1/(3k²) high at bin k.
fn welch_expectation(psd: &dyn Fn(f64) -> f64, seg_len: usize, fs: f64) -> Vec<f64> {
    let (p, r) = (SUB_BINS, KERNEL_HALF_BINS);
    let half = seg_len / 2;
    let n_fft = seg_len * p;
    let window: Vec<f64> = (0..seg_len)
        .map(|n| 0.5 - 0.5 * (2.0 * std::f64::consts::PI * n as f64 / seg_len as f64).cos())
        .collect();
    let power: f64 = window.iter().map(|w| w * w).sum();
    let fft = RealFftPlanner::<f64>::new().plan_fft_forward(n_fft);
    let mut input = fft.make_input_vec();
    input[..seg_len].copy_from_slice(&window);
    let mut spectrum = fft.make_output_vec();
    fft.process(&mut input, &mut spectrum).unwrap();
    // K at ν = j/P for j = 0..=R·P; K is even because the window is real.
    let kernel: Vec<f64> = spectrum[..=r * p]
        .iter()
        .map(|z| z.norm_sqr() / (seg_len as f64 * power))
        .collect();
    let kept = (kernel[0] + 2.0 * kernel[1..].iter().sum::<f64>()) / p as f64;
    assert!(
        (kept - 1.0).abs() < 1e-9,
        "Hann kernel weight within ±{r} bins is {kept}, expected 1 to 1e-9"
    );

    // The density every 1/P bin on [0, fs/2], and its even, periodic extension.
    let step = fs / n_fft as f64;
    let grid: Vec<f64> = (0..=half * p).map(|i| psd(i as f64 * step)).collect();
    let at = |i: isize| -> f64 {
        let i = i.rem_euclid(n_fft as isize) as usize;
        grid[if i > half * p { n_fft - i } else { i }]
    };
    (0..=half)
        .map(|k| {
            let centre = (k * p) as isize;
            let mut sum = kernel[0] * at(centre);
            for (j, kj) in kernel.iter().enumerate().skip(1) {
                sum += kj * (at(centre - j as isize) + at(centre + j as isize));
            }
            let edge = k == 0 || k == half;
            sum / p as f64 * if edge { 0.5 } else { 1.0 }
        })
        .collect()
}

/// The expected value of a band's `psd_mean` from the per-bin expectations: the bins' sum
/// divided by the band width in bins, the DC and Nyquist bins counting half (as
/// [`BandEstimate::psd_mean`] does).
fn band_expectation(expected_bins: &[f64], bins: &std::ops::Range<usize>) -> f64 {
    let nyquist = expected_bins.len() - 1;
    let halves = [0, nyquist].iter().filter(|e| bins.contains(e)).count();
    expected_bins[bins.clone()].iter().sum::<f64>() / (bins.len() as f64 - 0.5 * halves as f64)
}

/// Exact-math oracle for [`welch_expectation`]: the sampled first-order (OU) density of
/// references §2, `S(f) = (2σ²/fs)(1 − a²)/(1 − 2a cos(2πf/fs) + a²)`, has autocovariance
/// σ²a^|m|, so `E[P_k] = c_k/(fs Σw²) · Σ_{|m|<L} σ²a^|m| c_w[m] cos(2πkm/L)` with the window's
/// autocorrelation c_w. A 2 Hz corner is narrower than one 2.93 Hz bin, sharper than any
/// feature of the profile, so it exercises both the sub-bin grid and the kernel width.
#[test]
fn welch_expectation_matches_the_lag_sum_for_a_sampled_lorentzian() {
    use std::f64::consts::PI;
    let (sigma2, corner) = (1.0e-12, 2.0);
    let a = (-2.0 * PI * corner / FS).exp();
    let one_minus_a2 = -(-4.0 * PI * corner / FS).exp_m1();
    let psd = |f: f64| {
        2.0 * sigma2 / FS * one_minus_a2 / (1.0 - 2.0 * a * (2.0 * PI * f / FS).cos() + a * a)
    };
    let got = welch_expectation(&psd, SEG_LEN, FS);

    let l = SEG_LEN;
    let w: Vec<f64> = (0..l)
        .map(|n| 0.5 - 0.5 * (2.0 * PI * n as f64 / l as f64).cos())
        .collect();
    let power: f64 = w.iter().map(|v| v * v).sum();
    let c_w: Vec<f64> = (0..l)
        .map(|m| w[..l - m].iter().zip(&w[m..]).map(|(x, y)| x * y).sum())
        .collect();
    let exact = |k: usize| {
        let mut s = sigma2 * c_w[0];
        for (m, c) in c_w.iter().enumerate().skip(1) {
            let phase = 2.0 * PI * ((k * m) % l) as f64 / l as f64;
            s += 2.0 * sigma2 * a.powi(m as i32) * c * phase.cos();
        }
        let c_k = if k == 0 || k == l / 2 { 1.0 } else { 2.0 };
        c_k * s / (FS * power)
    };
    // Truncating the kernel at ±KERNEL_HALF_BINS drops the far sidelobe leakage of the peak
    // at DC (about 1e−9 of bin 100 here); the χ² intervals it serves are at least 1 % wide.
    let mut worst = 0.0f64;
    for k in (0..40).chain([100, 1000, 4095, 8000, l / 2]) {
        let (g, e) = (got[k], exact(k));
        worst = worst.max((g - e).abs() / e);
        assert!(
            (g - e).abs() <= 1e-7 * e,
            "bin {k}: kernel integral {g:e}, lag sum {e:e} (relative {:.2e})",
            (g - e).abs() / e
        );
    }
    // Where the density is curved the expectation is not the density at the bin: at bin 3
    // the Lorentzian tail ∝ 1/f² reads high by about (1/3)·S''/(2S) = 1/k² in bins.
    let bias = got[3] / psd(3.0 * FS / l as f64);
    println!(
        "kernel integral vs lag sum: worst relative {worst:.2e}; bin 3 reads {bias:.4}× the \
         density there"
    );
    assert!(
        bias > 1.05,
        "expected a visible leakage bias at bin 3, got {bias}"
    );
}

// ---------------------------------------------------------------------------------------------
// 1. The generated density, estimated by scipy.signal.welch, against the design.

/// How close the bands came to their intervals: the band using the largest fraction of its
/// allowed deviation in dB, as text.
fn worst_band(bands: &[BandEstimate], expected: &dyn Fn(&BandEstimate) -> f64) -> String {
    let p_band = P_FAIL / bands.len() as f64;
    let mut worst = (f64::NEG_INFINITY, String::new());
    for (i, b) in bands.iter().enumerate() {
        let ratio = b.psd_mean / expected(b);
        let (lo, hi) = chi2_band(b.dof, p_band);
        let used = if ratio < 1.0 {
            db(ratio) / db(lo)
        } else {
            db(ratio) / db(hi)
        };
        if used > worst.0 {
            worst = (
                used,
                format!(
                    "band {i} of {} ({:.1}..{:.1} Hz, bins {:?}, ν = {:.0}): {:+.4} dB, allowed \
                     {:+.4} / {:+.4} dB ({:.0} % of the allowed deviation)",
                    bands.len(),
                    b.f_lo_hz,
                    b.f_hi_hz,
                    b.bins,
                    b.dof,
                    db(ratio),
                    db(lo),
                    db(hi),
                    100.0 * used
                ),
            );
        }
    }
    worst.1
}

/// A record written by the binary as raw f64 volts has, in SciPy's Welch estimate, the
/// density the library designed: every logarithmic band from bin 3 up to Nyquist lies in its
/// χ² interval (references §3) at a total false-failure probability of 1e−6 (Bonferroni,
/// §11). SciPy's estimate equals ours to 1e−9 relative on this record. The same check must
/// reject the design scaled by ±1 dB.
#[test]
fn generated_density_matches_the_design_in_scipy_welch() {
    let s = scratch("density");
    let manifest = generate(
        &s,
        "record.raw",
        &[
            "--format",
            "raw",
            "--sample-format",
            "f64",
            "--samples",
            &RECORD.to_string(),
        ],
    );
    assert!(manifest["full_scale"].is_null(), "raw f64 holds volts");
    assert_eq!(manifest["samples"], RECORD as u64);
    let x = read_f64(&s.path("record.raw"));
    assert_eq!(x.len(), RECORD, "samples in record.raw (seed {SEED})");

    let ours = welch(&x, SEG_LEN, FS);
    assert_eq!(ours.segments, (RECORD - SEG_LEN) / (SEG_LEN / 2) + 1);
    let n_bins = SEG_LEN / 2 + 1;

    // SciPy's estimate of the same file (tests/python/welch_ref.py: periodic Hann, 50 %,
    // detrend=False, density scaling).
    let scipy_psd = python(
        "welch_ref.py",
        &[
            s.path("record.raw").into(),
            s.path("scipy.f64").into(),
            format!("{FS:?}").into(),
            SEG_LEN.to_string().into(),
            (SEG_LEN / 2).to_string().into(),
        ],
    )
    .map(|stdout| {
        println!("welch_ref.py: {}", stdout.trim());
        let both = read_f64(&s.path("scipy.f64"));
        assert_eq!(both.len(), 2 * n_bins, "SciPy output length");
        assert_eq!(
            ours.frequencies_hz,
            both[..n_bins],
            "bin frequencies differ from SciPy's (seed {SEED})"
        );
        let psd = both[n_bins..].to_vec();
        let (rel, k) = ours
            .psd
            .iter()
            .zip(&psd)
            .map(|(a, b)| (a - b).abs() / b.abs())
            .enumerate()
            .fold((0.0f64, 0usize), |w, (k, r)| {
                if r > w.0 || r.is_nan() { (r, k) } else { w }
            });
        println!("worst relative difference ours vs SciPy: {rel:.3e} at bin {k}");
        assert!(
            rel <= 1e-9,
            "bin {k} differs from SciPy by {rel:.3e} relative (ours {}, SciPy {}; seed {SEED})",
            ours.psd[k],
            psd[k]
        );
        psd
    });

    // The estimate under test: SciPy's densities with our Spectrum's bins and degrees of
    // freedom (same data, same segmentation), or ours when the reference is skipped.
    let mut estimate: Spectrum = ours.clone();
    let source = match scipy_psd {
        Some(psd) => {
            estimate.psd = psd;
            "SciPy"
        }
        None => "noisewright (SciPy skipped)",
    };

    let profile = parse_profile(PROFILE, "cross-check.toml").unwrap();
    let design = design_profile(&profile).unwrap();
    let expected_bins = welch_expectation(&|f| design.density(f), SEG_LEN, FS);

    let mut bands = estimate.log_bands(K_MIN, BANDS_PER_DECADE);
    // band_dof assumes a density flat over the band. For a sloped one, weight the bins by
    // their expectation: ν·(ΣE)²/(M·ΣE²) ≤ ν, exact for uncorrelated bins and close for
    // Hann's adjacent-bin correlation (common practice); it only widens the intervals.
    for b in &mut bands {
        let inner: Vec<f64> = b
            .bins
            .clone()
            .filter(|&k| k != 0 && k != n_bins - 1)
            .map(|k| expected_bins[k])
            .collect();
        let (sum, sum2) = inner
            .iter()
            .fold((0.0, 0.0), |(a, q), &e| (a + e, q + e * e));
        b.dof *= sum * sum / (inner.len() as f64 * sum2);
    }
    let expected_of = |b: &BandEstimate| band_expectation(&expected_bins, &b.bins);
    let lookup = |lo: f64, hi: f64| {
        let b = bands
            .iter()
            .find(|b| b.f_lo_hz == lo && b.f_hi_hz == hi)
            .expect("a band of this spectrum");
        expected_of(b)
    };

    // How far the kernel expectation is from the plain mean of the design over the bins.
    let leakage_db = bands
        .iter()
        .map(|b| {
            let plain = b
                .bins
                .clone()
                .map(|k| design.density(k as f64 * FS / SEG_LEN as f64));
            let plain = plain.sum::<f64>() / b.bins.len() as f64;
            db(expected_of(b) / plain)
        })
        .fold(0.0f64, |m, d| if d.abs() > m.abs() { d } else { m });
    println!(
        "{source}: {} log bands from {:.1} Hz, K = {} segments; largest Hann-leakage correction \
         vs the plain bin mean of the design {leakage_db:+.4} dB",
        bands.len(),
        bands[0].f_lo_hz,
        estimate.segments
    );
    println!("worst: {}", worst_band(&bands, &expected_of));

    if let Err(e) = check_bands_against(&bands, &lookup, P_FAIL, SEED) {
        panic!("{source} estimate vs designed density: {e}");
    }

    // Negative controls: a design 1 dB high or low is rejected.
    for off_db in [1.0, -1.0] {
        let gain = 10f64.powf(off_db / 10.0);
        let wrong = |lo: f64, hi: f64| gain * lookup(lo, hi);
        let err = check_bands_against(&bands, &wrong, P_FAIL, SEED).expect_err(&format!(
            "a design {off_db:+} dB off passed the χ² bands (seed {SEED})"
        ));
        assert!(err.contains(&format!("seed {SEED}")), "{err}");
        println!("negative control {off_db:+} dB rejected: {err}");
    }
}

// ---------------------------------------------------------------------------------------------
// 2. WAV files read by scipy.io.wavfile and by hound.

/// Samples as stored: integer codes or f32 values.
#[derive(Debug, Clone, PartialEq)]
enum Stored {
    Int(Vec<i32>),
    Float(Vec<f32>),
}

impl Stored {
    fn len(&self) -> usize {
        match self {
            Stored::Int(v) => v.len(),
            Stored::Float(v) => v.len(),
        }
    }

    /// Index and both values of the first sample that differs (f32 compared bit for bit).
    fn first_difference(&self, other: &Stored) -> Option<(usize, String, String)> {
        match (self, other) {
            (Stored::Int(a), Stored::Int(b)) => a
                .iter()
                .zip(b)
                .position(|(x, y)| x != y)
                .map(|i| (i, a[i].to_string(), b[i].to_string())),
            (Stored::Float(a), Stored::Float(b)) => a
                .iter()
                .zip(b)
                .position(|(x, y)| x.to_bits() != y.to_bits())
                .map(|i| (i, format!("{:e}", a[i]), format!("{:e}", b[i]))),
            _ => Some((0, "integers".into(), "floats".into())),
        }
    }
}

/// Asserts `got` (from `what`) holds exactly the samples of `want`.
fn assert_same(want: &Stored, got: &Stored, what: &str) {
    assert_eq!(want.len(), got.len(), "{what}: sample count (seed {SEED})");
    if let Some((i, a, b)) = want.first_difference(got) {
        panic!("{what}: sample {i} is {b}, expected {a} (seed {SEED})");
    }
}

/// One WAV sample format and how each reader reports it.
struct WavCase {
    /// `--sample-format` value and raw file extension.
    name: &'static str,
    /// Bits per sample in the file.
    bits: u16,
    /// The numpy dtype scipy.io.wavfile returns (its documentation's table: 24-bit PCM is
    /// returned as left-justified int32).
    scipy_dtype: &'static str,
}

const WAV_CASES: [WavCase; 4] = [
    WavCase {
        name: "i16",
        bits: 16,
        scipy_dtype: "int16",
    },
    WavCase {
        name: "i24",
        bits: 24,
        scipy_dtype: "int32",
    },
    WavCase {
        name: "i32",
        bits: 32,
        scipy_dtype: "int32",
    },
    WavCase {
        name: "f32",
        bits: 32,
        scipy_dtype: "float32",
    },
];

/// Decodes a raw file of `case`'s format (little-endian; i24 as 3 packed bytes).
fn read_raw(path: &Path, case: &WavCase) -> Stored {
    let b = std::fs::read(path).unwrap();
    match case.name {
        "i16" => Stored::Int(
            b.chunks_exact(2)
                .map(|c| i32::from(i16::from_le_bytes([c[0], c[1]])))
                .collect(),
        ),
        // Sign-extend the 3 bytes by placing them at the top of an i32.
        "i24" => Stored::Int(
            b.chunks_exact(3)
                .map(|c| i32::from_le_bytes([0, c[0], c[1], c[2]]) >> 8)
                .collect(),
        ),
        "i32" => Stored::Int(
            b.chunks_exact(4)
                .map(|c| i32::from_le_bytes(c.try_into().unwrap()))
                .collect(),
        ),
        "f32" => Stored::Float(
            b.chunks_exact(4)
                .map(|c| f32::from_le_bytes(c.try_into().unwrap()))
                .collect(),
        ),
        other => unreachable!("{other}"),
    }
}

/// Reads a WAV with hound, checking its spec against `case`; returns (rate Hz, samples).
fn read_hound(path: &Path, case: &WavCase) -> (u32, Stored) {
    let mut r = hound::WavReader::open(path).unwrap();
    let spec = r.spec();
    assert_eq!(spec.channels, 1, "{}: hound channels", case.name);
    assert_eq!(spec.bits_per_sample, case.bits, "{}: hound bits", case.name);
    let float = case.name == "f32";
    let want_kind = if float {
        hound::SampleFormat::Float
    } else {
        hound::SampleFormat::Int
    };
    assert_eq!(
        spec.sample_format, want_kind,
        "{}: hound sample format",
        case.name
    );
    let samples = if float {
        Stored::Float(r.samples::<f32>().map(|v| v.unwrap()).collect())
    } else {
        Stored::Int(r.samples::<i32>().map(|v| v.unwrap()).collect())
    };
    (spec.sample_rate, samples)
}

/// Decodes what wav_ref.py wrote for `case` (SciPy's dtype, little-endian), undoing SciPy's
/// left justification of 24-bit PCM: the low byte must be zero, the code is the rest.
fn read_scipy(path: &Path, case: &WavCase) -> Stored {
    let b = std::fs::read(path).unwrap();
    match case.scipy_dtype {
        "int16" => Stored::Int(
            b.chunks_exact(2)
                .map(|c| i32::from(i16::from_le_bytes([c[0], c[1]])))
                .collect(),
        ),
        "int32" => {
            let v: Vec<i32> = b
                .chunks_exact(4)
                .map(|c| i32::from_le_bytes(c.try_into().unwrap()))
                .collect();
            if case.bits == 24 {
                if let Some(i) = v.iter().position(|x| x & 0xFF != 0) {
                    panic!(
                        "SciPy's 24-bit sample {i} is {:#010x}: expected left-justified with a \
                         zero low byte (seed {SEED})",
                        v[i]
                    );
                }
                Stored::Int(v.into_iter().map(|x| x >> 8).collect())
            } else {
                Stored::Int(v)
            }
        }
        "float32" => Stored::Float(
            b.chunks_exact(4)
                .map(|c| f32::from_le_bytes(c.try_into().unwrap()))
                .collect(),
        ),
        other => unreachable!("{other}"),
    }
}

/// For every WAV sample format (i16, i24 with a pad byte, i32, f32): SciPy and hound read the
/// file's rate and length, and exactly the samples the raw writer stores for the same run
/// (codes equal, f32 bit for bit), without warnings. Those samples are the run's physical
/// samples at the manifest's full scale: `code = round(x/full_scale·(2^(b−1) − 1))` (the
/// sink's convention) to within one code, the one rounding of x/full_scale, and f32 to one ulp.
#[test]
fn wav_files_read_by_scipy_and_hound_hold_the_raw_writers_samples() {
    let s = scratch("wav");
    let n = WAV_SAMPLES.to_string();
    let physical_manifest = generate(
        &s,
        "physical.f64",
        &["--format", "raw", "--sample-format", "f64", "--samples", &n],
    );
    assert!(physical_manifest["full_scale"].is_null());
    let x = read_f64(&s.path("physical.f64"));
    assert_eq!(x.len(), WAV_SAMPLES);

    let mut args: Vec<OsString> = Vec::new();
    let mut cases = Vec::new();
    for case in &WAV_CASES {
        let level = [
            "--sample-format",
            case.name,
            "--samples",
            &n,
            "--level",
            "-20dBFS",
        ];
        let wav = format!("{}.wav", case.name);
        let raw = format!("same.{}", case.name);
        let wav_m = generate(&s, &wav, &level);
        let mut raw_args = vec!["--format", "raw"];
        raw_args.extend_from_slice(&level);
        let raw_m = generate(&s, &raw, &raw_args);
        assert_eq!(wav_m["format"], "wav");
        assert_eq!(raw_m["format"], "raw");
        for m in [&wav_m, &raw_m] {
            assert_eq!(m["sample_format"], case.name);
            assert_eq!(m["samples"], WAV_SAMPLES as u64);
            assert_eq!(
                m["clipped"], 0,
                "{}: clipped samples (seed {SEED})",
                case.name
            );
        }
        let full_scale = wav_m["full_scale"]
            .as_f64()
            .expect("a WAV has a full scale");
        assert_eq!(
            full_scale.to_bits(),
            raw_m["full_scale"].as_f64().unwrap().to_bits(),
            "{}: WAV and raw full scales differ",
            case.name
        );
        assert_eq!(wav_m["sample_rate_hz"], FS);

        let raw_samples = read_raw(&s.path(&raw), case);
        assert_eq!(raw_samples.len(), WAV_SAMPLES);

        // The samples are the physical run at this full scale.
        let code_max = match case.bits {
            16 => f64::from(i16::MAX),
            24 => f64::from((1 << 23) - 1),
            _ => f64::from(i32::MAX),
        };
        let mut peak = 0.0f64;
        let mut off_by_one = 0usize;
        for (i, &xi) in x.iter().enumerate() {
            let d = xi / full_scale;
            peak = peak.max(d.abs());
            match &raw_samples {
                Stored::Int(codes) => {
                    let want = (d * code_max).round();
                    let diff = (f64::from(codes[i]) - want).abs();
                    assert!(
                        diff <= 1.0,
                        "{}: sample {i} is code {}, physical {xi:e} V at full scale \
                         {full_scale:e} V gives {want} (seed {SEED})",
                        case.name,
                        codes[i]
                    );
                    off_by_one += usize::from(diff != 0.0);
                }
                Stored::Float(v) => {
                    let want = d as f32;
                    let ulps = (v[i].to_bits() as i64 - want.to_bits() as i64).abs();
                    assert!(
                        ulps <= 1,
                        "{}: sample {i} is {:e}, physical {xi:e} V / full scale {full_scale:e} \
                         V = {want:e} (seed {SEED})",
                        case.name,
                        v[i]
                    );
                    off_by_one += usize::from(ulps != 0);
                }
            }
        }
        // Not a trivial file: at −20 dBFS (AES17, references §9) the digital RMS is
        // 10^(−1)/√2 = 0.0707, and 20 001 Gaussian samples all within ±1 RMS has probability
        // 0.683^20001 (references §8 table), i.e. never.
        let rms = 0.1 / std::f64::consts::SQRT_2;
        assert!(
            peak > rms,
            "{}: peak |digital| {peak} not above the RMS level {rms} (seed {SEED})",
            case.name
        );

        let (rate, hound_samples) = read_hound(&s.path(&wav), case);
        assert_eq!(f64::from(rate), FS, "{}: hound rate", case.name);
        assert_same(
            &raw_samples,
            &hound_samples,
            &format!("{} WAV read by hound", case.name),
        );
        println!(
            "{}: full scale {full_scale:e} V, peak |digital| {peak:.4}, {off_by_one} of \
             {WAV_SAMPLES} samples one code/ulp from round(x/full_scale); hound agrees",
            case.name
        );

        args.push(s.path(&wav).into());
        args.push(s.path(&format!("{}.scipy", case.name)).into());
        cases.push((case, raw_samples));
    }

    let Some(stdout) = python("wav_ref.py", &args) else {
        return;
    };
    let mut lines = stdout.lines();
    for (case, raw_samples) in &cases {
        let line = lines.next().expect("one JSON line per WAV");
        let info: serde_json::Value = serde_json::from_str(line).unwrap();
        println!("scipy.io.wavfile {}: {line}", case.name);
        assert_eq!(info["rate"], FS as u64, "{}: SciPy rate", case.name);
        assert_eq!(
            info["dtype"], case.scipy_dtype,
            "{}: SciPy dtype",
            case.name
        );
        assert_eq!(
            info["shape"],
            serde_json::json!([WAV_SAMPLES]),
            "{}: SciPy shape",
            case.name
        );
        assert_eq!(
            info["warnings"],
            serde_json::json!([]),
            "{}: SciPy warned while reading (seed {SEED})",
            case.name
        );
        let scipy = read_scipy(&s.path(&format!("{}.scipy", case.name)), case);
        assert_same(
            raw_samples,
            &scipy,
            &format!("{} WAV read by scipy.io.wavfile", case.name),
        );
        let first = match &scipy {
            Stored::Int(v) => format!("{:?}", &v[..3]),
            Stored::Float(v) => format!("{:?}", &v[..3]),
        };
        println!(
            "{}: SciPy samples equal the raw writer's and hound's (first {first})",
            case.name
        );
    }
    println!("{}", lines.next().unwrap_or("").trim());
}
