//! The pictures, as [`Figure`]s laid out by [`super::figure`]:
//!
//! * `budget`: [`budget_figures`], every source's density, the total, the band edges and
//!   tones (unit/√Hz against Hz), and each band's integrated noise (RMS in the unit);
//! * an analysis: [`analysis_figures`], the measured density (unit/√Hz, log-log) with its 95 %
//!   intervals, the design, each source, the pass limits, failed bands, bins left out and
//!   tones; the integrated noise measured and designed; the amplitude histogram (log count
//!   axis) with the Gaussian of the same mean and σ and the burst levels; the first samples
//!   against time with the burst levels.

use statrs::function::erf::erf;

use super::figure::{Axis, Figure, Mark, Pen};
use crate::analysis::capture::CaptureReport;
use crate::analysis::compare::{BandCheck, Comparison};
use crate::analysis::integrated::IntegratedNoise;
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

/// A labelled rule at each tone frequency (Hz), where the tone sits.
fn tone_rules(frequencies_hz: impl IntoIterator<Item = f64>) -> Vec<Mark> {
    frequencies_hz
        .into_iter()
        .map(|f| Mark::Rule {
            name: "tones".into(),
            vertical: true,
            at: f,
            label: format!("tone {}", format_quantity(f, "Hz")),
            pen: Pen::dashed("#b8860b", 1.4, "2 3"),
        })
        .collect()
}

/// The lowest and highest band edge of `budget`, Hz.
fn span_hz(budget: &Budget) -> (f64, f64) {
    let lo = budget.bands.iter().map(|b| b.low_hz);
    let hi = budget.bands.iter().map(|b| b.high_hz);
    (lo.fold(f64::INFINITY, f64::min), hi.fold(0.0, f64::max))
}

/// `budget`'s pictures of `budget` (made from `profile`): every source's density, each burst's
/// and the total from half the lowest band edge to twice the highest (50 points per decade),
/// with the band edges and tones; then the integrated noise of each band.
pub fn budget_figures(profile: &Profile, budget: &Budget) -> Vec<Figure> {
    let (lo, hi) = span_hz(budget);
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
    marks.extend(tone_rules(profile.tones.iter().map(|t| t.frequency_hz)));
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
                "band {} .. {}: {} RMS",
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
    let (lo, hi) = span_hz(budget);
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
                "band {} .. {}",
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

/// What an analysis's pictures are drawn from.
#[derive(Clone, Copy)]
pub struct AnalysisView<'a> {
    /// The measurement.
    pub report: &'a CaptureReport,
    /// The capture's name for titles.
    pub file: &'a str,
    /// The profile it was judged against.
    pub profile: Option<&'a Profile>,
    /// The profile's engine at the capture's rate (designed density, bursts).
    pub design: Option<&'a Generator>,
    /// Spans (Hz) left out of the verdict: tones, spurs, spans the caller excluded.
    pub left_out: &'a [(f64, f64)],
    /// Frequencies of the tones found, Hz.
    pub tones: &'a [f64],
    /// The integrated noise, when the capture has one.
    pub integrated: Option<&'a IntegratedNoise>,
}

/// Colour of the measured density and its interval.
const MEASURED: &str = "#2f6fbf";
/// Colour of the pass limits and failed bands.
const LIMIT: &str = "#c0392b";

/// The title of an analysis figure: what, of which file, and the verdict when judged.
fn analysis_title(v: &AnalysisView<'_>, what: &str) -> String {
    match (&v.report.comparison, v.profile) {
        (Some(c), p) => format!(
            "{} {what} against {}: {}, {} of {} bands",
            v.file,
            p.and_then(|p| p.name.as_deref()).unwrap_or("the profile"),
            if c.pass { "PASS" } else { "FAIL" },
            c.bands.len() - c.failed(),
            c.bands.len()
        ),
        _ => format!("{} {what}", v.file),
    }
}

