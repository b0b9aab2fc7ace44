//! One figure as SVG, laid out so that it reads at a glance: a title and a subtitle, one plot
//! area with linear or logarithmic axes, a labelled tick at every decade (at least three
//! labels on an axis), the legend in its own column beside the data, edge labels in a strip
//! above the data that never overlap, and every curve in float coordinates clipped to the
//! plot area.
//!
//! Text extents are estimated from per-character advances a little wider than DejaVu Sans
//! and Liberation Sans (the `sans-serif` of most systems), so labels keep their distance in
//! the viewer; the figure tests measure the real extents with a font.

use std::fmt::Write as _;

use super::html_escape;
use crate::units::format_quantity;

/// Width of one figure in pixels.
pub const WIDTH: f64 = 960.0;
/// Height of one figure in pixels.
pub const HEIGHT: f64 = 520.0;

/// Up to 12 colours told apart on screen and in print (a categorical palette, common
/// practice), used in turn for a profile's sources.
pub const PALETTE: [&str; 12] = [
    "#ff7f0e", "#2ca02c", "#d62728", "#9467bd", "#8c564b", "#e377c2", "#17becf", "#bcbd22",
    "#7f7f7f", "#393b79", "#8c6d31", "#1f77b4",
];

/// Dash patterns used in turn with [`PALETTE`], so neighbours differ in colour and dash.
pub const DASHES: [&str; 4] = ["7 3", "", "2 2", "9 3 2 3"];

/// How a line is drawn: colour, width in pixels and an SVG dash pattern ("" = solid).
#[derive(Debug, Clone, PartialEq)]
pub struct Pen {
    /// SVG colour.
    pub color: String,
    /// Stroke width in pixels.
    pub width: f64,
    /// SVG `stroke-dasharray` ("" for a solid line).
    pub dash: String,
}

impl Pen {
    /// A solid pen.
    pub fn solid(color: &str, width: f64) -> Pen {
        Pen {
            color: color.into(),
            width,
            dash: String::new(),
        }
    }

    /// A dashed pen with `dash` as SVG `stroke-dasharray`.
    pub fn dashed(color: &str, width: f64, dash: &str) -> Pen {
        Pen {
            color: color.into(),
            width,
            dash: dash.into(),
        }
    }

    /// The `i`-th source's pen: colour `i mod 12` and dash `i mod 4`.
    pub fn source(i: usize) -> Pen {
        Pen::dashed(PALETTE[i % PALETTE.len()], 1.6, DASHES[i % DASHES.len()])
    }

    /// The total: black, thick, solid, drawn on top.
    pub fn total() -> Pen {
        Pen::solid("#000000", 2.6)
    }
}

/// One thing drawn in the plot area. A non-empty `name` puts it in the legend (once per
/// name).
#[derive(Debug, Clone, PartialEq)]
pub enum Mark {
    /// A curve through (x, y) points; points off a logarithmic axis (≤ 0) break it.
    Line {
        /// Legend text.
        name: String,
        /// Points in data units, increasing x.
        points: Vec<(f64, f64)>,
        /// How it is drawn.
        pen: Pen,
    },
    /// A shaded region between `lower` and `upper`, both at the same x values.
    Area {
        /// Legend text.
        name: String,
        /// (x, upper y) points.
        upper: Vec<(f64, f64)>,
        /// (x, lower y) points.
        lower: Vec<(f64, f64)>,
        /// Fill colour.
        color: String,
        /// Fill opacity 0..1.
        opacity: f64,
    },
    /// Bars from the bottom of the plot area: (x from, x to, height) each.
    Bars {
        /// Legend text.
        name: String,
        /// (x₀, x₁, y) per bar.
        bars: Vec<(f64, f64, f64)>,
        /// Fill colour.
        color: String,
    },
    /// Dots at points.
    Dots {
        /// Legend text.
        name: String,
        /// Points in data units.
        points: Vec<(f64, f64)>,
        /// Fill colour.
        color: String,
    },
    /// A shaded span of x over the whole height (a failed band, bins left out).
    Span {
        /// Legend text.
        name: String,
        /// From x.
        x0: f64,
        /// To x.
        x1: f64,
        /// Fill colour.
        color: String,
        /// Fill opacity 0..1.
        opacity: f64,
    },
    /// A rule across the plot area: vertical at x = `at` (`vertical`) or horizontal at
    /// y = `at`. A vertical rule's `label` goes in the strip above the plot area; rules at one
    /// place with one label are drawn once.
    Rule {
        /// Legend text.
        name: String,
        /// True for a vertical rule (at an x value).
        vertical: bool,
        /// Where, in data units.
        at: f64,
        /// Label of a vertical rule ("" for none).
        label: String,
        /// How it is drawn.
        pen: Pen,
    },
}

