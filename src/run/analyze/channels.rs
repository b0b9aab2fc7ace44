//! A capture of several channels: which channels are analysed, each measured and judged as a
//! capture of one channel is, their correlation, the JSON (`channels` and `correlation` beside
//! the first channel's keys), the fitted profile with the measured correlation, and a summary
//! that stays readable for 64 channels (one line per channel; the band table of failing
//! channels, or of all on request).

use std::sync::atomic::AtomicBool;

use serde_json::{Value, json};

use super::correlation::{self, CorrelationReport};
use super::output::{Extras, Outputs};
use super::setup::Setup;
use super::{Analysis, AnalysisReport, Measurement, Verdict, fit, summary, verdict};
use crate::analysis::capture::CaptureReport;
use crate::analysis::coherence::nearest_correlation;
use crate::error::{Error, Result, Setting};
use crate::io::source::StreamInfo;
use crate::profile::{Profile, format_quantity};

/// Pairs listed one per line in the summary up to this many channels; above it only the
/// pairs that fail are.
const LIST_PAIRS_UP_TO: usize = 8;

/// One channel of a capture of several.
#[derive(Debug)]
pub struct ChannelReport {
    /// The channel (0-based index in the capture).
    pub channel: usize,
    /// Its verdict against the profile's density.
    pub verdict: Verdict,
    /// Everything measured on it, as for a capture of one channel.
    pub measurement: CaptureReport,
    /// Its JSON object: the keys of a capture of one channel, and `channel`.
    pub json: Value,
}

/// The channels to analyse: those asked for (sorted, each once), else every channel. Refuses
/// a channel the capture does not hold, and a profile of several channels whose count is not
/// the capture's.
pub(super) fn picked(
    asked: &[usize],
    info: &StreamInfo,
    profile: Option<&Profile>,
    name: &str,
) -> Result<Vec<usize>> {
    let stored = usize::from(info.channels.max(1));
    if let Some(p) = profile.filter(|p| p.channels > 1 && p.channels != stored) {
        return Err(Error::setting(
            Setting::Profile,
            format!(
                "{} describes {} channels but {name} holds {stored}: judge it against a profile \
                 of {stored} channels (or of one, for the densities alone)",
                p.label(),
                p.channels
            ),
        ));
    }
    if let Some(&k) = asked.iter().find(|&&k| k >= stored) {
        return Err(Error::setting(
            Setting::Channel,
            format!(
                "channel {k} asked for, but {name} holds {stored} channel(s), numbered 0 to {}",
                stored - 1
            ),
        ));
    }
    let mut k: Vec<usize> = match asked.is_empty() {
        true => (0..stored).collect(),
        false => asked.to_vec(),
    };
    k.sort_unstable();
    k.dedup();
    Ok(k)
}

/// Everything after the channels were measured one by one: the correlation, the fit, the
/// files, the JSON, the summary and the verdicts.
pub(super) fn several(
    a: &Analysis,
    s: &Setup,
    each: Vec<Measurement>,
    seg_len: usize,
    outputs: Outputs,
    interrupted: &AtomicBool,
) -> Result<AnalysisReport> {
    let corr = match each.len() >= 2 {
        true => Some(correlation::measure(s, &each, seg_len, interrupted)?),
        false => None,
    };
    let mut json = each[0].json.clone();
    let channel_json: Vec<Value> = s
        .channels
        .iter()
        .zip(&each)
        .map(|(&k, m)| {
            let mut o = m.json.clone();
            o["channel"] = json!(k);
            o
        })
        .collect();
    json["channels"] = json!(channel_json);
    json["correlation"] = corr
        .as_ref()
        .map_or(Value::Null, CorrelationReport::to_json);
    let first = &each[0].report;
    let fitted = match &a.s.fit {
        Some(path) => {
            let (toml, fit_json) = fit::fit(s, first)?;
            json["fit"] = fit_json;
            json["fit"]["profile_file"] = json!(path.display().to_string());
            let toml = match &corr {
                Some(c) => {
                    let m = nearest_correlation(&c.estimate.correlation);
                    json["fit"]["correlation"] = json!(m);
                    json["fit"]["channels"] = json!(m.len());
                    with_correlation(&toml, &m)
                }
                None => toml,
            };
            Some(toml)
        }
        None => None,
    };
    let verdicts: Vec<Verdict> = s
        .channels
        .iter()
        .zip(&each)
        .map(|(k, m)| verdict::verdict_named(&m.report, s, &format!("{} channel {k}", s.name)))
        .collect();
    let overall = overall(s, &verdicts, corr.as_ref());
    if overall.judged() {
        json["pass"] = json!(overall.passed());
    }
    // The pictures and the report show the first channel analysed.
    let extras = Extras {
        allan_svg: None,
        left_out: &each[0].left_out_hz,
        integrated: each[0].integrated.as_ref(),
    };
    outputs.write(first, &json, fitted.as_deref(), s, &extras)?;
    let text = summary_text(s, &each, &verdicts, corr.as_ref(), &json, a.s.band_tables);
    let measurement = first.clone();
    let channels = s
        .channels
        .iter()
        .zip(each)
        .zip(verdicts)
        .zip(channel_json)
        .map(|(((&channel, m), verdict), json)| ChannelReport {
            channel,
            verdict,
            measurement: m.report,
            json,
        })
        .collect();
    Ok(AnalysisReport {
        json,
        summary: text,
        verdict: overall,
        measurement,
        channels,
        correlation: corr,
    })
}

