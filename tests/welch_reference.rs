//! Welch estimates checked against independent references: SciPy's `signal.welch` (a
//! reference library), a naive O(n²) DFT periodogram (exact math), Parseval's theorem, and the
//! χ² statistics of references §3/§8 for white Gaussian noise.

mod common;

use common::{Scratch, check_bands_against, chi2_band, db, read_f64, variance_bounds, write_f64};
use noisewright::analysis::welch::{BandEstimate, Spectrum, Welch, welch};
use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::StandardNormal;

/// Fixed seed for every random record in this file (printed in failure messages).
const SEED: u64 = 20_261_202;

/// One-sided false-failure budget per statistical assertion (references §3 design value).
const P_FAIL: f64 = 1e-6;

fn gaussian(n: usize, sigma: f64, seed: u64) -> Vec<f64> {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    (0..n)
        .map(|_| sigma * rng.sample::<f64, _>(StandardNormal))
        .collect()
}

/// A non-white demo record: AR(1) noise (pole 0.9), a tone between bins and a DC offset, so a
/// mismatch in detrending, windowing or scaling would show.
fn coloured_with_tone(n: usize, fs: f64, seed: u64) -> Vec<f64> {
    let e = gaussian(n, 1.0, seed);
    let mut state = 0.0;
    e.iter()
        .enumerate()
        .map(|(i, &e)| {
            state = 0.9 * state + e;
            let t = i as f64 / fs;
            state + 3.0 * (2.0 * std::f64::consts::PI * 1234.5 * t + 0.4).sin() + 0.25
        })
        .collect()
}

// ---------------------------------------------------------------------------------------------
// The helpers in tests/common.

/// Values of references §3's table (Hann 50 %, ν = 36K²/(19K−1), two-sided 1e−6), to the
/// rounding of the table (±half its last digit).
#[test]
fn chi2_band_reproduces_reference_table() {
    let nu = |k: f64| 36.0 * k * k / (19.0 * k - 1.0);
    let cases = [
        // (K, p, lower dB, upper dB, tolerance dB)
        (16.0, 1e-6, -7.0, 4.5, 0.05),
        (16.0, 1e-6 / 1000.0, -9.3, 5.4, 0.05),
        (256.0, 1e-6, -1.45, 1.3, 0.05),
        (1024.0, 1e-6, -0.70, 0.66, 0.005),
        (4096.0, 1e-6 / 1000.0, -0.43, 0.42, 0.005),
    ];
    for (k, p, lo_db, hi_db, tol) in cases {
        let (lo, hi) = chi2_band(nu(k), p);
        assert!(
            (db(lo) - lo_db).abs() <= tol && (db(hi) - hi_db).abs() <= tol,
            "K={k}, p={p}: got {:.3}/{:.3} dB, table {lo_db}/{hi_db}",
            db(lo),
            db(hi)
        );
    }
    // ν = 485 exactly as quoted in the table's K = 256 row, lower edge given to 0.01 dB.
    let (lo, _) = chi2_band(485.0, 1e-6);
    assert!((db(lo) + 1.45).abs() <= 0.005, "{}", db(lo));
}

/// References §8: rms of n = 1e4 samples within ±3.5 %, n = 1e6 within ±0.35 % at 1e−6.
#[test]
fn variance_bounds_reproduce_rms_rule() {
    for (n, pct) in [(1e4, 3.5), (1e6, 0.35)] {
        let (lo, hi) = variance_bounds(n, 1e-6);
        let widest = (1.0 - lo.sqrt()).max(hi.sqrt() - 1.0) * 100.0;
        // The table rounds to two significant digits.
        assert!(
            (widest - pct).abs() <= 0.05 * pct / 3.5,
            "n={n}: ±{widest:.4} %, table ±{pct} %"
        );
    }
}

