//! The coherence figure of a capture of several channels: the magnitude-squared coherence of
//! pairs of channels against frequency (log axis, 0 to 1), each band's 95 % interval as a
//! bar, and the designed coherence as a dashed line when the profile gives one.

use plotters::prelude::*;

use super::html_escape;
use crate::profile::format_quantity;

/// Most pairs drawn in one figure (more would hide each other); the caption says how many of
/// how many are shown.
pub const MAX_CURVES: usize = 12;

/// One pair's coherence, band by band.
#[derive(Debug, Clone)]
pub struct CoherenceCurve {
    /// How the legend names the pair, e.g. `0–1`.
    pub label: String,
    /// The bands, in frequency order.
    pub points: Vec<CoherencePoint>,
}

/// One band of a pair.
#[derive(Debug, Clone, Copy)]
pub struct CoherencePoint {
    /// The band's centre, Hz.
    pub f_hz: f64,
    /// The coherence estimate and its 95 % interval (0 to 1).
    pub coherence: f64,
    /// Lower end of the interval.
    pub lo: f64,
    /// Upper end of the interval.
    pub hi: f64,
    /// The designed coherence, if judged.
    pub designed: Option<f64>,
}

/// Picture size in pixels.
const SIZE: (u32, u32) = (900, 540);

/// The figure of the first [`MAX_CURVES`] of `curves` (`total` pairs in all) as SVG text; a
/// short SVG saying why when nothing can be drawn.
pub fn coherence_svg(curves: &[CoherenceCurve], total: usize) -> String {
    let mut buf = String::new();
    let result = {
        let root = SVGBackend::with_string(&mut buf, SIZE).into_drawing_area();
        draw(root, &curves[..curves.len().min(MAX_CURVES)], total)
    };
    match result {
        Ok(()) => buf,
        Err(e) => format!(
            "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{}\" height=\"60\"><text x=\"10\" \
             y=\"30\">picture not drawn: {}</text></svg>",
            SIZE.0,
            html_escape(&e.to_string())
        ),
    }
}

type Fallible = std::result::Result<(), Box<dyn std::error::Error>>;

fn draw(
    root: DrawingArea<SVGBackend<'_>, plotters::coord::Shift>,
    curves: &[CoherenceCurve],
    total: usize,
) -> Fallible {
    root.fill(&WHITE)?;
    let f: Vec<f64> = curves
        .iter()
        .flat_map(|c| c.points.iter().map(|p| p.f_hz))
        .filter(|f| *f > 0.0)
        .collect();
    if f.is_empty() {
        return Err("no band to draw".into());
    }
    let x0 = f.iter().copied().fold(f64::INFINITY, f64::min) / 1.2;
    let x1 = f.iter().copied().fold(0.0, f64::max) * 1.2;
    let mut chart = ChartBuilder::on(&root)
        .caption(
            format!("coherence, {} of {total} pairs", curves.len()),
            ("sans-serif", 24),
        )
        .margin(12)
        .x_label_area_size(45)
        .y_label_area_size(60)
        .build_cartesian_2d((x0..x1).log_scale(), 0.0..1.0)?;
    chart
        .configure_mesh()
        .x_desc("frequency")
        .y_desc("magnitude-squared coherence")
        .x_label_formatter(&|v| format_quantity(*v, "Hz"))
        .draw()?;
    for (k, c) in curves.iter().enumerate() {
        let colour = Palette99::pick(k).to_rgba();
        let pts: Vec<(f64, f64)> = c.points.iter().map(|p| (p.f_hz, p.coherence)).collect();
        chart
            .draw_series(LineSeries::new(pts.clone(), colour.stroke_width(2)))?
            .label(c.label.clone())
            .legend(move |(x, y)| {
                PathElement::new(vec![(x, y), (x + 20, y)], colour.stroke_width(2))
            });
        chart.draw_series(c.points.iter().map(|p| {
            PathElement::new(
                vec![(p.f_hz, p.lo), (p.f_hz, p.hi)],
                colour.mix(0.5).stroke_width(1),
            )
        }))?;
        let designed: Vec<(f64, f64)> = c
            .points
            .iter()
            .filter_map(|p| p.designed.map(|d| (p.f_hz, d)))
            .collect();
        if !designed.is_empty() {
            chart.draw_series(DashedLineSeries::new(
                designed,
                6,
                4,
                colour.stroke_width(1),
            ))?;
        }
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_pair_is_drawn_with_its_design_and_nothing_is_a_note() {
        let points = (1..=20)
            .map(|k| CoherencePoint {
                f_hz: 10.0 * 1.3f64.powi(k),
                coherence: 0.36,
                lo: 0.3,
                hi: 0.42,
                designed: Some(0.36),
            })
            .collect();
        let svg = coherence_svg(
            &[CoherenceCurve {
                label: "0–1".into(),
                points,
            }],
            3,
        );
        assert!(
            svg.starts_with("<svg") && svg.contains("coherence, 1 of 3 pairs"),
            "{svg}"
        );
        assert!(svg.contains("0–1"));
        let none = coherence_svg(&[], 0);
        assert!(
            none.contains("picture not drawn: no band to draw"),
            "{none}"
        );
    }
}