/// The fitted profile's TOML with `channels` and `correlation` added before its first table.
fn with_correlation(toml: &str, m: &[Vec<f64>]) -> String {
    let rows: Vec<String> = m
        .iter()
        .map(|r| {
            let v: Vec<String> = r.iter().map(|x| format!("{x:?}")).collect();
            format!("[{}]", v.join(", "))
        })
        .collect();
    let keys = format!(
        "# The channels' zero-lag correlation as measured (the nearest positive semi-definite \
         matrix with a unit diagonal).\nchannels = {}\ncorrelation = [{}]\n",
        m.len(),
        rows.join(", ")
    );
    match toml.find("\n[") {
        Some(at) => format!("{}\n{keys}{}", &toml[..at], &toml[at..]),
        None => format!("{toml}{keys}"),
    }
}

/// The verdict of the whole capture: every channel's density and the correlation.
fn overall(s: &Setup, verdicts: &[Verdict], corr: Option<&CorrelationReport>) -> Verdict {
    if !verdicts.iter().any(Verdict::judged) {
        return Verdict::NotJudged;
    }
    let mut why: Vec<String> = verdicts
        .iter()
        .filter_map(|v| match v {
            Verdict::Fail(Error::Mismatch(m)) => Some(m.clone()),
            Verdict::Fail(e) => Some(e.to_string()),
            _ => None,
        })
        .collect();
    if let Some(c) = corr {
        why.extend(c.pairs.iter().filter(|p| p.failed()).map(|p| {
            format!(
                "{} does not match the correlation of {}: {}",
                s.name,
                s.profile_name(),
                p.failure_text()
            )
        }));
    }
    match why.is_empty() {
        true => Verdict::Pass,
        false => Verdict::Fail(Error::Mismatch(why.join("\n"))),
    }
}

/// The summary of a capture of several channels.
fn summary_text(
    s: &Setup,
    each: &[Measurement],
    verdicts: &[Verdict],
    corr: Option<&CorrelationReport>,
    json: &Value,
    band_tables: bool,
) -> String {
    let first = &each[0].report;
    let u = first.unit.as_str();
    let f = &first.file;
    let n = first.stats.count();
    let mut t = format!(
        "noisewright {}: analyze {} ({} {}, {} channels of {} samples at {}, {})\n",
        env!("CARGO_PKG_VERSION"),
        s.name,
        f["format"].as_str().unwrap_or(""),
        f["sample_format"].as_str().unwrap_or("text"),
        s.info.channels,
        n,
        format_quantity(first.sample_rate_hz, "Hz"),
        format_quantity(n as f64 / first.sample_rate_hz, "s"),
    );
    t += &summary::scale_line(first);
    t += &format!(
        "  channels        {} of {} analysed; density: Welch, Hann, 50 % overlap, {} segments \
         of {} samples ({} bins)\n",
        s.channels.len(),
        s.info.channels,
        first.spectrum.segments,
        first.spectrum.seg_len,
        format_quantity(first.spectrum.bin_width_hz(), "Hz")
    );
    t += &format!(
        "    {:<4} {:<14} {:<14} {:<7} {:<9} {:<9} density\n",
        "ch", "mean", "std (AC)", "crest", "skew", "ex. kurt"
    );
    for ((k, m), v) in s.channels.iter().zip(each).zip(verdicts) {
        let r = &m.report;
        let density = match &r.comparison {
            None => "measured".to_string(),
            Some(c) if c.pass => format!("PASS, {} of {} bands", c.bands.len(), c.bands.len()),
            Some(c) => format!(
                "FAIL, {} of {} bands outside: {}",
                c.failed(),
                c.bands.len(),
                c.failure_line().unwrap_or_default()
            ),
        };
        debug_assert_eq!(v.passed(), r.comparison.as_ref().is_some_and(|c| c.pass));
        t += &format!(
            "    {:<4} {:<14} {:<14} {:<7.3} {:<+9.4} {:<+9.4} {density}\n",
            k,
            format_quantity(r.stats.mean(), u),
            format_quantity(r.stats.std(), u),
            r.crest_factor(),
            r.moments.skewness(),
            r.moments.excess_kurtosis()
        );
    }
    if let Some(c) = corr {
        t += &correlation_text(c);
    }
    for ((k, m), v) in s.channels.iter().zip(each).zip(verdicts) {
        if band_tables || matches!(v, Verdict::Fail(_)) {
            t += &format!("  channel {k}\n");
            t += &summary::density_table(&m.report);
        }
    }
    if let Some(fit) = json.get("fit") {
        t += &format!(
            "  fit             floor {}, corner {}, slope {:.3}, {} channels with their measured \
             correlation -> {}\n",
            format_quantity(
                fit["floor_density"].as_f64().unwrap_or(f64::NAN),
                &format!("{u}/√Hz")
            ),
            fit["corner_hz"]
                .as_f64()
                .map_or("none".to_string(), |c| format_quantity(c, "Hz")),
            fit["slope"].as_f64().unwrap_or(f64::NAN),
            fit["channels"].as_u64().unwrap_or(1),
            fit["profile_file"].as_str().unwrap_or("")
        );
    }
    for note in &first.notes {
        t += &format!("  note: {note}\n");
    }
    if let Some(note) = corr.and_then(|c| c.note.as_ref()) {
        t += &format!("  note: {note}\n");
    }
    t += &verdict_line(s, verdicts, corr);
    t
}