#[test]
fn check_bands_accepts_truth_and_reports_the_worst_band_otherwise() {
    let (sigma, fs) = (0.5, 1000.0);
    let s = welch(&gaussian(65 * 256, sigma, SEED), 512, fs);
    assert_eq!(s.segments, 64);
    let truth = 2.0 * sigma * sigma / fs;
    let bands = s.bands(3, 8);
    check_bands_against(&bands, &|_, _| truth, P_FAIL, SEED).unwrap();
    // 3 dB off is far outside the −1.4/+1.2 dB interval of K=64, M=8 (§3 table).
    let err = check_bands_against(&bands, &|_, _| 2.0 * truth, P_FAIL, SEED).unwrap_err();
    assert!(err.contains(&format!("seed {SEED}")), "{err}");
    assert!(err.contains("measured/expected = -"), "{err}");
    assert!(err.contains(&format!("{} of {} bands", bands.len(), bands.len())));
}

// ---------------------------------------------------------------------------------------------
// SciPy reference.

/// `scipy.signal.welch` of `x` (frequencies, density), or None when skipped.
fn scipy_welch(
    x: &[f64],
    fs: f64,
    seg_len: usize,
    noverlap: usize,
    tag: &str,
) -> Option<(Vec<f64>, Vec<f64>)> {
    let s = Scratch::new(tag);
    let (input, output) = (s.path("in.f64"), s.path("out.f64"));
    write_f64(&input, x);
    let args: Vec<std::ffi::OsString> = vec![
        input.into(),
        output.clone().into(),
        format!("{fs:?}").into(),
        seg_len.to_string().into(),
        noverlap.to_string().into(),
    ];
    let stdout = common::python_script("welch_ref.py", &args, &format!("seed {SEED}"))?;
    println!("{tag}: {}", stdout.trim());
    let both = read_f64(&output);
    let n = seg_len / 2 + 1;
    assert_eq!(both.len(), 2 * n, "reference output length");
    Some((both[..n].to_vec(), both[n..].to_vec()))
}

/// Ours equals SciPy's: frequencies bit for bit, densities to 1e−9 relative at every bin.
/// Returns the worst relative difference.
fn assert_matches_scipy(ours: &Spectrum, x: &[f64], noverlap: usize, tag: &str) -> Option<f64> {
    let (freqs, psd) = scipy_welch(x, ours.sample_rate_hz, ours.seg_len, noverlap, tag)?;
    assert_eq!(
        ours.frequencies_hz, freqs,
        "{tag}: frequencies (seed {SEED})"
    );
    let mut worst = (0.0f64, 0usize);
    for (k, (a, b)) in ours.psd.iter().zip(&psd).enumerate() {
        let rel = (a - b).abs() / b.abs();
        if rel > worst.0 || rel.is_nan() {
            worst = (rel, k);
        }
    }
    println!(
        "{tag}: worst relative difference to SciPy {:.3e} at bin {}",
        worst.0, worst.1
    );
    assert!(
        worst.0 <= 1e-9,
        "{tag}: bin {} differs from SciPy by {:.3e} relative (ours {}, SciPy {}; seed {SEED})",
        worst.1,
        worst.0,
        ours.psd[worst.1],
        psd[worst.1]
    );
    Some(worst.0)
}

#[test]
fn white_noise_matches_scipy() {
    let x = gaussian(40 * 256 + 100, 1.0, SEED);
    let ours = welch(&x, 256, 1000.0);
    assert_matches_scipy(&ours, &x, 128, "white-L256");
}

#[test]
fn coloured_noise_with_tone_and_offset_matches_scipy_when_streamed() {
    let fs = 48_000.0;
    let x = coloured_with_tone(200_000, fs, SEED + 1);
    let mut w = Welch::new(1000, 500, fs);
    for chunk in x.chunks(777) {
        w.push(chunk);
    }
    let ours = w.finish();
    assert_eq!(ours.segments, (200_000 - 1000) / 500 + 1);
    assert_matches_scipy(&ours, &x, 500, "ar1-tone-L1000");
}

#[test]
fn other_overlaps_match_scipy() {
    let fs = 10_000.0;
    let x = coloured_with_tone(50_000, fs, SEED + 2);
    for (seg_len, hop) in [(512, 128), (512, 512), (300, 200)] {
        let mut w = Welch::new(seg_len, hop, fs);
        w.push(&x);
        let ours = w.finish();
        assert_matches_scipy(&ours, &x, seg_len - hop, &format!("ar1-L{seg_len}-D{hop}"));
    }
}

