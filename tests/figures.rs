//! The pictures, looked at: every figure `budget --plot`, `analyze --plot` and
//! `analyze --report` draw is laid out with a real font (usvg with the system's fonts) and
//! must keep every text label inside the canvas, no two labels overlapping, the legend off the
//! data, and every named series drawn with enough points per decade.

mod common;

use common::{Scratch, run_ok};
use std::path::Path;
use usvg::{Node, Options, Rect, Tree};

/// Parses `svg` with the system's fonts; no font at all is a setup error, not a pass.
fn tree(svg: &str) -> Tree {
    let mut opt = Options::default();
    opt.fontdb_mut().load_system_fonts();
    // The generic family a picture may name resolves to the font installed for the tests
    // (fontdb's default, Arial, is not on a Debian machine).
    opt.fontdb_mut().set_sans_serif_family("DejaVu Sans");
    assert!(
        !opt.fontdb.is_empty(),
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

/// The numbers of the figures in `svg` (from their plot areas' ids `figure-N-plot-area`),
/// which must be `figures` many.
fn figure_ids(what: &str, svg: &str, figures: usize) -> Vec<usize> {
    let ids: Vec<usize> = svg
        .match_indices("id=\"figure-")
        .filter_map(|(i, m)| {
            let rest = &svg[i + m.len()..];
            let (num, tail) = rest.split_once('-')?;
            tail.starts_with("plot-area").then(|| num.parse().ok())?
        })
        .collect();
    assert_eq!(
        ids.len(),
        figures,
        "{what}: {} figures, expected {figures}",
        ids.len()
    );
    ids
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
    let ids = figure_ids(what, svg, figures);
    for i in ids {
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

/// The attributes of every `<tag …>` element in `svg` whose id starts with `prefix`.
fn elements(svg: &str, tag: &str, prefix: &str) -> Vec<Vec<(String, String)>> {
    svg.split(&format!("<{tag} "))
        .skip(1)
        .filter_map(|rest| {
            let body = &rest[..rest.find('>')?];
            let mut attrs = Vec::new();
            let mut it = body;
            while let Some(eq) = it.find("=\"") {
                let key = it[..eq].trim().to_string();
                let after = &it[eq + 2..];
                let close = after.find('"')?;
                attrs.push((key, after[..close].to_string()));
                it = &after[close + 1..];
            }
            let id = attrs.iter().find(|a| a.0 == "id")?.1.clone();
            id.starts_with(prefix).then_some(attrs)
        })
        .collect()
}

fn attr<'a>(a: &'a [(String, String)], key: &str) -> &'a str {
    a.iter().find(|x| x.0 == key).map_or("", |x| x.1.as_str())
}

/// In each of `figures` figures of `svg`: `names` all drawn (by legend name), every named
/// line on a log frequency axis with at least `per_decade` points per decade of the span it
/// covers inside the plot area, and named lines told apart by colour or dash.
fn check_series(what: &str, svg: &str, figures: usize, per_decade: f64, names: &[&str]) {
    let mut drawn: Vec<String> = Vec::new();
    let ids = figure_ids(what, svg, figures);
    for i in ids {
        let area = elements(svg, "rect", &format!("figure-{i}-plot-area"));
        let area = area
            .first()
            .unwrap_or_else(|| panic!("{what}: no plot area {i}"));
        let axis: Vec<&str> = attr(area, "data-x-axis").split(' ').collect();
        let (lo, hi): (f64, f64) = (axis[0].parse().unwrap(), axis[1].parse().unwrap());
        let (x, w): (f64, f64) = (
            attr(area, "x").parse().unwrap(),
            attr(area, "width").parse().unwrap(),
        );
        let mut pens: Vec<(String, String, String)> = Vec::new();
        for tag in ["path", "g", "rect", "line"] {
            for m in elements(svg, tag, &format!("figure-{i}-mark-")) {
                let name = attr(&m, "data-name").to_string();
                drawn.push(name.clone());
                if tag != "path" || attr(&m, "fill") != "none" || name.is_empty() {
                    continue;
                }
                let xs: Vec<f64> = attr(&m, "d")
                    .split(['M', 'L'])
                    .filter_map(|p| p.split_whitespace().next()?.parse().ok())
                    .filter(|&px| px >= x - 0.01 && px <= x + w + 0.01)
                    .collect();
                assert!(xs.len() >= 2, "{what}: {name} is not drawn in figure {i}");
                let span = xs.iter().fold(f64::NEG_INFINITY, |a, &b| a.max(b))
                    - xs.iter().fold(f64::INFINITY, |a, &b| a.min(b));
                if axis[2] == "log" && span > 0.1 * w {
                    let decades = span / w * (hi / lo).log10();
                    let density = (xs.len() - 1) as f64 / decades;
                    assert!(
                        density >= per_decade * 0.99, // pixels are rounded to 0.01 px
                        "{what}: {name} has {density:.1} points per decade (< {per_decade})"
                    );
                }
                let pen = (
                    attr(&m, "stroke").to_string(),
                    attr(&m, "stroke-dasharray").to_string(),
                    name,
                );
                assert!(
                    !pens
                        .iter()
                        .any(|p| p.0 == pen.0 && p.1 == pen.1 && p.2 != pen.2),
                    "{what}: {} and another line share colour {} and dash {:?}",
                    pen.2,
                    pen.0,
                    pen.1
                );
                pens.push(pen);
            }
        }
    }
    for n in names {
        assert!(
            drawn.iter().any(|d| d == n),
            "{what}: no {n:?} drawn (drawn: {drawn:?})"
        );
    }
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
        let names: &[&str] = if name == "adc-test-tone" {
            &["band edges", "tones"]
        } else {
            &["band edges"]
        };
        check_series(&format!("budget {name}"), &read(&out), 2, 20.0, names);
    }
}

/// Writes `text` as a profile in `dir` and returns its path.
fn profile_file(dir: &Scratch, name: &str, text: &str) -> String {
    dir.file(name, text).to_string_lossy().into_owned()
}

/// `analyze --plot` and `--report` of a capture: the plot's two figures and each of the
/// report's pictures keep the layout rules and draw what the capture needs.
fn analyze_pictures(dir: &Scratch, capture: &str, profile: &str, tag: &str) -> (String, String) {
    analyze_pictures_of(dir, capture, profile, tag, 2)
}

/// [`analyze_pictures`] with `figures` figures in the plot.
fn analyze_pictures_of(
    dir: &Scratch,
    capture: &str,
    profile: &str,
    tag: &str,
    figures: usize,
) -> (String, String) {
    let plot = dir.path(&format!("{tag}.svg"));
    let report = dir.path(&format!("{tag}.html"));
    let o = common::run(
        &[
            "analyze",
            capture,
            "--profile",
            profile,
            "--plot",
            plot.to_str().unwrap(),
            "--report",
            report.to_str().unwrap(),
        ],
        dir,
    );
    assert!(
        o.status.code().is_some_and(|c| c <= 1),
        "{}",
        common::text(&o.stderr)
    );
    let (plot, report) = (read(&plot), read(&report));
    check_layout(&format!("{tag} plot"), &plot, figures);
    for (k, svg) in svgs_in(&report).iter().enumerate() {
        check_layout(&format!("{tag} report picture {k}"), svg, 1);
    }
    (plot, report)
}

/// (The measured curve has a point per band, 10 per decade: 9 allows for the partial ends.)
/// A tone capture judged against its profile: limits, design, tones and the bins left out
/// around them drawn; the report has the tone table. A capture judged against a profile whose
/// floor is 3 dB higher fails, says so in the title and marks its failed bands.
#[test]
fn analyze_pictures_show_the_verdict_and_what_it_left_out() {
    let dir = Scratch::new("analyze-figures");
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let tone = root.join("profiles/adc-test-tone.toml");
    let tone = tone.to_str().unwrap();
    run_ok(
        &["generate", tone, "-o", "tone.wav", "--duration", "2s"],
        &dir,
    );
    let (plot, report) = analyze_pictures(&dir, "tone.wav", tone, "tone");
    check_series(
        "tone plot",
        &plot,
        2,
        9.0,
        &[
            "measured",
            "designed",
            "limits",
            "tones",
            "left out of the verdict",
        ],
    );
    assert!(plot.contains("PASS"), "the title gives the verdict");
    assert!(report.contains("<h2>Tones</h2>") && report.contains("997&nbsp;Hz"));
    // No tick written with an exponent, as rounding residue such as "-1.69407e-21 V" was.
    let residue = report
        .as_bytes()
        .windows(3)
        .any(|w| w[0].is_ascii_digit() && w[1] == b'e' && w[2] == b'-');
    assert!(!residue, "a number with an exponent in the report");

    let white = "sample_rate = \"48 kHz\"\n[band]\nlow = \"10 Hz\"\nhigh = \"20 kHz\"\n\
                 [[floor]]\nname = \"floor\"\ndensity = \"10 nV/rtHz\"\n";
    let truth = profile_file(&dir, "white.toml", white);
    let wrong = profile_file(&dir, "wrong.toml", &white.replace("10 nV", "14.1 nV"));
    run_ok(
        &["generate", &truth, "-o", "white.wav", "--duration", "4s"],
        &dir,
    );
    let (plot, _) = analyze_pictures(&dir, "white.wav", &wrong, "fail");
    assert!(plot.contains("FAIL"), "the title gives the verdict");
    check_series(
        "failing plot",
        &plot,
        2,
        9.0,
        &["failed bands", "limits", "measured"],
    );
}

/// Twelve sources are drawn with twelve different pens; bursts' levels are marked on the
/// histogram and the trace of a capture with large steps.
#[test]
fn many_sources_and_burst_levels_are_drawn() {
    let dir = Scratch::new("sources-figures");
    let mut text = String::from(
        "name = \"twelve sources (invented)\"\nsample_rate = \"48 kHz\"\n\
         [band]\nlow = \"10 Hz\"\nhigh = \"20 kHz\"\n",
    );
    for i in 0..12 {
        text += &format!(
            "[[floor]]\nname = \"part {i}\"\ndensity = \"{} nV/rtHz\"\ncorner = \"{} Hz\"\n",
            2 + i,
            10 * (i + 1)
        );
    }
    let p = profile_file(&dir, "twelve.toml", &text);
    let budget = dir.path("twelve.svg");
    run_ok(&["budget", &p, "--plot", budget.to_str().unwrap()], &dir);
    check_layout("twelve sources", &read(&budget), 2);
    check_series(
        "twelve sources",
        &read(&budget),
        2,
        20.0,
        &["part 0", "part 11", "total"],
    );
    run_ok(
        &["generate", &p, "-o", "twelve.wav", "--duration", "2s"],
        &dir,
    );
    let (plot, _) = analyze_pictures(&dir, "twelve.wav", &p, "twelve");
    check_series(
        "twelve sources analysed",
        &plot,
        2,
        9.0,
        &["part 0", "part 11"],
    );

    let steps = "name = \"steps (invented)\"\nsample_rate = \"48 kHz\"\n\
                 [band]\nlow = \"1 Hz\"\nhigh = \"20 kHz\"\n\
                 [[floor]]\ndensity = \"5 nV/rtHz\"\n\
                 [[burst]]\nname = \"trap\"\nlevels = [\"0 uV\", \"10 uV\"]\n\
                 dwell = [\"5 ms\", \"15 ms\"]\n";
    let p = profile_file(&dir, "steps.toml", steps);
    run_ok(
        &["generate", &p, "-o", "steps.wav", "--duration", "20s"],
        &dir,
    );
    let (_, report) = analyze_pictures(&dir, "steps.wav", &p, "steps");
    let pictures = svgs_in(&report);
    let histogram = pictures
        .iter()
        .find(|s| s.contains("amplitude histogram"))
        .expect("a histogram");
    check_series(
        "steps histogram",
        histogram,
        1,
        0.0,
        &["measured", "burst levels"],
    );
    assert!(!histogram.contains(".0<"), "counts are integers");
}

/// A capture of three correlated channels: the plot holds the first channel's density and
/// integrated noise, the other two channels' densities and the coherence of every pair with
/// its design, all laid out by the same rules.
#[test]
fn several_channels_show_each_density_and_the_coherence() {
    let dir = Scratch::new("channel-figures");
    let p = profile_file(
        &dir,
        "three.toml",
        "name = \"three axes (invented)\"\nsample_rate = \"8 kHz\"\nchannels = 3\n\
         correlation = [[1, 0.6, 0.1], [0.6, 1, -0.3], [0.1, -0.3, 1]]\n\
         [band]\nlow = \"10 Hz\"\nhigh = \"2 kHz\"\n\
         [[floor]]\ndensity = \"10 nV/rtHz\"\ncorner = \"50 Hz\"\n",
    );
    run_ok(
        &["generate", &p, "-o", "three.wav", "--duration", "4s"],
        &dir,
    );
    let (plot, report) = analyze_pictures_of(&dir, "three.wav", &p, "three", 5);
    check_series(
        "three channels",
        &plot,
        5,
        9.0,
        &["measured", "0–1", "0–1 designed", "1–2"],
    );
    assert!(
        plot.contains("three.wav channel 2 density"),
        "each channel is named"
    );
    assert_eq!(
        svgs_in(&report).len(),
        7,
        "five spectral figures, histogram and trace"
    );
}
