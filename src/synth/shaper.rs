//! The streaming shaper: runs a [`Design`] on seeded white noise, block by block.
//!
//! Each level filters by overlap-save FFT convolution, two blocks at a time (one as the real,
//! one as the imaginary part of a complex FFT: the filters are real, so the two never mix).
//! The interpolation branch uses the fact that the DFT of a signal zero-stuffed by R is the
//! DFT of the signal at 1/R the length, repeated R times. Every output sample is a full-length
//! FIR over i.i.d. input, so the output is stationary from its first sample; memory is a few
//! FFT blocks per level and does not grow with duration.
//!
//! Work is done in batches of [`BATCH_PAIRS`] block pairs per level. Within a batch the white
//! chunks (each its own random stream) and the block pairs (each a pure function of its input
//! windows) are computed in parallel on rayon's pool; the result does not depend on the number
//! of threads or on how they share the work.
//!
//! The FFTs are rustfft's scalar ones: the SIMD paths give different rounding on different
//! CPUs, and the output must be identical on every machine.

use std::sync::Arc;

use rayon::prelude::*;
use rustfft::num_complex::Complex;
use rustfft::{Fft, FftPlannerScalar};

use super::design::{Design, FFT_LEN, HISTORY, HOP, RATIO};
use super::white::{Domain, WhiteStreams};

const LOW_HOP: usize = HOP / RATIO;
const LOW_HISTORY: usize = HISTORY / RATIO;
const LOW_LEN: usize = FFT_LEN / RATIO;
/// White samples per random stream.
const CHUNK: usize = 2048;
/// Block pairs (2·HOP output samples each) computed per batch and level.
pub const BATCH_PAIRS: usize = 4;
const BATCH_OUT: usize = 2 * HOP * BATCH_PAIRS;

struct LevelState {
    index: usize,
    /// DFT of the zero-padded shaping taps, already divided by FFT_LEN; empty if inactive.
    shaper: Vec<Complex<f64>>,
    /// DFT of the zero-padded interpolator taps / FFT_LEN; empty for the deepest level.
    interp: Vec<Complex<f64>>,
    /// White input of the batch: HISTORY samples shared with the last batch, then BATCH_OUT new.
    white: Vec<f64>,
    next_chunk: u64,
    /// Samples from the level below: LOW_HISTORY shared with the last batch, then
    /// BATCH_OUT / RATIO new.
    low: Vec<f64>,
    /// Output produced but not yet handed up.
    ready: Vec<f64>,
    ready_pos: usize,
    primed: bool,
    /// Samples of the next batch to drop (a run started mid-batch, see [`Shaper::starting_at`]).
    skip: usize,
}

/// Per-worker buffers for one block pair.
struct Scratch {
    spec: Vec<Complex<f64>>,
    low_spec: Vec<Complex<f64>>,
    fft: Vec<Complex<f64>>,
}

struct Transforms {
    forward: Arc<dyn Fft<f64>>,
    inverse: Arc<dyn Fft<f64>>,
    forward_low: Arc<dyn Fft<f64>>,
    scratch_len: usize,
    white: WhiteStreams,
}

impl Transforms {
    fn scratch(&self) -> Scratch {
        Scratch {
            spec: vec![Complex::new(0.0, 0.0); FFT_LEN],
            low_spec: vec![Complex::new(0.0, 0.0); LOW_LEN],
            fft: vec![Complex::new(0.0, 0.0); self.scratch_len],
        }
    }
}

/// A seeded, streaming generator of noise with a [`Design`]'s density.
///
/// Pull samples with [`Shaper::fill`]; the sequence depends only on the design and the seed,
/// never on how the calls are split or how many threads rayon's pool has.
pub struct Shaper {
    levels: Vec<LevelState>,
    tx: Transforms,
    /// One scratch per block pair of a batch, reused by every level and batch (allocating
    /// and zeroing them per batch cost about 6 % of the engine's instructions).
    scratch: Vec<Scratch>,
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
                white: vec![0.0; HISTORY + BATCH_OUT],
                next_chunk: 0,
                low: vec![0.0; LOW_HISTORY + BATCH_OUT / RATIO],
                ready: vec![0.0; BATCH_OUT],
                ready_pos: BATCH_OUT,
                primed: false,
                skip: 0,
            })
            .collect();
        let tx = Transforms {
            forward,
            inverse,
            forward_low,
            scratch_len,
            white: WhiteStreams::new(seed),
        };
        let scratch = (0..BATCH_PAIRS).map(|_| tx.scratch()).collect();
        Shaper {
            levels,
            tx,
            scratch,
        }
    }

    /// A shaper whose first sample is sample `start` (0-based) of the run that
    /// [`Shaper::new`] makes: from there on the samples are bit for bit the same.
    ///
    /// Cost is bounded and does not grow with `start`: every level computes only the one or
    /// two batches of its block grid that its output needs, then drops the leading samples.
    ///
    /// # Panics
    /// If `start` is at or beyond [`MAX_START`].
    pub fn starting_at(design: &Design, seed: u64, start: u64) -> Shaper {
        assert!(
            start < MAX_START,
            "start {start} is beyond {MAX_START} samples"
        );
        let mut shaper = Shaper::new(design, seed);
        seek(&mut shaper.levels, start);
        shaper
    }

    /// Fill `out` with the next samples, in the design's unit.
    pub fn fill(&mut self, out: &mut [f64]) {
        pull(&mut self.levels, &self.tx, &mut self.scratch, out);
    }
}

