//! SVG pictures of an analysis (plotters, SVG backend only, no system fonts) and the
//! self-contained HTML report that holds them inline.
//!
//! * [`density_svg`]: the measured density (unit/√Hz) on log-log axes with its 95 % band, the
//!   designed density and each source of a profile when one is given;
//! * [`histogram_svg`]: the amplitude histogram on a log count axis with the Gaussian of the
//!   same mean and σ, so the tails show;
//! * [`trace_svg`]: the first samples against time;
//! * [`report_html`]: one HTML page, readable offline (no scripts, no external files), with the
//!   three pictures and the tables.

use plotters::prelude::*;
use statrs::function::erf::erf;

use crate::analysis::capture::CaptureReport;
use crate::analysis::welch::BandEstimate;
use crate::model::density::{band_gain, source_psd};
use crate::profile::{Profile, format_quantity};
use crate::synth::Generator;

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
type DensityChart<'a, 'b> =
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
    chart: &mut DensityChart<'_, '_>,
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
    chart: &mut DensityChart<'_, '_>,
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

/// Escapes `& < > "` for HTML text and attributes.
pub fn html_escape(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

/// The HTML report: the pictures inline and the tables, from the analysis and its JSON.
pub fn report_html(
    r: &CaptureReport,
    json: &serde_json::Value,
    density_svg: &str,
    profile: Option<&Profile>,
) -> String {
    let mut h = report_head(r, json, profile);
    h += &statistics_section(r, json);
    h += &density_section(r, density_svg);
    h += "<h2>Amplitude</h2>\n";
    h += &format!("<figure>{}</figure>\n", histogram_svg(r));
    h += &format!("<figure>{}</figure>\n", trace_svg(r));
    h += &levels_section(r);
    if let Some(f) = json.get("fit") {
        h += &fit_section(r, f);
    }
    if !r.notes.is_empty() {
        h += "<h2>Notes</h2>\n<ul>\n";
        for n in &r.notes {
            h += &format!("<li>{}</li>\n", html_escape(n));
        }
        h += "</ul>\n";
    }
    h += "</body></html>\n";
    h
}

/// The report's head and opening: title, style, the capture in one line, and the verdict
/// against `profile` when the capture was compared.
fn report_head(r: &CaptureReport, json: &serde_json::Value, profile: Option<&Profile>) -> String {
    let u = r.unit.as_str();
    let st = &r.stats;
    let name = json["file"]["name"].as_str().unwrap_or("capture");
    let mut h = String::new();
    h += "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">\n";
    h += &format!(
        "<title>noisewright analysis of {}</title>\n",
        html_escape(name)
    );
    h += "<style>body{font-family:sans-serif;max-width:960px;margin:1em auto;color:#222}\
          table{border-collapse:collapse;margin:.5em 0}td,th{border:1px solid #bbb;padding:2px 8px;\
          text-align:right}th{background:#eee}.fail{color:#b00;font-weight:bold}.ok{color:#070}\
          figure{margin:1em 0}</style></head><body>\n";
    h += &format!("<h1>Analysis of {}</h1>\n", html_escape(name));
    h += &format!(
        "<p>noisewright {}: {} samples at {}, {}; unit {}.</p>\n",
        env!("CARGO_PKG_VERSION"),
        st.count(),
        html_escape(&format_quantity(r.sample_rate_hz, "Hz")),
        html_escape(&format_quantity(st.count() as f64 / r.sample_rate_hz, "s")),
        html_escape(u)
    );
    if let Some(c) = &r.comparison {
        h += &format!(
            "<p class=\"{}\">Verdict against {}: {} — {} of {} bands within their limits \
             (χ² interval at a total false-alarm probability of {}, plus {} dB tolerance).</p>\n",
            if c.pass { "ok" } else { "fail" },
            html_escape(
                profile
                    .and_then(|p| p.name.as_deref())
                    .unwrap_or("the profile")
            ),
            if c.pass { "PASS" } else { "FAIL" },
            c.bands.len() - c.failed(),
            c.bands.len(),
            c.false_alarm,
            c.tolerance_db
        );
    }
    h
}

/// The statistics: moments and peak-to-peak, the fractions within ±kσ against a Gaussian
/// (from the JSON), and the RMS per decade.
fn statistics_section(r: &CaptureReport, json: &serde_json::Value) -> String {
    let u = r.unit.as_str();
    let q = |v: f64| html_escape(&format_quantity(v, u));
    let st = &r.stats;
    let mut h = String::new();
    h += "<h2>Statistics</h2>\n<table>\n";
    let rows: Vec<(&str, String)> = vec![
        ("mean", q(st.mean())),
        ("RMS (AC + DC)", q(st.rms())),
        ("standard deviation (AC)", q(st.std())),
        ("peak-to-peak, measured", q(st.peak_to_peak())),
        ("peak-to-peak, 6σ", q(6.0 * st.std())),
        ("peak-to-peak, 6.6σ", q(6.6 * st.std())),
        ("crest factor", format!("{:.3}", r.crest_factor())),
        ("skewness", format!("{:.4}", r.moments.skewness())),
        (
            "excess kurtosis",
            format!("{:.4}", r.moments.excess_kurtosis()),
        ),
    ];
    for (k, v) in rows {
        h += &format!("<tr><th>{k}</th><td>{v}</td></tr>\n");
    }
    h += "</table>\n<table><tr><th>within</th><th>measured</th><th>Gaussian</th></tr>\n";
    if let Some(ws) = json["within_sigma"].as_array() {
        for w in ws {
            h += &format!(
                "<tr><td>±{}σ</td><td>{:.4} %</td><td>{:.4} %</td></tr>\n",
                w["k"],
                100.0 * w["fraction"].as_f64().unwrap_or(f64::NAN),
                100.0 * w["gaussian"].as_f64().unwrap_or(f64::NAN)
            );
        }
    }
    h += "</table>\n<table><tr><th>decade</th><th>RMS</th></tr>\n";
    for d in &r.decades {
        h += &format!(
            "<tr><td>{} – {}</td><td>{}</td></tr>\n",
            html_escape(&format_quantity(d.f_lo_hz, "Hz")),
            html_escape(&format_quantity(d.f_hi_hz, "Hz")),
            q(d.rms)
        );
    }
    h += "</table>\n";
    h
}

/// The density: the picture, how it was estimated, and a table of the bands (density and
/// 95 % interval in unit/√Hz, degrees of freedom; against the design when compared).
fn density_section(r: &CaptureReport, density_svg: &str) -> String {
    let mut h = String::new();
    h += "<h2>Density</h2>\n";
    h += &format!("<figure>{density_svg}</figure>\n");
    let sp = &r.spectrum;
    h += &format!(
        "<p>Welch, Hann window, 50 % overlap: {} segments of {} samples ({} bins), {} bands per \
         decade from bin 3.</p>\n",
        sp.segments,
        sp.seg_len,
        html_escape(&format_quantity(sp.bin_width_hz(), "Hz")),
        crate::analysis::capture::BANDS_PER_DECADE
    );
    h += "<table><tr><th>band</th><th>density</th><th>95 % interval</th><th>ν</th>";
    if r.comparison.is_some() {
        h += "<th>designed</th><th>ratio</th><th>limits</th><th>verdict</th>";
    }
    h += "</tr>\n";
    for b in &r.bands {
        h += &density_row(r, b);
    }
    h += "</table>\n";
    h
}

/// One band's row of the density table.
fn density_row(r: &CaptureReport, b: &BandEstimate) -> String {
    let du = format!("{}/√Hz", r.unit);
    let qd = |v: f64| html_escape(&format_quantity(v, &du));
    let (lo, hi) = CaptureReport::band_ci95(b);
    let mut h = format!(
        "<tr><td>{} – {}</td><td>{}</td><td>{} – {}</td><td>{:.1}</td>",
        html_escape(&format_quantity(b.f_lo_hz, "Hz")),
        html_escape(&format_quantity(b.f_hi_hz, "Hz")),
        qd(b.psd_mean.sqrt()),
        qd(lo.sqrt()),
        qd(hi.sqrt()),
        b.dof
    );
    if let Some(c) = &r.comparison {
        match c.bands.iter().find(|c| c.band.bins == b.bins) {
            Some(c) => {
                h += &format!(
                    "<td>{}</td><td>{:+.2} dB</td><td>{:+.2} / {:+.2} dB</td><td class=\"{}\">{}</td>",
                    qd(c.expected_psd.sqrt()),
                    c.ratio_db,
                    c.limit_db.0,
                    c.limit_db.1,
                    if c.pass { "ok" } else { "fail" },
                    if c.pass { "ok" } else { "FAIL" }
                )
            }
            None => h += "<td colspan=\"4\">outside the profile's band</td>",
        }
    }
    h += "</tr>\n";
    h
}

/// The burst levels found: each level's value, time share, mean dwell and count of dwells.
fn levels_section(r: &CaptureReport) -> String {
    let q = |v: f64| html_escape(&format_quantity(v, &r.unit));
    let mut h = String::new();
    h += "<h2>Burst levels</h2>\n";
    match &r.levels {
        None => h += "<p>None clearly present.</p>\n",
        Some(l) => {
            h += "<table><tr><th>level</th><th>time share</th><th>mean dwell</th><th>dwells</th></tr>\n";
            for i in 0..l.levels.len() {
                h += &format!(
                    "<tr><td>{}</td><td>{:.2} %</td><td>{}</td><td>{}</td></tr>\n",
                    q(l.levels[i]),
                    100.0 * l.occupancy[i],
                    html_escape(&format_quantity(l.dwell_s[i], "s")),
                    l.dwells[i]
                );
            }
            h += &format!(
                "</table><p>Dwell resolution {}.</p>\n",
                html_escape(&format_quantity(l.resolution_s, "s"))
            );
        }
    }
    h
}

/// The fit from the JSON `f`: floor density (unit/√Hz), and corner (Hz) and slope when a 1/f
/// rise was found, each with its relative standard error.
fn fit_section(r: &CaptureReport, f: &serde_json::Value) -> String {
    let du = format!("{}/√Hz", r.unit);
    let qd = |v: f64| html_escape(&format_quantity(v, &du));
    let mut h = String::new();
    h += "<h2>Fit</h2>\n<table>\n";
    h += &format!(
        "<tr><th>floor</th><td>{} ± {:.2} %</td></tr>\n",
        qd(f["floor_density"].as_f64().unwrap_or(f64::NAN)),
        100.0 * f["floor_rel_se"].as_f64().unwrap_or(f64::NAN)
    );
    match f["corner_hz"].as_f64() {
        Some(c) => {
            h += &format!(
                "<tr><th>corner</th><td>{} ± {:.2} %</td></tr>\n<tr><th>slope</th><td>{:.4} ± {:.4}</td></tr>\n",
                html_escape(&format_quantity(c, "Hz")),
                100.0 * f["corner_rel_se"].as_f64().unwrap_or(f64::NAN),
                f["slope"].as_f64().unwrap_or(f64::NAN),
                f["slope_se"].as_f64().unwrap_or(f64::NAN)
            )
        }
        None => h += "<tr><th>corner</th><td>no significant 1/f rise</td></tr>\n",
    }
    h += "</table>\n";
    h
}