impl Mark {
    /// The legend text.
    pub fn name(&self) -> &str {
        match self {
            Mark::Line { name, .. }
            | Mark::Area { name, .. }
            | Mark::Bars { name, .. }
            | Mark::Dots { name, .. }
            | Mark::Span { name, .. }
            | Mark::Rule { name, .. } => name,
        }
    }
}

/// One axis: its title (with the unit), the unit of its tick labels, scale and range.
#[derive(Debug, Clone, PartialEq)]
pub struct Axis {
    /// Title, e.g. `frequency (Hz)`.
    pub title: String,
    /// Unit written after each tick value with an SI prefix, e.g. `Hz`, `V/√Hz`; "" for
    /// plain numbers.
    pub unit: String,
    /// Logarithmic when true.
    pub log: bool,
    /// Lower end in data units (> 0 on a logarithmic axis).
    pub lo: f64,
    /// Upper end in data units (> `lo`).
    pub hi: f64,
    /// Tick values are counts, written as integers.
    pub counts: bool,
}

impl Axis {
    /// A logarithmic axis.
    pub fn log(title: &str, unit: &str, lo: f64, hi: f64) -> Axis {
        Axis {
            title: title.into(),
            unit: unit.into(),
            log: true,
            lo,
            hi,
            counts: false,
        }
    }

    /// A linear axis.
    pub fn linear(title: &str, unit: &str, lo: f64, hi: f64) -> Axis {
        Axis {
            log: false,
            ..Axis::log(title, unit, lo, hi)
        }
    }

    /// Position 0..1 along the axis of `v` (NaN for a value a log axis cannot show).
    fn frac(&self, v: f64) -> f64 {
        if self.log {
            if v <= 0.0 {
                return f64::NAN;
            }
            (v / self.lo).ln() / (self.hi / self.lo).ln()
        } else {
            (v - self.lo) / (self.hi - self.lo)
        }
    }

    /// A tick value as text: "0" for zero, integers for counts, else an SI prefix and the
    /// unit (`10 kHz`, `4 nV/√Hz`).
    pub fn tick_label(&self, v: f64) -> String {
        if v == 0.0 {
            "0".into()
        } else if self.counts {
            format!("{}", v.round() as i64)
        } else if self.unit.is_empty() {
            let s = format_quantity(v, "");
            s.trim_end().to_string()
        } else {
            format_quantity(v, &self.unit)
        }
    }
}

/// A whole figure.
#[derive(Debug, Clone, PartialEq)]
pub struct Figure {
    /// Title: what, of which file or profile, and the verdict when there is one.
    pub title: String,
    /// One line under the title ("" for none).
    pub subtitle: String,
    /// The horizontal axis.
    pub x: Axis,
    /// The vertical axis.
    pub y: Axis,
    /// What is drawn, in order (later on top).
    pub marks: Vec<Mark>,
}

/// Font sizes in pixels.
const TITLE_PX: f64 = 17.0;
const SUBTITLE_PX: f64 = 12.5;
const TICK_PX: f64 = 12.5;
const AXIS_PX: f64 = 13.5;
const LEGEND_PX: f64 = 12.5;
const EDGE_PX: f64 = 11.5;
/// Longest legend text in characters; longer names end in "…".
const LEGEND_CHARS: usize = 30;

