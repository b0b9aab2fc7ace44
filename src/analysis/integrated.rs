//! Integrated noise of a capture: the RMS from a band's low edge up to each frequency, from
//! the Welch estimate's bins (common practice for reading how much of the RMS lies below a
//! frequency), with the same sum over a designed density for comparison.

use std::ops::Range;

use serde::Serialize;

use super::welch::Spectrum;
use crate::model::budget::{INTEGRATED_PER_DECADE, log_spaced};

/// The integrated noise of a capture over `[low_hz, high_hz]`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct IntegratedNoise {
    /// Upper ends of the sums in Hz, increasing, from just above `low_hz` to `high_hz`.
    pub frequency_hz: Vec<f64>,
    /// Measured RMS in the capture's unit from `low_hz` up to each frequency: √Σ S(f_k)·Δf
    /// over the bins in between, bins left out (tones, spurs, excluded spans) skipped.
    pub rms: Vec<f64>,
    /// The same sum over the designed density at the same bins, when there is a design.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub designed_rms: Option<Vec<f64>>,
    /// Lower edge in Hz.
    pub low_hz: f64,
    /// Upper edge in Hz.
    pub high_hz: f64,
}

/// The integrated noise of `spectrum` over `[low_hz, high_hz]` (Hz), leaving out the bins of
/// `left_out`; `designed` (unit²/Hz at f Hz) adds the designed curve summed over the same
/// bins. `None` when fewer than two bins fall inside.
pub fn integrated_noise(
    spectrum: &Spectrum,
    low_hz: f64,
    high_hz: f64,
    left_out: &[Range<usize>],
    designed: Option<&dyn Fn(f64) -> f64>,
) -> Option<IntegratedNoise> {
    let df = spectrum.bin_width_hz();
    let bins: Vec<usize> = (1..spectrum.psd.len())
        .filter(|&k| {
            let f = spectrum.frequencies_hz[k];
            f >= low_hz && f <= high_hz && !left_out.iter().any(|r| r.contains(&k))
        })
        .collect();
    if bins.len() < 2 {
        return None;
    }
    let first = spectrum.frequencies_hz[bins[0]];
    let grid = log_spaced(
        first,
        high_hz.max(first * (1.0 + 1e-9)),
        INTEGRATED_PER_DECADE,
    );
    let sums = |density: &dyn Fn(usize) -> f64| -> Vec<f64> {
        let (mut acc, mut i) = (0.0, 0);
        grid.iter()
            .map(|&f| {
                while i < bins.len() && spectrum.frequencies_hz[bins[i]] <= f * (1.0 + 1e-12) {
                    acc += density(bins[i]) * df;
                    i += 1;
                }
                acc.sqrt()
            })
            .collect()
    };
    let rms = sums(&|k| spectrum.psd[k]);
    let designed_rms = designed.map(|d| sums(&|k| d(spectrum.frequencies_hz[k])));
    Some(IntegratedNoise {
        frequency_hz: grid,
        rms,
        designed_rms,
        low_hz,
        high_hz,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::welch::welch;
    use rand::SeedableRng;
    use rand_distr::{Distribution, StandardNormal};

    // White noise of variance σ² sampled at fs has the one-sided density 2σ²/fs, so the RMS
    // integrated over [lo, hi] is σ·√(2(hi − lo)/fs) (definition of the one-sided density).
    // Each 2 Hz bin's estimate has ν ≈ 100 (K = 63 half-overlapped Hann segments), so the
    // sum over the band's 495 bins has a relative power spread of about √(2/ν/495) ≈ 0.6 %
    // (neighbouring Hann bins are correlated: allow twice that); 3 % on the RMS is beyond
    // eight standard errors.
    #[test]
    fn white_noise_integrates_to_its_band_power() {
        let seed = 11;
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(seed);
        let fs = 8000.0;
        let x: Vec<f64> = (0..128_000)
            .map(|_| StandardNormal.sample(&mut rng))
            .collect();
        let sp = welch(&x, 4000, fs);
        let i = integrated_noise(&sp, 10.0, 1000.0, &[], Some(&|_| 2.0 / fs)).unwrap();
        let want = (2.0 * (1000.0 - 10.0) / fs).sqrt();
        let got = *i.rms.last().unwrap();
        assert!(
            (got / want - 1.0).abs() < 0.03,
            "seed {seed}: {got} vs {want}"
        );
        let d = *i.designed_rms.as_ref().unwrap().last().unwrap();
        assert!((d / want - 1.0).abs() < 0.01, "designed sum {d} vs {want}");
        assert!(i.rms.windows(2).all(|w| w[1] >= w[0]));
        // Bins left out do not count: leaving out half of them halves the power.
        let half: Vec<Range<usize>> = (0..1000).map(|j| 2 * j..2 * j + 1).collect();
        let h = integrated_noise(&sp, 10.0, 1000.0, &half, None).unwrap();
        let ratio = (h.rms.last().unwrap() / got).powi(2);
        assert!((ratio - 0.5).abs() < 0.03, "seed {seed}: {ratio}");
    }
}
