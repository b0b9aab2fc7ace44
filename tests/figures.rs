//! The pictures, looked at: every figure `budget --plot`, `analyze --plot` and
//! `analyze --report` draw is laid out with a real font (usvg with the system's fonts) and
//! must keep every text label inside the canvas, no two labels overlapping, the legend off the
//! data, and every named series drawn with enough points per decade.

mod common;

use common::{Scratch, run_ok};
use noisewright::report::figure::{Figure, Mark};
use std::path::Path;
use usvg::{Node, Options, Rect, Tree};

/// Parses `svg` with the system's fonts; no font at all is a setup error, not a pass.
fn tree(svg: &str) -> Tree {
    let mut opt = Options::default();
    opt.fontdb_mut().load_system_fonts();
    assert!(
        opt.fontdb.len() > 0,
        "no font found: install one (Debian: fonts-dejavu-core) so text can be laid out"
    );
    Tree::from_str(svg, &opt).unwrap_or_else(|e| panic!("not a valid SVG: {e}"))
}

/// Every node of `g` with its id, depth first.
fn walk<'a>(g: &'a usvg::Group, out: &mut Vec<&'a Node>) {
    for n in g.children() {
        out.push(n);
        if let Node::Group(g) = n {
            walk(g, out);
        }
        if let Node::Text(t) = n {
            walk(t.flattened(), out);
        }
    }
}

/// (text, box in canvas pixels) of every text label.
fn labels(t: &Tree) -> Vec<(String, Rect)> {
    let mut nodes = Vec::new();
    walk(t.root(), &mut nodes);
    nodes
        .iter()
        .filter_map(|n| match n {
            Node::Text(x) => Some((
                x.chunks().iter().map(|c| c.text()).collect::<String>(),
                x.abs_bounding_box(),
            )),
            _ => None,
        })
        .collect()
}

/// The box of the node with `id`.
fn by_id(t: &Tree, id: &str) -> Option<Rect> {
    let mut nodes = Vec::new();
    walk(t.root(), &mut nodes);
    nodes.iter().find(|n| n.id() == id).map(|n| match n {
        Node::Group(g) => g.abs_bounding_box(),
        Node::Path(p) => p.abs_bounding_box(),
        Node::Text(x) => x.abs_bounding_box(),
        Node::Image(i) => i.abs_bounding_box(),
    })
}

/// Overlap of two boxes in px², 0 when they only touch.
fn overlap(a: &Rect, b: &Rect) -> f32 {
    let w = a.right().min(b.right()) - a.left().max(b.left());
    let h = a.bottom().min(b.bottom()) - a.top().max(b.top());
    if w > 0.0 && h > 0.0 { w * h } else { 0.0 }
}

/// The layout rules of one SVG document `svg` (named `what` in messages) holding `figures`
/// figures: labels inside the canvas and apart, each legend beside its plot area.
fn check_layout(what: &str, svg: &str, figures: usize) {
    let t = tree(svg);
    let (w, h) = (t.size().width(), t.size().height());
    let ls = labels(&t);
    assert!(ls.len() >= 6 * figures, "{what}: only {} labels", ls.len());
    for (s, r) in &ls {
        assert!(
            r.left() >= 0.0 && r.top() >= 0.0 && r.right() <= w && r.bottom() <= h,
            "{what}: label {s:?} at {r:?} leaves the {w}×{h} canvas"
        );
    }
    for (i, (a, ra)) in ls.iter().enumerate() {
        for (b, rb) in &ls[i + 1..] {
            // Half a pixel² of anti-aliasing slack at touching corners.
            assert!(
                overlap(ra, rb) <= 0.5,
                "{what}: labels {a:?} {ra:?} and {b:?} {rb:?} overlap"
            );
        }
    }
    for i in 0..figures {
        let area = by_id(&t, &format!("figure-{i}-plot-area"))
            .unwrap_or_else(|| panic!("{what}: figure {i} has no plot area"));
        if let Some(legend) = by_id(&t, &format!("figure-{i}-legend")) {
            assert_eq!(
                overlap(&area, &legend),
                0.0,
                "{what}: figure {i}'s legend {legend:?} covers its data {area:?}"
            );
        }
    }
}

/// Every named line of `fig` has at least `per_decade` points per decade of the frequency
/// span it covers, and every named mark reaches the legend.
fn check_series(what: &str, fig: &Figure, per_decade: f64) {
    let legend_names: Vec<&str> = fig.marks.iter().map(|m| m.name()).collect();
    let mut lines = 0;
    for m in &fig.marks {
        if let Mark::Line { name, points, .. } = m {
            if name.is_empty() {
                continue;
            }
            lines += 1;
            let inside: Vec<f64> = points
                .iter()
                .map(|p| p.0)
                .filter(|&f| f >= fig.x.lo && f <= fig.x.hi)
                .collect();
            assert!(inside.len() >= 2, "{what}: {name} has no points in view");
            if fig.x.log {
                let decades = (inside[inside.len() - 1] / inside[0]).log10();
                let density = (inside.len() - 1) as f64 / decades.max(1e-9);
                assert!(
                    density >= per_decade,
                    "{what}: {name} has {density:.1} points per decade (< {per_decade})"
                );
            }
        }
    }
    assert!(lines >= 1, "{what}: no named line");
    assert!(legend_names.iter().all(|n| !n.contains('\u{fffd}')));
}

fn read(path: &Path) -> String {
    std::fs::read_to_string(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()))
}

/// The `<svg>…</svg>` pictures inside an HTML report.
fn svgs_in(html: &str) -> Vec<&str> {
    html.match_indices("<svg")
        .map(|(i, _)| {
            let end = html[i..].find("</svg>").expect("every picture is closed") + i + 6;
            &html[i..end]
        })
        .collect()
}

/// The reproductions for `budget --plot`: two bands sharing an edge, legends that sat
/// on the data, a lone source, a 50 nV/√Hz floor, a table profile.
#[test]
fn budget_pictures_are_laid_out_for_reading() {
    let dir = Scratch::new("budget-figures");
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let cases: [(&str, &[&str]); 6] = [
        (
            "popcorn-opamp",
            &["--band", "1Hz..100Hz", "--band", "100Hz..40kHz"],
        ),
        ("line-receiver", &[]),
        ("bridge-drift", &[]),
        ("adc-test-tone", &[]),
        ("sensor-table", &[]),
        ("white-reference", &[]),
    ];
    for (name, extra) in cases {
        let profile = root.join(format!("profiles/{name}.toml"));
        let out = dir.path(&format!("{name}.svg"));
        let mut args = vec![
            "budget".into(),
            profile.to_string_lossy().into_owned(),
            "--plot".into(),
            out.to_string_lossy().into_owned(),
        ];
        args.extend(extra.iter().map(|s| s.to_string()));
        run_ok(&args, &dir);
        check_layout(&format!("budget {name}"), &read(&out), 2);
        // The same figures from the library: every series drawn densely enough to look smooth.
        let p = noisewright::Profile::from_path(&profile).unwrap();
        let texts: Vec<&str> = extra.iter().skip(1).step_by(2).copied().collect();
        let bands = noisewright::run::budget::budget_bands(&p, &texts, None).unwrap();
        let b = noisewright::budget(&p, &bands);
        for (i, fig) in noisewright::report::chart::budget_figures(&p, &b)
            .iter()
            .enumerate()
        {
            check_series(&format!("budget {name} figure {i}"), fig, 20.0);
        }
    }
}