/// Estimated width in pixels of `s` at `size` px: per-character advances rounded up from
/// DejaVu Sans's (the widest common `sans-serif`).
pub fn text_width(s: &str, size: f64) -> f64 {
    let em: f64 = s
        .chars()
        .map(|c| match c {
            ' ' | '.' | ',' | ':' | ';' | '!' | '|' | '\'' | 'i' | 'j' | 'l' | 'I' => 0.36,
            '(' | ')' | '[' | ']' | 'f' | 't' | 'r' | '/' | '-' => 0.46,
            'M' | 'W' | 'm' | 'w' | '%' => 1.0,
            '0'..='9' | 'a'..='z' => 0.66,
            'A'..='Z' => 0.8,
            _ => 0.9,
        })
        .sum();
    em * size
}

/// Where the plot area lies in the figure, pixels.
#[derive(Debug, Clone, Copy)]
struct Frame {
    left: f64,
    right: f64,
    top: f64,
    bottom: f64,
}

impl Frame {
    fn px(&self, x: &Axis, y: &Axis, (vx, vy): (f64, f64)) -> (f64, f64) {
        (
            self.left + x.frac(vx) * (self.right - self.left),
            self.bottom - y.frac(vy) * (self.bottom - self.top),
        )
    }
}

/// One tick: value, and its label when it has one.
#[derive(Debug, Clone)]
struct Tick {
    v: f64,
    label: Option<String>,
}

/// "Nice" step (1, 2 or 5 times a power of ten) at least `raw`.
fn nice_step(raw: f64) -> f64 {
    let p = 10f64.powf(raw.log10().floor());
    [1.0, 2.0, 5.0, 10.0]
        .iter()
        .map(|m| m * p)
        .find(|s| *s >= raw * (1.0 - 1e-12))
        .unwrap_or(10.0 * p)
}

/// Candidate labelled values of `axis`, most important first, and the unlabelled minor
/// values. On a log axis: decades, then 2 and 5 times them, then the other multiples, until
/// at least three fall in range; a log axis spanning less than that, or a linear axis, uses
/// multiples of a 1-2-5 step.
fn candidates(axis: &Axis) -> (Vec<f64>, Vec<f64>) {
    let inside = |v: &f64| *v >= axis.lo * (1.0 - 1e-9) && *v <= axis.hi * (1.0 + 1e-9);
    if axis.log {
        let (a, b) = (
            axis.lo.log10().floor() as i32,
            axis.hi.log10().ceil() as i32,
        );
        let tier = |ms: &[f64]| -> Vec<f64> {
            (a..=b)
                .flat_map(|k| ms.iter().map(move |m| m * 10f64.powi(k)))
                .filter(inside)
                .collect()
        };
        let mut major = tier(&[1.0]);
        for ms in [&[2.0, 5.0][..], &[3.0, 4.0, 6.0, 7.0, 8.0, 9.0][..]] {
            if major.len() >= 3 {
                break;
            }
            major.extend(tier(ms));
        }
        if major.len() >= 3 {
            let minor = tier(&[2.0, 3.0, 4.0, 5.0, 6.0, 7.0, 8.0, 9.0]);
            return (major, minor);
        }
    }
    let step = nice_step((axis.hi - axis.lo) / 6.0);
    let (k0, k1) = (
        (axis.lo / step - 1e-9).ceil() as i64,
        (axis.hi / step + 1e-9).floor() as i64,
    );
    // k·step, not a running sum: zero is exactly 0 and no residue builds up.
    let mut major: Vec<f64> = (k0..=k1).map(|k| k as f64 * step).collect();
    // Most important first: multiples of 2·step, then the rest, so thinning keeps a regular set.
    major.sort_by_key(|v| ((v / step).round() as i64).rem_euclid(2));
    (major, Vec::new())
}

