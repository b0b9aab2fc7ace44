//! What a bench adds to a capture: its offset and drift (reported, and taken out before the
//! density unless kept), narrow spurs and the frequencies a user leaves out (both left out of
//! the verdict and the fit, as tones are), and the low-frequency peak-to-peak over windows
//! against the profile's 6σ and 6.6σ.

use std::ops::Range;

use serde_json::{Value, json};

use super::measure::Measured;
use super::setup::Setup;
use super::{Settings, TONE_LEAKAGE};
use crate::analysis::spurs::{Spur, bins_around, find_spurs};
use crate::analysis::tones::{leakage_bins, split_around};
use crate::analysis::trend::Trend;
use crate::analysis::window_pp::{
    HIGH_PASS_ORDER, LOW_PASS_ORDER, band_filter, median, power_gain, settling_s,
};
use crate::error::{Error, Result, Setting};
use crate::model::density::{band_support, integrate_pieces, target_psd};
use crate::profile::{Dimension, format_quantity, parse_quantity};

/// Total false-alarm probability of the spur search over one capture (Bonferroni over the
/// bins searched).
pub const SPUR_FALSE_ALARM: f64 = 1e-4;
/// The default band of the windowed peak-to-peak, Hz.
pub const DEFAULT_PP_BAND_HZ: (f64, f64) = (0.1, 10.0);
/// The default window of the windowed peak-to-peak, s.
pub const DEFAULT_PP_WINDOW_S: f64 = 10.0;

/// The bench settings, parsed.
#[derive(Debug, Clone)]
pub(super) struct BenchSpec {
    pub(super) keep_drift: bool,
    /// Ranges left out, Hz (equal ends for one frequency).
    pub(super) exclude: Vec<(f64, f64)>,
    /// Band (Hz) and window (s) of the windowed peak-to-peak.
    pub(super) pp_band: (f64, f64),
    pub(super) pp_window_s: f64,
    /// True when the band or the window was given: then it must be measurable.
    pub(super) pp_asked: bool,
}

impl BenchSpec {
    /// Parses the exclusions, the band and the window, in that order.
    pub(super) fn new(s: &Settings) -> Result<BenchSpec> {
        let exclude = match &s.exclude {
            Some(t) => t
                .split(',')
                .map(|part| range(part, Setting::Exclude, true))
                .collect::<Result<Vec<_>>>()?,
            None => Vec::new(),
        };
        let pp_band = match &s.pp_band {
            Some(t) => range(t, Setting::PpBand, false)?,
            None => DEFAULT_PP_BAND_HZ,
        };
        let pp_window_s = match &s.pp_window {
            Some(t) => match parse_quantity(t, Dimension::Time, "V") {
                Ok(v) if v.is_finite() && v > 0.0 => v,
                Ok(_) => {
                    return Err(Error::setting(
                        Setting::PpWindow,
                        format!("expected a positive time such as 10s, got {t:?}"),
                    ));
                }
                Err(m) => return Err(Error::setting(Setting::PpWindow, m)),
            },
            None => DEFAULT_PP_WINDOW_S,
        };
        Ok(BenchSpec {
            keep_drift: s.keep_drift,
            exclude,
            pp_band,
            pp_window_s,
            pp_asked: s.pp_band.is_some() || s.pp_window.is_some(),
        })
    }

    /// Samples filtered before the first window at `fs` Hz ([`settling_s`]).
    pub(super) fn settle_samples(&self, fs: f64) -> usize {
        (settling_s(self.pp_band.0) * fs).round() as usize
    }

    /// The window in samples at `fs` Hz, when the band fits below fs/2 and the record holds the
    /// settling time and a window; a band or window that was asked for and cannot be measured
    /// is refused.
    pub(super) fn pp_window_samples(
        &self,
        fs: f64,
        samples: u64,
        name: &str,
    ) -> Result<Option<usize>> {
        let hi = self.pp_band.1;
        let window = (self.pp_window_s * fs).round();
        let refuse = |setting: Setting, why: String| {
            if self.pp_asked {
                Err(Error::setting(setting, why))
            } else {
                Ok(None)
            }
        };
        if hi >= fs / 2.0 {
            return refuse(
                Setting::PpBand,
                format!(
                    "the band ends at {}, not below half the rate of {name} ({})",
                    format_quantity(hi, "Hz"),
                    format_quantity(fs / 2.0, "Hz")
                ),
            );
        }
        let settle = self.settle_samples(fs) as f64;
        if window < 1.0 || window + settle > samples as f64 {
            return refuse(
                Setting::PpWindow,
                format!(
                    "a window of {} after the filter's settling time of {} needs {} samples, \
                     but {name} holds {samples} ({})",
                    format_quantity(self.pp_window_s, "s"),
                    format_quantity(settle / fs, "s"),
                    window + settle,
                    format_quantity(samples as f64 / fs, "s")
                ),
            );
        }
        Ok(Some(window as usize))
    }
}

