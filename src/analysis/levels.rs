//! Discrete levels in a capture (burst or popcorn noise): levels, occupancies and mean dwell
//! times, reported only when they are clearly present.
//!
//! Method (common practice for random telegraph signals; REFERENCES §4 for their statistics):
//!
//! 1. [`LevelTrace`] keeps block means of the capture, `m` samples per point, at most
//!    2·[`MAX_POINTS`] points: when full, neighbouring points are averaged and `m` doubles, so
//!    memory is bounded for any length.
//! 2. [`LevelTrace::detect`] low-passes that trace further by block means of `s` = 1, 2, 4, …
//!    points (while ≥ 512 points remain) and, at each `s`, fits a one-dimensional Gaussian
//!    mixture (expectation–maximisation on a 4096-bin histogram) with 3 and then 2
//!    components. The smallest `s` at which a mixture is **clearly present** wins:
//!    * every component holds at least 1 % of the points;
//!    * adjacent means are at least [`SEPARATION`] (6) times the larger of their standard
//!      deviations apart — a Gaussian stays within ±3σ of its mean 99.73 % of the time
//!      (REFERENCES §8), so the levels' spreads do not overlap;
//!    * after classification every level has at least [`MIN_DWELLS`] complete dwells, whose
//!      mean is at least [`MIN_DWELL_POINTS`] points (slower than the trace's resolution);
//!    * with a known quantisation step q (integer files), adjacent levels are at least
//!      [`MIN_QUANTA`]·q apart, so the codes of a coarsely quantised signal are not taken for
//!      levels.
//! 3. Classification with hysteresis: the state moves to level j only when a point comes
//!    within a quarter of the spacing of level j, so noise must travel 3/4 of the spacing
//!    (≥ 4.5σ) to fake a switch. Levels are the means of the points of each state, without the
//!    first and last point of each dwell (the blocks a transition can fall in). Dwell times are
//!    run lengths × the time per point; the first and last dwell (cut by the record's ends) are
//!    not used. Dwells much shorter than a point (`m·s/fs`) are missed; the resolution is
//!    reported.
//!
//! Gaussian noise (white or 1/f) has a unimodal amplitude distribution, so a mixture fitted to
//! it has heavily overlapping components and fails the separation test.

use serde_json::{Value, json};

/// At most 2·`MAX_POINTS` block means are kept.
pub const MAX_POINTS: usize = 1 << 20;
/// Required spacing of adjacent levels, in units of the larger standard deviation.
pub const SEPARATION: f64 = 6.0;
/// Complete dwells needed in every level.
pub const MIN_DWELLS: usize = 10;
/// Smallest mean dwell, in points of the classified trace.
pub const MIN_DWELL_POINTS: f64 = 4.0;
/// Smallest spacing of adjacent levels, in quantisation steps.
pub const MIN_QUANTA: f64 = 8.0;
/// Smallest share of points per level.
const MIN_WEIGHT: f64 = 0.01;
/// Histogram bins for the mixture fit.
const HIST_BINS: usize = 4096;

/// The decimated trace of pass 1.
#[derive(Debug, Clone)]
pub struct LevelTrace {
    sample_rate_hz: f64,
    /// Samples per point.
    m: usize,
    points: Vec<f64>,
    acc: f64,
    acc_n: usize,
}

/// Detected levels, in ascending order.
#[derive(Debug, Clone, PartialEq)]
pub struct Levels {
    /// Level values in the capture's unit.
    pub levels: Vec<f64>,
    /// Standard deviation of the low-passed trace about each level, unit.
    pub spread: Vec<f64>,
    /// Fraction of time in each level.
    pub occupancy: Vec<f64>,
    /// Mean dwell time in each level, s.
    pub dwell_s: Vec<f64>,
    /// Complete dwells averaged for each level.
    pub dwells: Vec<usize>,
    /// Time per point of the classified trace (the dwell resolution), s.
    pub resolution_s: f64,
}

impl Levels {
    /// JSON: `levels`, `spread`, `occupancy`, `dwell_s`, `dwells`, `resolution_s`.
    pub fn to_json(&self) -> Value {
        json!({
            "levels": self.levels,
            "spread": self.spread,
            "occupancy": self.occupancy,
            "dwell_s": self.dwell_s,
            "dwells": self.dwells,
            "resolution_s": self.resolution_s,
        })
    }
}

impl LevelTrace {
    /// An empty trace for samples at `sample_rate_hz` Hz.
    pub fn new(sample_rate_hz: f64) -> LevelTrace {
        LevelTrace {
            sample_rate_hz,
            m: 1,
            points: Vec::new(),
            acc: 0.0,
            acc_n: 0,
        }
    }

