//! The streaming shaper: runs a [`Design`] on seeded white noise, block by block.
//!
//! Each level filters by overlap-save FFT convolution, two blocks at a time (one as the real,
//! one as the imaginary part of a complex FFT: the filters are real, so the two never mix).
//! The interpolation branch uses the fact that the DFT of a signal zero-stuffed by R is the
//! DFT of the signal at 1/R the length, repeated R times. Every output sample is a full-length
//! FIR over i.i.d. input, so the output is stationary from its first sample; memory is a few
//! FFT blocks per level and does not grow with duration.
//!
//! The FFTs are rustfft's scalar ones: the SIMD paths give different rounding on different
//! CPUs, and the output must be identical on every machine.

use std::sync::Arc;

use rustfft::num_complex::Complex;
use rustfft::{Fft, FftPlannerScalar};

use super::design::{Design, FFT_LEN, HOP, RATIO};
use super::white::{Domain, WhiteStreams};

const LOW_HOP: usize = HOP / RATIO;
const LOW_LEN: usize = FFT_LEN / RATIO;

struct LevelState {
    index: usize,
    /// DFT of the zero-padded shaping taps, already divided by FFT_LEN; empty if inactive.
    shaper: Vec<Complex<f64>>,
    /// DFT of the zero-padded interpolator taps / FFT_LEN; empty for the deepest level.
    interp: Vec<Complex<f64>>,
    /// White input: HOP samples of history, then two new chunks.
    white: Vec<f64>,
    next_chunk: u64,
    /// Samples from the level below: LOW_HOP of history, then 2·LOW_HOP new.
    low: Vec<f64>,
    /// Output produced but not yet handed up.
    ready: Vec<f64>,
    ready_pos: usize,
    primed: bool,
    spec: Vec<Complex<f64>>,
    low_spec: Vec<Complex<f64>>,
}

struct Transforms {
    forward: Arc<dyn Fft<f64>>,
    inverse: Arc<dyn Fft<f64>>,
    forward_low: Arc<dyn Fft<f64>>,
    scratch: Vec<Complex<f64>>,
    white: WhiteStreams,
}

/// A seeded, streaming generator of noise with a [`Design`]'s density.
///
/// Pull samples with [`Shaper::fill`]; the sequence depends only on the design and the seed,
/// never on how the calls are split.
pub struct Shaper {
    levels: Vec<LevelState>,
    tx: Transforms,
}

impl Shaper {
    /// A shaper running `design` on the white noise of `seed`.
    pub fn new(design: &Design, seed: u64) -> Shaper {
        let mut planner = FftPlannerScalar::<f64>::new();
        let forward = planner.plan_fft_forward(FFT_LEN);
        let inverse = planner.plan_fft_inverse(FFT_LEN);
        let forward_low = planner.plan_fft_forward(LOW_LEN);
        let scratch_len = forward
            .get_inplace_scratch_len()
            .max(inverse.get_inplace_scratch_len())
            .max(forward_low.get_inplace_scratch_len());
        let spectrum = |taps: &[f64], fft: &Arc<dyn Fft<f64>>| {
            let mut buf = vec![Complex::new(0.0, 0.0); FFT_LEN];
            for (b, &t) in buf.iter_mut().zip(taps) {
                b.re = t / FFT_LEN as f64;
            }
            fft.process(&mut buf);
            buf
        };
        let count = design.levels().len();
        let levels = design
            .levels()
            .iter()
            .enumerate()
            .map(|(j, level)| LevelState {
                index: j,
                shaper: if level.active {
                    spectrum(&level.taps, &forward)
                } else {
                    Vec::new()
                },
                interp: if j + 1 < count {
                    spectrum(design.interpolator(), &forward)
                } else {
                    Vec::new()
                },
                white: vec![0.0; 3 * HOP],
                next_chunk: 0,
                low: vec![0.0; 3 * LOW_HOP],
                ready: vec![0.0; 2 * HOP],
                ready_pos: 2 * HOP,
                primed: false,
                spec: vec![Complex::new(0.0, 0.0); FFT_LEN],
                low_spec: vec![Complex::new(0.0, 0.0); LOW_LEN],
            })
            .collect();
        Shaper {
            levels,
            tx: Transforms {
                forward,
                inverse,
                forward_low,
                scratch: vec![Complex::new(0.0, 0.0); scratch_len],
                white: WhiteStreams::new(seed),
            },
        }
    }

    /// Fill `out` with the next samples, in the design's unit.
    pub fn fill(&mut self, out: &mut [f64]) {
        pull(&mut self.levels, &mut self.tx, out);
    }
}

