//! The self-contained HTML report of an analysis ([`report_html`]): one page, readable
//! offline (no scripts, no external files) and printable on A4, with the pictures of
//! [`super::chart`] inline and the tables (statistics, density bands, tones, spurs, burst
//! levels, fit, notes).

use super::figure::{Figure, page_numbered};
use super::html_escape;
use crate::analysis::capture::CaptureReport;
use crate::analysis::welch::BandEstimate;
use crate::profile::{Profile, format_quantity};

/// The figures of an analysis, by section (from [`super::chart::analysis_figures`]'s parts).
pub struct ReportFigures {
    /// The density, then the integrated noise when there is one.
    pub density: Vec<Figure>,
    /// The histogram and the trace.
    pub amplitude: Vec<Figure>,
}

/// The HTML report: the pictures inline and the tables, from the analysis and its JSON.
pub fn report_html(
    r: &CaptureReport,
    json: &serde_json::Value,
    figures: &ReportFigures,
    profile: Option<&Profile>,
) -> String {
    let mut h = report_head(r, json, profile);
    h += &statistics_section(r, json);
    h += &density_section(r, &figures.density);
    h += &tone_section(json, &r.unit);
    h += &spur_section(json, &r.unit);
    h += "<h2>Amplitude</h2>\n";
    h += &figures_html(&figures.amplitude, figures.density.len());
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

/// Each figure as its own inline SVG, ids numbered from `first`.
fn figures_html(figures: &[Figure], first: usize) -> String {
    figures
        .iter()
        .enumerate()
        .map(|(i, f)| {
            format!(
                "<figure>{}</figure>\n",
                page_numbered(std::slice::from_ref(f), first + i)
            )
        })
        .collect()
}

/// A quantity for a table cell: number and unit never broken apart.
fn cell(v: f64, unit: &str) -> String {
    html_escape(&format_quantity(v, unit)).replace(' ', "&nbsp;")
}

/// The tones found (from `json["tones"]`): frequency, measured and expected amplitude, SNR
/// against the band RMS, ENOB. Empty without tones.
fn tone_section(json: &serde_json::Value, unit: &str) -> String {
    let Some(tones) = json["tones"].as_array().filter(|t| !t.is_empty()) else {
        return String::new();
    };
    let num = |v: &serde_json::Value| v.as_f64().unwrap_or(f64::NAN);
    let mut h = String::from(
        "<h2>Tones</h2>\n<table><tr><th>tone</th><th>frequency</th><th>RMS, measured</th>\
         <th>peak, expected</th><th>SNR, measured</th><th>SNR, expected</th><th>ENOB</th></tr>\n",
    );
    for t in tones {
        h += &format!(
            "<tr><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{:.2}&nbsp;dB</td>\
             <td>{:.2}&nbsp;dB</td><td>{:.2}&nbsp;bits</td></tr>\n",
            html_escape(t["name"].as_str().unwrap_or("")),
            cell(num(&t["frequency_hz"]), "Hz"),
            cell(num(&t["measured_rms"]), unit),
            cell(num(&t["expected_peak"]), unit),
            num(&t["measured_snr_db"]),
            num(&t["expected_snr_db"]),
            num(&t["measured_enob_bits"])
        );
    }
    h += "</table>\n<p>SNR against the band RMS of the noise (tone RMS over noise RMS in the \
          profile's band); ENOB = (SNR − 1.76 dB)/6.02 dB (IEEE Std 1241).</p>\n";
    h
}

/// The spurs found (from `json["spurs"]["found"]`): frequency, RMS, height above the local
/// floor, and the mains family when it is one. Empty without spurs.
fn spur_section(json: &serde_json::Value, unit: &str) -> String {
    let Some(found) = json["spurs"]["found"].as_array().filter(|t| !t.is_empty()) else {
        return String::new();
    };
    let num = |v: &serde_json::Value| v.as_f64().unwrap_or(f64::NAN);
    let mut h = String::from(
        "<h2>Spurs</h2>\n<table><tr><th>frequency</th><th>RMS</th><th>above the floor</th>\
         <th>mains</th></tr>\n",
    );
    for p in found {
        let mains = match p["mains"].as_object() {
            Some(m) => format!(
                "{}&nbsp;Hz, harmonic&nbsp;{}",
                m["family_hz"], m["harmonic"]
            ),
            None => "no".into(),
        };
        h += &format!(
            "<tr><td>{}</td><td>{}</td><td>{:.1}&nbsp;dB</td><td>{mains}</td></tr>\n",
            cell(num(&p["frequency_hz"]), "Hz"),
            cell(num(&p["rms"]), unit),
            num(&p["height_db"])
        );
    }
    h += "</table>\n<p>Spurs are left out of the verdict and the fit.</p>\n";
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
          text-align:right;white-space:nowrap}th{background:#eee}.fail{color:#b00;font-weight:bold}\
          .ok{color:#070}figure{margin:1em 0}figure svg{width:100%;height:auto}\
          @media print{@page{size:A4;margin:12mm}body{max-width:none;margin:0;font-size:10pt}\
          figure,table{break-inside:avoid}h2{break-after:avoid}}</style></head><body>\n";
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
    let q = |v: f64| cell(v, u);
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
            "<tr><td>{} .. {}</td><td>{}</td></tr>\n",
            cell(d.f_lo_hz, "Hz"),
            cell(d.f_hi_hz, "Hz"),
            q(d.rms)
        );
    }
    h += "</table>\n";
    h
}

/// The density: the pictures (density, integrated noise), how it was estimated, and a table of the bands (density and
/// 95 % interval in unit/√Hz, degrees of freedom; against the design when compared).
fn density_section(r: &CaptureReport, figures: &[Figure]) -> String {
    let mut h = String::new();
    h += "<h2>Density</h2>\n";
    h += &figures_html(figures, 0);
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
    let qd = |v: f64| cell(v, &du);
    let (lo, hi) = CaptureReport::band_ci95(b);
    let mut h = format!(
        "<tr><td>{} .. {}</td><td>{}</td><td>{} .. {}</td><td>{:.1}</td>",
        cell(b.f_lo_hz, "Hz"),
        cell(b.f_hi_hz, "Hz"),
        qd(b.psd_mean.sqrt()),
        qd(lo.sqrt()),
        qd(hi.sqrt()),
        b.dof
    );
    if let Some(c) = &r.comparison {
        match c.bands.iter().find(|c| c.band.bins == b.bins) {
            Some(c) => {
                h += &format!(
                    "<td>{}</td><td>{:+.2} dB</td><td>{:+.2} .. {:+.2}&nbsp;dB</td><td class=\"{}\">{}</td>",
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
    let q = |v: f64| cell(v, &r.unit);
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
                    cell(l.dwell_s[i], "s"),
                    l.dwells[i]
                );
            }
            h += &format!(
                "</table><p>Dwell resolution {}.</p>\n",
                cell(l.resolution_s, "s")
            );
        }
    }
    h
}

/// The fit from the JSON `f`: floor density (unit/√Hz), and corner (Hz) and slope when a 1/f
/// rise was found, each with its relative standard error.
fn fit_section(r: &CaptureReport, f: &serde_json::Value) -> String {
    let du = format!("{}/√Hz", r.unit);
    let qd = |v: f64| cell(v, &du);
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
                cell(c, "Hz"),
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
