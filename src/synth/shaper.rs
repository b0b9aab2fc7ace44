//! The streaming shaper: runs a [`Design`] on seeded white noise, block by block.
//!
//! Each level filters by overlap-save FFT convolution, two blocks at a time (one as the real,
//! one as the imaginary part of a complex FFT: the filters are real, so the two never mix).
//! The interpolation branch uses the fact that the DFT of a signal zero-stuffed by R is the
//! DFT of the signal at 1/R the length, repeated R times. Every output sample is a full-length
//! FIR over i.i.d. input, so the output is stationary from its first sample; memory is a few
//! FFT blocks per level and does not grow with duration.
//!
//! Each level has its own block geometry (FFT length and history from its FIR's length, see
//! [`Level::fft_len`]). Work is done in batches of at least [`BATCH_PAIRS`] block pairs per level. Each batch is one
//! parallel step on rayon's pool (through [`super::team`], whose waiting threads poll instead
//! of sleeping): its block pairs (each a pure function of its input windows) and, beside
//! them, the white chunks of the level's next batch (each its own random stream). The result
//! does not depend on the number of threads or on how they share the work.
//!
//! The FFTs are [`crate::fft::Fft`]s: vectorised, yet bit-identical on every machine, so the
//! output is too. Spectra are kept as split arrays (real parts, imaginary parts), the layout
//! that FFT works on.

use std::sync::{Mutex, PoisonError};

use rayon::prelude::*;

use crate::fft::Fft;

use super::design::{Design, Level, RATIO};
use super::team;
use super::white::{Domain, WhiteStreams};

/// White samples per random stream: every level draws its input in chunks of this many.
pub const WHITE_CHUNK: usize = 2048;
const CHUNK: usize = WHITE_CHUNK;
/// Fewest block pairs (2·hop output samples each) computed per batch and level: one per core
/// of the two-core machine it was tuned on (`generate`, 2^24 samples to /dev/null, medians
/// of 7, 2026-12-03, one / two threads: 1 pair 256 / 168 ms, 2 pairs 259 / 152 ms, 4 pairs
/// 267 / 153 ms). A level takes more when its batch would not hold whole white chunks. The
/// output does not depend on it.
pub const BATCH_PAIRS: usize = 2;

/// The block geometry of one level, from its FIR length (all in samples of the level).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
struct Geometry {
    /// Complex FFT length.
    n: usize,
    /// Input shared with the block before (FIR length + 1).
    history: usize,
    /// New samples per block: n − history.
    hop: usize,
    /// Block pairs per batch.
    pairs: usize,
    /// Output samples per batch: 2·hop·pairs, a multiple of CHUNK and of RATIO.
    out: usize,
    /// White samples a batch keeps from the last one: history rounded up to whole chunks.
    carry: usize,
}

impl Geometry {
    fn of(level: &Level) -> Geometry {
        let (n, history, hop) = (level.fft_len(), level.history(), level.hop());
        let mut pairs = BATCH_PAIRS;
        while (2 * hop * pairs) % CHUNK != 0 {
            pairs += 1;
        }
        Geometry {
            n,
            history,
            hop,
            pairs,
            out: 2 * hop * pairs,
            carry: history.div_ceil(CHUNK) * CHUNK,
        }
    }
}

// The low branch works on whole samples of the level below.
const _: () = assert!(CHUNK % RATIO == 0 && 256 % RATIO == 0);

struct LevelState {
    index: usize,
    geo: Geometry,
    /// DFT of the zero-padded shaping taps, already divided by n; empty if inactive.
    shaper: Spectrum,
    /// DFT of the zero-padded interpolator taps / n; empty for the deepest level.
    interp: Spectrum,
    /// White input of the batch: `carry` samples kept from the last batch, then `out` new.
    white: Vec<f64>,
    /// The next batch's white input: its `out` new samples are drawn while this batch's
    /// pairs are filtered (`carry` is copied in after); empty if inactive.
    white_next: Vec<f64>,
    /// Index of the next white chunk to draw.
    next_chunk: u64,
    /// Samples from the level below: history/RATIO shared with the last batch, then
    /// out/RATIO new.
    low: Vec<f64>,
    /// Output produced but not yet handed up.
    ready: Vec<f64>,
    ready_pos: usize,
    primed: bool,
    /// Samples of the next batch to drop (a run started mid-batch, see [`Shaper::starting_at`]).
    skip: usize,
}