/// The correlation matrix and the coherence, a line per pair up to [`LIST_PAIRS_UP_TO`]
/// channels, else the failing pairs only.
fn correlation_text(c: &CorrelationReport) -> String {
    let mut t = format!(
        "  correlation     zero-lag, 95 % interval by Fisher's z with N' effective samples; \
         coherence in {} bands per pair, Carter–Knapp–Nuttall limits\n",
        c.pairs.first().map_or(0, |p| p.bands.len())
    );
    let list_all = c.channels.len() <= LIST_PAIRS_UP_TO;
    for p in c.pairs.iter().filter(|p| list_all || p.failed()) {
        let judged: Vec<_> = p.bands.iter().filter(|b| b.designed.is_some()).collect();
        let shown = if judged.is_empty() {
            p.bands.iter().collect::<Vec<_>>()
        } else {
            judged
        };
        let mut values: Vec<f64> = shown.iter().map(|b| b.coherence).collect();
        values.sort_by(f64::total_cmp);
        let median = values.get(values.len() / 2).copied().unwrap_or(f64::NAN);
        let designed = shown.iter().find_map(|b| b.designed);
        t += &format!(
            "    {}–{:<3} r {:+.4} ({:+.4}..{:+.4}, N' {:.0}){}  coherence median {:.4}{} over \
             {} bands{}\n",
            p.channels.0,
            p.channels.1,
            p.r,
            p.ci95.0,
            p.ci95.1,
            p.n_eff,
            p.designed
                .map_or(String::new(), |d| format!(" designed {d:+.4}")),
            median,
            designed.map_or(String::new(), |d| format!(" (designed {d:.4})")),
            shown.len(),
            match p.failed() {
                true => format!("  FAIL: {}", p.failure_text()),
                false if p.pass.is_some() => "  ok".to_string(),
                false => String::new(),
            }
        );
    }
    if !list_all {
        t += &format!(
            "    {} pairs, {} outside their limits (listed above)\n",
            c.pairs.len(),
            c.pairs.iter().filter(|p| p.failed()).count()
        );
    }
    t
}

/// The last line: how many channels and pairs passed, against what.
fn verdict_line(s: &Setup, verdicts: &[Verdict], corr: Option<&CorrelationReport>) -> String {
    let Some(p) = &s.profile else {
        return String::new();
    };
    let ok = verdicts.iter().filter(|v| v.passed()).count();
    let pairs = match corr {
        Some(c) if c.pass.is_some() => format!(
            ", {} of {} pairs within their correlation and coherence limits ({} tests at a total \
             false-alarm probability of {})",
            c.pairs.iter().filter(|p| !p.failed()).count(),
            c.pairs.len(),
            c.tests,
            super::FALSE_ALARM
        ),
        _ => String::new(),
    };
    let pass = ok == verdicts.len() && corr.is_none_or(|c| c.pass != Some(false));
    format!(
        "  verdict         {}: {} of {} channels within their density limits in {}..{}{} \
         against {}\n",
        if pass { "PASS" } else { "FAIL" },
        ok,
        verdicts.len(),
        format_quantity(p.band.low_hz, "Hz"),
        format_quantity(p.band.high_hz, "Hz"),
        pairs,
        p.name.as_deref().unwrap_or("the profile")
    )
}