/// First sample index a shaper cannot start at (2^56; about 2.3 thousand years at 1 MHz): the
/// chunk field of a stream id has 48 bits.
pub const MAX_START: u64 = 1 << 56;

// Seeking relies on batches covering whole white chunks.
const _: () = assert!(HISTORY % CHUNK == 0 && BATCH_OUT % CHUNK == 0 && BATCH_OUT % RATIO == 0);

/// Put `levels` where a run from 0 is when its top level is about to hand out sample `start`.
///
/// A run from 0 computes level j in batches of BATCH_OUT samples; batch b reads the white
/// chunks from index b·BATCH_OUT/CHUNK (the first HISTORY samples are the previous batch's
/// tail) and the level below's samples from b·BATCH_OUT/RATIO on (LOW_HISTORY of them shared
/// with the previous batch). So the level is primed as if batch b were its first, the level
/// below is put at b·BATCH_OUT/RATIO the same way, and the first `start − b·BATCH_OUT` samples
/// of the batch are dropped. Each batch is then the same arithmetic on the same inputs.
fn seek(levels: &mut [LevelState], start: u64) {
    let Some((head, below)) = levels.split_first_mut() else {
        return;
    };
    let batch = start / BATCH_OUT as u64;
    head.next_chunk = batch * (BATCH_OUT / CHUNK) as u64;
    head.primed = false;
    head.ready_pos = head.ready.len();
    head.skip = (start % BATCH_OUT as u64) as usize;
    seek(below, batch * (BATCH_OUT / RATIO) as u64);
}

fn pull(levels: &mut [LevelState], tx: &Transforms, scratch: &mut [Scratch], out: &mut [f64]) {
    let Some((head, below)) = levels.split_first_mut() else {
        out.fill(0.0);
        return;
    };
    let mut done = 0;
    while done < out.len() {
        if head.ready_pos == head.ready.len() {
            batch(head, below, tx, scratch);
        }
        let n = (out.len() - done).min(head.ready.len() - head.ready_pos);
        out[done..done + n].copy_from_slice(&head.ready[head.ready_pos..head.ready_pos + n]);
        head.ready_pos += n;
        done += n;
    }
}

/// Draw the white samples `range` (whole chunks) of `level`'s batch buffer, in parallel.
fn draw(level: &mut LevelState, tx: &Transforms, range: std::ops::Range<usize>) {
    let (index, first) = (level.index, level.next_chunk);
    level.white[range.clone()]
        .par_chunks_mut(CHUNK)
        .enumerate()
        .for_each(|(c, chunk)| {
            let stream = WhiteStreams::stream_id(Domain::Shaper, index, first + c as u64);
            tx.white.fill(stream, chunk);
        });
    level.next_chunk += (range.len() / CHUNK) as u64;
}

/// Produce the next BATCH_PAIRS block pairs (BATCH_OUT samples) of `level`.
fn batch(
    level: &mut LevelState,
    below: &mut [LevelState],
    tx: &Transforms,
    scratch: &mut [Scratch],
) {
    let active = !level.shaper.is_empty();
    let has_below = !level.interp.is_empty();
    if !level.primed {
        if active {
            draw(level, tx, 0..HISTORY);
        }
        if has_below {
            pull(below, tx, scratch, &mut level.low[..LOW_HISTORY]);
        }
        level.primed = true;
    }
    if active {
        let end = level.white.len();
        draw(level, tx, HISTORY..end);
    }
    if has_below {
        pull(below, tx, scratch, &mut level.low[LOW_HISTORY..]);
    }
    let (white, low) = (&level.white, &level.low);
    let (shaper, interp) = (&level.shaper, &level.interp);
    level
        .ready
        .par_chunks_mut(2 * HOP)
        .zip(scratch.par_iter_mut())
        .enumerate()
        .for_each(|(p, (out, s))| {
            let w = &white[2 * p * HOP..2 * p * HOP + HOP + FFT_LEN];
            let l = &low[2 * p * LOW_HOP..2 * p * LOW_HOP + LOW_HOP + LOW_LEN];
            pair(tx, s, shaper, interp, w, l, out);
        });
    level.ready_pos = std::mem::take(&mut level.skip);
    if active {
        let end = level.white.len();
        level.white.copy_within(end - HISTORY.., 0);
    }
    if has_below {
        let end = level.low.len();
        level.low.copy_within(end - LOW_HISTORY.., 0);
    }
}

