//! The multirate design: which filters the streaming shaper runs, and the density they make.
//!
//! The band from DC to fs/2 is split over a pyramid of levels. Level `j` runs at
//! `fs_j = fs / RATIO^j` and owns the part of the target density given by a smooth
//! partition-of-unity weight `w_j(f)` (a raised cosine in log f), which is non-zero only on
//! `[CROSS_LO/RATIO, CROSS_HI] · fs_j` — about three octaves. Level `j` filters its own white
//! input with a linear-phase FIR `F_j`, adds the output of level `j+1` interpolated by `RATIO`
//! through a Kaiser-windowed sinc `G` (≈145 dB image rejection), and hands the sum up.
//!
//! Each level's FIR is as short as the accuracy of its share allows: the lengths in
//! [`SHAPER_LENGTHS`] are tried from the shortest, and the first whose realised share stays
//! within [`SHARE_TOLERANCE`] of the whole target (or [`LEAK_FLOOR`] of the level's peak
//! where the target is tiny) is kept: the crossovers ask for about 1023 taps, a level that
//! holds a brick-wall band edge or a sharp table corner for the longest.
//!
//! The designed density is exact: with `A_F`, `A_G` the zero-phase amplitude responses,
//!
//! `D_j(f) = (2/fs_j)·A_F(f)² + (A_G(f)²/RATIO²)·D_{j+1}(fold(f))`,
//!
//! where `fold` maps `f` into `[0, fs_{j+1}/2]` (the images of the interpolated level are
//! included, not dropped). Its integral is computed exactly from autocorrelations.

use std::f64::consts::PI;
use std::sync::{Mutex, OnceLock, PoisonError};

use rayon::prelude::*;

use rustfft::FftPlannerScalar;
use rustfft::num_complex::Complex;

use crate::error::{Error, Result};
use crate::stop::Stop;

/// Rate ratio between adjacent pyramid levels.
pub const RATIO: usize = 4;
/// The shaping FIR lengths a level may get (odd: linear phase, integer delay), shortest first.
pub const SHAPER_LENGTHS: [usize; 6] = [255, 511, 1023, 2047, 4095, 8191];
/// Length of the interpolation filter.
pub const INTERP_TAPS: usize = 159;
/// Kaiser β of the shaping FIR window (sidelobes ≈ −90 dB).
const SHAPER_BETA: f64 = 9.0;
/// Kaiser β of the interpolator window (stopband ≈ −145 dB).
const INTERP_BETA: f64 = 15.0;
/// Crossover between adjacent levels, as fractions of the upper level's rate fs_j:
/// below `CROSS_LO·fs_j` a level hands everything down; above `CROSS_HI·fs_j` it keeps it.
const CROSS_LO: f64 = 0.15;
const CROSS_HI: f64 = 0.35;
/// The deepest level is the first one at which band.low is at least this fraction of its
/// rate: band.low then lies in `[LOW_EDGE_MIN, RATIO·LOW_EDGE_MIN) · fs_J`, below
/// `CROSS_LO·fs_J`, where the deepest level alone makes the density, with its finest FIR.
const LOW_EDGE_MIN: f64 = CROSS_LO / RATIO as f64;
/// Finest frequency-sampling grid used to design a shaping FIR (points per period): eight
/// per tap of the longest.
const MAX_GRID: usize = 1 << 16;
/// Deepest pyramid allowed: band.low / fs down to LOW_EDGE_MIN / 4^23 ≈ 5.3e-16.
const MAX_LEVELS: usize = 24;
// Every profile the schema accepts (band.low / fs ≥ MIN_LOW_TO_RATE) fits in the pyramid.
const _: () = assert!(
    crate::profile::MIN_LOW_TO_RATE * (1u128 << (2 * (MAX_LEVELS - 1))) as f64 >= LOW_EDGE_MIN
);
/// Lags of the exact autocorrelation recursion; enough for INTERP_TAPS / (RATIO − 1).
const ACF_LAGS: usize = 60;
const _: () = assert!(ACF_LAGS * (RATIO - 1) >= INTERP_TAPS);
/// Largest error of a level's realised share, relative to the whole target at the same
/// frequency, that lets a shorter FIR be kept (1.15e-3 ≈ 0.005 dB: two levels share any
/// frequency, so the sum stays within 0.01 dB).
pub const SHARE_TOLERANCE: f64 = 1.15e-3;
/// Where the target is zero or tiny, the largest error of the realised share, relative to the
/// level's largest share (−80 dB: beyond a brick-wall edge's guard the density is at least
/// that far below the level's peak, within the 60 dB an edge promises).
pub const LEAK_FLOOR: f64 = 1e-8;

