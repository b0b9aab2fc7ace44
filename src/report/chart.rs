//! Every SVG picture: log-log density charts (unit/√Hz against Hz) for `budget`
//! ([`write_density_svg`] of a [`DensityChart`]), and an analysis's pictures:
//!
//! * [`density_svg`]: the measured density (unit/√Hz) on log-log axes with its 95 % band, the
//!   designed density and each source of a profile when one is given;
//! * [`histogram_svg`]: the amplitude histogram on a log count axis with the Gaussian of the
//!   same mean and σ, so the tails show;
//! * [`trace_svg`]: the first samples against time.
//!
//! Drawing uses plotters' SVG backend without system font libraries: text extents are
//! estimated and the viewer renders the `sans-serif` text.

use std::io::Write;

use plotters::prelude::*;

use statrs::function::erf::erf;

use super::html_escape;
use crate::analysis::capture::CaptureReport;
use crate::analysis::welch::BandEstimate;
use crate::error::{Error, Result};
use crate::model::budget::{Budget, burst_models, total_with_bursts};
use crate::model::density::{band_gain, source_psd};
use crate::profile::{Profile, format_quantity};
use crate::synth::Generator;

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

/// Picture size in pixels.
const SIZE: (u32, u32) = (900, 540);

pub(super) type Fallible = std::result::Result<(), Box<dyn std::error::Error>>;