/// A range `lo..hi` of frequencies (Hz, 0 < lo < hi), or one frequency when `single` allows it.
fn range(text: &str, setting: Setting, single: bool) -> Result<(f64, f64)> {
    let f = |t: &str| parse_quantity(t, Dimension::Frequency, "V");
    let bad = |why: &str| {
        Err(Error::setting(
            setting,
            format!(
                "{why}: expected {} such as 0.1Hz..10Hz, got {text:?}",
                if single {
                    "a frequency such as 50Hz, or a range"
                } else {
                    "a range"
                }
            ),
        ))
    };
    let (lo, hi) = match text.split_once("..") {
        Some((a, b)) => match (f(a), f(b)) {
            (Ok(a), Ok(b)) => (a, b),
            _ => return bad("not a frequency range"),
        },
        None if single => match f(text) {
            Ok(v) => (v, v),
            Err(_) => return bad("not a frequency"),
        },
        None => return bad("not a range"),
    };
    if !(lo > 0.0 && hi >= lo && (single || hi > lo)) {
        return bad("the ends must be positive and increasing");
    }
    Ok((lo, hi))
}

/// The offset and drift as JSON (`dc`, `drift`), slope in unit/s at `fs` Hz.
pub(super) fn drift_json(t: &Trend, fs: f64, removed: bool) -> (Value, Value) {
    let duration = t.samples as f64 / fs;
    (
        json!({ "offset": t.offset, "removed": removed }),
        json!({
            "slope_per_s": t.slope_per_sample * fs,
            "slope_se_white_per_s": t.slope_se_white * fs,
            "change_over_record": t.slope_per_sample * fs * duration,
            "removed": removed,
        }),
    )
}

/// Spurs found in the estimate (the tones' bins `tones` skipped) and the user's exclusions:
/// their bins leave every band (split around them). Returns the `spurs` and `excluded` JSON,
/// and the bin ranges of both.
pub(super) fn lines(
    s: &Setup,
    m: &mut Measured,
    tones: &[Range<usize>],
    bench: &BenchSpec,
) -> (Value, Value, Vec<Range<usize>>) {
    let sp = &m.spectrum;
    // With a profile, lines are looked for where it has density: beyond a brick-wall edge's
    // step the engine's own filters leave a density 80–90 dB down with a fine structure of
    // their own, which is no one's spur.
    let mut skip = tones.to_vec();
    if let Some(p) = &s.profile {
        let (bottom, top) = band_support(&p.band, p.sample_rate_hz);
        let (df, n) = (sp.bin_width_hz(), sp.psd.len());
        skip.push(0..((bottom / df).floor() as usize).min(n));
        skip.push(((top / df).ceil() as usize + 1).min(n)..n);
    }
    let found = find_spurs(sp, &skip, SPUR_FALSE_ALARM);
    let q_psd = m.q_psd;
    let design = s.design.as_ref();
    let spur_ranges: Vec<Range<usize>> = found
        .spurs
        .iter()
        .map(|p| {
            let floor = |f: f64| design.map_or(p.floor_psd, |d| d.density(f) + q_psd);
            let leak = leakage_bins(p.frequency_hz, p.power(), sp, &floor, TONE_LEAKAGE);
            leak.start.min(p.lobe.start)..leak.end.max(p.lobe.end)
        })
        .collect();
    let df = sp.bin_width_hz();
    let user: Vec<Range<usize>> = bench
        .exclude
        .iter()
        .map(|&(lo, hi)| bins_around(lo, hi, df, sp.psd.len()))
        .collect();
    let all: Vec<Range<usize>> = spur_ranges.iter().chain(&user).cloned().collect();
    if !all.is_empty() {
        m.bands = std::mem::take(&mut m.bands)
            .iter()
            .flat_map(|b| split_around(b.bins.clone(), &all))
            .map(|r| sp.band(r))
            .collect();
    }
    let list: Vec<Value> = found
        .spurs
        .iter()
        .zip(&spur_ranges)
        .map(|(p, r)| spur_json(p, r))
        .collect();
    let spurs = json!({
        "false_alarm": found.false_alarm,
        "false_alarm_per_bin": found.per_bin,
        "bins_searched": found.bins_searched,
        "dof_per_bin": found.dof,
        "threshold_db_widest": 10.0 * found.threshold_wide.log10(),
        "found": list,
    });
    let excluded: Vec<Value> = bench
        .exclude
        .iter()
        .zip(&user)
        .map(|(&(lo, hi), r)| json!({"low_hz": lo, "high_hz": hi, "excluded_bins": [r.start, r.end]}))
        .collect();
    (spurs, json!(excluded), all)
}

