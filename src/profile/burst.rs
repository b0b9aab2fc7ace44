//! Burst ("popcorn") sources: the `[[burst]]` tables of a profile and their validation.
//!
//! ```toml
//! [[burst]]
//! name = "input trap"                  # optional, default "burst 1", "burst 2", …
//! levels = ["0 uV", "3 uV", "7 uV"]    # ≥ 2 levels in the profile unit (V or A)
//! dwell = ["20 ms", "5 ms", "2 ms"]    # mean time per visit of each level, ≥ 1/1000 of 1/fs
//! next = [[0, 0.7, 0.3], [1, 0, 0], [0.5, 0.5, 0]]  # optional jump probabilities
//! sampling = "instant"                 # optional: "instant" (default) or "mean"
//! ```
//!
//! Row `i` of `next` gives the probabilities of jumping from level `i` to each level; each row
//! sums to 1 (within 1e-6, then normalised exactly) and has 0 on the diagonal (a level does
//! not jump to itself: its dwell time already says how long it stays). Without `next`, every
//! other level is equally likely. Every level must be reachable from every other one, so the
//! chain has one stationary occupancy and a stationary start.

use std::ops::Range;

use serde::Deserialize;
use toml::{Spanned, Value};

use super::schema::{Cx, missing, positive, quantity};
use super::{Dimension, Unit, format_quantity, format_quantity_exact};
use crate::error::Result;

/// Keys allowed in a `[[burst]]` table.
pub(super) const BURST_KEYS: &[&str] = &["name", "levels", "dwell", "next", "sampling"];

/// How far a `next` row's sum may be from 1 before it is refused (absolute).
pub const NEXT_ROW_TOLERANCE: f64 = 1e-6;

/// Shortest mean dwell time accepted, in sample periods (1/fs). The engine simulates a burst
/// jump by jump, so a level this short costs up to 1/`MIN_DWELL_SAMPLES` = 1000 jumps per
/// sample; without a bound a dwell of 1e-30 s never finishes one sample. A level visited
/// for a thousandth of a sample is too brief to show in the samples anyway: noise that fast is
/// white at this rate (a `[[floor]]` describes it). The value is this crate's cost limit, not
/// a physical one.
pub const MIN_DWELL_SAMPLES: f64 = 1e-3;

/// Most levels one burst may have. Its chain's model costs O(K³) per frequency (a K×K
/// complex solve) and the eigenvalue solve O(K³); at this limit an analysis against the
/// profile takes about 4 s on one core (measured 2026-12-04), at 128 levels 27 s. A chain of
/// more levels is better described as several bursts (independent traps add).
pub const MAX_BURST_LEVELS: usize = 64;

/// Most levels all bursts of a profile may have together (four bursts at
/// [`MAX_BURST_LEVELS`]): the cost of the bursts' models adds up.
pub const MAX_TOTAL_BURST_LEVELS: usize = 256;

/// How a burst source's path becomes one sample.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum BurstSampling {
    /// The level at the sample instant n/fs: every sample is exactly one of the levels, and
    /// the steps are not band-limited (their density aliases into 0…fs/2).
    Instant,
    /// The mean of the path over the sample interval [n/fs, (n+1)/fs): a sample that contains
    /// a step lies between the levels; the steps are band-limited by a one-sample box filter.
    Mean,
}

impl BurstSampling {
    /// The profile spelling: `"instant"` or `"mean"`.
    pub fn name(self) -> &'static str {
        match self {
            BurstSampling::Instant => "instant",
            BurstSampling::Mean => "mean",
        }
    }
}

/// One burst source: a continuous-time Markov chain over discrete levels, independent of every
/// other source. Levels are DC-coupled physical states (the band does not shape them).
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Burst {
    /// The source's name: the `name` key, or `burst 1`, `burst 2`, … in file order.
    pub name: String,
    /// The levels in the profile unit (V or A); at least two.
    pub levels: Vec<f64>,
    /// Mean dwell time per visit of each level, in seconds (> 0); same length as `levels`.
    pub dwell_s: Vec<f64>,
    /// Jump probabilities (dimensionless): `next[i][j]` from level i to level j; rows sum to
    /// 1 and the diagonal is 0. Filled with the default (every other level equally likely)
    /// when the profile has no `next`.
    pub next: Vec<Vec<f64>>,
    /// Instant or interval-mean sampling.
    pub sampling: BurstSampling,
}

impl Burst {
    /// Number of levels (states of the chain).
    pub fn len(&self) -> usize {
        self.levels.len()
    }