/// A complex spectrum as split arrays: real parts, imaginary parts.
#[derive(Default)]
struct Spectrum {
    re: Vec<f64>,
    im: Vec<f64>,
}

impl Spectrum {
    fn zeros(len: usize) -> Spectrum {
        Spectrum {
            re: vec![0.0; len],
            im: vec![0.0; len],
        }
    }

    fn is_empty(&self) -> bool {
        self.re.is_empty()
    }

    fn parts(&mut self) -> (&mut [f64], &mut [f64]) {
        (&mut self.re, &mut self.im)
    }

    /// The first `n` bins of each part.
    fn head(&mut self, n: usize) -> (&mut [f64], &mut [f64]) {
        (&mut self.re[..n], &mut self.im[..n])
    }
}

/// One worker thread's buffers for the block pair it is computing (sized for the longest
/// FFT of the design; a level uses their heads).
struct Scratch {
    spec: Spectrum,
    low_spec: Spectrum,
    fft: Spectrum,
}

impl Scratch {
    fn new(n: usize) -> Scratch {
        Scratch {
            spec: Spectrum::zeros(n),
            low_spec: Spectrum::zeros(n / RATIO),
            fft: Spectrum::zeros(n),
        }
    }
}

struct Transforms {
    /// One plan per FFT length the levels use (each level's n and n/RATIO).
    ffts: Vec<Fft>,
    white: WhiteStreams,
    /// The longest n of any level.
    longest: usize,
}

impl Transforms {
    fn get(&self, n: usize) -> &Fft {
        self.ffts
            .iter()
            .find(|f| f.len() == n)
            .expect("every level's FFT lengths are planned")
    }
}

/// A seeded, streaming generator of noise with a [`Design`]'s density.
///
/// Pull samples with [`Shaper::fill`]; the sequence depends only on the design and the seed,
/// never on how the calls are split or how many threads rayon's pool has.
pub struct Shaper {
    levels: Vec<LevelState>,
    tx: Transforms,
    /// One scratch per worker thread of the pool (indexed by rayon's thread index), reused by
    /// every level and batch, so that a worker's buffers stay in its core's cache. Allocating
    /// them per batch cost about 6 % of the engine's instructions; one per block pair, used
    /// by whichever worker took the pair, cost about 8 % of its speed on two threads
    /// (`examples/speed`, 2^24 samples, 2026-12-03: 103–107 against 111–114 M samples/s).
    scratch: Vec<Mutex<Scratch>>,
}