// ---------------------------------------------------------------------------------------------
// Exact-math oracles.

/// A naive O(L²) DFT periodogram with the references §3 formula, averaged over segments.
fn naive_welch(x: &[f64], seg_len: usize, hop: usize, fs: f64) -> Vec<f64> {
    use std::f64::consts::PI;
    let w: Vec<f64> = (0..seg_len)
        .map(|n| 0.5 - 0.5 * (2.0 * PI * n as f64 / seg_len as f64).cos())
        .collect();
    let w2: f64 = w.iter().map(|v| v * v).sum();
    let segments = (x.len() - seg_len) / hop + 1;
    let mut out = vec![0.0; seg_len / 2 + 1];
    for s in 0..segments {
        let seg = &x[s * hop..s * hop + seg_len];
        for (k, o) in out.iter_mut().enumerate() {
            let (mut re, mut im) = (0.0, 0.0);
            for n in 0..seg_len {
                let phase = 2.0 * PI * ((k * n) % seg_len) as f64 / seg_len as f64;
                re += w[n] * seg[n] * phase.cos();
                im -= w[n] * seg[n] * phase.sin();
            }
            let c = if k == 0 || k == seg_len / 2 { 1.0 } else { 2.0 };
            *o += c * (re * re + im * im) / (fs * w2);
        }
    }
    out.iter().map(|p| p / segments as f64).collect()
}

#[test]
fn naive_dft_periodogram_equals_welch() {
    for (seg_len, hop, n) in [
        (64, 32, 64 * 4 + 17),
        (50, 20, 333),
        (16, 16, 100),
        (8, 3, 40),
    ] {
        let x = gaussian(n, 2.0, SEED + seg_len as u64);
        let mut w = Welch::new(seg_len, hop, 250.0);
        w.push(&x);
        let ours = w.finish();
        let reference = naive_welch(&x, seg_len, hop, 250.0);
        for (k, (a, b)) in ours.psd.iter().zip(&reference).enumerate() {
            assert!(
                (a - b).abs() <= 1e-12 * b.abs(),
                "L={seg_len} D={hop} bin {k}: welch {a}, naive DFT {b} (seed {})",
                SEED + seg_len as u64
            );
        }
    }
}

/// Parseval: Σ psd·Δf equals the window-weighted mean square exactly; for white noise of
/// variance σ² that weighted mean lies within its χ² interval (references §8, with the
/// effective count (Σa)²/Σa² of the weights a_n).
#[test]
fn total_power_obeys_parseval_and_matches_variance() {
    let (seg_len, hop, fs, sigma) = (512usize, 256usize, 1000.0, 0.8);
    let x = gaussian(300 * hop + 123, sigma, SEED + 3);
    let mut w = Welch::new(seg_len, hop, fs);
    w.push(&x);
    let s = w.finish();
    let total: f64 = s.psd.iter().sum::<f64>() * s.bin_width_hz();

    let win: Vec<f64> = (0..seg_len)
        .map(|n| 0.5 - 0.5 * (2.0 * std::f64::consts::PI * n as f64 / seg_len as f64).cos())
        .collect();
    let mut weight = vec![0.0; x.len()];
    for seg in 0..s.segments {
        for (n, wn) in win.iter().enumerate() {
            weight[seg * hop + n] += wn * wn;
        }
    }
    let sum_a: f64 = weight.iter().sum();
    let weighted_ms = weight.iter().zip(&x).map(|(a, v)| a * v * v).sum::<f64>() / sum_a;
    assert!(
        (total - weighted_ms).abs() <= 1e-12 * weighted_ms,
        "Σ psd·Δf = {total}, weighted mean square {weighted_ms}"
    );

    let n_eff = sum_a * sum_a / weight.iter().map(|a| a * a).sum::<f64>();
    let (lo, hi) = chi2_band(n_eff, P_FAIL);
    let ratio = total / (sigma * sigma);
    assert!(
        (lo..=hi).contains(&ratio),
        "Σ psd·Δf / σ² = {ratio}, allowed [{lo}, {hi}] (n_eff {n_eff:.0}, seed {})",
        SEED + 3
    );
}