    /// True if the burst has no levels (never for a validated profile).
    pub fn is_empty(&self) -> bool {
        self.levels.is_empty()
    }

    /// The default jump matrix for `k` levels: every other level equally likely, 1/(k−1).
    pub fn default_next(k: usize) -> Vec<Vec<f64>> {
        let p = 1.0 / (k as f64 - 1.0);
        (0..k)
            .map(|i| (0..k).map(|j| if i == j { 0.0 } else { p }).collect())
            .collect()
    }
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct RawBurst {
    name: Option<String>,
    levels: Option<Spanned<Vec<Spanned<Value>>>>,
    dwell: Option<Spanned<Vec<Spanned<Value>>>>,
    next: Option<Spanned<Vec<Spanned<Value>>>>,
    sampling: Option<Spanned<Value>>,
}

/// Validate every `[[burst]]` table, in file order, against the sample rate `fs` (Hz).
pub(super) fn validate_bursts(
    cx: &Cx<'_>,
    raw: &[Spanned<RawBurst>],
    unit: Unit,
    fs: f64,
) -> Result<Vec<Burst>> {
    let mut total = 0;
    let mut bursts = Vec::with_capacity(raw.len());
    for (i, b) in raw.iter().enumerate() {
        let burst = validate_burst(cx, i, b.get_ref(), b.span(), unit, fs)?;
        total += burst.len();
        if total > MAX_TOTAL_BURST_LEVELS {
            return Err(cx.err(
                &format!("burst[{i}].levels"),
                b.get_ref().levels.as_ref().map(|l| l.span()),
                format!(
                    "a profile's bursts may have at most {MAX_TOTAL_BURST_LEVELS} levels \
                     together; with this burst they have {total}"
                ),
            ));
        }
        // The chain's relaxation rates do not depend on the rate: a chain whose eigenvalues
        // cannot be found is refused here, so no command meets it later.
        if let Err(e) = crate::model::burst::relaxation_modes(&burst) {
            return Err(cx.err(&format!("burst[{i}]"), Some(b.span()), e.to_string()));
        }
        bursts.push(burst);
    }
    Ok(bursts)
}

fn validate_burst(
    cx: &Cx<'_>,
    i: usize,
    b: &RawBurst,
    span: Range<usize>,
    unit: Unit,
    fs: f64,
) -> Result<Burst> {
    let key = |k: &str| format!("burst[{i}].{k}");
    let levels_v = b.levels.as_ref().ok_or_else(|| {
        missing(
            cx,
            &key("levels"),
            Some(span.clone()),
            "levels = [\"0 uV\", \"3 uV\"]",
        )
    })?;
    let dwell_v = b.dwell.as_ref().ok_or_else(|| {
        missing(
            cx,
            &key("dwell"),
            Some(span.clone()),
            "dwell = [\"20 ms\", \"5 ms\"] (one mean dwell time per level)",
        )
    })?;
    let k = levels_v.get_ref().len();
    if k > MAX_BURST_LEVELS {
        return Err(cx.err(
            &key("levels"),
            Some(levels_v.span()),
            format!(
                "a burst may have at most {MAX_BURST_LEVELS} levels, got {k}; describe more \
                 levels as several bursts (independent traps add)"
            ),
        ));
    }
    if k < 2 {
        return Err(cx.err(
            &key("levels"),
            Some(levels_v.span()),
            format!(
                "a burst needs at least two levels to step between, got {k}; e.g. \
                 levels = [\"0 {u}\", \"3 u{u}\"]",
                u = unit.symbol()
            ),
        ));
    }
    let mut levels = Vec::with_capacity(k);
    for (j, v) in levels_v.get_ref().iter().enumerate() {
        let x = quantity(
            cx,
            v.get_ref(),
            v.span(),
            &format!("{}[{j}]", key("levels")),
            Dimension::Amplitude,
            unit,
        )?;
        levels.push(x);
    }
    if dwell_v.get_ref().len() != k {
        return Err(cx.err(
            &key("dwell"),
            Some(dwell_v.span()),
            format!(
                "needs one mean dwell time per level: {k} levels but {} dwell times",
                dwell_v.get_ref().len()
            ),
        ));
    }
    let mut dwell_s = Vec::with_capacity(k);
    for (j, v) in dwell_v.get_ref().iter().enumerate() {
        let jkey = format!("{}[{j}]", key("dwell"));
        let t = positive(cx, v, &jkey, Dimension::Time, unit)?;
        if t * fs < MIN_DWELL_SAMPLES {
            return Err(cx.err(
                &jkey,
                Some(v.span()),
                format!(
                    "must be at least 1/1000 of a sample period ({} at sample_rate {}), got \
                     {}: every jump is simulated, and a level that brief is white noise at \
                     this rate (describe it with a [[floor]], or raise sample_rate)",
                    format_quantity(MIN_DWELL_SAMPLES / fs, "s"),
                    format_quantity(fs, "Hz"),
                    format_quantity(t, "s")
                ),
            ));
        }
        dwell_s.push(t);
    }
    let next = match &b.next {
        None => Burst::default_next(k),
        Some(n) => next_matrix(cx, &key("next"), n, k)?,
    };
    let sampling = match &b.sampling {
        None => BurstSampling::Instant,
        Some(s) => match s.get_ref() {
            Value::String(t) if t == "instant" => BurstSampling::Instant,
            Value::String(t) if t == "mean" => BurstSampling::Mean,
            other => {
                return Err(cx.err(
                    &key("sampling"),
                    Some(s.span()),
                    format!(
                        "expected \"instant\" (the level at each sample instant) or \"mean\" \
                         (the mean over each sample interval), got {other}"
                    ),
                ));
            }
        },
    };
    Ok(Burst {
        name: b.name.clone().unwrap_or_else(|| format!("burst {}", i + 1)),
        levels,
        dwell_s,
        next,
        sampling,
    })
}

/// The `next` matrix: k rows of k probabilities, rows summing to 1, zero diagonal, and every
/// level reachable from every other.
fn next_matrix(
    cx: &Cx<'_>,
    key: &str,
    n: &Spanned<Vec<Spanned<Value>>>,
    k: usize,
) -> Result<Vec<Vec<f64>>> {
    let rows = n.get_ref();
    if rows.len() != k {
        return Err(cx.err(
            key,
            Some(n.span()),
            format!(
                "needs one row of jump probabilities per level: {k} levels but {} rows",
                rows.len()
            ),
        ));
    }
    let mut m = Vec::with_capacity(k);
    for (i, row) in rows.iter().enumerate() {
        let rkey = format!("{key}[{i}]");
        let Value::Array(items) = row.get_ref() else {
            return Err(cx.err(
                &rkey,
                Some(row.span()),
                format!("expected a row of {k} probabilities, got {}", row.get_ref()),
            ));
        };
        if items.len() != k {
            return Err(cx.err(
                &rkey,
                Some(row.span()),
                format!(
                    "expected {k} probabilities (one per level), got {}",
                    items.len()
                ),
            ));
        }
        let mut r = Vec::with_capacity(k);
        for (j, item) in items.iter().enumerate() {
            let p = match item {
                Value::Float(x) => *x,
                Value::Integer(x) => *x as f64,
                _ => f64::NAN,
            };
            if !(p.is_finite() && (0.0..=1.0).contains(&p)) {
                return Err(cx.err(
                    &rkey,
                    Some(row.span()),
                    format!("entry {j} must be a probability from 0 to 1, got {item}"),
                ));
            }
            r.push(p);
        }
        if r[i] != 0.0 {
            return Err(cx.err(
                &rkey,
                Some(row.span()),
                format!(
                    "level {i} cannot jump to itself: entry {i} must be 0 (its dwell time \
                     already says how long it stays), got {}",
                    r[i]
                ),
            ));
        }
        let sum: f64 = r.iter().sum();
        if (sum - 1.0).abs() > NEXT_ROW_TOLERANCE {
            return Err(cx.err(
                &rkey,
                Some(row.span()),
                format!("the jump probabilities from level {i} must sum to 1, got {sum}"),
            ));
        }
        for p in &mut r {
            *p /= sum;
        }
        m.push(r);
    }
    if let Some((from, to)) = unreachable_pair(&m) {
        return Err(cx.err(
            key,
            Some(n.span()),
            format!(
                "level {to} can never be reached from level {from}: every level must be \
                 reachable from every other (one chain, one stationary occupancy)"
            ),
        ));
    }
    Ok(m)
}

/// The first (from, to) pair of levels with no path of non-zero jumps, if any.
fn unreachable_pair(m: &[Vec<f64>]) -> Option<(usize, usize)> {
    let k = m.len();
    for from in 0..k {
        let mut seen = vec![false; k];
        let mut stack = vec![from];
        seen[from] = true;
        while let Some(i) = stack.pop() {
            for j in 0..k {
                if m[i][j] > 0.0 && !seen[j] {
                    seen[j] = true;
                    stack.push(j);
                }
            }
        }
        if let Some(to) = seen.iter().position(|s| !s) {
            return Some((from, to));
        }
    }
    None
}

/// A short description of a burst's levels for messages, e.g. "0 V / 3 µV": the levels as
/// given, each exactly ([`format_quantity_exact`]).
pub fn describe_levels(b: &Burst, unit: Unit) -> String {
    b.levels
        .iter()
        .map(|&v| format_quantity_exact(v, unit.symbol()))
        .collect::<Vec<_>>()
        .join(" / ")
}

#[cfg(test)]
mod tests {
    use super::super::parse_profile;
    use super::*;