impl Shaper {
    /// A shaper running `design` on the white noise of `seed`.
    pub fn new(design: &Design, seed: u64) -> Shaper {
        let geos: Vec<Geometry> = design.levels().iter().map(Geometry::of).collect();
        let mut lengths: Vec<usize> = geos.iter().flat_map(|g| [g.n, g.n / RATIO]).collect();
        lengths.sort_unstable();
        lengths.dedup();
        let ffts: Vec<Fft> = lengths.iter().map(|&n| Fft::new(n)).collect();
        let longest = geos.iter().map(|g| g.n).max().unwrap_or(0);
        let tx = Transforms {
            ffts,
            white: WhiteStreams::new(seed),
            longest,
        };
        let spectrum = |n: usize, taps: &[f64]| {
            let mut buf = Spectrum::zeros(n);
            for (b, &t) in buf.re.iter_mut().zip(taps) {
                *b = t / n as f64;
            }
            let mut tmp = Spectrum::zeros(n);
            tx.get(n).forward(buf.parts(), tmp.parts());
            buf
        };
        let count = design.levels().len();
        let levels = design
            .levels()
            .iter()
            .zip(&geos)
            .enumerate()
            .map(|(j, (level, &geo))| LevelState {
                index: j,
                geo,
                shaper: if level.active {
                    spectrum(geo.n, &level.taps)
                } else {
                    Spectrum::default()
                },
                interp: if j + 1 < count {
                    spectrum(geo.n, design.interpolator())
                } else {
                    Spectrum::default()
                },
                white: vec![0.0; geo.carry + geo.out],
                white_next: vec![0.0; if level.active { geo.carry + geo.out } else { 0 }],
                next_chunk: 0,
                low: vec![0.0; (geo.history + geo.out) / RATIO],
                ready: vec![0.0; geo.out],
                ready_pos: geo.out,
                primed: false,
                skip: 0,
            })
            .collect();
        Shaper {
            levels,
            tx,
            scratch: Vec::new(),
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
        let workers = rayon::current_num_threads();
        while self.scratch.len() < workers {
            self.scratch.push(Mutex::new(Scratch::new(self.tx.longest)));
        }
        let (levels, tx, scratch) = (&mut self.levels, &self.tx, &self.scratch);
        team::with_helpers(|| pull(levels, tx, scratch, out));
    }
}

/// First sample index a shaper cannot start at (2^56; about 2.3 thousand years at 1 MHz): the
/// chunk field of a stream id has 48 bits.
pub const MAX_START: u64 = 1 << 56;

/// Put `levels` where a run from 0 is when its top level is about to hand out sample `start`.
///
/// A run from 0 computes level j in batches of `out` samples; batch b reads the white chunks
/// from index b·out/CHUNK (its first `carry` samples are the previous batch's tail) and the
/// level below's samples from b·out/RATIO on (history/RATIO of them shared with the previous
/// batch). So the level is primed as if batch b were its first, the level below is put at
/// b·out/RATIO the same way, and the first `start − b·out` samples of the batch are dropped.
/// Each batch is then the same arithmetic on the same inputs.
fn seek(levels: &mut [LevelState], start: u64) {
    let Some((head, below)) = levels.split_first_mut() else {
        return;
    };
    let out = head.geo.out as u64;
    let batch = start / out;
    head.next_chunk = batch * out / CHUNK as u64;
    head.primed = false;
    head.ready_pos = head.ready.len();
    head.skip = (start % out) as usize;
    seek(below, batch * out / RATIO as u64);
}

fn pull(levels: &mut [LevelState], tx: &Transforms, scratch: &[Mutex<Scratch>], out: &mut [f64]) {
    let Some((head, below)) = levels.split_first_mut() else {
        out.fill(0.0);
        return;
    };
    let pair_out = 2 * head.geo.hop;
    let mut done = 0;
    while done < out.len() {
        if head.ready_pos == head.ready.len() {
            // The block pairs that fit go straight into `out`; only the rest wait in `ready`.
            let room = if head.skip == 0 {
                ((out.len() - done) / pair_out).min(head.geo.pairs) * pair_out
            } else {
                0
            };
            batch(head, below, tx, scratch, &mut out[done..done + room]);
            done += room;
            continue;
        }
        let n = (out.len() - done).min(head.ready.len() - head.ready_pos);
        out[done..done + n].copy_from_slice(&head.ready[head.ready_pos..head.ready_pos + n]);
        head.ready_pos += n;
        done += n;
    }
}

/// Draw the whole white input of `level`'s first batch, in parallel.
fn draw_first(level: &mut LevelState, tx: &Transforms) {
    let (index, first) = (level.index, level.next_chunk);
    level
        .white
        .par_chunks_mut(CHUNK)
        .enumerate()
        .for_each(|(c, chunk)| {
            let stream = WhiteStreams::stream_id(Domain::Shaper, index, first + c as u64);
            tx.white.fill(stream, chunk);
        });
    level.next_chunk += (level.white.len() / CHUNK) as u64;
}

/// The work of one batch, run in parallel: a block pair, or a white chunk of the next batch.
enum Task<'a> {
    /// Pair index in the batch, its output.
    Pair(usize, &'a mut [f64]),
    /// Stream id, the chunk's place in the next batch's input.
    Chunk(u64, &'a mut [f64]),
}

/// Produce the next batch (`geo.out` samples) of `level`: the first `direct.len() / (2·hop)`
/// pairs into `direct`, the others into `level.ready` at the same offsets. `direct` must be
/// empty when the batch has samples to drop (`level.skip > 0`).
fn batch(
    level: &mut LevelState,
    below: &mut [LevelState],
    tx: &Transforms,
    scratch: &[Mutex<Scratch>],
    direct: &mut [f64],
) {
    let geo = level.geo;
    let low_history = geo.history / RATIO;
    debug_assert!(direct.len() % (2 * geo.hop) == 0 && direct.len() <= geo.out);
    debug_assert!(direct.is_empty() || level.skip == 0);
    let active = !level.shaper.is_empty();
    let has_below = !level.interp.is_empty();
    if !level.primed {
        if active {
            draw_first(level, tx);
        }
        if has_below {
            pull(below, tx, scratch, &mut level.low[..low_history]);
        }
        level.primed = true;
    }
    if has_below {
        pull(below, tx, scratch, &mut level.low[low_history..]);
    }
    let (white, low) = (&level.white, &level.low);
    let (shaper, interp) = (&level.shaper, &level.interp);
    let room = direct.len();
    let outs = direct
        .chunks_mut(2 * geo.hop)
        .chain(level.ready[room..].chunks_mut(2 * geo.hop));
    // One parallel step per batch: the pairs, and the next batch's chunks drawn beside them.
    // Each pair is followed by its share of the chunks. The calling worker starts with the
    // first pair and then works back from the end, an idle worker takes tasks from the
    // front, so on two threads each gets one pair and half the chunks.
    let next_new = level.white_next.get_mut(geo.carry..).unwrap_or_default();
    let total_chunks = next_new.len() / CHUNK;
    let mut chunks = next_new.chunks_mut(CHUNK);
    let mut tasks = Vec::with_capacity(geo.pairs + total_chunks);
    for (p, out) in outs.enumerate() {
        tasks.push(Task::Pair(p, out));
        let share = (p + 1) * total_chunks / geo.pairs - p * total_chunks / geo.pairs;
        for chunk in chunks.by_ref().take(share) {
            let stream = WhiteStreams::stream_id(Domain::Shaper, level.index, level.next_chunk);
            level.next_chunk += 1;
            tasks.push(Task::Chunk(stream, chunk));
        }
    }
    let lead = geo.carry - geo.history;
    team::each(&mut tasks, |_, task| match task {
        Task::Pair(p, out) => {
            let p = *p;
            // Only this worker uses its slot (the pool cannot outgrow `scratch`, see `fill`).
            let slot = rayon::current_thread_index().unwrap_or(0) % scratch.len();
            let mut s = scratch[slot].lock().unwrap_or_else(PoisonError::into_inner);
            let w0 = lead + 2 * p * geo.hop;
            let w = &white[w0..w0 + geo.hop + geo.n];
            let l0 = 2 * p * geo.hop / RATIO;
            let l = &low[l0..l0 + (geo.hop + geo.n) / RATIO];
            pair(tx, &mut s, geo, (shaper, interp), (w, l), out);
        }
        Task::Chunk(stream, chunk) => tx.white.fill(*stream, chunk),
    });
    drop(tasks);
    level.ready_pos = std::mem::take(&mut level.skip).max(room);
    if active {
        let end = level.white.len();
        level.white_next[..geo.carry].copy_from_slice(&level.white[end - geo.carry..]);
        std::mem::swap(&mut level.white, &mut level.white_next);
    }
    if has_below {
        let end = level.low.len();
        level.low.copy_within(end - low_history.., 0);
    }
}

/// One block pair: `white` holds hop + n input samples (block A's window is [0, n), block
/// B's [hop, hop + n)), `low` the matching (hop + n)/RATIO samples of the level below; writes
/// 2·hop outputs, the valid tail of each circular convolution.
fn pair(
    tx: &Transforms,
    s: &mut Scratch,
    geo: Geometry,
    (shaper, interp): (&Spectrum, &Spectrum),
    (white, low): (&[f64], &[f64]),
    out: &mut [f64],
) {
    let (n, hop) = (geo.n, geo.hop);
    let full = tx.get(n);
    if shaper.is_empty() {
        s.spec.re[..n].fill(0.0);
        s.spec.im[..n].fill(0.0);
    } else {
        // Block A as the real part, block B as the imaginary part.
        let input = (&white[..n], &white[hop..hop + n]);
        full.forward_into(input, s.spec.head(n), s.fft.head(n));
        let spec = s.spec.re[..n].iter_mut().zip(s.spec.im[..n].iter_mut());
        for ((cr, ci), (hr, hi)) in spec.zip(shaper.re.iter().zip(&shaper.im)) {
            let (a, b) = (*cr, *ci);
            *cr = a * hr - b * hi;
            *ci = a * hi + b * hr;
        }
    }
    if !interp.is_empty() {
        let (low_len, low_hop) = (n / RATIO, hop / RATIO);
        let input = (&low[..low_len], &low[low_hop..low_hop + low_len]);
        let tmp = s.fft.head(low_len);
        tx.get(low_len)
            .forward_into(input, s.low_spec.head(low_len), tmp);
        // The zero-stuffed branch's spectrum: the short spectrum repeated RATIO times.
        let spec = s.spec.re[..n]
            .chunks_exact_mut(low_len)
            .zip(s.spec.im[..n].chunks_exact_mut(low_len));
        let gain = interp
            .re
            .chunks_exact(low_len)
            .zip(interp.im.chunks_exact(low_len));
        for ((cr, ci), (gr, gi)) in spec.zip(gain) {
            let spec = cr.iter_mut().zip(ci.iter_mut());
            let gain = gr.iter().zip(gi);
            let short = s.low_spec.re[..low_len]
                .iter()
                .zip(&s.low_spec.im[..low_len]);
            for (((cr, ci), (gr, gi)), (lr, li)) in spec.zip(gain).zip(short) {
                *cr += gr * lr - gi * li;
                *ci += gr * li + gi * lr;
            }
        }
    }
    // Block A's valid outputs are the real parts from `history` on, block B's the imaginary.
    let (a, b) = out.split_at_mut(hop);
    full.inverse_tail(s.spec.head(n), s.fft.head(n), geo.history, (a, b));
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The top level's block geometry of `d`.
    fn top(d: &Design) -> Geometry {
        Geometry::of(&d.levels()[0])
    }

    fn flat(f: f64) -> f64 {
        if f >= 100.0 { 1e-12 } else { 0.0 }
    }

    #[test]
    fn output_does_not_depend_on_how_calls_are_split() {
        let d = Design::new(&flat, 48_000.0, 100.0).unwrap();
        let mut a = Shaper::new(&d, 42);
        let mut whole = vec![0.0; 100_000];
        a.fill(&mut whole);
        let hop = top(&d).hop;
        let mut b = Shaper::new(&d, 42);
        let mut parts = vec![0.0; 100_000];
        let mut pos = 0;
        // Short calls are served from a level's ready buffer, calls of a block pair (2·hop)
        // or more partly straight from the FFTs: both paths and their seams are crossed.
        for n in [1usize, 7, 4095, 333, 40_000, 2 * hop + 1, 2 * hop - 1]
            .iter()
            .cycle()
        {
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
        let batch_out = top(&d).out;
        let run = |threads: usize| {
            let pool = rayon::ThreadPoolBuilder::new()
                .num_threads(threads)
                .build()
                .unwrap();
            pool.install(|| {
                let mut s = Shaper::new(&d, 9);
                let mut x = vec![0.0; 3 * batch_out + 17];
                s.fill(&mut x);
                x
            })
        };
        let one = run(1);
        assert_eq!(one, run(2));
        assert_eq!(one, run(3));
    }

    #[test]
    fn shapers_filled_at_once_on_one_pool_finish_and_match_one_at_a_time() {
        // Library callers may fill several shapers from tasks of the same pool; each fill's
        // polling helpers must then never hold up another fill for good.
        let d = Design::new(&flat, 48_000.0, 1.0).unwrap();
        let batch_out = top(&d).out;
        let make = |seed: u64| {
            let mut s = Shaper::new(&d, seed);
            let mut x = vec![0.0; 2 * batch_out + 5];
            s.fill(&mut x);
            x
        };
        let alone: Vec<Vec<f64>> = (0..6).map(make).collect();
        for threads in [2, 3] {
            let pool = rayon::ThreadPoolBuilder::new()
                .num_threads(threads)
                .build()
                .unwrap();
            for round in 0..40 {
                let together: Vec<Vec<f64>> =
                    pool.install(|| (0..6u64).into_par_iter().map(make).collect());
                assert!(together == alone, "{threads} threads, round {round}");
            }
        }
    }

    #[test]
    fn a_run_started_anywhere_equals_the_run_from_zero_from_there_on() {
        // band.low = 0.05 Hz at 48 kHz: a deep pyramid, so boundaries of several levels.
        let d = Design::new(&flat, 48_000.0, 0.05).unwrap();
        assert!(d.levels().len() >= 8, "{} levels", d.levels().len());
        let hop = top(&d).hop as u64;
        let len = 20_000;
        let mut starts = vec![1, CHUNK as u64 - 1, CHUNK as u64, CHUNK as u64 + 1];
        starts.extend([hop - 1, hop, 2 * hop - 1, 2 * hop]);
        // Batch boundaries of level j fall at multiples of 4^j·out_j in output samples.
        for (j, level) in d.levels().iter().take(3).enumerate() {
            let k = Geometry::of(level).out as u64 * (RATIO as u64).pow(j as u32);
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
        let lead = top(&d).out + 1000;
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
