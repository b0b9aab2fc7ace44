//! Burst ("popcorn") sources: the `[[burst]]` tables of a profile and their validation.
//!
//! ```toml
//! [[burst]]
//! name = "input trap"                  # optional, default "burst 1", "burst 2", …
//! levels = ["0 uV", "3 uV", "7 uV"]    # ≥ 2 levels in the profile unit (V or A)
//! dwell = ["20 ms", "5 ms", "2 ms"]    # mean time spent in each level per visit, > 0
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
use super::{Dimension, Unit, format_quantity};
use crate::error::Result;

/// Keys allowed in a `[[burst]]` table.
pub(super) const BURST_KEYS: &[&str] = &["name", "levels", "dwell", "next", "sampling"];

/// How far a `next` row's sum may be from 1 before it is refused (absolute).
pub const NEXT_ROW_TOLERANCE: f64 = 1e-6;

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

/// Validate every `[[burst]]` table, in file order.
pub(super) fn validate_bursts(
    cx: &Cx<'_>,
    raw: &[Spanned<RawBurst>],
    unit: Unit,
) -> Result<Vec<Burst>> {
    raw.iter()
        .enumerate()
        .map(|(i, b)| validate_burst(cx, i, b.get_ref(), b.span(), unit))
        .collect()
}

fn validate_burst(
    cx: &Cx<'_>,
    i: usize,
    b: &RawBurst,
    span: Range<usize>,
    unit: Unit,
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
        let t = positive(
            cx,
            v,
            &format!("{}[{j}]", key("dwell")),
            Dimension::Time,
            unit,
        )?;
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

/// A short description of a burst's levels for messages, e.g. "0 V / 3 µV".
pub fn describe_levels(b: &Burst, unit: Unit) -> String {
    b.levels
        .iter()
        .map(|&v| format_quantity(v, unit.symbol()))
        .collect::<Vec<_>>()
        .join(" / ")
}
