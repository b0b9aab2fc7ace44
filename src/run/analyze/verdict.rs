//! The capture against its profile: the profile's tones fitted (their leakage taken out of
//! the bands), each band compared with the designed density, and the verdict.

use std::ops::Range;
use std::sync::atomic::AtomicBool;

use serde_json::Value;

use super::measure::Measured;
use super::setup::Setup;
use super::{FALSE_ALARM, TONE_LEAKAGE, Verdict};
use crate::analysis::capture::CaptureReport;
use crate::analysis::compare::{Comparison, compare_with_design};
use crate::analysis::tones::{ToneFit, without_tones};
use crate::error::{Error, Result};
use crate::model::tone::enob;
use crate::profile::format_quantity;

/// Tones of the profile: leaves the bins their leakage reaches out of every band (so the
/// comparison and the floor fit see the noise only) and fits their amplitudes in a third
/// pass. Returns one JSON object per tone and the bins each tone's leakage covers (none
/// without a profile or its tones).
pub(super) fn tones(
    s: &Setup,
    m: &mut Measured,
    notes: &mut Vec<String>,
    interrupted: &AtomicBool,
) -> Result<(Vec<Value>, Vec<Range<usize>>)> {
    let (Some(p), Some(d)) = (&s.profile, &s.design) else {
        return Ok((Vec::new(), Vec::new()));
    };
    if p.tones.is_empty() {
        return Ok((Vec::new(), Vec::new()));
    }
    let fs = s.info.sample_rate_hz;
    let q_psd = m.q_psd;
    let spectrum = &m.spectrum;
    let noise = |f: f64| d.density(f) + q_psd;
    let excluded;
    (m.bands, excluded) = without_tones(
        std::mem::take(&mut m.bands),
        spectrum,
        &p.tones,
        &noise,
        TONE_LEAKAGE,
    );
    let freqs: Vec<f64> = p.tones.iter().map(|t| t.frequency_hz).collect();
    let mut fit = ToneFit::new(&freqs, fs);
    s.capture
        .pass(s.channel, &s.scale, interrupted, &mut |x| fit.push(x))?;
    let fitted = fit.finish().map(|(t, _)| t);
    // Measured in-band noise: the Welch bins inside the band, each tone's excluded bins
    // counted at the designed density instead.
    let df = fs / spectrum.seg_len as f64;
    let in_band = |k: usize| {
        let f = k as f64 * df;
        f >= p.band.low_hz && f <= p.band.high_hz
    };
    let noise_power: f64 = (1..spectrum.psd.len())
        .filter(|&k| in_band(k))
        .map(|k| {
            if excluded.iter().any(|e| e.contains(&k)) {
                noise(k as f64 * df) * df
            } else {
                spectrum.psd[k] * df
            }
        })
        .sum();
    // Designed SNR: against the band RMS (as generate and budget quote it) plus the
    // quantisation noise in the band, the noise the measured SNR counts too.
    let band_power = s.band_rms.unwrap_or(0.0).powi(2);
    let q_band = q_psd * (p.band.high_hz - p.band.low_hz);
    let expected: Vec<f64> = p
        .tones
        .iter()
        .map(|t| crate::model::tone::snr_db(t.power(), band_power, q_band))
        .collect();
    let sigma_a = (d.noise_variance() * 2.0 / m.stats.count() as f64).sqrt();
    let mut tone_json = Vec::new();
    for (i, t) in p.tones.iter().enumerate() {
        let m = fitted.as_ref().map(|v| v[i]);
        let measured_snr = m.map(|m| 10.0 * (0.5 * m.peak * m.peak / noise_power).log10());
        tone_json.push(serde_json::json!({
            "name": t.name,
            "frequency_hz": t.frequency_hz,
            "expected_peak": t.peak,
            "measured_peak": m.map(|m| m.peak),
            "measured_rms": m.map(|m| m.peak / std::f64::consts::SQRT_2),
            "measured_phase_deg": m.map(|m| m.phase_rad.to_degrees()),
            "peak_std_white": sigma_a,
            "expected_snr_db": expected[i],
            "measured_snr_db": measured_snr,
            "measured_enob_bits": measured_snr.map(enob),
            "excluded_bins": [excluded[i].start, excluded[i].end],
        }));
    }
    notes.push(format!(
        "{} tone(s) fitted by least squares at their frequencies; the Welch bins their \
         leakage reaches are left out of the comparison and the fit",
        p.tones.len()
    ));
    Ok((tone_json, excluded))
}

/// Each band inside the profile's band against the designed density plus the quantisation
/// floor (`None` without a profile).
pub(super) fn compare(s: &Setup, m: &Measured, notes: &mut Vec<String>) -> Option<Comparison> {
    let (Some(p), Some(d)) = (&s.profile, &s.design) else {
        return None;
    };
    let q_psd = m.q_psd;
    let c = compare_with_design(
        &m.bands,
        &m.spectrum,
        &p.band,
        &|f| d.density(f) + q_psd,
        FALSE_ALARM,
        s.tolerance_db,
    );
    if c.bands.is_empty() {
        // A note is text output, not an error: its words stay as they always were.
        notes.push(
            "no band of the estimate lies inside the profile's band: use a finer --resolution \
             or a longer capture"
                .to_string(),
        );
    }
    if q_psd > 0.0 {
        notes.push(format!(
            "the designed density includes the {}-bit quantisation floor {}",
            s.info.sample_format.map_or(0, |f| 8 * f.bytes()),
            format_quantity(q_psd.sqrt(), &format!("{}/√Hz", s.scale.symbol()))
        ));
    }
    Some(c)
}

/// The verdict of the comparison: a failure names the capture, the profile and the first
/// band outside its limits.
pub(super) fn verdict(report: &CaptureReport, s: &Setup) -> Verdict {
    verdict_named(report, s, &s.name)
}

/// As [`verdict`], the capture called `name` (a channel of it, say).
pub(super) fn verdict_named(report: &CaptureReport, s: &Setup, name: &str) -> Verdict {
    let Some(c) = &report.comparison else {
        return Verdict::NotJudged;
    };
    if c.pass {
        return Verdict::Pass;
    }
    let pname = s.profile_name();
    Verdict::Fail(Error::Mismatch(match c.failure_line() {
        Some(line) => format!("{name} does not match {pname}: {line}"),
        None => format!("{name} could not be checked against {pname}: no band inside its band"),
    }))
}