/// One pyramid level's filters.
#[derive(Debug, Clone)]
pub struct Level {
    /// Sample rate of this level in Hz.
    pub rate_hz: f64,
    /// Shaping FIR taps (odd length, one of [`SHAPER_LENGTHS`], symmetric); they scale
    /// unit-variance white noise to the level's share of the target, in the target's unit.
    pub taps: Vec<f64>,
    /// False when the level's share of the target is zero everywhere (no white input drawn).
    pub active: bool,
    /// Complex FFT length of this level's overlap-save blocks, in samples (see
    /// [`Level::fft_len`]).
    fft_len: usize,
}

impl Level {
    /// Input samples each overlap-save block of this level shares with the one before: its
    /// FIR length + 1 (≥ the interpolator's), a power of two.
    pub fn history(&self) -> usize {
        self.taps.len() + 1
    }

    /// New input samples per overlap-save block: [`Level::fft_len`] − [`Level::history`].
    pub fn hop(&self) -> usize {
        self.fft_len() - self.history()
    }

    /// Complex FFT length of this level's overlap-save blocks, in samples. The top two
    /// levels make most of the samples and get the length cheapest per sample: 16 histories
    /// for the short FIRs, 8 for the long ones (at least 4096); deeper levels make few
    /// samples in any run, where what counts is the first batch every run computes, so they
    /// get 2 histories (at least 4096).
    pub fn fft_len(&self) -> usize {
        self.fft_len
    }
}

/// A brick-wall edge's transition band (Hz, low end first): where the design does not hold
/// a level's share to [`SHARE_TOLERANCE`].
pub type Guard = (f64, f64);

/// The complete design of the streaming shaper for one target density.
#[derive(Debug, Clone)]
pub struct Design {
    sample_rate_hz: f64,
    levels: Vec<Level>,
    interp: Vec<f64>,
    /// [`Design::variance`], computed on first use (unit²): a run asks for it several times.
    variance: OnceLock<f64>,
}

impl Design {
    /// Design the pyramid for `target`, a one-sided power density in unit²/Hz defined for
    /// `0 ≤ f ≤ sample_rate_hz/2` (it must be finite and ≥ 0; typically it already contains
    /// the band edges), whose lowest feature of interest is at `low_hz`.
    pub fn new(
        target: &(dyn Fn(f64) -> f64 + Sync),
        sample_rate_hz: f64,
        low_hz: f64,
    ) -> Result<Design> {
        Design::new_until(target, sample_rate_hz, low_hz, &[], Stop::default())
    }