/// The analysis's figures in two groups: the spectral ones (density, integrated noise), and
/// the amplitude ones (histogram, trace); each figure is left out when there is nothing to
/// draw.
pub fn analysis_figures(v: &AnalysisView<'_>) -> (Vec<Figure>, Vec<Figure>) {
    let spectral = density_figure(v)
        .into_iter()
        .chain(integrated_noise_figure(v))
        .collect();
    let amplitude = std::iter::once(histogram_figure(v))
        .chain(trace_figure(v))
        .collect();
    (spectral, amplitude)
}

/// The density: 95 % intervals shaded, the measured density, the design, each source, the
/// pass limits, failed bands and bins left out shaded, tones and the profile's band edges.
/// `None` when no band has a positive density.
pub fn density_figure(v: &AnalysisView<'_>) -> Option<Figure> {
    let r = v.report;
    let bands: Vec<&BandEstimate> = r.bands.iter().filter(|b| b.psd_mean > 0.0).collect();
    let (first, last) = (bands.first()?, bands.last()?);
    // From the profile's low edge or the first tone when either lies below the first band,
    // so the bins left out around them show.
    let x0 = v
        .tones
        .iter()
        .map(|t| t / 1.5)
        .chain(v.profile.map(|p| p.band.low_hz))
        .fold(first.f_lo_hz, f64::min)
        .max(r.spectrum.bin_width_hz())
        .max(1e-12);
    let x1 = last.f_hi_hz;
    let ci: Vec<(f64, f64)> = bands.iter().map(|b| CaptureReport::band_ci95(b)).collect();
    let grid = log_spaced(x0, x1, 100);
    let designed: Vec<(f64, f64)> = v
        .design
        .map(|d| grid.iter().map(|&f| (f, d.density(f).sqrt())).collect())
        .unwrap_or_default();
    let hi = ci
        .iter()
        .map(|c| c.1.sqrt())
        .chain(designed.iter().map(|p| p.1))
        .fold(0.0, f64::max);
    let lo = ci.iter().map(|c| c.0.sqrt()).fold(f64::INFINITY, f64::min);
    let mut marks = Vec::new();
    if let Some(c) = &r.comparison {
        marks.extend(c.bands.iter().filter(|b| !b.pass).map(|b| Mark::Span {
            name: "failed bands".into(),
            x0: b.band.f_lo_hz,
            x1: b.band.f_hi_hz,
            color: LIMIT.into(),
            opacity: 0.14,
        }));
    }
    marks.extend(v.left_out.iter().map(|&(a, b)| Mark::Span {
        name: "left out of the verdict".into(),
        x0: a,
        x1: b,
        color: "#808080".into(),
        opacity: 0.28,
    }));
    if let Some(p) = v.profile {
        marks.extend(edge_rules([p.band.low_hz, p.band.high_hz]));
    }
    marks.extend(tone_rules(v.tones.iter().copied()));
    marks.push(Mark::Area {
        name: "95 % interval".into(),
        upper: steps(&bands, &|i| ci[i].1.sqrt()),
        lower: steps(&bands, &|i| ci[i].0.sqrt()),
        color: MEASURED.into(),
        opacity: 0.22,
    });
    if let Some(p) = v.profile {
        marks.extend(source_marks(p, v.design, &grid));
    }
    if let Some(c) = &r.comparison {
        marks.extend(limit_marks(c));
    }
    if !designed.is_empty() {
        marks.push(Mark::Line {
            name: "designed".into(),
            points: designed,
            pen: Pen::total(),
        });
    }
    let measured: Vec<(f64, f64)> = bands
        .iter()
        .map(|b| (b.f_center_hz.max(x0), b.psd_mean.sqrt()))
        .collect();
    marks.push(Mark::Line {
        name: "measured".into(),
        points: measured.clone(),
        pen: Pen::solid(MEASURED, 2.0),
    });
    marks.push(Mark::Dots {
        name: String::new(),
        points: measured,
        color: MEASURED.into(),
    });
    let du = format!("{}/\u{221a}Hz", r.unit);
    let sp = &r.spectrum;
    Some(Figure {
        title: analysis_title(v, "density"),
        subtitle: format!(
            "Welch, Hann window, {} segments of {} samples ({} bins); {} bands per decade",
            sp.segments,
            sp.seg_len,
            format_quantity(sp.bin_width_hz(), "Hz"),
            crate::analysis::capture::BANDS_PER_DECADE
        ),
        x: Axis::log("frequency (Hz)", "Hz", x0, x1),
        y: Axis::log(
            &format!("density ({du})"),
            &du,
            (lo.max(hi * 1e-6)) / 2.0,
            hi * 2.0,
        ),
        marks,
    })
}