/// One block pair: `white` holds HOP + FFT_LEN input samples (block A's window is
/// [0, FFT_LEN), block B's [HOP, HOP + FFT_LEN)), `low` the matching LOW_HOP + LOW_LEN samples
/// of the level below; writes 2·HOP outputs, the valid tail of each circular convolution.
fn pair(
    tx: &Transforms,
    s: &mut Scratch,
    shaper: &[Complex<f64>],
    interp: &[Complex<f64>],
    white: &[f64],
    low: &[f64],
    out: &mut [f64],
) {
    if shaper.is_empty() {
        s.spec.fill(Complex::new(0.0, 0.0));
    } else {
        for (n, c) in s.spec.iter_mut().enumerate() {
            *c = Complex::new(white[n], white[HOP + n]);
        }
        tx.forward.process_with_scratch(&mut s.spec, &mut s.fft);
        for (c, h) in s.spec.iter_mut().zip(shaper) {
            *c *= *h;
        }
    }
    if !interp.is_empty() {
        for (m, c) in s.low_spec.iter_mut().enumerate() {
            *c = Complex::new(low[m], low[LOW_HOP + m]);
        }
        tx.forward_low
            .process_with_scratch(&mut s.low_spec, &mut s.fft);
        // The zero-stuffed branch's spectrum: the short spectrum repeated RATIO times.
        for (spec, g) in s
            .spec
            .chunks_exact_mut(LOW_LEN)
            .zip(interp.chunks_exact(LOW_LEN))
        {
            for ((c, g), l) in spec.iter_mut().zip(g).zip(&s.low_spec) {
                *c += *g * *l;
            }
        }
    }
    tx.inverse.process_with_scratch(&mut s.spec, &mut s.fft);
    let (a, b) = out.split_at_mut(HOP);
    for (i, c) in s.spec[HISTORY..].iter().enumerate() {
        a[i] = c.re;
        b[i] = c.im;
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
        let mut whole = vec![0.0; 100_000];
        a.fill(&mut whole);
        let mut b = Shaper::new(&d, 42);
        let mut parts = vec![0.0; 100_000];
        let mut pos = 0;
        for n in [1usize, 7, 4095, 333, 40_000].iter().cycle() {
            let end = (pos + n).min(parts.len());
            b.fill(&mut parts[pos..end]);
            pos = end;
            if pos == parts.len() {
                break;
            }
        }
        assert_eq!(whole, parts);
        let mut c = Shaper::new(&d, 43);
        let mut other = vec![0.0; 100_000];
        c.fill(&mut other);
        assert_ne!(whole, other);
    }

    #[test]
    fn output_does_not_depend_on_the_thread_count() {
        let d = Design::new(&flat, 48_000.0, 1.0).unwrap();
        let run = |threads: usize| {
            let pool = rayon::ThreadPoolBuilder::new()
                .num_threads(threads)
                .build()
                .unwrap();
            pool.install(|| {
                let mut s = Shaper::new(&d, 9);
                let mut x = vec![0.0; 3 * BATCH_OUT + 17];
                s.fill(&mut x);
                x
            })
        };
        let one = run(1);
        assert_eq!(one, run(2));
        assert_eq!(one, run(3));
    }

    #[test]
    fn a_run_started_anywhere_equals_the_run_from_zero_from_there_on() {
        // band.low = 0.05 Hz at 48 kHz: a deep pyramid, so boundaries of several levels.
        let d = Design::new(&flat, 48_000.0, 0.05).unwrap();
        assert!(d.levels().len() >= 8, "{} levels", d.levels().len());
        let b = BATCH_OUT as u64;
        let len = 20_000;
        let mut starts = vec![1, CHUNK as u64 - 1, CHUNK as u64, CHUNK as u64 + 1];
        starts.extend([
            HOP as u64 - 1,
            HOP as u64,
            2 * HOP as u64 - 1,
            2 * HOP as u64,
        ]);
        // Batch boundaries of level j fall at multiples of 4^j·BATCH_OUT in output samples.
        for k in [b, 4 * b, 16 * b] {
            starts.extend([k - 1, k, k + 1, k - len as u64 / 2]);
        }
        let end = *starts.iter().max().unwrap() as usize + len;
        let mut whole = vec![0.0; end];
        Shaper::new(&d, 11).fill(&mut whole);
        for &n0 in &starts {
            let mut part = vec![0.0; len];
            Shaper::starting_at(&d, 11, n0).fill(&mut part);
            let n0 = n0 as usize;
            assert!(part == whole[n0..n0 + len], "seed 11, start {n0}");
        }
        assert_eq!(
            Shaper::starting_at(&d, 11, 0).levels.len(),
            d.levels().len()
        );
    }

    #[test]
    fn a_far_start_equals_a_nearer_start_with_its_lead_dropped() {
        let d = Design::new(&flat, 48_000.0, 0.05).unwrap();
        let n0 = 10_000_000_000u64;
        let lead = BATCH_OUT + 1000;
        let mut far = vec![0.0; 5000];
        Shaper::starting_at(&d, 3, n0).fill(&mut far);
        let mut near = vec![0.0; lead + 5000];
        Shaper::starting_at(&d, 3, n0 - lead as u64).fill(&mut near);
        assert!(far == near[lead..], "seed 3, start {n0}");
        assert!(far.iter().all(|x| x.is_finite()) && far.iter().any(|&x| x != 0.0));
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