    /// [`Design::new`] for a target with brick-wall band edges whose transition bands (Hz) are
    /// `guards` (the design's accuracy is not held there), polling
    /// `stop` every 1024 density evaluations of each level.
    pub(crate) fn new_until(
        target: &(dyn Fn(f64) -> f64 + Sync),
        sample_rate_hz: f64,
        low_hz: f64,
        guards: &[Guard],
        stop: Stop<'_>,
    ) -> Result<Design> {
        if !(sample_rate_hz > 0.0 && sample_rate_hz.is_finite()) {
            return Err(Error::Unsupported(format!(
                "sample rate must be a positive number of Hz, got {sample_rate_hz}"
            )));
        }
        if !(low_hz > 0.0 && low_hz < sample_rate_hz / 2.0) {
            return Err(Error::Unsupported(format!(
                "the band's low edge must lie between 0 and fs/2 = {} Hz, got {low_hz} Hz",
                sample_rate_hz / 2.0
            )));
        }
        let mut count = 1;
        while low_hz * (RATIO as f64).powi(count as i32 - 1) / sample_rate_hz < LOW_EDGE_MIN {
            count += 1;
            if count > MAX_LEVELS {
                return Err(Error::Unsupported(format!(
                    "band.low / sample rate = {:e} is below the engine's limit of {:e}: raise \
                     band.low or lower the sample rate (the profile's sample_rate or \u{1}rate\u{1})",
                    low_hz / sample_rate_hz,
                    crate::profile::MIN_LOW_TO_RATE
                )));
            }
        }
        // The levels are independent: designed in parallel, the same arithmetic each; the
        // first failing level (in order) is the one reported. They share the FFT plans.
        let planner = Mutex::new(FftPlannerScalar::<f64>::new());
        let levels = (0..count)
            .into_par_iter()
            .map(|j| {
                let rate = sample_rate_hz / (RATIO as f64).powi(j as i32);
                design_level(target, (j, count, rate), guards, &planner, stop)
            })
            .collect::<Vec<Result<Level>>>()
            .into_iter()
            .collect::<Result<Vec<Level>>>()?;
        Ok(Design {
            sample_rate_hz,
            levels,
            interp: interpolator(),
            variance: OnceLock::new(),
        })
    }

    /// Output sample rate in Hz.
    pub fn sample_rate_hz(&self) -> f64 {
        self.sample_rate_hz
    }

    /// The pyramid's levels, top (output rate) first.
    pub fn levels(&self) -> &[Level] {
        &self.levels
    }

    /// A number of samples at most `around` (at least one block pair) that a [`super::Shaper`]
    /// hands out straight from its FFTs: a multiple of the top level's block pair (2·hop).
    /// Calls of other sizes give the same samples, through one more copy.
    pub fn block_samples(&self, around: usize) -> usize {
        self.levels.first().map_or(around, |top| {
            let pair = 2 * top.hop();
            (around / pair).max(1) * pair
        })
    }

    /// The interpolation filter between levels (gain [`RATIO`] in its passband).
    pub fn interpolator(&self) -> &[f64] {
        &self.interp
    }

    /// The designed one-sided power density at `f` Hz (0 ≤ f ≤ fs/2), in unit²/Hz: what the
    /// shaper actually synthesises, including FIR ripple and interpolation images.
    pub fn density(&self, f: f64) -> f64 {
        self.level_density(0, f.abs())
    }

    fn level_density(&self, j: usize, f: f64) -> f64 {
        let level = &self.levels[j];
        let x = f / level.rate_hz;
        let mut d = 0.0;
        if level.active {
            let a = zero_phase_amplitude(&level.taps, x);
            d += 2.0 / level.rate_hz * a * a;
        }
        if j + 1 < self.levels.len() {
            let g = zero_phase_amplitude(&self.interp, x);
            let below = self.levels[j + 1].rate_hz;
            let r2 = (RATIO * RATIO) as f64;
            d += g * g / r2 * self.level_density(j + 1, fold(f, below));
        }
        d
    }

    /// The designed variance of the output, in unit² (the integral of [`Design::density`]
    /// over 0…fs/2), computed exactly from the filters' autocorrelations (once per design).
    pub fn variance(&self) -> f64 {
        *self.variance.get_or_init(|| self.compute_variance())
    }

