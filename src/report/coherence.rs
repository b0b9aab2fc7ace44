//! The coherence figure of a capture of several channels: the magnitude-squared coherence of
//! pairs of channels against frequency (log axis, 0 to 1), each band's 95 % interval as a
//! bar, and the designed coherence as a dashed line when the profile gives one.

use super::figure::{Axis, Figure, Mark, Pen, page};

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

/// The figure of the first [`MAX_CURVES`] of `curves` (`total` pairs in all) as SVG text; a
/// short SVG saying why when nothing can be drawn.
pub fn coherence_svg(curves: &[CoherenceCurve], total: usize) -> String {
    match coherence_figure(curves, total) {
        Some(f) => page(&[f]),
        None => "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"960\" height=\"60\"><text \
                 x=\"10\" y=\"30\">picture not drawn: no band to draw</text></svg>\n"
            .into(),
    }
}

/// The coherence figure: each pair's estimate band by band (0 to 1 against Hz), its 95 %
/// intervals shaded, the designed coherence dashed. `None` without a band.
pub fn coherence_figure(curves: &[CoherenceCurve], total: usize) -> Option<Figure> {
    let curves = &curves[..curves.len().min(MAX_CURVES)];
    let f: Vec<f64> = curves
        .iter()
        .flat_map(|c| c.points.iter().map(|p| p.f_hz))
        .filter(|f| *f > 0.0)
        .collect();
    if f.is_empty() {
        return None;
    }
    let x0 = f.iter().copied().fold(f64::INFINITY, f64::min) / 1.2;
    let x1 = f.iter().copied().fold(0.0, f64::max) * 1.2;
    let mut marks = Vec::new();
    for (k, c) in curves.iter().enumerate() {
        let pen = Pen::source(k);
        let at = |v: &dyn Fn(&CoherencePoint) -> f64| -> Vec<(f64, f64)> {
            c.points.iter().map(|p| (p.f_hz, v(p))).collect()
        };
        marks.push(Mark::Area {
            name: String::new(),
            upper: at(&|p| p.hi),
            lower: at(&|p| p.lo),
            color: pen.color.clone(),
            opacity: 0.15,
        });
        let designed: Vec<(f64, f64)> = c
            .points
            .iter()
            .filter_map(|p| p.designed.map(|d| (p.f_hz, d)))
            .collect();
        if !designed.is_empty() {
            marks.push(Mark::Line {
                name: format!("{} designed", c.label),
                points: designed,
                pen: Pen::dashed(&pen.color, 1.2, "2 3"),
            });
        }
        marks.push(Mark::Line {
            name: c.label.clone(),
            points: at(&|p| p.coherence),
            pen: Pen::solid(&pen.color, 2.0),
        });
    }
    Some(Figure {
        title: format!("coherence, {} of {total} pairs", curves.len()),
        subtitle: "magnitude-squared coherence per band, 95 % intervals shaded".into(),
        x: Axis::log("frequency (Hz)", "Hz", x0, x1),
        y: Axis::linear("magnitude-squared coherence", "", 0.0, 1.0),
        marks,
    })
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