/// The ticks of `axis` over `len` pixels: labels kept in order of importance while they stay
/// `gap` pixels apart along the axis (`extent` gives a label's extent along it).
fn ticks(axis: &Axis, len: f64, extent: &dyn Fn(&str) -> f64) -> Vec<Tick> {
    let (major, minor) = candidates(axis);
    let mut kept: Vec<(f64, f64, Tick)> = Vec::new();
    for v in major {
        let label = axis.tick_label(v);
        let c = axis.frac(v) * len;
        let half = extent(&label) / 2.0 + 6.0;
        if kept.iter().all(|(c2, h2, _)| (c - c2).abs() >= half + h2) {
            kept.push((
                c,
                half,
                Tick {
                    v,
                    label: Some(label),
                },
            ));
        }
    }
    let mut out: Vec<Tick> = kept.into_iter().map(|k| k.2).collect();
    // Minor grid lines only where they stay 4 px apart (9 and 10 are the closest pair).
    if axis.log && len / (axis.hi / axis.lo).log10() * (10.0f64 / 9.0).log10() >= 4.0 {
        out.extend(minor.into_iter().map(|v| Tick { v, label: None }));
    }
    out
}

/// Format a pixel coordinate.
fn n(v: f64) -> String {
    format!("{v:.2}")
}

/// A legend entry's sample drawing at (x, y) (the entry's middle left), 26 px wide.
fn legend_sample(m: &Mark, x: f64, y: f64) -> String {
    match m {
        Mark::Line { pen, .. } | Mark::Rule { pen, .. } => format!(
            "<line x1=\"{}\" y1=\"{}\" x2=\"{}\" y2=\"{}\" {}/>",
            n(x),
            n(y),
            n(x + 26.0),
            n(y),
            stroke(pen)
        ),
        Mark::Area { color, opacity, .. } | Mark::Span { color, opacity, .. } => format!(
            "<rect x=\"{}\" y=\"{}\" width=\"26\" height=\"10\" fill=\"{color}\" \
             fill-opacity=\"{opacity}\"/>",
            n(x),
            n(y - 5.0)
        ),
        Mark::Bars { color, .. } => format!(
            "<rect x=\"{}\" y=\"{}\" width=\"26\" height=\"10\" fill=\"{color}\" \
             fill-opacity=\"0.6\"/>",
            n(x),
            n(y - 5.0)
        ),
        Mark::Dots { color, .. } => format!(
            "<circle cx=\"{}\" cy=\"{}\" r=\"3\" fill=\"{color}\"/>",
            n(x + 13.0),
            n(y)
        ),
    }
}

/// SVG stroke attributes of `pen`.
fn stroke(pen: &Pen) -> String {
    let dash = if pen.dash.is_empty() {
        String::new()
    } else {
        format!(" stroke-dasharray=\"{}\"", pen.dash)
    };
    format!(
        "fill=\"none\" stroke=\"{}\" stroke-width=\"{}\"{dash}",
        pen.color, pen.width
    )
}

/// `s` cut to `max` characters with "…".
fn shorten(s: &str, max: usize) -> String {
    if s.chars().count() <= max {
        s.to_string()
    } else {
        let mut t: String = s.chars().take(max - 1).collect();
        t.push('…');
        t
    }
}

/// `<text>` at (x, y) with `size` px, `anchor` and extra attributes.
fn text(x: f64, y: f64, size: f64, anchor: &str, extra: &str, s: &str) -> String {
    format!(
        "<text x=\"{}\" y=\"{}\" font-size=\"{size}\" text-anchor=\"{anchor}\"{extra}>{}</text>\n",
        n(x),
        n(y),
        html_escape(s)
    )
}