    fn compute_variance(&self) -> f64 {
        let gg = autocorrelation(&self.interp, INTERP_TAPS - 1);
        let mut below: Option<Vec<f64>> = None;
        for level in self.levels.iter().rev() {
            let mut r = if level.active {
                autocorrelation(&level.taps, ACF_LAGS)
            } else {
                vec![0.0; ACF_LAGS + 1]
            };
            if let Some(rb) = &below {
                // y = g * u, u = x zero-stuffed by RATIO: r_u[R p] = r_x[p] / R.
                let span = (INTERP_TAPS - 1) as isize;
                for (m, rm) in r.iter_mut().enumerate() {
                    let m = m as isize;
                    let p_lo = (m - span).div_euclid(RATIO as isize);
                    let p_hi = (m + span).div_euclid(RATIO as isize);
                    let mut s = 0.0;
                    for p in p_lo..=p_hi {
                        let k = (m - p * RATIO as isize).unsigned_abs();
                        let pa = p.unsigned_abs();
                        if k < gg.len() && pa < rb.len() {
                            s += gg[k] * rb[pa];
                        }
                    }
                    *rm += s / RATIO as f64;
                }
            }
            below = Some(r);
        }
        below.map_or(0.0, |r| r[0])
    }
}

/// Level `j`'s target on nested design grids: point k of the finest grid
/// ([`MAX_GRID`] points per period) is f = k/MAX_GRID·rate; a grid of g points uses every
/// (MAX_GRID/g)-th one. Points are evaluated when a grid first needs them.
struct LevelGrid<'a> {
    target: &'a (dyn Fn(f64) -> f64 + Sync),
    j: usize,
    count: usize,
    rate: f64,
    guards: &'a [Guard],
    stop: Stop<'a>,
    /// Share of the target (unit²/Hz), NaN where not yet evaluated.
    share: Vec<f64>,
    /// The whole target (unit²/Hz).
    total: Vec<f64>,
}

impl LevelGrid<'_> {
    /// Evaluate every point of the `g`-point grid not yet evaluated.
    fn fill(&mut self, g: usize) -> Result<()> {
        let stride = MAX_GRID / g;
        let mut evaluated = 0usize;
        for k in (0..=MAX_GRID / 2).step_by(stride) {
            if !self.share[k].is_nan() {
                continue;
            }
            if evaluated % 1024 == 0 {
                self.stop.check()?;
            }
            evaluated += 1;
            let x = k as f64 / MAX_GRID as f64;
            let f = x * self.rate;
            let t = (self.target)(f);
            if !(t.is_finite() && t >= 0.0) {
                return Err(Error::Unsupported(format!(
                    "the target density is {t} at {f} Hz; it must be finite and ≥ 0"
                )));
            }
            self.total[k] = t;
            self.share[k] = t * level_weight(self.j, self.count, x);
        }
        Ok(())
    }

    fn in_guard(&self, k: usize) -> bool {
        let f = k as f64 / MAX_GRID as f64 * self.rate;
        self.guards.iter().any(|&(lo, hi)| f > lo && f < hi)
    }
}

