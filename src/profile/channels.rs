//! The `channels` and `correlation` keys: how many channels and how they are correlated.
//!
//! `channels = N` (1 ≤ N ≤ [`MAX_CHANNELS`], default 1). `correlation` is either one
//! coefficient ρ for every pair (`correlation = 0.3`) or the full N×N matrix
//! (`correlation = [[1, 0.3], [0.3, 1]]`); without it the channels are independent. A matrix
//! must be symmetric with a unit diagonal, |ρ| ≤ 1, and positive semi-definite (a correlation
//! matrix is a covariance matrix of unit variances, so it has no negative eigenvalue). A single
//! coefficient with N channels gives eigenvalues 1 + (N − 1)ρ and 1 − ρ, so it must satisfy
//! −1/(N − 1) ≤ ρ ≤ 1 (common practice, equicorrelation matrix).

use std::ops::Range;

use toml::{Spanned, Value};

use super::schema::Cx;
use crate::error::Result;

/// Most channels a profile may ask for. 64 covers every common multi-channel rig and DAC
/// (common practice); above it the per-frame mixing (N² multiplies a frame) and N copies of
/// the engine cost more than a test vector is worth, and WAV readers rarely go further.
pub const MAX_CHANNELS: usize = 64;

/// Tolerance for symmetry and the smallest eigenvalue of a matrix of size N:
/// 16·N·ε (f64 ε), the scale of rounding in a symmetric eigen-decomposition (common practice:
/// backward error of order N·ε·‖C‖, ‖C‖ ≤ N for a correlation matrix, here taken as N·ε
/// times a safety factor of 16).
pub fn tolerance(n: usize) -> f64 {
    16.0 * n as f64 * f64::EPSILON
}

/// Validates `channels` and `correlation`; returns N and the N×N correlation matrix (identity
/// when no correlation is given).
pub(super) fn validate_channels(
    cx: &Cx<'_>,
    channels: Option<&Spanned<Value>>,
    correlation: Option<&Spanned<Value>>,
) -> Result<(usize, Vec<Vec<f64>>)> {
    let n = match channels {
        None => 1,
        Some(v) => match v.get_ref() {
            Value::Integer(i) if *i >= 1 && *i as usize <= MAX_CHANNELS => *i as usize,
            other => {
                return Err(cx.err(
                    "channels",
                    Some(v.span()),
                    format!(
                        "expected a whole number of channels from 1 to {MAX_CHANNELS}, got {other}"
                    ),
                ));
            }
        },
    };
    let Some(c) = correlation else {
        return Ok((n, identity(n)));
    };
    let span = Some(c.span());
    let err = |key: &str, span: Option<Range<usize>>, msg: String| cx.err(key, span, msg);
    let matrix = match c.get_ref() {
        Value::Array(rows) => {
            if rows.len() != n {
                return Err(err(
                    "correlation",
                    span,
                    format!(
                        "expected a {n}×{n} matrix (channels = {n}), got {} rows",
                        rows.len()
                    ),
                ));
            }
            let mut m = Vec::with_capacity(n);
            for (i, row) in rows.iter().enumerate() {
                let Value::Array(row) = row else {
                    return Err(err(
                        &format!("correlation[{i}]"),
                        span,
                        format!("expected a row of {n} numbers, got {row}"),
                    ));
                };
                if row.len() != n {
                    return Err(err(
                        &format!("correlation[{i}]"),
                        span,
                        format!(
                            "expected a {n}×{n} matrix (channels = {n}), but row {i} has {} entries",
                            row.len()
                        ),
                    ));
                }
                let mut r = Vec::with_capacity(n);
                for (j, x) in row.iter().enumerate() {
                    let key = format!("correlation[{i}][{j}]");
                    r.push(coefficient(x).ok_or_else(|| {
                        err(
                            &key,
                            span.clone(),
                            format!("expected a correlation coefficient from -1 to 1, got {x}"),
                        )
                    })?);
                }
                m.push(r);
            }
            check_matrix(&m).map_err(|(key, msg)| err(&key, span.clone(), msg))?;
            m
        }
        x => {
            let Some(rho) = coefficient(x) else {
                return Err(err(
                    "correlation",
                    span,
                    format!(
                        "expected a coefficient from -1 to 1 for every pair, or a {n}×{n} \
                         matrix, got {x}"
                    ),
                ));
            };
            if n == 1 {
                // One channel has no pair: a coefficient here would be ignored silently.
                return Err(err(
                    "correlation",
                    span,
                    format!(
                        "{rho} correlates pairs of channels, but this profile has one channel; \
                         set channels = 2 or more, or remove correlation"
                    ),
                ));
            }
            {
                let low = -1.0 / (n as f64 - 1.0);
                if rho < low - tolerance(n) {
                    return Err(err(
                        "correlation",
                        span,
                        format!(
                            "{rho} for every pair of {n} channels is not a valid correlation: \
                             the matrix would have eigenvalue 1 + (N − 1)ρ = {} < 0; expected \
                             ρ ≥ −1/(N − 1) = {low}",
                            1.0 + (n as f64 - 1.0) * rho
                        ),
                    ));
                }
            }
            (0..n)
                .map(|i| (0..n).map(|j| if i == j { 1.0 } else { rho }).collect())
                .collect()
        }
    };
    Ok((n, matrix))
}

