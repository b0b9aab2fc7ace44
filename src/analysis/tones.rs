//! Known tones in a capture: their measured amplitude (a least-squares sine fit at the known
//! frequency) and the Welch bins their leakage covers, which a density comparison must leave
//! out.
//!
//! The fit is the IEEE Std 1057 / IEEE Std 1241 sine fit with known frequency (the
//! "three-parameter" fit, here joint over all tones: one DC term plus a cosine and a sine term
//! per tone), solved from its normal equations accumulated in one streaming pass. For white
//! noise of variance σ² over N samples, each fitted amplitude has a standard error
//! σ_A ≈ σ·√(2/N) (the cosine and sine coefficients each have variance 2σ²/N; common
//! least-squares result, e.g. IEEE Std 1057 annex on sine-fit uncertainty [from memory]).

use std::f64::consts::TAU;
use std::ops::Range;

use crate::analysis::welch::{BandEstimate, Spectrum};
use crate::profile::Tone;
use crate::synth::tone::cycle_fraction;

/// Streaming least-squares fit of sines at known frequencies plus a DC term.
#[derive(Debug, Clone)]
pub struct ToneFit {
    freqs_hz: Vec<f64>,
    sample_rate_hz: f64,
    index: u64,
    /// Normal matrix Σ bᵢbⱼ, basis b = (1, cos₀, sin₀, cos₁, sin₁, …).
    gram: Vec<Vec<f64>>,
    /// Σ x·bᵢ.
    rhs: Vec<f64>,
    basis: Vec<f64>,
}

/// One fitted tone.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FittedTone {
    /// Fitted peak amplitude in the capture's unit.
    pub peak: f64,
    /// Fitted phase φ in radians of peak·sin(2πfn/fs + φ) at sample 0 of the capture.
    pub phase_rad: f64,
}

impl ToneFit {
    /// A fit of tones at `freqs_hz` (Hz) in a stream at `sample_rate_hz`.
    pub fn new(freqs_hz: &[f64], sample_rate_hz: f64) -> ToneFit {
        let m = 1 + 2 * freqs_hz.len();
        ToneFit {
            freqs_hz: freqs_hz.to_vec(),
            sample_rate_hz,
            index: 0,
            gram: vec![vec![0.0; m]; m],
            rhs: vec![0.0; m],
            basis: vec![0.0; m],
        }
    }

    /// Feed the next samples (the capture's unit).
    pub fn push(&mut self, x: &[f64]) {
        let m = self.rhs.len();
        for &v in x {
            self.basis[0] = 1.0;
            for (i, &f) in self.freqs_hz.iter().enumerate() {
                let a = TAU * cycle_fraction(f, self.sample_rate_hz, self.index);
                self.basis[1 + 2 * i] = a.cos();
                self.basis[2 + 2 * i] = a.sin();
            }
            for i in 0..m {
                let bi = self.basis[i];
                self.rhs[i] += v * bi;
                for j in i..m {
                    self.gram[i][j] += bi * self.basis[j];
                }
            }
            self.index += 1;
        }
    }

    /// The fitted tones, in the order of the frequencies, and the fitted DC (unit); `None`
    /// when the normal equations are singular (too few samples).
    pub fn finish(&self) -> Option<(Vec<FittedTone>, f64)> {
        let m = self.rhs.len();
        let mut a: Vec<Vec<f64>> = (0..m)
            .map(|i| {
                let mut row: Vec<f64> = (0..m)
                    .map(|j| {
                        if j >= i {
                            self.gram[i][j]
                        } else {
                            self.gram[j][i]
                        }
                    })
                    .collect();
                row.push(self.rhs[i]);
                row
            })
            .collect();
        // Gaussian elimination with partial pivoting.
        for c in 0..m {
            let p = (c..m).max_by(|&r, &s| a[r][c].abs().total_cmp(&a[s][c].abs()))?;
            if a[p][c].abs() < 1e-12 * self.index.max(1) as f64 {
                return None;
            }
            a.swap(c, p);
            for r in 0..m {
                if r != c {
                    let k = a[r][c] / a[c][c];
                    let pivot = a[c].clone();
                    for (x, p) in a[r][c..].iter_mut().zip(&pivot[c..]) {
                        *x -= k * p;
                    }
                }
            }
        }
        let coef: Vec<f64> = (0..m).map(|i| a[i][m] / a[i][i]).collect();
        let tones = (0..self.freqs_hz.len())
            .map(|i| {
                // c·cos θ + s·sin θ = A·sin(θ + φ) with A cos φ = s, A sin φ = c.
                let (c, s) = (coef[1 + 2 * i], coef[2 + 2 * i]);
                FittedTone {
                    peak: c.hypot(s),
                    phase_rad: c.atan2(s),
                }
            })
            .collect();
        Some((tones, coef[0]))
    }
}