/// The pass limits of every band checked as two dashed step curves (lower, upper), unit/√Hz.
fn limit_marks(c: &Comparison) -> Vec<Mark> {
    let limit = |upper: bool| -> Vec<(f64, f64)> {
        let per = |b: &BandCheck| {
            let db = if upper { b.limit_db.1 } else { b.limit_db.0 };
            (b.expected_psd * 10f64.powf(db / 10.0)).sqrt()
        };
        c.bands
            .iter()
            .flat_map(|b| [(b.band.f_lo_hz, per(b)), (b.band.f_hi_hz, per(b))])
            .collect()
    };
    [false, true]
        .into_iter()
        .map(|upper| Mark::Line {
            name: "limits".into(),
            points: limit(upper),
            pen: Pen::dashed(LIMIT, 1.2, "6 3"),
        })
        .collect()
}

/// A step curve over `bands`: `value(i)` held from band i's lower to its upper edge.
fn steps(bands: &[&BandEstimate], value: &dyn Fn(usize) -> f64) -> Vec<(f64, f64)> {
    bands
        .iter()
        .enumerate()
        .flat_map(|(i, b)| [(b.f_lo_hz, value(i)), (b.f_hi_hz, value(i))])
        .collect()
}

/// One line per source of `p` (its density with the band shaping, unit/√Hz) and per burst
/// of `design` (its sampled density, AC part).
fn source_marks(p: &Profile, design: Option<&Generator>, grid: &[f64]) -> Vec<Mark> {
    let mut marks: Vec<Mark> = p
        .sources
        .iter()
        .enumerate()
        .map(|(i, s)| Mark::Line {
            name: s.name.clone(),
            points: grid
                .iter()
                .map(|&f| {
                    let g = band_gain(&p.band, p.sample_rate_hz, f);
                    (f, (source_psd(s, p, f) * g).sqrt())
                })
                .collect(),
            pen: Pen::source(i),
        })
        .collect();
    let n = marks.len();
    for (i, b) in design.map_or(&[][..], |d| d.bursts()).iter().enumerate() {
        marks.push(Mark::Line {
            name: b.burst().name.clone(),
            points: grid.iter().map(|&f| (f, b.density(f).sqrt())).collect(),
            pen: Pen::source(n + i),
        });
    }
    marks
}

/// The integrated noise, measured and designed, from the band's low edge up to f.
fn integrated_noise_figure(v: &AnalysisView<'_>) -> Option<Figure> {
    let i = v.integrated?;
    let pts = |y: &[f64]| -> Vec<(f64, f64)> {
        i.frequency_hz
            .iter()
            .copied()
            .zip(y.iter().copied())
            .collect()
    };
    let mut marks = edge_rules([i.low_hz, i.high_hz]);
    let mut top = i.rms.last().copied().unwrap_or(0.0);
    if let Some(d) = &i.designed_rms {
        top = top.max(d.last().copied().unwrap_or(0.0));
        marks.push(Mark::Line {
            name: "designed".into(),
            points: pts(d),
            pen: Pen::total(),
        });
    }
    marks.push(Mark::Line {
        name: "measured".into(),
        points: pts(&i.rms),
        pen: Pen::solid(MEASURED, 2.0),
    });
    let u = &v.report.unit;
    Some(Figure {
        title: analysis_title(v, "integrated noise"),
        subtitle: "RMS from the band's low edge up to each frequency; bins left out of the \
                   verdict are not counted"
            .into(),
        x: Axis::log("frequency (Hz)", "Hz", i.frequency_hz[0], i.high_hz),
        y: Axis::linear(
            &format!("RMS ({u})"),
            u,
            0.0,
            (top * 1.08).max(f64::MIN_POSITIVE),
        ),
        marks,
    })
}