fn identity(n: usize) -> Vec<Vec<f64>> {
    (0..n)
        .map(|i| (0..n).map(|j| f64::from(u8::from(i == j))).collect())
        .collect()
}

/// A finite number in [−1, 1].
fn coefficient(v: &Value) -> Option<f64> {
    let x = match v {
        Value::Integer(i) => *i as f64,
        Value::Float(f) => *f,
        _ => return None,
    };
    (x.is_finite() && x.abs() <= 1.0).then_some(x)
}

/// Checks a square matrix of coefficients in [−1, 1]: unit diagonal, symmetric, positive
/// semi-definite. On failure, the key path and the message.
pub fn check_matrix(m: &[Vec<f64>]) -> std::result::Result<(), (String, String)> {
    let n = m.len();
    let tol = tolerance(n);
    for (i, row) in m.iter().enumerate() {
        if row[i] != 1.0 {
            return Err((
                format!("correlation[{i}][{i}]"),
                format!(
                    "the diagonal of a correlation matrix is 1 (each channel with itself), got {}",
                    row[i]
                ),
            ));
        }
        for (j, other) in m.iter().enumerate().take(i) {
            if (row[j] - other[i]).abs() > tol {
                return Err((
                    format!("correlation[{i}][{j}]"),
                    format!(
                        "a correlation matrix is symmetric: [{i}][{j}] = {} but [{j}][{i}] = {}",
                        m[i][j], m[j][i]
                    ),
                ));
            }
        }
    }
    let lambda_min = eigen(m).0.iter().copied().fold(f64::INFINITY, f64::min);
    if lambda_min < -tol {
        return Err((
            "correlation".to_string(),
            format!(
                "not positive semi-definite: its smallest eigenvalue is {lambda_min:.6e} \
                 (expected ≥ 0 within {tol:.1e}); no set of channels can have these \
                 correlations"
            ),
        ));
    }
    Ok(())
}

/// Eigenvalues and eigenvectors (columns) of the symmetric part of `m`.
pub(crate) fn eigen(m: &[Vec<f64>]) -> (Vec<f64>, nalgebra::DMatrix<f64>) {
    let n = m.len();
    let a = nalgebra::DMatrix::from_fn(n, n, |i, j| 0.5 * (m[i][j] + m[j][i]));
    let e = nalgebra::SymmetricEigen::new(a);
    (e.eigenvalues.iter().copied().collect(), e.eigenvectors)
}