/// The vertical rules' labels placed in rows above the plot area: (x centre, row, text) each,
/// and the number of rows. Equal labels at one place are one label; a label that would
/// overlap one already placed goes one row up.
fn edge_labels(fig: &Figure, frame: &Frame) -> (Vec<(f64, usize, String)>, usize) {
    let mut placed: Vec<(f64, usize, String)> = Vec::new();
    for m in &fig.marks {
        if let Mark::Rule {
            vertical: true,
            at,
            label,
            ..
        } = m
        {
            let f = fig.x.frac(*at);
            if label.is_empty() || !(0.0..=1.0).contains(&f) {
                continue;
            }
            let x = frame.left + f * (frame.right - frame.left);
            if placed
                .iter()
                .any(|(x2, _, l2)| l2 == label && (x - x2).abs() < 1.0)
            {
                continue;
            }
            let w = text_width(label, EDGE_PX);
            // Keep the label inside the figure: centred on the rule unless that crosses an end.
            let x = x.clamp(8.0 + w / 2.0, WIDTH - 8.0 - w / 2.0);
            let row = (0..)
                .find(|r| {
                    placed.iter().all(|(x2, r2, l2)| {
                        *r2 != *r || (x - x2).abs() >= (w + text_width(l2, EDGE_PX)) / 2.0 + 6.0
                    })
                })
                .unwrap_or(0);
            placed.push((x, row, label.clone()));
        }
    }
    let rows = placed.iter().map(|p| p.1 + 1).max().unwrap_or(0);
    (placed, rows)
}

impl Figure {
    /// The legend entries: the first mark of each non-empty name, in order.
    fn legend(&self) -> Vec<&Mark> {
        let mut seen: Vec<&str> = Vec::new();
        self.marks
            .iter()
            .filter(|m| {
                let name = m.name();
                let new = !name.is_empty() && !seen.contains(&name);
                if new {
                    seen.push(name);
                }
                new
            })
            .collect()
    }

    /// The plot area for the legend, the tick labels and the edge-label rows.
    fn frame(&self, legend_w: f64, edge_rows: usize) -> Frame {
        let header = if self.subtitle.is_empty() { 34.0 } else { 52.0 };
        let y_ticks = ticks(&self.y, 300.0, &|_| TICK_PX);
        let widest = y_ticks
            .iter()
            .filter_map(|t| t.label.as_deref())
            .map(|l| text_width(l, TICK_PX))
            .fold(0.0, f64::max);
        Frame {
            left: 14.0 + AXIS_PX + 10.0 + widest + 8.0,
            right: WIDTH - 14.0 - legend_w,
            top: header + 8.0 + 15.0 * edge_rows as f64,
            bottom: HEIGHT - 16.0 - AXIS_PX - 10.0 - TICK_PX - 8.0,
        }
    }

    /// The figure as SVG elements (no `<svg>` wrapper), its clip path named by `id`.
    fn body(&self, id: &str) -> String {
        let legend = self.legend();
        let legend_w = if legend.is_empty() {
            0.0
        } else {
            let widest = legend
                .iter()
                .map(|m| text_width(&shorten(m.name(), LEGEND_CHARS), LEGEND_PX))
                .fold(0.0, f64::max);
            26.0 + 8.0 + widest + 20.0
        };
        // Edge-label rows depend on the frame's width only through the legend, so one pass
        // with a provisional frame gives the rows.
        let (_, rows) = edge_labels(self, &self.frame(legend_w, 0));
        let frame = self.frame(legend_w, rows);
        let mut s = String::new();
        s += "<rect width=\"100%\" height=\"100%\" fill=\"#ffffff\"/>\n";
        let _ = writeln!(
            s,
            "<clipPath id=\"{id}-clip\"><rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\"/></clipPath>",
            n(frame.left),
            n(frame.top),
            n(frame.right - frame.left),
            n(frame.bottom - frame.top)
        );
        s += &text(
            WIDTH / 2.0,
            24.0,
            TITLE_PX,
            "middle",
            " font-weight=\"bold\"",
            &shorten(&self.title, 90),
        );
        if !self.subtitle.is_empty() {
            s += &text(
                WIDTH / 2.0,
                44.0,
                SUBTITLE_PX,
                "middle",
                " fill=\"#444444\"",
                &shorten(&self.subtitle, 120),
            );
        }
        s += &self.grid_and_axes(&frame);
        let _ = writeln!(s, "<g id=\"{id}-data\" clip-path=\"url(#{id}-clip)\">");
        for (i, m) in self.marks.iter().enumerate() {
            let attrs = format!(
                "id=\"{id}-mark-{i}\" data-name=\"{}\"",
                html_escape(m.name())
            );
            s += &self.mark(m, &frame, &attrs);
        }
        s += "</g>\n";
        let _ = writeln!(
            s,
            "<rect id=\"{id}-plot-area\" data-x-axis=\"{} {} {}\" x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" fill=\"none\" stroke=\"#333333\" stroke-width=\"1\"/>",
            self.x.lo,
            self.x.hi,
            if self.x.log { "log" } else { "linear" },
            n(frame.left),
            n(frame.top),
            n(frame.right - frame.left),
            n(frame.bottom - frame.top)
        );
        let (labels, _) = edge_labels(self, &frame);
        for (x, row, l) in labels {
            let y = frame.top - 6.0 - 15.0 * row as f64;
            s += &text(x, y, EDGE_PX, "middle", " fill=\"#333333\"", &l);
        }
        if !legend.is_empty() {
            s += &self.legend_svg(&legend, &frame, legend_w, id);
        }
        s
    }

