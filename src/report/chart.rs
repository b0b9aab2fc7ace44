//! Log-log SVG charts of densities (unit/√Hz against Hz), for any command that shows a
//! spectrum.
//!
//! Drawing uses plotters' SVG backend without system font libraries: text extents are
//! estimated and the viewer renders the `sans-serif` text.

use std::io::Write;

use plotters::prelude::*;

use crate::error::{Error, Result};
use crate::model::budget::{Budget, burst_models, total_with_bursts};
use crate::model::density::source_psd;
use crate::profile::{Profile, format_quantity};

/// One curve: a name for the legend and (frequency in Hz, density in unit/√Hz) points.
#[derive(Debug, Clone, PartialEq)]
pub struct Series {
    /// Legend text.
    pub name: String,
    /// (Hz, unit/√Hz) points in increasing frequency; points ≤ 0 are skipped.
    pub points: Vec<(f64, f64)>,
    /// Draw thicker and in black (e.g. the total).
    pub emphasis: bool,
}

/// A vertical marker at `frequency_hz` with a label (e.g. a band edge).
#[derive(Debug, Clone, PartialEq)]
pub struct Marker {
    /// Where, in Hz.
    pub frequency_hz: f64,
    /// Short label drawn beside the line.
    pub label: String,
}

/// What a density chart shows.
#[derive(Debug, Clone, PartialEq)]
pub struct DensityChart {
    /// Caption at the top.
    pub title: String,
    /// Unit of the densities, e.g. `V/√Hz` (the y-axis title).
    pub density_unit: String,
    /// The curves.
    pub series: Vec<Series>,
    /// Vertical markers.
    pub markers: Vec<Marker>,
}

/// `n_per_decade` frequencies per decade from `lo` to `hi` Hz (both included), evenly spaced
/// in log f.
pub fn log_grid(lo: f64, hi: f64, n_per_decade: usize) -> Vec<f64> {
    let decades = (hi / lo).log10();
    let n = ((decades * n_per_decade as f64).ceil() as usize).max(1);
    (0..=n)
        .map(|i| lo * (hi / lo).powf(i as f64 / n as f64))
        .collect()
}

fn draw_error(e: impl std::fmt::Display) -> Error {
    Error::io("drawing the plot", std::io::Error::other(e.to_string()))
}

/// Draw `chart` as an SVG document of `width` × `height` pixels into `out`.
///
/// The axes span the series' frequencies and the positive densities (padded by a factor of
/// two), both logarithmic; markers are dashed vertical lines.
pub fn write_density_svg(
    chart: &DensityChart,
    width: u32,
    height: u32,
    out: &mut dyn Write,
) -> Result<()> {
    let pts = || {
        chart
            .series
            .iter()
            .flat_map(|s| s.points.iter().copied())
            .filter(|&(f, d)| f > 0.0 && d > 0.0 && f.is_finite() && d.is_finite())
    };
    let (mut f0, mut f1, mut d0, mut d1) = (f64::INFINITY, 0.0f64, f64::INFINITY, 0.0f64);
    for (f, d) in pts() {
        f0 = f0.min(f);
        f1 = f1.max(f);
        d0 = d0.min(d);
        d1 = d1.max(d);
    }
    for m in &chart.markers {
        f0 = f0.min(m.frequency_hz);
        f1 = f1.max(m.frequency_hz);
    }
    if !(f1 > f0 && d1 > 0.0) {
        return Err(Error::Unsupported(
            "nothing to plot: no positive densities over a frequency range".into(),
        ));
    }
    if d1 <= d0 {
        d0 /= 2.0;
        d1 *= 2.0;
    }
    let (y0, y1) = (d0 / 2.0, d1 * 2.0);
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (width, height)).into_drawing_area();
        root.fill(&WHITE).map_err(draw_error)?;
        let mut c = ChartBuilder::on(&root)
            .caption(&chart.title, ("sans-serif", 22))
            .margin(12)
            .x_label_area_size(44)
            .y_label_area_size(110)
            .build_cartesian_2d((f0..f1).log_scale(), (y0..y1).log_scale())
            .map_err(draw_error)?;
        let hz = |x: &f64| format_quantity(*x, "Hz");
        let dens = |y: &f64| format_quantity(*y, &chart.density_unit);
        c.configure_mesh()
            .label_style(("sans-serif", 15))
            .axis_desc_style(("sans-serif", 17))
            .x_desc("frequency")
            .y_desc(format!("density ({})", chart.density_unit))
            .x_label_formatter(&hz)
            .y_label_formatter(&dens)
            .draw()
            .map_err(draw_error)?;
        for (i, s) in chart.series.iter().enumerate() {
            let style = if s.emphasis {
                BLACK.stroke_width(3)
            } else {
                Palette99::pick(i).stroke_width(2)
            };
            let points: Vec<(f64, f64)> = s
                .points
                .iter()
                .copied()
                .filter(|&(f, d)| f > 0.0 && d > 0.0)
                .collect();
            c.draw_series(LineSeries::new(points, style))
                .map_err(draw_error)?
                .label(&s.name)
                .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], style));
        }
        for m in &chart.markers {
            let grey = RGBColor(110, 110, 110).stroke_width(1);
            c.draw_series(DashedLineSeries::new(
                vec![(m.frequency_hz, y0), (m.frequency_hz, y1)],
                6,
                4,
                grey,
            ))
            .map_err(draw_error)?;
            c.draw_series(std::iter::once(Text::new(
                m.label.clone(),
                (m.frequency_hz, y1 / 1.3),
                ("sans-serif", 14),
            )))
            .map_err(draw_error)?;
        }
        c.configure_series_labels()
            .background_style(WHITE.mix(0.85))
            .border_style(BLACK)
            .position(SeriesLabelPosition::LowerLeft)
            .draw()
            .map_err(draw_error)?;
        root.present().map_err(draw_error)?;
    }
    out.write_all(svg.as_bytes())
        .map_err(|e| Error::io("writing the plot", e))
}