/// Hann (periodic) spectral power kernel, normalised to 1 at δ = 0, at a distance of δ bins:
/// `[sinc(δ)/(1 − δ²)]²` (F. J. Harris, Proc. IEEE 66(1), 1978, Hann window transform; the
/// large-L form). Its main lobe spans |δ| < 2.
pub fn hann_power_kernel(delta: f64) -> f64 {
    let d = delta.abs();
    if d < 1e-9 {
        return 1.0;
    }
    if (d - 1.0).abs() < 1e-9 {
        return 0.25;
    }
    let x = std::f64::consts::PI * d;
    let w = (x.sin() / x) / (1.0 - d * d);
    w * w
}

/// The Welch bins a tone's leakage reaches: its main lobe (±2 bins for Hann) widened to every
/// bin where the Hann sidelobe envelope `1/(π²δ²(δ²−1)²)` of the tone's density
/// `(A²/2)/(1.5·Δf)` (ENBW 1.5 bins) exceeds `fraction` of `noise_density(f)` (unit²/Hz), so
/// the comparison is biased by less than that fraction. Indices into `spectrum.psd`.
pub fn leakage_bins(
    frequency_hz: f64,
    power: f64,
    spectrum: &Spectrum,
    noise_density: &dyn Fn(f64) -> f64,
    fraction: f64,
) -> Range<usize> {
    let df = spectrum.sample_rate_hz / spectrum.seg_len as f64;
    let k0 = frequency_hz / df;
    let peak_density = power / (1.5 * df);
    let n = spectrum.psd.len();
    let reaches = |k: usize| {
        let d = (k as f64 - k0).abs();
        if d <= 2.0 {
            return true;
        }
        let env = 1.0 / (std::f64::consts::PI.powi(2) * d * d * (d * d - 1.0).powi(2));
        peak_density * env > fraction * noise_density((k as f64 * df).max(df))
    };
    let centre = (k0.round() as usize).min(n - 1);
    let mut lo = centre;
    while lo > 0 && reaches(lo - 1) {
        lo -= 1;
    }
    let mut hi = centre + 1;
    while hi < n && reaches(hi) {
        hi += 1;
    }
    lo..hi
}

/// `bins` with the `excluded` ranges removed, as the contiguous pieces that remain.
pub fn split_around(bins: Range<usize>, excluded: &[Range<usize>]) -> Vec<Range<usize>> {
    let mut pieces = vec![bins];
    for e in excluded {
        pieces = pieces
            .into_iter()
            .flat_map(|p| {
                let left = p.start..p.end.min(e.start);
                let right = p.start.max(e.end)..p.end;
                [left, right].into_iter().filter(|r| !r.is_empty())
            })
            .collect();
    }
    pieces
}

/// `bands` of `spectrum` with the Welch bins each of `tones` leaks into left out, as a
/// comparison with a profile needs them: per tone the bins of [`leakage_bins`] (its leakage
/// above `fraction` of `noise_density(f)`, f in Hz, unit²/Hz), each band split around them
/// ([`split_around`]) and every piece estimated again ([`Spectrum::band`]). Returns the bands
/// (edges in Hz, densities in unit²/Hz) and, per tone in order, its excluded bins (indices
/// into `spectrum.psd`). With no tones the bands come back as they are.
pub fn without_tones(
    bands: Vec<BandEstimate>,
    spectrum: &Spectrum,
    tones: &[Tone],
    noise_density: &dyn Fn(f64) -> f64,
    fraction: f64,
) -> (Vec<BandEstimate>, Vec<Range<usize>>) {
    if tones.is_empty() {
        return (bands, Vec::new());
    }
    let excluded: Vec<_> = tones
        .iter()
        .map(|t| leakage_bins(t.frequency_hz, t.power(), spectrum, noise_density, fraction))
        .collect();
    let bands = bands
        .iter()
        .flat_map(|b| split_around(b.bins.clone(), &excluded))
        .map(|r| spectrum.band(r))
        .collect();
    (bands, excluded)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_clean_sine_is_fitted_exactly() {
        let fs = 1000.0;
        let x: Vec<f64> = (0..4000)
            .map(|n| {
                0.5 + 2.0 * (TAU * 37.3 * n as f64 / fs + 0.4).sin()
                    + 0.1 * (TAU * 120.0 * n as f64 / fs).sin()
            })
            .collect();
        let mut f = ToneFit::new(&[37.3, 120.0], fs);
        f.push(&x[..1234]);
        f.push(&x[1234..]);
        let (t, dc) = f.finish().unwrap();
        assert!((t[0].peak - 2.0).abs() < 1e-9 && (t[0].phase_rad - 0.4).abs() < 1e-9);
        assert!((t[1].peak - 0.1).abs() < 1e-9 && t[1].phase_rad.abs() < 1e-8);
        assert!((dc - 0.5).abs() < 1e-9);
    }

    #[test]
    fn kernel_and_split() {
        assert!((hann_power_kernel(2.0)).abs() < 1e-30);
        assert!((hann_power_kernel(1.0) - 0.25).abs() < 1e-12);
        assert_eq!(split_around(3..20, &[5..8, 15..30]), vec![3..5, 8..15]);
    }
}