    const BASE: &str = "sample_rate = \"10 kHz\"\n[band]\nlow = 1\nhigh = \"4 kHz\"\n";

    fn parse(body: &str) -> crate::error::Result<crate::profile::Profile> {
        parse_profile(&format!("{BASE}{body}"), "b.toml")
    }

    /// (key, line, message) of the error `body` gives (lines count from the file start; the
    /// base takes 4).
    fn fail(body: &str) -> (String, Option<usize>, String) {
        super::super::schema::tests::profile_error(&format!("{BASE}{body}"), "b.toml")
    }

    #[test]
    fn a_burst_only_profile_resolves_with_defaults() {
        let p = parse("[[burst]]\nlevels = [\"0 uV\", \"3 uV\", \"7 uV\"]\ndwell = [\"20 ms\", \"5 ms\", 0.002]\n")
            .unwrap();
        assert!(p.sources.is_empty());
        assert_eq!(p.bursts.len(), 1);
        let b = &p.bursts[0];
        assert_eq!(b.name, "burst 1");
        assert_eq!(b.levels, [0.0, 3e-6, 7e-6]);
        assert_eq!(b.dwell_s, [0.02, 0.005, 0.002]);
        assert_eq!(b.next, Burst::default_next(3));
        assert_eq!(b.next[0], [0.0, 0.5, 0.5]);
        assert_eq!(b.sampling, BurstSampling::Instant);
        let j = p.to_json();
        assert_eq!(j["bursts"][0]["levels"][1], 3e-6);
        assert_eq!(j["bursts"][0]["sampling"], "instant");
        assert_eq!(j["bursts"][0]["next"][2][1], 0.5);
    }

