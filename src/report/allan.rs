//! The Allan deviation picture of `analyze --allan-plot`: log-log σ(τ) with its intervals,
//! the profile's curve, and the three fitted slope lines (N/√τ, 0.664·B, K·√(τ/3)).
//! Kept apart from [`super::chart`] so each picture has one home.

use plotters::prelude::*;

use crate::analysis::allan::{AllanDeviation, InertialFit};
use crate::model::allan::bias_instability_factor;
use crate::profile::format_quantity;
use crate::report::chart::{Fallible, svg};

/// The SVG text of the picture; `profile_adev` (unit, at the same τ) adds the profile's
/// curve; `title` names the profile. A picture that cannot be drawn says why in its place.
pub fn allan_svg(
    dev: &AllanDeviation,
    fit: &InertialFit,
    profile_adev: Option<&[f64]>,
    unit: &str,
    title: Option<&str>,
) -> String {
    svg(|root| draw(root, dev, fit, profile_adev, unit, title))
}

fn draw(
    root: DrawingArea<SVGBackend<'_>, plotters::coord::Shift>,
    dev: &AllanDeviation,
    fit: &InertialFit,
    profile_adev: Option<&[f64]>,
    unit: &str,
    title: Option<&str>,
) -> Fallible {
    root.fill(&WHITE)?;
    let n = dev.tau_s.len();
    if n == 0 {
        return Err("no averaging time".into());
    }
    let (t0, t1) = (dev.tau_s[0] / 1.5, dev.tau_s[n - 1] * 1.5);
    let values = dev
        .adev_low
        .iter()
        .chain(&dev.adev_high)
        .chain(profile_adev.unwrap_or(&[]))
        .copied()
        .filter(|v| v.is_finite() && *v > 0.0);
    let (lo, hi) = values.fold((f64::INFINITY, 0f64), |(a, b), v| (a.min(v), b.max(v)));
    if !(lo.is_finite() && hi > 0.0) {
        return Err("no positive Allan deviation".into());
    }
    let (y0, y1) = (lo / 2.0, hi * 2.0);
    let caption = match title {
        Some(t) => format!("Allan deviation: {t}"),
        None => "Allan deviation".to_string(),
    };
    let mut chart = ChartBuilder::on(&root)
        .caption(caption, ("sans-serif", 24))
        .margin(12)
        .x_label_area_size(45)
        .y_label_area_size(95)
        .build_cartesian_2d((t0..t1).log_scale(), (y0..y1).log_scale())?;
    chart
        .configure_mesh()
        .max_light_lines(4)
        .x_desc("averaging time \u{3c4}")
        .y_desc(format!("Allan deviation ({unit})"))
        .x_label_formatter(&|v| format_quantity(*v, "s"))
        .y_label_formatter(&|v| format_quantity(*v, unit))
        .draw()?;
    let blue = RGBColor(31, 119, 180);
    chart.draw_series((0..n).map(|i| {
        let t = dev.tau_s[i];
        PathElement::new(vec![(t, dev.adev_low[i]), (t, dev.adev_high[i])], blue)
    }))?;
    chart
        .draw_series((0..n).map(|i| Circle::new((dev.tau_s[i], dev.adev[i]), 3, blue.filled())))?
        .label(format!(
            "measured, {:.0} % intervals",
            100.0 * dev_confidence()
        ))
        .legend(move |(x, y)| Circle::new((x + 10, y), 3, blue.filled()));
    if let Some(p) = profile_adev {
        let pts: Vec<(f64, f64)> = dev.tau_s.iter().copied().zip(p.iter().copied()).collect();
        chart
            .draw_series(LineSeries::new(pts, BLACK.stroke_width(2)))?
            .label("profile")
            .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], BLACK.stroke_width(2)));
    }
    let lines: [FittedLine; 3] = [
        (
            fit.random_walk,
            "N/\u{221a}\u{3c4}",
            RGBColor(214, 39, 40),
            |c, t| c / t.sqrt(),
        ),
        (
            fit.bias_instability,
            "0.664\u{b7}B",
            RGBColor(44, 160, 44),
            |c, _| c * bias_instability_factor(),
        ),
        (
            fit.rate_random_walk,
            "K\u{b7}\u{221a}(\u{3c4}/3)",
            RGBColor(148, 103, 189),
            |c, t| c * (t / 3.0).sqrt(),
        ),
    ];
    for (c, name, colour, law) in lines {
        if c <= 0.0 {
            continue;
        }
        // Points inside the frame only: plotters moves a point outside it onto the edge,
        // which would bend a line that leaves the frame.
        let pts: Vec<(f64, f64)> = (0..=200)
            .map(|j| t0 * (t1 / t0).powf(f64::from(j) / 200.0))
            .map(|t| (t, law(c, t)))
            .filter(|&(_, y)| (y0..=y1).contains(&y))
            .collect();
        chart
            .draw_series(LineSeries::new(pts, colour.stroke_width(1)))?
            .label(format!("fit {name}"))
            .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], colour));
    }
    chart
        .configure_series_labels()
        .position(SeriesLabelPosition::UpperRight)
        .background_style(WHITE.mix(0.85))
        .border_style(BLACK)
        .draw()?;
    root.present()?;
    Ok(())
}

/// A fitted term's line: coefficient, label, colour, and σ(coefficient, τ).
type FittedLine = (f64, &'static str, RGBColor, fn(f64, f64) -> f64);

/// The confidence of the intervals drawn.
fn dev_confidence() -> f64 {
    crate::analysis::allan::CONFIDENCE
}
