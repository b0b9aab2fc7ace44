//! The Allan deviation picture of `analyze --allan-plot`: log-log σ(τ) with its intervals,
//! the profile's curve, and the three fitted slope lines (N/√τ, 0.664·B, K·√(τ/3)), laid out
//! by [`super::figure`]. Kept apart from [`super::chart`] so each picture has one home.

use super::figure::{Axis, Figure, Mark, Pen, page};
use crate::analysis::allan::{AllanDeviation, CONFIDENCE, InertialFit};
use crate::model::allan::bias_instability_factor;
use crate::model::budget::log_spaced;

/// The SVG text of the picture; `profile_adev` (unit, at the same τ) adds the profile's
/// curve; `title` names the profile. A picture with nothing to draw says so in its place.
pub fn allan_svg(
    dev: &AllanDeviation,
    fit: &InertialFit,
    profile_adev: Option<&[f64]>,
    unit: &str,
    title: Option<&str>,
) -> String {
    match allan_figure(dev, fit, profile_adev, unit, title) {
        Some(f) => page(&[f]),
        None => "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"960\" height=\"60\">\
                 <text x=\"10\" y=\"30\">picture not drawn: no positive Allan deviation</text>\
                 </svg>\n"
            .into(),
    }
}

/// A fitted term's line: coefficient, legend text, pen number and σ(coefficient, τ).
type FittedLine = (f64, &'static str, usize, fn(f64, f64) -> f64);

/// The figure: intervals shaded, measured points, the profile's curve, the fitted lines
/// (unit against τ in s). `None` without a positive deviation.
pub fn allan_figure(
    dev: &AllanDeviation,
    fit: &InertialFit,
    profile_adev: Option<&[f64]>,
    unit: &str,
    title: Option<&str>,
) -> Option<Figure> {
    let n = dev.tau_s.len();
    let (t0, t1) = (*dev.tau_s.first()? / 1.5, dev.tau_s[n - 1] * 1.5);
    let (lo, hi) = dev
        .adev_low
        .iter()
        .chain(&dev.adev_high)
        .chain(profile_adev.unwrap_or(&[]))
        .copied()
        .filter(|v| v.is_finite() && *v > 0.0)
        .fold((f64::INFINITY, 0f64), |(a, b), v| (a.min(v), b.max(v)));
    if !(lo.is_finite() && hi > 0.0) {
        return None;
    }
    let at = |y: &[f64]| -> Vec<(f64, f64)> {
        dev.tau_s.iter().copied().zip(y.iter().copied()).collect()
    };
    let blue = "#2f6fbf";
    let mut marks = vec![
        Mark::Area {
            name: format!("{:.0} % intervals", 100.0 * CONFIDENCE),
            upper: at(&dev.adev_high),
            lower: at(&dev.adev_low),
            color: blue.into(),
            opacity: 0.22,
        },
        Mark::Dots {
            name: "measured".into(),
            points: at(&dev.adev),
            color: blue.into(),
        },
    ];
    if let Some(p) = profile_adev {
        marks.push(Mark::Line {
            name: "profile".into(),
            points: at(p),
            pen: Pen::total(),
        });
    }
    let grid = log_spaced(t0, t1, 50);
    let lines: [FittedLine; 3] = [
        (fit.random_walk, "fit N/\u{221a}\u{3c4}", 2, |c, t| {
            c / t.sqrt()
        }),
        (fit.bias_instability, "fit 0.664\u{b7}B", 1, |c, _| {
            c * bias_instability_factor()
        }),
        (
            fit.rate_random_walk,
            "fit K\u{b7}\u{221a}(\u{3c4}/3)",
            3,
            |c, t| c * (t / 3.0).sqrt(),
        ),
    ];
    for (c, name, pen, law) in lines {
        if c > 0.0 {
            marks.push(Mark::Line {
                name: name.into(),
                points: grid.iter().map(|&t| (t, law(c, t))).collect(),
                pen: Pen::source(pen),
            });
        }
    }
    Some(Figure {
        title: match title {
            Some(t) => format!("Allan deviation: {t}"),
            None => "Allan deviation".into(),
        },
        subtitle: "overlapping estimator at octave-spaced \u{3c4}".into(),
        x: Axis::log("averaging time \u{3c4} (s)", "s", t0, t1),
        y: Axis::log(
            &format!("Allan deviation ({unit})"),
            unit,
            lo / 2.0,
            hi * 2.0,
        ),
        marks,
    })
}