/// Each detected burst level as a rule: vertical on the histogram, horizontal on the trace.
fn level_rules(v: &AnalysisView<'_>, vertical: bool) -> Vec<Mark> {
    let u = &v.report.unit;
    v.report.levels.as_ref().map_or_else(Vec::new, |l| {
        l.levels
            .iter()
            .map(|&x| Mark::Rule {
                name: "burst levels".into(),
                vertical,
                at: x,
                label: if vertical {
                    format_quantity(x, u)
                } else {
                    String::new()
                },
                pen: Pen::dashed("#8e44ad", 1.3, "6 3"),
            })
            .collect()
    })
}

/// The amplitude histogram on a log count axis with the Gaussian of the record's μ and σ,
/// and the burst levels found.
pub fn histogram_figure(v: &AnalysisView<'_>) -> Figure {
    let r = v.report;
    let h = r.moments.histogram();
    let (mu, sigma) = (r.stats.mean(), r.stats.std());
    let n = r.stats.count() as f64;
    let w = h.bin_width();
    let max = h.counts.iter().copied().max().unwrap_or(1).max(1) as f64;
    let phi = |x: f64| 0.5 * (1.0 + erf((x - mu) / (sigma * std::f64::consts::SQRT_2)));
    let (x0, x1) = if sigma > 0.0 {
        (h.lo.min(mu - 5.0 * sigma), h.hi.max(mu + 5.0 * sigma))
    } else {
        (h.lo - 1.0, h.hi + 1.0)
    };
    let mut marks = vec![Mark::Bars {
        name: "measured".into(),
        bars: h
            .counts
            .iter()
            .enumerate()
            .filter(|(_, c)| **c > 0)
            .map(|(i, c)| {
                let a = h.lo + i as f64 * w;
                (a, a + w, *c as f64)
            })
            .collect(),
        color: MEASURED.into(),
    }];
    if sigma > 0.0 {
        marks.push(Mark::Line {
            name: "Gaussian, same mean and σ".into(),
            points: (0..=600)
                .map(|i| {
                    let x = x0 + (x1 - x0) * f64::from(i) / 600.0;
                    (x, n * (phi(x + w / 2.0) - phi(x - w / 2.0)))
                })
                .collect(),
            pen: Pen::solid("#000000", 1.8),
        });
    }
    marks.extend(level_rules(v, true));
    let u = &r.unit;
    Figure {
        title: format!("{} amplitude histogram", v.file),
        subtitle: format!(
            "{} samples in {} bins of {}",
            r.stats.count(),
            h.counts.len(),
            format_quantity(w, u)
        ),
        x: Axis::linear(&format!("value ({u})"), u, x0, x1),
        y: Axis {
            counts: true,
            ..Axis::log("samples per bin", "", 0.5, max * 3.0)
        },
        marks,
    }
}

/// The first samples against time, with the burst levels found. `None` with fewer than two
/// samples.
pub fn trace_figure(v: &AnalysisView<'_>) -> Option<Figure> {
    let r = v.report;
    let (fs, t) = (r.sample_rate_hz, &r.trace);
    if t.len() < 2 {
        return None;
    }
    let mut levels = level_rules(v, false);
    let (lo, hi) = t
        .iter()
        .copied()
        .chain(r.levels.iter().flat_map(|l| l.levels.iter().copied()))
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| {
            (a.min(v), b.max(v))
        });
    let pad = if hi > lo {
        0.05 * (hi - lo)
    } else {
        lo.abs().max(1e-30)
    };
    let mut marks = vec![Mark::Line {
        name: "samples".into(),
        points: t
            .iter()
            .enumerate()
            .map(|(i, &x)| (i as f64 / fs, x))
            .collect(),
        pen: Pen::solid(MEASURED, 1.0),
    }];
    marks.append(&mut levels);
    let u = &r.unit;
    Some(Figure {
        title: format!("{} trace", v.file),
        subtitle: format!("the first {} samples", t.len()),
        x: Axis::linear("time (s)", "s", 0.0, (t.len() - 1) as f64 / fs),
        y: Axis::linear(&format!("value ({u})"), u, lo - pad, hi + pad),
        marks,
    })
}
