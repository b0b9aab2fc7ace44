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

use plotters::prelude::*;

use statrs::function::erf::erf;

use super::figure::{Axis, Figure, Mark, Pen};
use super::html_escape;
use crate::analysis::capture::CaptureReport;
use crate::analysis::welch::BandEstimate;
use crate::model::budget::{Budget, burst_models, log_spaced, total_with_bursts};
use crate::model::density::{band_gain, source_psd};
use crate::profile::{Profile, format_quantity};
use crate::synth::Generator;

/// The band edges of every band as labelled grey rules (an edge two bands share is one rule).
fn edge_rules(edges: impl IntoIterator<Item = f64>) -> Vec<Mark> {
    edges
        .into_iter()
        .map(|f| Mark::Rule {
            name: "band edges".into(),
            vertical: true,
            at: f,
            label: format_quantity(f, "Hz"),
            pen: Pen::dashed("#555555", 1.0, "5 4"),
        })
        .collect()
}

/// Each tone of `profile` as a labelled rule where it sits.
fn tone_rules(profile: &Profile) -> Vec<Mark> {
    profile
        .tones
        .iter()
        .map(|t| Mark::Rule {
            name: "tones".into(),
            vertical: true,
            at: t.frequency_hz,
            label: format!("tone {}", format_quantity(t.frequency_hz, "Hz")),
            pen: Pen::dashed("#b8860b", 1.4, "2 3"),
        })
        .collect()
}

/// `budget`'s pictures of `budget` (made from `profile`): every source's density, each burst's
/// and the total from half the lowest band edge to twice the highest (50 points per decade),
/// with the band edges and tones; then the integrated noise of each band.
pub fn budget_figures(profile: &Profile, budget: &Budget) -> Vec<Figure> {
    let lo = budget
        .bands
        .iter()
        .map(|b| b.low_hz)
        .fold(f64::INFINITY, f64::min);
    let hi = budget.bands.iter().map(|b| b.high_hz).fold(0.0, f64::max);
    let grid = log_spaced(lo / 2.0, hi * 2.0, 50);
    let bursts = burst_models(profile);
    let mut curves: Vec<(String, Vec<(f64, f64)>)> = profile
        .sources
        .iter()
        .map(|s| {
            let pts = grid.iter().map(|&f| (f, source_psd(s, profile, f).sqrt()));
            (s.name.clone(), pts.collect())
        })
        .collect();
    curves.extend(bursts.iter().map(|m| {
        let pts = grid.iter().map(|&f| (f, m.continuous_density(f).sqrt()));
        (m.burst().name.clone(), pts.collect())
    }));
    let total: Vec<(f64, f64)> = grid
        .iter()
        .map(|&f| (f, total_with_bursts(profile, &bursts, f).sqrt()))
        .collect();
    let top = total.iter().map(|p| p.1).fold(0.0, f64::max) * 2.0;
    let bottom = total.iter().map(|p| p.1).fold(f64::INFINITY, f64::min) / 3.0;
    let name = budget.name.as_deref().unwrap_or("profile");
    let mut marks = edge_rules(budget.bands.iter().flat_map(|b| [b.low_hz, b.high_hz]));
    marks.extend(tone_rules(profile));
    let alone = curves.len() == 1;
    for (i, (source, pts)) in curves.into_iter().enumerate() {
        // One source is the total: drawn once, named as both.
        let (name, pen) = if alone {
            (format!("{source} (the total)"), Pen::total())
        } else {
            (source, Pen::source(i))
        };
        marks.push(Mark::Line {
            name,
            points: pts,
            pen,
        });
    }
    if !alone {
        marks.push(Mark::Line {
            name: "total".into(),
            points: total,
            pen: Pen::total(),
        });
    }
    let unit = budget.unit;
    let density = Figure {
        title: format!("{name}: noise density by source"),
        subtitle: band_summary(budget),
        x: Axis::log("frequency (Hz)", "Hz", lo / 2.0, hi * 2.0),
        y: Axis::log(
            &format!("density ({unit}/\u{221a}Hz)"),
            &format!("{unit}/\u{221a}Hz"),
            bottom.max(top * 1e-7),
            top,
        ),
        marks,
    };
    vec![density, integrated_figure(name, budget)]
}

/// One line on the bands: each band's edges and band RMS.
fn band_summary(budget: &Budget) -> String {
    budget
        .bands
        .iter()
        .map(|b| {
            format!(
                "band {} to {}: {} RMS",
                format_quantity(b.low_hz, "Hz"),
                format_quantity(b.high_hz, "Hz"),
                format_quantity(b.band_rms, budget.unit)
            )
        })
        .collect::<Vec<_>>()
        .join("; ")
}

/// The integrated noise of each band of `budget`: RMS from the band's low edge up to f.
fn integrated_figure(name: &str, budget: &Budget) -> Figure {
    let lo = budget
        .bands
        .iter()
        .map(|b| b.low_hz)
        .fold(f64::INFINITY, f64::min);
    let hi = budget.bands.iter().map(|b| b.high_hz).fold(0.0, f64::max);
    let top = budget
        .bands
        .iter()
        .flat_map(|b| b.integrated.rms.iter().copied())
        .fold(0.0, f64::max);
    let many = budget.bands.len() > 1;
    let mut marks = edge_rules(budget.bands.iter().flat_map(|b| [b.low_hz, b.high_hz]));
    for (i, b) in budget.bands.iter().enumerate() {
        let label = if many {
            format!(
                "band {} to {}",
                format_quantity(b.low_hz, "Hz"),
                format_quantity(b.high_hz, "Hz")
            )
        } else {
            "integrated noise".into()
        };
        let pen = if many { Pen::source(i) } else { Pen::total() };
        let c = &b.integrated;
        marks.push(Mark::Line {
            name: label,
            points: c
                .frequency_hz
                .iter()
                .copied()
                .zip(c.rms.iter().copied())
                .collect(),
            pen,
        });
    }
    let unit = budget.unit;
    Figure {
        title: format!("{name}: integrated noise"),
        subtitle: "RMS from the band's low edge up to each frequency".into(),
        x: Axis::log("frequency (Hz)", "Hz", lo, hi),
        y: Axis::linear(
            &format!("RMS ({unit})"),
            unit,
            0.0,
            (top * 1.08).max(f64::MIN_POSITIVE),
        ),
        marks,
    }
}

/// Picture size in pixels.
const SIZE: (u32, u32) = (900, 540);

type Fallible = std::result::Result<(), Box<dyn std::error::Error>>;

fn svg(
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
