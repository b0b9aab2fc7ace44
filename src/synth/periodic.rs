//! The periodic (loop) buffer: one inverse FFT of a random spectrum.
//!
//! For every Fourier frequency `f_k = k·fs/n` the real and imaginary parts are independent
//! Gaussians scaled to the target density (J. Timmer, M. König, "On generating power law
//! noise", Astron. Astrophys. 300, 707–710, 1995), so amplitudes as well as phases are random.
//! The buffer is exactly one period of a periodic process: played in a loop, its end joins
//! its start with no step. It is held in memory whole, so its length is capped.

use rand::RngExt;
use rand_distr::StandardNormal;
use rustfft::FftPlannerScalar;
use rustfft::num_complex::Complex;

use super::white::{Domain, WhiteStreams};
use crate::error::{Error, Result, Setting};
use crate::stop::Stop;

/// Longest loop buffer, in samples (2^24: 256 MiB of working memory).
pub const MAX_PERIODIC_SAMPLES: usize = 1 << 24;

/// The variance (unit²) of a loop buffer of `len` samples at `sample_rate_hz` for a one-sided
/// `target` density in unit²/Hz: Σ S(f_k)·Δf over the Fourier frequencies, half weight at
/// Nyquist, no DC.
pub fn periodic_variance(target: &dyn Fn(f64) -> f64, sample_rate_hz: f64, len: usize) -> f64 {
    let df = sample_rate_hz / len as f64;
    (1..=len / 2)
        .map(|k| {
            let w = if 2 * k == len { 0.5 } else { 1.0 };
            w * target(k as f64 * df) * df
        })
        .sum()
}

/// A loop buffer of `len` samples (unit) whose line spectrum follows `target` (unit²/Hz,
/// one-sided) at the Fourier frequencies, drawn from `seed`. The mean is exactly zero.
pub fn periodic_buffer(
    target: &dyn Fn(f64) -> f64,
    sample_rate_hz: f64,
    len: usize,
    seed: u64,
) -> Result<Vec<f64>> {
    periodic_buffer_until(target, sample_rate_hz, len, seed, Stop::default())
}

/// [`periodic_buffer`], polling `stop` every 65 536 frequencies.
pub(crate) fn periodic_buffer_until(
    target: &dyn Fn(f64) -> f64,
    sample_rate_hz: f64,
    len: usize,
    seed: u64,
    stop: Stop<'_>,
) -> Result<Vec<f64>> {
    if !(2..=MAX_PERIODIC_SAMPLES).contains(&len) {
        return Err(Error::setting(
            Setting::Loop,
            format!(
                "a loop buffer holds 2 to {MAX_PERIODIC_SAMPLES} samples (it is made in memory \
                 in one piece); {len} were asked for: choose a shorter \u{1}duration\u{1}"
            ),
        ));
    }
    let df = sample_rate_hz / len as f64;
    let mut rng =
        WhiteStreams::new(seed).generator(WhiteStreams::stream_id(Domain::Periodic, 0, 0));
    let mut spec = vec![Complex::new(0.0, 0.0); len];
    for k in 1..=len / 2 {
        if k % 65_536 == 0 {
            stop.check()?;
        }
        let s = target(k as f64 * df);
        let a: f64 = rng.sample(StandardNormal);
        let b: f64 = rng.sample(StandardNormal);
        if 2 * k == len {
            // Nyquist of an even length: real, carries S·Δf/2.
            spec[k] = Complex::new(a * (s * df / 2.0).sqrt(), 0.0);
        } else {
            // Bins k and n−k together carry S·Δf: each part has variance S·Δf/4.
            let sigma = 0.5 * (s * df).sqrt();
            spec[k] = Complex::new(a * sigma, b * sigma);
            spec[len - k] = spec[k].conj();
        }
    }
    FftPlannerScalar::new()
        .plan_fft_inverse(len)
        .process(&mut spec);
    Ok(spec.into_iter().map(|c| c.re).collect())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn short_buffers_by_hand() {
        // n = 2: only the Nyquist bin, x = [X, −X] with X ~ N(0, S·Δf/2).
        let x = periodic_buffer(&|_| 2.0, 4.0, 2, 9).unwrap();
        assert_eq!(x.len(), 2);
        assert!((x[0] + x[1]).abs() < 1e-15);
        // n = 4: bins 1 (complex) and 2 (real); the mean is zero.
        let x = periodic_buffer(&|_| 1.0, 4.0, 4, 9).unwrap();
        assert!(x.iter().sum::<f64>().abs() < 1e-12);
    }

    #[test]
    fn variance_matches_line_spectrum() {
        // Mean over many seeds of the buffer variance equals Σ S Δf (χ² with 2 per bin).
        let target = |f: f64| 1e-6 * (1.0 + 10.0 / f);
        let (fs, n) = (1000.0, 4096);
        let expected = periodic_variance(&target, fs, n);
        let seeds = 200;
        let mut mean = 0.0;
        for seed in 0..seeds {
            let x = periodic_buffer(&target, fs, n, seed).unwrap();
            mean += x.iter().map(|v| v * v).sum::<f64>() / n as f64;
        }
        mean /= seeds as f64;
        // Each buffer's variance is a weighted sum of χ²₂ terms: var = Σ (S_k Δf)² over k.
        let df = fs / n as f64;
        let sd: f64 = (1..n / 2)
            .map(|k| (target(k as f64 * df) * df).powi(2))
            .sum::<f64>()
            .sqrt()
            / (seeds as f64).sqrt();
        assert!(
            (mean - expected).abs() < 5.0 * sd,
            "seeds 0..{seeds}: mean {mean} expected {expected} ± {sd}"
        );
    }
}