    /// Adds samples (unit).
    pub fn push(&mut self, x: &[f64]) {
        let mut rest = x;
        while !rest.is_empty() {
            // The samples that complete the current point, summed one by one in order.
            let take = (self.m - self.acc_n).min(rest.len());
            for &v in &rest[..take] {
                self.acc += v;
            }
            rest = &rest[take..];
            self.acc_n += take;
            if self.acc_n == self.m {
                self.points.push(self.acc / self.m as f64);
                self.acc = 0.0;
                self.acc_n = 0;
                if self.points.len() == 2 * MAX_POINTS {
                    for i in 0..MAX_POINTS {
                        self.points[i] = 0.5 * (self.points[2 * i] + self.points[2 * i + 1]);
                    }
                    self.points.truncate(MAX_POINTS);
                    self.m *= 2;
                }
            }
        }
    }

    /// The trace less a line of `slope` unit per sample through sample index `centre`: point
    /// i averages samples i·m .. (i + 1)·m, so it loses the line's value at i·m + (m − 1)/2,
    /// exactly what the line contributed to it. The line's value at `centre` stays, so levels
    /// stay absolute (with the offset in them) when `centre` is the record's middle.
    pub fn less_line(&self, slope: f64, centre: f64) -> LevelTrace {
        let mut t = self.clone();
        let m = self.m as f64;
        for (i, p) in t.points.iter_mut().enumerate() {
            *p -= slope * (i as f64 * m + (m - 1.0) / 2.0 - centre);
        }
        t
    }

    /// Samples per point of the kept trace.
    pub fn samples_per_point(&self) -> usize {
        self.m
    }

    /// The levels, when clearly present (see the module docs); `None` otherwise. `quantum` is
    /// the capture's quantisation step in its unit (one LSB of an integer file), if any.
    ///
    /// The fits at every `s` and mixture size are independent and run on rayon's pool; the
    /// answer is the first success in the order above, whatever the number of threads.
    pub fn detect(&self, quantum: Option<f64>) -> Option<Levels> {
        use rayon::prelude::*;
        let mut tries = Vec::new();
        let mut s = 1;
        while self.points.len() / s >= 512 {
            tries.extend([(s, 3), (s, 2)]);
            s *= 2;
        }
        tries
            .into_par_iter()
            .with_max_len(1)
            .find_map_first(|(s, k)| {
                let y: Vec<f64> = self
                    .points
                    .chunks_exact(s)
                    .map(|c| c.iter().sum::<f64>() / s as f64)
                    .collect();
                let dt = (self.m * s) as f64 / self.sample_rate_hz;
                try_levels(&y, k, dt, quantum.unwrap_or(0.0))
            })
    }
}

/// One mixture component: weight, mean, standard deviation.
#[derive(Debug, Clone, Copy)]
struct Component {
    w: f64,
    mu: f64,
    sd: f64,
}

/// EM for a `k`-component 1-D Gaussian mixture on a histogram of `y`.
fn fit_mixture(y: &[f64], k: usize) -> Option<Vec<Component>> {
    let (lo, hi) = y
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &v| {
            (a.min(v), b.max(v))
        });
    if hi.partial_cmp(&lo) != Some(std::cmp::Ordering::Greater) {
        return None;
    }
    let width = (hi - lo) / HIST_BINS as f64;
    let mut counts = vec![0f64; HIST_BINS];
    for &v in y {
        counts[(((v - lo) / width) as usize).min(HIST_BINS - 1)] += 1.0;
    }
    let centres: Vec<f64> = (0..HIST_BINS)
        .map(|i| lo + (i as f64 + 0.5) * width)
        .collect();
    // Start at the quantiles (i + 0.5)/k.
    let n = y.len() as f64;
    let mut comps = Vec::with_capacity(k);
    let mut cum = 0.0;
    let mut next = 0;
    for (i, c) in counts.iter().enumerate() {
        cum += c;
        while next < k && cum >= (next as f64 + 0.5) / k as f64 * n {
            comps.push(Component {
                w: 1.0 / k as f64,
                mu: centres[i],
                sd: (hi - lo) / (4.0 * k as f64),
            });
            next += 1;
        }
    }
    while comps.len() < k {
        comps.push(Component {
            w: 1.0 / k as f64,
            mu: hi,
            sd: (hi - lo) / 4.0,
        });
    }
    // Sheppard's floor: a histogram cannot resolve spreads below a bin.
    let sd_floor = width / 12f64.sqrt();
    // Only occupied bins contribute: keep them (in bin order) once instead of skipping the
    // empty ones in every iteration.
    let occupied: Vec<(f64, f64)> = counts
        .iter()
        .zip(&centres)
        .filter(|(c, _)| **c != 0.0)
        .map(|(&c, &x)| (c, x))
        .collect();
    let mut resp = vec![0f64; k];
    let mut height = vec![0f64; k];
    let mut prev_ll = f64::NEG_INFINITY;
    for _ in 0..500 {
        let mut sw = vec![0f64; k];
        let mut sx = vec![0f64; k];
        let mut sxx = vec![0f64; k];
        let mut ll = 0.0;
        for (h, p) in height.iter_mut().zip(&comps) {
            *h = p.w / p.sd;
        }
        for &(c, x) in &occupied {
            let mut tot = 0.0;
            for ((r, p), h) in resp.iter_mut().zip(&comps).zip(&height) {
                let z = (x - p.mu) / p.sd;
                *r = h * (-0.5 * z * z).exp();
                tot += *r;
            }
            if tot <= 0.0 {
                continue;
            }
            ll += c * tot.ln();
            for j in 0..k {
                let g = c * resp[j] / tot;
                sw[j] += g;
                sx[j] += g * x;
                sxx[j] += g * x * x;
            }
        }
        for j in 0..k {
            if sw[j] <= 0.0 {
                return None;
            }
            let mu = sx[j] / sw[j];
            let var = (sxx[j] / sw[j] - mu * mu).max(0.0);
            comps[j] = Component {
                w: sw[j] / n,
                mu,
                sd: var.sqrt().max(sd_floor),
            };
        }
        if (ll - prev_ll).abs() <= 1e-10 * n {
            break;
        }
        prev_ll = ll;
    }
    comps.sort_by(|a, b| a.mu.total_cmp(&b.mu));
    Some(comps)
}