fn pull(levels: &mut [LevelState], tx: &mut Transforms, out: &mut [f64]) {
    let Some((head, below)) = levels.split_first_mut() else {
        out.fill(0.0);
        return;
    };
    let mut done = 0;
    while done < out.len() {
        if head.ready_pos == head.ready.len() {
            step(head, below, tx);
        }
        let n = (out.len() - done).min(head.ready.len() - head.ready_pos);
        out[done..done + n].copy_from_slice(&head.ready[head.ready_pos..head.ready_pos + n]);
        head.ready_pos += n;
        done += n;
    }
}

fn draw(level: &mut LevelState, tx: &Transforms, range: std::ops::Range<usize>) {
    let mut start = range.start;
    while start < range.end {
        let stream = WhiteStreams::stream_id(Domain::Shaper, level.index, level.next_chunk);
        tx.white.fill(stream, &mut level.white[start..start + HOP]);
        level.next_chunk += 1;
        start += HOP;
    }
}

/// Produce the next 2·HOP output samples of `level`.
fn step(level: &mut LevelState, below: &mut [LevelState], tx: &mut Transforms) {
    let active = !level.shaper.is_empty();
    let has_below = !level.interp.is_empty();
    if !level.primed {
        if active {
            draw(level, tx, 0..HOP);
        }
        if has_below {
            pull(below, tx, &mut level.low[..LOW_HOP]);
        }
        level.primed = true;
    }
    if active {
        draw(level, tx, HOP..3 * HOP);
        for (n, s) in level.spec.iter_mut().enumerate() {
            *s = Complex::new(level.white[n], level.white[HOP + n]);
        }
        tx.forward
            .process_with_scratch(&mut level.spec, &mut tx.scratch);
        for (s, h) in level.spec.iter_mut().zip(&level.shaper) {
            *s *= *h;
        }
    } else {
        level.spec.fill(Complex::new(0.0, 0.0));
    }
    if has_below {
        pull(below, tx, &mut level.low[LOW_HOP..]);
        for (m, s) in level.low_spec.iter_mut().enumerate() {
            *s = Complex::new(level.low[m], level.low[LOW_HOP + m]);
        }
        tx.forward_low
            .process_with_scratch(&mut level.low_spec, &mut tx.scratch);
        for (k, (s, g)) in level.spec.iter_mut().zip(&level.interp).enumerate() {
            *s += *g * level.low_spec[k % LOW_LEN];
        }
        level.low.copy_within(2 * LOW_HOP.., 0);
    }
    tx.inverse
        .process_with_scratch(&mut level.spec, &mut tx.scratch);
    let (a, b) = level.ready.split_at_mut(HOP);
    for (i, s) in level.spec[HOP..].iter().enumerate() {
        a[i] = s.re;
        b[i] = s.im;
    }
    level.ready_pos = 0;
    if active {
        level.white.copy_within(2 * HOP.., 0);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn flat(f: f64) -> f64 {
        if f >= 100.0 { 1e-12 } else { 0.0 }
    }

    #[test]
    fn output_does_not_depend_on_how_calls_are_split() {
        let d = Design::new(&flat, 48_000.0, 100.0).unwrap();
        let mut a = Shaper::new(&d, 42);
        let mut whole = vec![0.0; 20_000];
        a.fill(&mut whole);
        let mut b = Shaper::new(&d, 42);
        let mut parts = vec![0.0; 20_000];
        let mut pos = 0;
        for n in [1usize, 7, 4095, 333, 10_000].iter().cycle() {
            let end = (pos + n).min(parts.len());
            b.fill(&mut parts[pos..end]);
            pos = end;
            if pos == parts.len() {
                break;
            }
        }
        assert_eq!(whole, parts);
        let mut c = Shaper::new(&d, 43);
        let mut other = vec![0.0; 20_000];
        c.fill(&mut other);
        assert_ne!(whole, other);
    }

    #[test]
    fn variance_matches_design_within_chi_square_bound() {
        // White 1e-12 unit²/Hz from 100 Hz to 24 kHz: σ² ≈ 1e-12·23900 (plus the taper).
        let d = Design::new(&flat, 48_000.0, 100.0).unwrap();
        let mut s = Shaper::new(&d, 1);
        let n = 1 << 20;
        let mut x = vec![0.0; n];
        s.fill(&mut x);
        let var = x.iter().map(|v| v * v).sum::<f64>() / n as f64;
        // Nearly white: relative standard error ≈ √(2/n); 6σ bound (fixed seed 1).
        let rel = (var / d.variance() - 1.0).abs();
        assert!(rel < 6.0 * (2.0 / n as f64).sqrt(), "seed 1: rel err {rel}");
    }
}