/// Design level `j` of `count` at `rate` Hz: the shortest FIR of [`SHAPER_LENGTHS`] whose
/// realised share (2/rate)·A(f)² is within max([`SHARE_TOLERANCE`]·target, [`LEAK_FLOOR`]·peak
/// share) of the level's share at every point of its grid (8 points per tap) outside the edge
/// guards; if none is, the one that comes closest. Each is the frequency-sampled ideal
/// response windowed by a Kaiser window of its length. A level whose share is zero at every
/// point of the finest grid is inactive.
fn design_level(
    target: &(dyn Fn(f64) -> f64 + Sync),
    (j, count, rate): (usize, usize, f64),
    guards: &[Guard],
    planner: &Mutex<FftPlannerScalar<f64>>,
    stop: Stop<'_>,
) -> Result<Level> {
    let mut grid = LevelGrid {
        target,
        j,
        count,
        rate,
        guards,
        stop,
        share: vec![f64::NAN; MAX_GRID / 2 + 1],
        total: vec![0.0; MAX_GRID / 2 + 1],
    };
    let mut best: Option<(f64, Vec<f64>)> = None;
    for len in SHAPER_LENGTHS {
        let g = 8 * (len + 1);
        grid.fill(g)?;
        let stride = MAX_GRID / g;
        let share = |k: usize| grid.share[k * stride];
        let peak = (0..=g / 2).fold(0.0f64, |m, k| m.max(share(k)));
        if peak == 0.0 {
            // A share narrower than this grid's spacing can fall between its points: only
            // the finest grid may call the level empty.
            if len == SHAPER_LENGTHS[SHAPER_LENGTHS.len() - 1] {
                return Ok(level_of(j, rate, vec![0.0; SHAPER_LENGTHS[0]]));
            }
            continue;
        }
        let fft = planner
            .lock()
            .unwrap_or_else(PoisonError::into_inner)
            .plan_fft_inverse(g);
        let mut ideal = vec![Complex::new(0.0, 0.0); g];
        for k in 0..=g / 2 {
            let a = Complex::new((share(k) * rate / 2.0).sqrt(), 0.0);
            ideal[k] = a;
            if k > 0 && k < g / 2 {
                ideal[g - k] = a;
            }
        }
        fft.process(&mut ideal);
        let window = kaiser(len, SHAPER_BETA);
        let c = len / 2;
        let lag = |i: usize| (i as isize - c as isize).rem_euclid(g as isize) as usize;
        let taps: Vec<f64> = (0..len)
            .map(|i| ideal[lag(i)].re / g as f64 * window[i])
            .collect();
        // The realised zero-phase amplitude on the same grid: the taps placed around lag 0.
        let mut resp = vec![Complex::new(0.0, 0.0); g];
        for (i, &t) in taps.iter().enumerate() {
            resp[lag(i)] = Complex::new(t, 0.0);
        }
        fft.process(&mut resp);
        let mut worst = 0.0f64;
        for (k, r) in resp.iter().enumerate().take(g / 2 + 1) {
            if grid.in_guard(k * stride) {
                continue;
            }
            let realised = 2.0 / rate * r.re * r.re;
            let allowed = (SHARE_TOLERANCE * grid.total[k * stride]).max(LEAK_FLOOR * peak);
            worst = worst.max((realised - share(k)).abs() / allowed);
        }
        if worst <= 1.0 {
            return Ok(level_of(j, rate, taps));
        }
        if best.as_ref().is_none_or(|(w, _)| worst < *w) {
            best = Some((worst, taps));
        }
    }
    let (_, taps) = best.expect("SHAPER_LENGTHS is not empty");
    Ok(level_of(j, rate, taps))
}

fn level_of(j: usize, rate: f64, taps: Vec<f64>) -> Level {
    let active = taps.iter().any(|&t| t != 0.0);
    let h = taps.len() + 1;
    let fft_len = match (j, h) {
        (0 | 1, ..=512) => 16 * h,
        (0 | 1, _) => 8 * h,
        _ => 2 * h,
    };
    Level {
        rate_hz: rate,
        taps,
        active,
        fft_len: fft_len.max(4096),
    }
}

/// Share of the target that level `j` of `count` owns at `x = f / fs_j`.
fn level_weight(j: usize, count: usize, x: f64) -> f64 {
    let upper = if j == 0 { 1.0 } else { handover(x) };
    let lower = if j + 1 == count {
        0.0
    } else {
        handover(x * RATIO as f64)
    };
    (upper - lower).max(0.0)
}

/// Smooth step from 1 (x ≤ CROSS_LO) to 0 (x ≥ CROSS_HI), raised cosine in log x: the
/// fraction of the density at `x = f/fs_j` carried by level `j` and the levels below it.
fn handover(x: f64) -> f64 {
    if x <= CROSS_LO {
        1.0
    } else if x >= CROSS_HI {
        0.0
    } else {
        let t = (x / CROSS_LO).ln() / (CROSS_HI / CROSS_LO).ln();
        (0.5 * PI * t).cos().powi(2)
    }
}

/// Map `f` Hz onto `[0, rate/2]` as sampling at `rate` folds it.
fn fold(f: f64, rate: f64) -> f64 {
    let g = f.rem_euclid(rate);
    if g > rate / 2.0 { rate - g } else { g }
}