    /// Grid lines, tick labels and axis titles.
    fn grid_and_axes(&self, frame: &Frame) -> String {
        let mut s = String::new();
        let (w, h) = (frame.right - frame.left, frame.bottom - frame.top);
        for t in ticks(&self.x, w, &|l| text_width(l, TICK_PX)) {
            let x = frame.left + self.x.frac(t.v) * w;
            let color = if t.label.is_some() {
                "#c8c8c8"
            } else {
                "#ececec"
            };
            let _ = writeln!(
                s,
                "<line x1=\"{0}\" y1=\"{1}\" x2=\"{0}\" y2=\"{2}\" stroke=\"{color}\" stroke-width=\"1\"/>",
                n(x),
                n(frame.top),
                n(frame.bottom)
            );
            if let Some(l) = &t.label {
                s += &text(x, frame.bottom + 8.0 + TICK_PX, TICK_PX, "middle", "", l);
            }
        }
        for t in ticks(&self.y, h, &|_| TICK_PX) {
            let y = frame.bottom - self.y.frac(t.v) * h;
            let color = if t.label.is_some() {
                "#c8c8c8"
            } else {
                "#ececec"
            };
            let _ = writeln!(
                s,
                "<line x1=\"{0}\" y1=\"{1}\" x2=\"{2}\" y2=\"{1}\" stroke=\"{color}\" stroke-width=\"1\"/>",
                n(frame.left),
                n(y),
                n(frame.right)
            );
            if let Some(l) = &t.label {
                s += &text(frame.left - 6.0, y + TICK_PX * 0.35, TICK_PX, "end", "", l);
            }
        }
        s += &text(
            frame.left + w / 2.0,
            HEIGHT - 14.0,
            AXIS_PX,
            "middle",
            "",
            &self.x.title,
        );
        let (cx, cy) = (14.0 + AXIS_PX * 0.8, frame.top + h / 2.0);
        s += &text(
            cx,
            cy,
            AXIS_PX,
            "middle",
            &format!(" transform=\"rotate(-90 {} {})\"", n(cx), n(cy)),
            &self.y.title,
        );
        s
    }

    /// The legend column right of the plot area, in a framed box.
    fn legend_svg(&self, legend: &[&Mark], frame: &Frame, legend_w: f64, id: &str) -> String {
        let x = frame.right + 14.0;
        let line = LEGEND_PX + 6.0;
        let hgt = line * legend.len() as f64 + 10.0;
        let mut s = format!(
            "<g id=\"{id}-legend\"><rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" fill=\"#ffffff\" stroke=\"#999999\"/>\n",
            n(x),
            n(frame.top),
            n(legend_w - 6.0),
            n(hgt)
        );
        for (i, m) in legend.iter().enumerate() {
            let y = frame.top + 5.0 + line * (i as f64 + 0.5);
            s += &legend_sample(m, x + 6.0, y);
            s += &text(
                x + 6.0 + 26.0 + 8.0,
                y + LEGEND_PX * 0.35,
                LEGEND_PX,
                "start",
                "",
                &shorten(m.name(), LEGEND_CHARS),
            );
        }
        s += "</g>\n";
        s
    }