/// Levels from `y` (points `dt` seconds apart) with `k` components, if clearly present.
fn try_levels(y: &[f64], k: usize, dt: f64, quantum: f64) -> Option<Levels> {
    let comps = fit_mixture(y, k)?;
    if comps.iter().any(|c| c.w < MIN_WEIGHT) {
        return None;
    }
    for p in comps.windows(2) {
        let gap = p[1].mu - p[0].mu;
        if gap < SEPARATION * p[0].sd.max(p[1].sd) || gap < MIN_QUANTA * quantum {
            return None;
        }
    }
    let mu: Vec<f64> = comps.iter().map(|c| c.mu).collect();
    // Capture radius of each level: a quarter of the spacing to its nearest neighbour.
    let radius: Vec<f64> = (0..k)
        .map(|j| {
            let below = if j > 0 {
                mu[j] - mu[j - 1]
            } else {
                f64::INFINITY
            };
            let above = if j + 1 < k {
                mu[j + 1] - mu[j]
            } else {
                f64::INFINITY
            };
            0.25 * below.min(above)
        })
        .collect();
    let nearest = |v: f64| {
        (0..k)
            .min_by(|&a, &b| (v - mu[a]).abs().total_cmp(&(v - mu[b]).abs()))
            .expect("k ≥ 2")
    };
    let mut state = nearest(y[0]);
    // Runs: (state, start index, length).
    let mut runs: Vec<(usize, usize, usize)> = vec![(state, 0, 0)];
    for (i, &v) in y.iter().enumerate() {
        let j = nearest(v);
        if j != state && (v - mu[j]).abs() < radius[j] {
            state = j;
            runs.push((state, i, 0));
        }
        runs.last_mut().expect("one run").2 += 1;
    }
    let mut time = vec![0usize; k];
    let mut sum = vec![0f64; k];
    let mut sum2 = vec![0f64; k];
    let mut inner = vec![0usize; k];
    let mut dwell_sum = vec![0usize; k];
    let mut dwells = vec![0usize; k];
    let last = runs.len() - 1;
    for (r, &(st, start, len)) in runs.iter().enumerate() {
        time[st] += len;
        if len > 2 {
            for &v in &y[start + 1..start + len - 1] {
                sum[st] += v;
                sum2[st] += v * v;
                inner[st] += 1;
            }
        }
        if r != 0 && r != last {
            dwell_sum[st] += len;
            dwells[st] += 1;
        }
    }
    if dwells.iter().any(|&d| d < MIN_DWELLS) || inner.contains(&0) {
        return None;
    }
    if (0..k).any(|j| (dwell_sum[j] as f64) < MIN_DWELL_POINTS * dwells[j] as f64) {
        return None;
    }
    let n = y.len() as f64;
    let levels: Vec<f64> = (0..k).map(|j| sum[j] / inner[j] as f64).collect();
    Some(Levels {
        spread: (0..k)
            .map(|j| {
                (sum2[j] / inner[j] as f64 - levels[j] * levels[j])
                    .max(0.0)
                    .sqrt()
            })
            .collect(),
        levels,
        occupancy: time.iter().map(|&t| t as f64 / n).collect(),
        dwell_s: (0..k)
            .map(|j| dwell_sum[j] as f64 * dt / dwells[j] as f64)
            .collect(),
        dwells,
        resolution_s: dt,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A square wave between −1 and +1 with 100-sample dwells and a little deterministic
    /// jitter: two levels, exact dwell 100 samples.
    #[test]
    fn square_wave_levels_and_dwells() {
        let mut t = LevelTrace::new(1000.0);
        let x: Vec<f64> = (0..200_000)
            .map(|i| {
                let level = if (i / 100) % 2 == 0 { -1.0 } else { 1.0 };
                level + 0.01 * (((i * 7919) % 101) as f64 / 50.0 - 1.0)
            })
            .collect();
        t.push(&x);
        let l = t.detect(None).expect("two clear levels");
        // The same wave is 2 codes apart in units of 0.5: below 8 quanta, not levels.
        assert!(t.detect(Some(0.5)).is_none());
        assert!(t.detect(Some(0.2)).is_some());
        assert_eq!(l.levels.len(), 2);
        assert!((l.levels[0] + 1.0).abs() < 1e-3 && (l.levels[1] - 1.0).abs() < 1e-3);
        for d in &l.dwell_s {
            assert!((d - 0.1).abs() < 1e-9, "{d}");
        }
        assert!((l.occupancy[0] - 0.5).abs() < 1e-3);
    }

    /// Two levels on a drift of 20 level spacings over the record are lost in it, and found
    /// again, at their values at the record's middle, once the line is taken out.
    #[test]
    fn levels_on_a_drift_are_found_once_it_is_taken_out() {
        let n = 200_000usize;
        let slope = 40.0 / n as f64;
        let x: Vec<f64> = (0..n)
            .map(|i| {
                let level = if (i / 100) % 2 == 0 { -1.0 } else { 1.0 };
                level + slope * i as f64 + 0.01 * (((i * 7919) % 101) as f64 / 50.0 - 1.0)
            })
            .collect();
        let mut t = LevelTrace::new(1000.0);
        t.push(&x);
        assert!(t.detect(None).is_none());
        let centre = (n as f64 - 1.0) / 2.0;
        let l = t
            .less_line(slope, centre)
            .detect(None)
            .expect("two clear levels");
        let mid = slope * centre;
        assert!((l.levels[0] - (mid - 1.0)).abs() < 1e-3, "{:?}", l.levels);
        assert!((l.levels[1] - (mid + 1.0)).abs() < 1e-3, "{:?}", l.levels);
    }

    #[test]
    fn a_ramp_has_no_levels() {
        let mut t = LevelTrace::new(1000.0);
        let x: Vec<f64> = (0..100_000).map(|i| i as f64).collect();
        t.push(&x);
        assert!(t.detect(None).is_none());
    }

    /// Coarsely quantised noise: a slow walk between two adjacent codes (a drift captured at
    /// 1 LSB) and white noise of 0.5 LSB. Their codes are discrete but are not burst levels:
    /// the walk's codes are 1 quantum apart, the white noise's dwells are about one point.
    #[test]
    fn quantised_noise_has_no_levels() {
        let mut walk = LevelTrace::new(1000.0);
        let mut white = LevelTrace::new(1000.0);
        let mut state: u64 = 12345;
        let mut next = || {
            // Knuth's MMIX linear congruential generator (common practice), top bits.
            state = state
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            (state >> 11) as f64 / (1u64 << 53) as f64
        };
        let mut level = 0.0f64;
        let mut w = Vec::new();
        let mut x = Vec::new();
        for _ in 0..200_000 {
            if next() < 0.01 {
                level += if next() < 0.5 { -1.0 } else { 1.0 };
                level = level.clamp(0.0, 1.0);
            }
            w.push(level);
            x.push(((next() - 0.5) * 2.0).round());
        }
        walk.push(&w);
        white.push(&x);
        assert!(walk.detect(Some(1.0)).is_none());
        // Negative control: without the quantum the two codes do pass as levels.
        assert!(walk.detect(None).is_some_and(|l| l.levels.len() == 2));
        assert!(white.detect(Some(1.0)).is_none());
        assert!(
            white.detect(None).is_none(),
            "single-point dwells are not levels"
        );
    }

    #[test]
    fn memory_stays_bounded() {
        let mut t = LevelTrace::new(1.0);
        let x = vec![0.5; 1 << 16];
        for _ in 0..40 {
            t.push(&x);
        }
        assert!(t.points.len() <= 2 * MAX_POINTS);
        assert_eq!(t.samples_per_point(), 2);
    }
}