/// Kaiser-windowed sinc interpolator by RATIO: cutoff fs_j / (2·RATIO), gain RATIO.
fn interpolator() -> Vec<f64> {
    let w = kaiser(INTERP_TAPS, INTERP_BETA);
    let c = (INTERP_TAPS / 2) as f64;
    (0..INTERP_TAPS)
        .map(|i| {
            let t = (i as f64 - c) / RATIO as f64;
            let s = if t == 0.0 {
                1.0
            } else {
                (PI * t).sin() / (PI * t)
            };
            s * w[i]
        })
        .collect()
}

/// Kaiser window of odd length `n` and shape `beta`.
fn kaiser(n: usize, beta: f64) -> Vec<f64> {
    let c = (n / 2) as f64;
    let norm = bessel_i0(beta);
    (0..n)
        .map(|i| {
            let r = (i as f64 - c) / c;
            bessel_i0(beta * (1.0 - r * r).max(0.0).sqrt()) / norm
        })
        .collect()
}

/// Modified Bessel function of the first kind, order 0 (power series; x ≤ 50).
fn bessel_i0(x: f64) -> f64 {
    let q = x * x / 4.0;
    let mut term = 1.0;
    let mut sum = 1.0;
    let mut k = 1.0;
    while term > 1e-17 * sum {
        term *= q / (k * k);
        sum += term;
        k += 1.0;
    }
    sum
}

/// Zero-phase amplitude `h_c + 2 Σ_k h_{c+k} cos(2π k x)` of a symmetric odd-length FIR at
/// `x` cycles per sample. The cosines come from a rotation re-anchored every 32 terms, which
/// keeps the rounding error near 1e-15 without a libm call per term.
pub(crate) fn zero_phase_amplitude(taps: &[f64], x: f64) -> f64 {
    let c = taps.len() / 2;
    let w = 2.0 * PI * x;
    let (s1, c1) = w.sin_cos();
    let mut sum = taps[c];
    let mut k = 1;
    while k <= c {
        let (mut s, mut co) = (k as f64 * w).sin_cos();
        let end = (k + 32).min(c + 1);
        for kk in k..end {
            sum += 2.0 * taps[c + kk] * co;
            let next_c = co * c1 - s * s1;
            s = s * c1 + co * s1;
            co = next_c;
        }
        k = end;
    }
    sum
}