    #[test]
    fn bursts_and_gaussian_sources_mix_and_next_is_normalised() {
        let p = parse(
            "[[floor]]\ndensity = \"4 nV/rtHz\"\n\
             [[burst]]\nname = \"input trap\"\nlevels = [\"-1 mV\", \"2 mV\", \"3 mV\"]\n\
             dwell = [\"1 ms\", \"2 ms\", \"3 ms\"]\nnext = [[0, 0.7, 0.3], [1, 0, 0], [0.3333333, 0.6666667, 0]]\n\
             sampling = \"mean\"\n[[burst]]\nlevels = [0, 1]\ndwell = [1, 2]\n",
        )
        .unwrap();
        assert_eq!(p.sources.len(), 1);
        assert_eq!(p.bursts.len(), 2);
        assert_eq!(p.bursts[0].name, "input trap");
        assert_eq!(p.bursts[1].name, "burst 2");
        assert_eq!(p.bursts[0].sampling, BurstSampling::Mean);
        assert_eq!(p.bursts[0].levels, [-1e-3, 2e-3, 3e-3]);
        let row: f64 = p.bursts[0].next[2].iter().sum();
        assert!((row - 1.0).abs() < 1e-15);
    }

    #[test]
    fn bad_bursts_name_the_key_and_line() {
        let cases: &[(&str, &str, usize, &str)] = &[
            (
                "[[burst]]\nlevels = [0, 1, 2]\ndwell = [1, 2]\n",
                "burst[0].dwell",
                7,
                "3 levels but 2 dwell times",
            ),
            (
                "[[burst]]\nlevels = [\"1 uV\"]\ndwell = [1]\n",
                "burst[0].levels",
                6,
                "at least two levels",
            ),
            (
                "[[burst]]\nlevels = [0, 1]\ndwell = [1, \"0 ms\"]\n",
                "burst[0].dwell[1]",
                7,
                "> 0",
            ),
            (
                "[[burst]]\nlevels = [0, 1]\ndwell = [1, \"-2 ms\"]\n",
                "burst[0].dwell[1]",
                7,
                "> 0",
            ),
            (
                "[[burst]]\nlevels = [0, \"1 uA\"]\ndwell = [1, 2]\n",
                "burst[0].levels[1]",
                6,
                "unit is V",
            ),
            (
                "[[burst]]\nlevels = [0, 1, 2]\ndwell = [1, 2, 3]\nnext = [[0, 0.5, 0.4], [1, 0, 0], [1, 0, 0]]\n",
                "burst[0].next[0]",
                8,
                "must sum to 1, got 0.9",
            ),
            (
                "[[burst]]\nlevels = [0, 1, 2]\ndwell = [1, 2, 3]\nnext = [\n  [0, 0.5, 0.5],\n  [0.5, 0.5, 0],\n  [1, 0, 0],\n]\n",
                "burst[0].next[1]",
                10,
                "cannot jump to itself",
            ),
            (
                "[[burst]]\nlevels = [0, 1, 2]\ndwell = [1, 2, 3]\nnext = [[0, 1, 0], [1, 0, 0]]\n",
                "burst[0].next",
                8,
                "3 levels but 2 rows",
            ),
            (
                "[[burst]]\nlevels = [0, 1, 2]\ndwell = [1, 2, 3]\nnext = [[0, 1], [1, 0, 0], [1, 0, 0]]\n",
                "burst[0].next[0]",
                8,
                "expected 3 probabilities",
            ),
            (
                "[[burst]]\nlevels = [0, 1, 2]\ndwell = [1, 2, 3]\nnext = [[0, 1.5, -0.5], [1, 0, 0], [1, 0, 0]]\n",
                "burst[0].next[0]",
                8,
                "probability from 0 to 1",
            ),
            (
                "[[burst]]\nlevels = [0, 1, 2, 3]\ndwell = [1, 2, 3, 4]\n\
                 next = [[0, 1, 0, 0], [1, 0, 0, 0], [0, 0, 0, 1], [0, 0, 1, 0]]\n",
                "burst[0].next",
                8,
                "level 2 can never be reached from level 0",
            ),
            (
                "[[burst]]\nlevels = [0, 1]\ndwell = [1, 2]\nsampling = \"average\"\n",
                "burst[0].sampling",
                8,
                "\"instant\"",
            ),
            (
                "[[burst]]\nlevels = [0, 1]\ndwell = [1, 2]\nnxt = 1\n",
                "burst[0].nxt",
                8,
                "did you mean `next`",
            ),
            (
                "[[burst]]\ndwell = [1, 2]\n",
                "burst[0].levels",
                5,
                "missing",
            ),
            (
                "[[burst]]\nlevels = [1, 2]\n",
                "burst[0].dwell",
                5,
                "missing",
            ),
            ("[burst]\nlevels = [1, 2]\n", "burst", 5, "[[burst]]"),
        ];
        for &(body, key, line, needle) in cases {
            let (k, l, msg) = fail(body);
            assert_eq!((k.as_str(), l), (key, Some(line)), "{body}: {msg}");
            assert!(msg.contains(needle), "{body}: {msg:?} lacks {needle:?}");
        }
        let e = parse("[[burst]]\nlevels = [0]\ndwell = [1]\n").unwrap_err();
        assert!(
            e.to_string().starts_with("b.toml:6: burst[0].levels: "),
            "{e}"
        );
        assert_eq!(e.exit_code(), 2);
    }

    /// At 10 kHz a sample period is 100 µs, so the shortest dwell is 100 ns: exactly that is
    /// accepted, just below (or 1e-30 s, which would never finish a sample) is refused at its
    /// own key and line, saying the limit.
    #[test]
    fn dwell_below_a_thousandth_of_a_sample_is_refused() {
        let p = parse("[[burst]]\nlevels = [0, 1]\ndwell = [\"100 ns\", 1]\n").unwrap();
        assert_eq!(p.bursts[0].dwell_s[0] * p.sample_rate_hz, MIN_DWELL_SAMPLES);
        for short in ["\"99 ns\"", "\"1e-30 s\""] {
            let (k, l, msg) = fail(&format!(
                "[[burst]]\nlevels = [0, 1]\ndwell = [1,\n  {short}]\n"
            ));
            assert_eq!((k.as_str(), l), ("burst[0].dwell[1]", Some(8)), "{msg}");
            assert!(
                msg.contains("1/1000 of a sample period (100 ns at sample_rate 10 kHz)"),
                "{msg}"
            );
        }
    }
}