/// A log-log chart of every source's density and the total (unit/√Hz) from half the lowest
/// band edge to twice the highest, 50 points per decade, with every band's edges marked.
pub fn budget_chart(profile: &Profile, budget: &Budget) -> DensityChart {
    let lo = budget
        .bands
        .iter()
        .map(|b| b.low_hz)
        .fold(f64::INFINITY, f64::min);
    let hi = budget.bands.iter().map(|b| b.high_hz).fold(0.0, f64::max);
    let grid = log_grid(lo / 2.0, hi * 2.0, 50);
    let mut series: Vec<Series> = profile
        .sources
        .iter()
        .map(|s| Series {
            name: s.name.clone(),
            points: grid
                .iter()
                .map(|&f| (f, source_psd(s, profile, f).sqrt()))
                .collect(),
            emphasis: false,
        })
        .collect();
    let bursts = burst_models(profile);
    series.extend(bursts.iter().map(|m| {
        Series {
            name: m.burst().name.clone(),
            points: grid
                .iter()
                .map(|&f| (f, m.continuous_density(f).sqrt()))
                .collect(),
            emphasis: false,
        }
    }));
    series.push(Series {
        name: "total".into(),
        points: grid
            .iter()
            .map(|&f| (f, total_with_bursts(profile, &bursts, f).sqrt()))
            .collect(),
        emphasis: true,
    });
    let many = budget.bands.len() > 1;
    let markers = budget
        .bands
        .iter()
        .enumerate()
        .flat_map(|(i, b)| {
            let tag = if many {
                format!(" {}", i + 1)
            } else {
                String::new()
            };
            [
                Marker {
                    frequency_hz: b.low_hz,
                    label: format!("low{tag}"),
                },
                Marker {
                    frequency_hz: b.high_hz,
                    label: format!("high{tag}"),
                },
            ]
        })
        .collect();
    DensityChart {
        title: format!(
            "{}: noise density by source",
            budget.name.as_deref().unwrap_or("profile")
        ),
        density_unit: format!("{}/\u{221a}Hz", budget.unit),
        series,
        markers,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_chart_is_an_svg_with_every_legend_and_marker() {
        let chart = DensityChart {
            title: "two curves".into(),
            density_unit: "V/\u{221a}Hz".into(),
            series: vec![
                Series {
                    name: "flat".into(),
                    points: log_grid(1.0, 1e4, 10)
                        .into_iter()
                        .map(|f| (f, 1e-9))
                        .collect(),
                    emphasis: false,
                },
                Series {
                    name: "falling".into(),
                    points: log_grid(1.0, 1e4, 10)
                        .into_iter()
                        .map(|f| (f, 1e-8 / f.sqrt()))
                        .collect(),
                    emphasis: true,
                },
            ],
            markers: vec![Marker {
                frequency_hz: 10.0,
                label: "low".into(),
            }],
        };
        let mut out = Vec::new();
        write_density_svg(&chart, 800, 500, &mut out).unwrap();
        let svg = String::from_utf8(out).unwrap();
        assert!(svg.starts_with("<svg"), "{}", &svg[..60.min(svg.len())]);
        assert!(svg.trim_end().ends_with("</svg>"));
        for needle in [
            "two curves",
            "\nflat\n",
            "\nfalling\n",
            "\nlow\n",
            "1 nV/\u{221a}Hz",
        ] {
            assert!(svg.contains(needle), "no {needle}");
        }
        // Three curves' worth of polylines at least (two series and a dashed marker).
        assert!(svg.matches("<polyline").count() >= 3);
        let empty = DensityChart {
            series: vec![],
            markers: vec![],
            ..chart
        };
        assert!(write_density_svg(&empty, 100, 100, &mut Vec::new()).is_err());
    }

    #[test]
    fn log_grid_spans_the_range_evenly_in_log_f() {
        let g = log_grid(0.1, 1000.0, 5);
        assert_eq!(g.len(), 21);
        assert_eq!(g[0], 0.1);
        assert!((g[20] / 1000.0 - 1.0).abs() < 1e-14);
        // Exact math: 5 per decade → every 5th point is a power of ten.
        assert!((g[5] - 1.0).abs() < 1e-14);
    }
}