    /// One mark as SVG in the plot area's pixels, with the attributes `id` (its id and
    /// name).
    fn mark(&self, m: &Mark, f: &Frame, id: &str) -> String {
        let px = |p: (f64, f64)| f.px(&self.x, &self.y, p);
        match m {
            Mark::Line { points, pen, .. } => {
                let d = path_data(points.iter().map(|&p| px(p)));
                format!("<path {id} d=\"{d}\" {}/>\n", stroke(pen))
            }
            Mark::Area {
                upper,
                lower,
                color,
                opacity,
                ..
            } => {
                let pts: Vec<(f64, f64)> = upper
                    .iter()
                    .chain(lower.iter().rev())
                    .map(|&p| px(p))
                    .filter(|p| p.0.is_finite() && p.1.is_finite())
                    .collect();
                let d = path_data(pts.into_iter());
                format!(
                    "<path {id} d=\"{d} Z\" fill=\"{color}\" fill-opacity=\"{opacity}\" stroke=\"none\"/>\n"
                )
            }
            Mark::Bars { bars, color, .. } => {
                let mut s = format!("<g {id} fill=\"{color}\" fill-opacity=\"0.6\">");
                for &(x0, x1, y) in bars {
                    let (a, top) = px((x0, y));
                    let (b, _) = px((x1, y));
                    if a.is_finite() && b.is_finite() && top.is_finite() {
                        let top = top.max(f.top - 1.0);
                        let _ = write!(
                            s,
                            "<rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\"/>",
                            n(a),
                            n(top),
                            n((b - a).max(0.5)),
                            n((f.bottom - top).max(0.0))
                        );
                    }
                }
                s + "</g>\n"
            }
            Mark::Dots { points, color, .. } => {
                let mut s = format!("<g {id} fill=\"{color}\">");
                for &p in points {
                    let (x, y) = px(p);
                    if x.is_finite() && y.is_finite() {
                        let _ = write!(s, "<circle cx=\"{}\" cy=\"{}\" r=\"2.4\"/>", n(x), n(y));
                    }
                }
                s + "</g>\n"
            }
            Mark::Span {
                x0,
                x1,
                color,
                opacity,
                ..
            } => {
                let (a, _) = px((*x0, self.y.lo.max(f64::MIN_POSITIVE)));
                let (b, _) = px((*x1, self.y.lo.max(f64::MIN_POSITIVE)));
                format!(
                    "<rect {id} x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" fill=\"{color}\" fill-opacity=\"{opacity}\"/>\n",
                    n(a.min(b)),
                    n(f.top),
                    n((b - a).abs().max(1.5)),
                    n(f.bottom - f.top)
                )
            }
            Mark::Rule {
                vertical, at, pen, ..
            } => {
                let (x1, y1, x2, y2) = if *vertical {
                    let x = f.left + self.x.frac(*at) * (f.right - f.left);
                    (x, f.top, x, f.bottom)
                } else {
                    let y = f.bottom - self.y.frac(*at) * (f.bottom - f.top);
                    (f.left, y, f.right, y)
                };
                format!(
                    "<line {id} x1=\"{}\" y1=\"{}\" x2=\"{}\" y2=\"{}\" {}/>\n",
                    n(x1),
                    n(y1),
                    n(x2),
                    n(y2),
                    stroke(pen)
                )
            }
        }
    }

    /// The figure as a standalone SVG document.
    pub fn to_svg(&self) -> String {
        page(std::slice::from_ref(self))
    }
}

/// SVG path data through pixel points; a non-finite point breaks the path.
fn path_data(points: impl Iterator<Item = (f64, f64)>) -> String {
    let mut d = String::new();
    let mut pen_down = false;
    for (x, y) in points {
        if !(x.is_finite() && y.is_finite()) {
            pen_down = false;
            continue;
        }
        // Far outside the plot area a coordinate only needs to stay outside it.
        let (x, y) = (x.clamp(-1e5, 1e5), y.clamp(-1e5, 1e5));
        let _ = write!(d, "{}{} {} ", if pen_down { "L" } else { "M" }, n(x), n(y));
        pen_down = true;
    }
    d.trim_end().to_string()
}