fn spur_json(p: &Spur, r: &Range<usize>) -> Value {
    json!({
        "frequency_hz": p.frequency_hz,
        "rms": p.rms,
        "rms_se": p.rms_se,
        "height_db": p.height_db,
        "threshold_db": 10.0 * p.threshold.log10(),
        "floor_density": p.floor_psd.sqrt(),
        "mains": p.mains.map(|m| json!({"family_hz": m.family_hz, "harmonic": m.harmonic})),
        "excluded_bins": [r.start, r.end],
    })
}

/// The windowed peak-to-peak as JSON (`Null` when not measured): median and largest window,
/// and with a profile σ in the band (its density integrated over the band), σ through the
/// filter, and 6σ, 6.6σ.
pub(super) fn pp_json(s: &Setup, m: &Measured, bench: &BenchSpec, window: usize) -> Value {
    let Some(peaks) = &m.peaks else {
        return Value::Null;
    };
    let p = peaks.peaks();
    let fs = s.info.sample_rate_hz;
    let (lo, hi) = bench.pp_band;
    let (sigma, sigma_filtered) = match (&s.design, &s.profile) {
        (Some(d), Some(profile)) => {
            // The profile's density in closed form (the target the design synthesises, plus the
            // bursts and the quantisation floor): smooth, so the integral converges quickly.
            let psd = |f: f64| {
                target_psd(profile, f)
                    + d.bursts().iter().map(|b| b.density(f)).sum::<f64>()
                    + m.q_psd
            };
            let sections = band_filter(lo, hi, fs);
            let through = |f: f64| psd(f) * power_gain(&sections, f, fs);
            // Pieces split at every edge, and none where the design is zero (below half the
            // profile's low edge), where a relative accuracy cannot be met.
            let band = &profile.band;
            let pieces = |a: f64, b: f64| {
                let a = a.max(band.low_hz / 2.0);
                let mut v = vec![a];
                let edges = [band.low_hz, lo, hi, band.high_hz];
                v.extend(edges.into_iter().filter(|&e| e > a && e < b));
                v.sort_by(f64::total_cmp);
                v.push(b);
                v
            };
            let integral = |f: &dyn Fn(f64) -> f64, a: f64, b: f64| {
                if b > a.max(band.low_hz / 2.0) {
                    integrate_pieces(f, &pieces(a, b)).sqrt()
                } else {
                    0.0
                }
            };
            (
                Some(integral(&psd, lo, hi)),
                Some(integral(&through, lo / 1000.0, fs / 2.0)),
            )
        }
        _ => (None, None),
    };
    json!({
        "low_hz": lo,
        "high_hz": hi,
        "window_s": bench.pp_window_s,
        "window_samples": window,
        "settling_s": bench.settle_samples(fs) as f64 / fs,
        "windows": p.len(),
        "filter": format!(
            "Butterworth high-pass order {HIGH_PASS_ORDER} and low-pass order {LOW_PASS_ORDER}, \
             bilinear with pre-warped cut-offs, causal, started in the first sample's steady \
             state"
        ),
        "median": median(p),
        "max": p.iter().copied().fold(f64::NAN, f64::max),
        "sigma_band": sigma,
        "sigma_filtered": sigma_filtered,
        "expected_p2p_6sigma": sigma.map(|v| 6.0 * v),
        "expected_p2p_6_6sigma": sigma.map(|v| 6.6 * v),
    })
}