// ---------------------------------------------------------------------------------------------
// Statistics of the estimate for white Gaussian noise.

/// White noise of variance σ² has one-sided density 2σ²/fs (references, conventions). Every
/// bin, every 8-bin band and every log band must fall in its χ² interval (§3), each family at
/// a total false-failure probability of 1e−6.
#[test]
fn white_noise_density_lies_in_chi2_bands() {
    let (seg_len, fs, sigma) = (1024usize, 1000.0, 1.3);
    let x = gaussian(257 * seg_len / 2, sigma, SEED + 4);
    let s = welch(&x, seg_len, fs);
    assert_eq!(s.segments, 256);
    let truth = 2.0 * sigma * sigma / fs;
    let flat = |_: f64, _: f64| truth;
    for (what, bands) in [
        ("bins", s.bands(0, 1)),
        ("8-bin bands", s.bands(3, 8)),
        ("log bands", s.log_bands(1, 10)),
    ] {
        if let Err(e) = check_bands_against(&bands, &flat, P_FAIL, SEED + 4) {
            panic!("{what}: {e}");
        }
    }
}

/// The equivalent degrees of freedom of bins and bands (K = 16, Hann 50 %, L = 64) agree with
/// a Monte Carlo over R independent records: R·s²/(2/ν) for the known mean is ≈ χ² with
/// 2R/(2 + κ) degrees of freedom, κ = 12/ν the excess kurtosis of χ²_ν/ν (common practice
/// moment matching). Cases: an interior bin, the DC bin, an interior 8-bin band (references
/// §3: 134 predicted by its closed form, 132 simulated) and 8-bin bands holding DC and
/// Nyquist. The 1e−6 budget is split over the cases.
#[test]
fn equivalent_dof_agrees_with_monte_carlo() {
    let (seg_len, segments, records) = (64usize, 16usize, 40_000usize);
    let n = seg_len + (segments - 1) * seg_len / 2;
    let cases: [(&str, std::ops::Range<usize>); 5] = [
        ("bin 9", 9..10),
        ("DC bin", 0..1),
        ("band 4..12", 4..12),
        ("band 0..8", 0..8),
        ("band 25..33", 25..33),
    ];
    let mut rng = ChaCha8Rng::seed_from_u64(SEED + 5);
    let mut w = Welch::new(seg_len, seg_len / 2, 1.0);
    let mut x = vec![0.0; n];
    let mut dev2 = [0.0f64; 5];
    let mut predicted = [0.0f64; 5];
    for r in 0..records {
        for v in x.iter_mut() {
            *v = rng.sample(StandardNormal);
        }
        w.reset();
        w.push(&x);
        let s = w.finish();
        for (i, (_, bins)) in cases.iter().enumerate() {
            let band: &BandEstimate = &s.bands(bins.start, bins.len())[0];
            assert_eq!(&band.bins, bins);
            if r == 0 {
                predicted[i] = band.dof;
            }
            // White N(0,1) at fs = 1 Hz has one-sided density 2 u²/Hz.
            dev2[i] += (band.psd_mean / 2.0 - 1.0).powi(2);
        }
    }
    for (((what, _), d), nu) in cases.iter().zip(dev2).zip(predicted) {
        let var = d / records as f64;
        let nu_mc = 2.0 / var;
        let dof_of_var = 2.0 * records as f64 / (2.0 + 12.0 / nu);
        let (lo, hi) = chi2_band(dof_of_var, P_FAIL / cases.len() as f64);
        let ratio = var / (2.0 / nu);
        println!("{what}: predicted ν = {nu:.2}, Monte Carlo ν = {nu_mc:.2}");
        assert!(
            (lo..=hi).contains(&ratio),
            "{what}: predicted ν = {nu:.2}, Monte Carlo ν = {nu_mc:.2} over {records} records; \
             variance ratio {ratio:.4} outside [{lo:.4}, {hi:.4}] (seed {})",
            SEED + 5
        );
    }
}