/// Figures stacked top to bottom in one SVG document, each [`WIDTH`] × [`HEIGHT`] pixels;
/// their ids are `figure-0`, `figure-1`, … (`figure-0-plot-area`, `figure-0-legend`).
pub fn page(figures: &[Figure]) -> String {
    page_numbered(figures, 0)
}

/// [`page`] with ids numbered from `first`, so several documents inlined in one HTML page
/// keep their ids (and clip paths) apart.
pub fn page_numbered(figures: &[Figure], first: usize) -> String {
    let h = HEIGHT * figures.len() as f64;
    let mut s = format!(
        "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{}\" height=\"{}\" viewBox=\"0 0 {} {}\" \
         font-family=\"DejaVu Sans, Liberation Sans, Arial, sans-serif\">\n",
        WIDTH, h, WIDTH, h
    );
    for (i, f) in figures.iter().enumerate() {
        let id = first + i;
        let _ = writeln!(
            s,
            "<g id=\"figure-{id}\" transform=\"translate(0 {})\">",
            n(HEIGHT * i as f64)
        );
        s += &f.body(&format!("figure-{id}"));
        s += "</g>\n";
    }
    s += "</svg>\n";
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn log_axes_label_every_decade_and_at_least_three_values() {
        let a = Axis::log("f", "Hz", 0.1, 1e5);
        let t = ticks(&a, 700.0, &|l| text_width(l, TICK_PX));
        let labels: Vec<&str> = t.iter().filter_map(|t| t.label.as_deref()).collect();
        for d in [
            "100 mHz", "1 Hz", "10 Hz", "100 Hz", "1 kHz", "10 kHz", "100 kHz",
        ] {
            assert!(labels.contains(&d), "{d} missing from {labels:?}");
        }
        // Less than a decade: 1-2-5 values, then a linear step, keep three labels.
        for (lo, hi) in [(30e-9, 80e-9), (2.0, 9.0), (1.2, 1.9)] {
            let a = Axis::log("d", "V", lo, hi);
            let n = ticks(&a, 300.0, &|_| TICK_PX)
                .iter()
                .filter(|t| t.label.is_some())
                .count();
            assert!(n >= 3, "{lo}..{hi}: {n} labels");
        }
    }

    #[test]
    fn linear_ticks_have_no_residue_and_counts_are_integers() {
        let a = Axis::linear("v", "V", -3.3e-6, 2.9e-6);
        let t = ticks(&a, 400.0, &|_| TICK_PX);
        let labels: Vec<String> = t.iter().filter_map(|t| t.label.clone()).collect();
        assert!(labels.contains(&"0".to_string()), "{labels:?}");
        assert!(labels.iter().all(|l| !l.contains('e')), "{labels:?}");
        let c = Axis {
            counts: true,
            ..Axis::log("n", "", 0.5, 3e4)
        };
        assert_eq!(c.tick_label(10000.0), "10000");
    }

    #[test]
    fn shared_edges_are_labelled_once_and_close_ones_stack() {
        let rule = |at: f64, label: &str| Mark::Rule {
            name: "band edges".into(),
            vertical: true,
            at,
            label: label.into(),
            pen: Pen::dashed("#666666", 1.0, "5 4"),
        };
        let fig = Figure {
            title: "t".into(),
            subtitle: String::new(),
            x: Axis::log("f", "Hz", 1.0, 1e5),
            y: Axis::log("d", "V/√Hz", 1e-9, 1e-6),
            marks: vec![
                rule(100.0, "100 Hz"),
                rule(100.0, "100 Hz"),
                rule(105.0, "105 Hz"),
            ],
        };
        let frame = fig.frame(0.0, 0);
        let (labels, rows) = edge_labels(&fig, &frame);
        assert_eq!(labels.len(), 2, "{labels:?}");
        assert_eq!(rows, 2, "{labels:?}");
    }
}