/// The SVG text `draw` makes on a white picture of [`SIZE`]; a picture that cannot be drawn
/// says why in its place.
pub(super) fn svg(
    draw: impl FnOnce(DrawingArea<SVGBackend<'_>, plotters::coord::Shift>) -> Fallible,
) -> String {
    let mut buf = String::new();
    let result = {
        let root = SVGBackend::with_string(&mut buf, SIZE).into_drawing_area();
        draw(root)
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

/// Short tick labels with SI prefixes, e.g. `10 kHz`, `4 nV`.
fn tick(v: f64, unit: &str) -> String {
    format_quantity(v, unit)
}

/// The density picture. `profile` and `design` (the profile's engine at the capture's rate)
/// add the designed density (Gaussian design plus bursts) and each source's own density
/// (band shaping applied).
pub fn density_svg(
    r: &CaptureReport,
    profile: Option<&Profile>,
    design: Option<&Generator>,
) -> String {
    let du = format!("{}/√Hz", r.unit);
    let bands: Vec<_> = r.bands.iter().filter(|b| b.psd_mean > 0.0).collect();
    svg(|root| {
        root.fill(&WHITE)?;
        if bands.is_empty() {
            return Err("no band with a positive density".into());
        }
        let frame = DensityFrame::new(&bands, design);
        let mut chart = ChartBuilder::on(&root)
            .caption("density", ("sans-serif", 24))
            .margin(12)
            .x_label_area_size(45)
            .y_label_area_size(95)
            .build_cartesian_2d(
                (frame.x0..frame.x1).log_scale(),
                (frame.ylo..frame.yhi).log_scale(),
            )?;
        chart
            .configure_mesh()
            .x_desc("frequency")
            .y_desc(format!("density ({du})"))
            .x_label_formatter(&|v| tick(*v, "Hz"))
            .y_label_formatter(&|v| tick(*v, &du))
            .draw()?;
        draw_measured(&mut chart, &bands, &frame)?;
        if !frame.designed.is_empty() {
            chart
                .draw_series(LineSeries::new(
                    frame.designed.clone(),
                    BLACK.stroke_width(2),
                ))?
                .label("designed")
                .legend(|(x, y)| {
                    PathElement::new(vec![(x, y), (x + 20, y)], BLACK.stroke_width(2))
                });
        }
        if let Some(p) = profile {
            draw_sources(&mut chart, p, design, &frame)?;
        }
        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::UpperRight)
            .background_style(WHITE.mix(0.85))
            .border_style(BLACK)
            .draw()?;
        root.present()?;
        Ok(())
    })
}

/// The density picture's chart: log frequency (Hz) by log density (unit/√Hz).
type DensityAxes<'a, 'b> =
    ChartContext<'a, SVGBackend<'b>, Cartesian2d<LogCoord<f64>, LogCoord<f64>>>;

/// Colour of the measured density and its interval.
const MEASURED_COLOR: RGBColor = RGBColor(70, 110, 200);

/// Colours of the profile's sources, in turn.
const SOURCE_PALETTE: [RGBColor; 4] = [
    RGBColor(200, 80, 40),
    RGBColor(40, 150, 80),
    RGBColor(150, 60, 170),
    RGBColor(180, 150, 20),
];

/// The density picture's axes and the curves they are sized by.
struct DensityFrame {
    /// Frequency axis from `x0` to `x1`, Hz: the bands' span.
    x0: f64,
    x1: f64,
    /// Density axis from `ylo` to `yhi`, unit/√Hz.
    ylo: f64,
    yhi: f64,
    /// Each band's 95 % interval of the density, unit²/Hz.
    ci: Vec<(f64, f64)>,
    /// 401 log-spaced frequencies in Hz from `x0` to `x1`, where curves are evaluated.
    grid: Vec<f64>,
    /// The designed density (Hz, unit/√Hz) where it is positive; empty without a design.
    designed: Vec<(f64, f64)>,
}

impl DensityFrame {
    /// The axes for `bands` (at least one, each with a positive density) and `design`: the
    /// density axis reaches from half the lowest interval (at most 10⁶ below the top) to twice
    /// the highest interval or designed density.
    fn new(bands: &[&BandEstimate], design: Option<&Generator>) -> DensityFrame {
        let x0 = bands[0].f_lo_hz.max(1e-12);
        let x1 = bands[bands.len() - 1].f_hi_hz;
        let ci: Vec<(f64, f64)> = bands.iter().map(|b| CaptureReport::band_ci95(b)).collect();
        let mut lo = ci.iter().map(|c| c.0.sqrt()).fold(f64::INFINITY, f64::min);
        let mut hi = ci.iter().map(|c| c.1.sqrt()).fold(0.0, f64::max);
        let grid: Vec<f64> = (0..=400)
            .map(|i| x0 * (x1 / x0).powf(f64::from(i) / 400.0))
            .collect();
        let designed: Vec<(f64, f64)> = match design {
            Some(d) => grid
                .iter()
                .map(|&f| (f, d.density(f).sqrt()))
                .filter(|p| p.1 > 0.0)
                .collect(),
            None => Vec::new(),
        };
        for p in &designed {
            hi = hi.max(p.1);
        }
        lo = lo.max(hi * 1e-6);
        DensityFrame {
            x0,
            x1,
            ylo: lo / 2.0,
            yhi: hi * 2.0,
            ci,
            grid,
            designed,
        }
    }
}

/// The measured layers: the bands' 95 % intervals as one shaded outline, and the measured
/// density through the band centres with a dot at each.
fn draw_measured(
    chart: &mut DensityAxes<'_, '_>,
    bands: &[&BandEstimate],
    frame: &DensityFrame,
) -> Fallible {
    let (x0, ylo, yhi) = (frame.x0, frame.ylo, frame.yhi);
    let ci = &frame.ci;
    let band_color = MEASURED_COLOR;
    let mut outline: Vec<(f64, f64)> = bands
        .iter()
        .zip(ci)
        .flat_map(|(b, c)| {
            [
                (b.f_lo_hz.max(x0), c.1.sqrt().min(yhi)),
                (b.f_hi_hz, c.1.sqrt().min(yhi)),
            ]
        })
        .collect();
    outline.extend(bands.iter().zip(ci).rev().flat_map(|(b, c)| {
        [
            (b.f_hi_hz, c.0.sqrt().max(ylo)),
            (b.f_lo_hz.max(x0), c.0.sqrt().max(ylo)),
        ]
    }));
    chart
        .draw_series(std::iter::once(Polygon::new(outline, band_color.mix(0.2))))?
        .label("95 % interval")
        .legend(move |(x, y)| {
            Rectangle::new([(x, y - 5), (x + 20, y + 5)], band_color.mix(0.2).filled())
        });
    let measured: Vec<(f64, f64)> = bands
        .iter()
        .map(|b| (b.f_center_hz.max(x0), b.psd_mean.sqrt()))
        .collect();
    chart
        .draw_series(LineSeries::new(
            measured.clone(),
            band_color.stroke_width(2),
        ))?
        .label("measured")
        .legend(move |(x, y)| {
            PathElement::new(vec![(x, y), (x + 20, y)], band_color.stroke_width(2))
        });
    chart.draw_series(
        measured
            .iter()
            .map(|&p| Circle::new(p, 2, band_color.filled())),
    )?;
    Ok(())
}

/// One line per source of `p` (its density with the band shaping, unit/√Hz), then one per
/// burst of `design` (its sampled density, AC part; the mean is a line at DC), each above the
/// bottom of the axis.
fn draw_sources(
    chart: &mut DensityAxes<'_, '_>,
    p: &Profile,
    design: Option<&Generator>,
    frame: &DensityFrame,
) -> Fallible {
    let (grid, ylo) = (&frame.grid, frame.ylo);
    let palette = SOURCE_PALETTE;
    for (i, s) in p.sources.iter().enumerate() {
        let c = palette[i % palette.len()];
        let pts: Vec<(f64, f64)> = grid
            .iter()
            .map(|&f| {
                (
                    f,
                    (source_psd(s, p, f) * band_gain(&p.band, p.sample_rate_hz, f)).sqrt(),
                )
            })
            .filter(|q| q.1 > ylo)
            .collect();
        chart
            .draw_series(LineSeries::new(pts, c.stroke_width(1)))?
            .label(s.name.clone())
            .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], c));
    }
    let n = p.sources.len();
    for (i, b) in design.map_or(&[][..], |d| d.bursts()).iter().enumerate() {
        let c = palette[(n + i) % palette.len()];
        let pts: Vec<(f64, f64)> = grid
            .iter()
            .map(|&f| (f, b.density(f).sqrt()))
            .filter(|q| q.1 > ylo)
            .collect();
        chart
            .draw_series(LineSeries::new(pts, c.stroke_width(1)))?
            .label(b.burst().name.clone())
            .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], c));
    }
    Ok(())
}

