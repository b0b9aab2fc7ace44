//! The `[[inertial]]` table: the random walk N, bias instability B and rate random walk K of
//! an inertial sensor (IEEE Std 952-1997 Annex C), each optional, expanded into one source per
//! term given.
//!
//! ```toml
//! [[inertial]]
//! name = "gyro x"                  # optional; default "inertial 1"
//! random_walk = "0.2 deg/rth"      # N: unit/√Hz (= unit·s^½), or °/√h, m/s/√h
//! bias_instability = "3 deg/h"     # B: the unit, or °/h
//! rate_random_walk = "0.5 deg/h/rth" # K: unit·s^-½: °/h/√h, unit/√h, unit/s/√Hz
//! ```

use serde::Deserialize;
use toml::{Spanned, Value};

use super::{Cx, positive};
use crate::error::Result;
use crate::profile::{Dimension, InertialTerm, Source, SourceKind, Unit};

/// The keys of an `[[inertial]]` table.
pub const INERTIAL_KEYS: &[&str] = &[
    "name",
    "random_walk",
    "bias_instability",
    "rate_random_walk",
];

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct RawInertial {
    name: Option<String>,
    random_walk: Option<Spanned<Value>>,
    bias_instability: Option<Spanned<Value>>,
    rate_random_walk: Option<Spanned<Value>>,
}

/// The `[[inertial]]` tables, in file order: one source per term given, named
/// `<name> random walk`, `<name> bias instability`, `<name> rate random walk`.
pub(super) fn validate_inertial(
    cx: &Cx<'_>,
    tables: &[Spanned<RawInertial>],
    unit: Unit,
) -> Result<Vec<Source>> {
    let mut sources = Vec::new();
    for (i, t) in tables.iter().enumerate() {
        let span = Some(t.span());
        let t = t.get_ref();
        let name = t
            .name
            .clone()
            .unwrap_or_else(|| format!("inertial {}", i + 1));
        let terms = [
            (InertialTerm::RandomWalk, &t.random_walk, Dimension::Density),
            (
                InertialTerm::BiasInstability,
                &t.bias_instability,
                Dimension::Amplitude,
            ),
            (
                InertialTerm::RateRandomWalk,
                &t.rate_random_walk,
                Dimension::RateWalk,
            ),
        ];
        let before = sources.len();
        for (term, value, dim) in terms {
            let Some(v) = value else { continue };
            let key = format!("inertial[{i}].{}", term.key());
            let coefficient = positive(cx, v, &key, dim, unit)?;
            sources.push(Source {
                name: format!("{name} {}", term.words()),
                kind: SourceKind::Inertial { term, coefficient },
            });
        }
        if sources.len() == before {
            return Err(cx.err(
                &format!("inertial[{i}]"),
                span,
                "needs at least one of random_walk (N), bias_instability (B) and \
                 rate_random_walk (K), e.g. random_walk = \"0.2 deg/rth\"",
            ));
        }
    }
    Ok(sources)
}