/// Autocorrelation `r[m] = Σ_n h[n] h[n+m]` for lags 0..=max_lag.
fn autocorrelation(h: &[f64], max_lag: usize) -> Vec<f64> {
    (0..=max_lag)
        .map(|m| {
            if m >= h.len() {
                0.0
            } else {
                h[..h.len() - m]
                    .iter()
                    .zip(&h[m..])
                    .map(|(a, b)| a * b)
                    .sum()
            }
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn weights_partition_unity() {
        for count in [1, 2, 5] {
            for i in 0..2000 {
                let f = 0.5 * i as f64 / 2000.0; // as a fraction of fs
                let s: f64 = (0..count)
                    .map(|j| level_weight(j, count, f * (RATIO as f64).powi(j as i32)))
                    .sum();
                assert!((s - 1.0).abs() < 1e-15, "count {count} f {f}: sum {s}");
            }
        }
    }

    #[test]
    fn amplitude_matches_direct_sum() {
        let taps: Vec<f64> = (0..SHAPER_LENGTHS[3])
            .map(|i| ((i * 7919) % 1000) as f64 / 1000.0 - 0.5)
            .map(|v| v * 1e-3)
            .collect();
        // make symmetric
        let n = taps.len();
        let taps: Vec<f64> = (0..n).map(|i| taps[i.min(n - 1 - i)]).collect();
        for &x in &[0.0, 1e-5, 0.0123, 0.25, 0.4999, 0.5] {
            let c = n / 2;
            let direct: f64 = taps[c]
                + (1..=c)
                    .map(|k| 2.0 * taps[c + k] * (2.0 * PI * k as f64 * x).cos())
                    .sum::<f64>();
            let fast = zero_phase_amplitude(&taps, x);
            // Both sums round at about eps per term relative to Σ|h|.
            let scale: f64 = 2.0 * taps.iter().map(|t| t.abs()).sum::<f64>();
            assert!(
                (fast - direct).abs() < 1e-13 * scale,
                "x {x}: {fast} vs {direct}"
            );
        }
    }

    #[test]
    fn interpolator_has_unity_passband_and_deep_stopband() {
        let g = interpolator();
        let r = RATIO as f64;
        for i in 0..=100 {
            let x = CROSS_HI / r * i as f64 / 100.0;
            let a = zero_phase_amplitude(&g, x) / r;
            assert!((a - 1.0).abs() < 1e-6, "passband x {x}: {a}");
        }
        for i in 0..=200 {
            let x = 1.0 / r - CROSS_HI / r + (0.5 - 1.0 / r + CROSS_HI / r) * i as f64 / 200.0;
            let a = zero_phase_amplitude(&g, x) / r;
            assert!(a.abs() < 10f64.powf(-140.0 / 20.0), "stopband x {x}: {a}");
        }
    }

    fn one_over_f(f: f64) -> f64 {
        // Band 1 Hz .. 10 kHz at 48 kHz with a hard low edge taper handled by the caller.
        let lo = 1.0;
        let g = if f >= lo {
            1.0
        } else if f >= lo / 2.0 {
            (0.5 * PI * ((f / lo).log2() + 1.0)).sin().powi(2)
        } else {
            0.0
        };
        if g == 0.0 {
            0.0
        } else {
            1e-16 * (1.0 + 100.0 / f) * g
        }
    }

    #[test]
    fn designed_density_follows_target_within_a_tenth_of_a_db() {
        let d = Design::new(&one_over_f, 48_000.0, 1.0).unwrap();
        assert!(d.levels().len() > 1);
        let mut worst: f64 = 0.0;
        for i in 0..=400 {
            let f = 1.0 * 10f64.powf(4.38 * i as f64 / 400.0); // 1 Hz .. 24 kHz
            let f = f.min(24_000.0);
            let ratio = d.density(f) / one_over_f(f);
            worst = worst.max((10.0 * ratio.log10()).abs());
        }
        assert!(worst < 0.1, "worst deviation {worst} dB");
    }

    #[test]
    fn a_share_narrower_than_the_coarse_grids_is_not_lost() {
        // A 1 Hz band at 1 kHz (48 kHz): at its deepest level (12 kHz) it is 8.3e-5 of the
        // rate wide, narrower than the spacing of the grids for 255 … 1023 taps (1/2048 …
        // 1/8192), so a coarse grid can see none of it; the level must still be designed.
        let target = |f: f64| {
            if (1000.0..=1001.0).contains(&f) {
                1e-16
            } else {
                0.0
            }
        };
        let d = Design::new(&target, 48_000.0, 1000.0).unwrap();
        let deepest = d.levels().last().unwrap();
        assert!(deepest.active, "{} taps", deepest.taps.len());
        assert!(d.variance() > 0.0 && d.density(1000.5) > 0.0);
    }

    #[test]
    fn exact_variance_equals_integral_of_density() {
        // The designed density is an even trigonometric polynomial in f with period fs; for
        // two levels its degree is below 2^16, so the trapezoid rule on 2^17 points over one
        // period is exact (common practice: trapezoid rule on periodic polynomials).
        let target = |f: f64| {
            if f >= 500.0 {
                1e-16 * (1.0 + 2000.0 / f)
            } else {
                0.0
            }
        };
        let d = Design::new(&target, 48_000.0, 500.0).unwrap();
        assert_eq!(d.levels().len(), 2);
        let n = 1usize << 17;
        let h = 48_000.0 / n as f64;
        let mut total = 0.5 * (d.density(0.0) + d.density(24_000.0));
        for i in 1..n / 2 {
            total += d.density(i as f64 * h);
        }
        total *= h;
        let v = d.variance();
        assert!(
            ((total - v) / v).abs() < 1e-9,
            "integral {total} vs exact {v}"
        );
    }
}