/// The amplitude histogram on a log count axis with the Gaussian of the record's μ and σ.
pub fn histogram_svg(r: &CaptureReport) -> String {
    let h = r.moments.histogram();
    let (mu, sigma) = (r.stats.mean(), r.stats.std());
    let n = r.stats.count() as f64;
    let u = r.unit.clone();
    svg(|root| {
        root.fill(&WHITE)?;
        let w = h.bin_width();
        let max = h.counts.iter().copied().max().unwrap_or(1).max(1) as f64;
        let phi = |x: f64| 0.5 * (1.0 + erf((x - mu) / (sigma * std::f64::consts::SQRT_2)));
        let (x0, x1) = (h.lo.min(mu - 5.0 * sigma), h.hi.max(mu + 5.0 * sigma));
        let mut chart = ChartBuilder::on(&root)
            .caption("amplitude histogram", ("sans-serif", 24))
            .margin(12)
            .x_label_area_size(45)
            .y_label_area_size(70)
            .build_cartesian_2d(x0..x1, (0.5..max * 3.0).log_scale())?;
        chart
            .configure_mesh()
            .x_desc(format!("value ({u})"))
            .y_desc("samples per bin")
            .x_label_formatter(&|v| tick(*v, &u))
            .draw()?;
        let bar = RGBColor(70, 110, 200);
        chart
            .draw_series(
                h.counts
                    .iter()
                    .enumerate()
                    .filter(|(_, c)| **c > 0)
                    .map(|(i, c)| {
                        let a = h.lo + i as f64 * w;
                        Rectangle::new([(a, 0.5), (a + w, *c as f64)], bar.mix(0.6).filled())
                    }),
            )?
            .label("measured")
            .legend(move |(x, y)| {
                Rectangle::new([(x, y - 5), (x + 20, y + 5)], bar.mix(0.6).filled())
            });
        if sigma > 0.0 {
            let pts: Vec<(f64, f64)> = (0..=600)
                .map(|i| {
                    let x = x0 + (x1 - x0) * f64::from(i) / 600.0;
                    (x, n * (phi(x + w / 2.0) - phi(x - w / 2.0)))
                })
                .filter(|p| p.1 > 0.5)
                .collect();
            chart
                .draw_series(LineSeries::new(pts, BLACK.stroke_width(2)))?
                .label("Gaussian, same μ and σ")
                .legend(|(x, y)| {
                    PathElement::new(vec![(x, y), (x + 20, y)], BLACK.stroke_width(2))
                });
        }
        chart
            .configure_series_labels()
            .background_style(WHITE.mix(0.85))
            .border_style(BLACK)
            .draw()?;
        root.present()?;
        Ok(())
    })
}

/// The first samples of the record against time.
pub fn trace_svg(r: &CaptureReport) -> String {
    let fs = r.sample_rate_hz;
    let t = &r.trace;
    let u = r.unit.clone();
    svg(|root| {
        root.fill(&WHITE)?;
        if t.len() < 2 {
            return Err("fewer than two samples".into());
        }
        let (lo, hi) = t
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &v| {
                (a.min(v), b.max(v))
            });
        let pad = if hi > lo { 0.05 * (hi - lo) } else { 1.0 };
        let tend = (t.len() - 1) as f64 / fs;
        let mut chart = ChartBuilder::on(&root)
            .caption(
                format!("trace: the first {} samples", t.len()),
                ("sans-serif", 24),
            )
            .margin(12)
            .x_label_area_size(45)
            .y_label_area_size(90)
            .build_cartesian_2d(0.0..tend, (lo - pad)..(hi + pad))?;
        chart
            .configure_mesh()
            .x_desc("time")
            .y_desc(format!("value ({u})"))
            .x_label_formatter(&|v| tick(*v, "s"))
            .y_label_formatter(&|v| tick(*v, &u))
            .draw()?;
        chart.draw_series(LineSeries::new(
            t.iter().enumerate().map(|(i, &v)| (i as f64 / fs, v)),
            RGBColor(70, 110, 200),
        ))?;
        root.present()?;
        Ok(())
    })
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
