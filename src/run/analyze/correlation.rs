//! The channels of a capture together: one more pass over every channel's frames measures the
//! zero-lag correlation matrix and the coherence of every pair in the density's bands
//! ([`crate::analysis::coherence`]), judged against the profile's correlation when it
//! describes these channels.
//!
//! The design: every channel of a profile has the one density S(f) and channel pairs the
//! cross density ρ_ij·S(f) (see [`crate::synth::channels`]). What a capture adds to that is
//! independent in every channel (the quantisation floor q of an integer format) or the same in
//! every channel (the profile's tones, left out of the bands). So the designed coherence in a
//! band is `(ρ_ij·S/(S + q))²`, S and q averaged over the band's bins as the density
//! comparison averages them, and the designed zero-lag correlation
//! `(ρ_ij·σ² + P)/(σ² + P + σ_q²)`, with σ² the design's noise variance, P the tones' power
//! and σ_q² = q·fs/2.
//!
//! The verdict has the total false-alarm probability of the densities, [`FALSE_ALARM`], split
//! (Bonferroni) over every test of the correlation: one per pair for the matrix and one per
//! pair and band inside the profile's band for the coherence.

use std::sync::atomic::AtomicBool;

use serde_json::{Value, json};

use super::setup::Setup;
use super::{FALSE_ALARM, Measurement};
use crate::analysis::capture::CaptureReport;
use crate::analysis::coherence::{
    CrossEstimate, CrossPass, fisher_interval, fisher_p_value, msc_interval, msc_p_value, pairs,
};
use crate::analysis::compare::{bands_inside, expected_band_psd};
use crate::error::Result;

/// Probability outside the reported intervals (95 %).
const CI_P: f64 = 0.05;

/// The correlation of the channels analysed, measured and, with a profile that describes
/// them, judged.
#[derive(Debug, Clone)]
pub struct CorrelationReport {
    /// The channels measured (0-based indices in the capture); matrix row i is `channels[i]`.
    pub channels: Vec<usize>,
    /// The measurement: matrix, covariance, effective samples, band sums.
    pub estimate: CrossEstimate,
    /// Every pair, in row order.
    pub pairs: Vec<PairReport>,
    /// Tests of the verdict (pairs plus pairs × bands judged) and the false-alarm probability
    /// of each (the total [`FALSE_ALARM`] split over them); 0 and `None` when not judged.
    pub tests: usize,
    /// False-alarm probability per test.
    pub false_alarm_per_test: Option<f64>,
    /// Whether every test passed; `None` when not judged.
    pub pass: Option<bool>,
    /// Why the correlation was not judged, when a profile was given but does not describe
    /// these channels.
    pub note: Option<String>,
}

/// One pair of channels.
#[derive(Debug, Clone)]
pub struct PairReport {
    /// The pair's channels (0-based indices in the capture).
    pub channels: (usize, usize),
    /// The zero-lag correlation coefficient.
    pub r: f64,
    /// Its 95 % interval (Fisher z with N' effective samples).
    pub ci95: (f64, f64),
    /// The effective number of independent samples N'.
    pub n_eff: f64,
    /// The designed coefficient, when judged.
    pub designed: Option<f64>,
    /// The two-sided probability of an estimate this far from the design.
    pub p_value: Option<f64>,
    /// Whether the coefficient is within its limits.
    pub pass: Option<bool>,
    /// The coherence in every band of the density estimate.
    pub bands: Vec<BandCoherence>,
}

/// The coherence of a pair in one band.
#[derive(Debug, Clone)]
pub struct BandCoherence {
    /// Lower edge, Hz.
    pub f_lo_hz: f64,
    /// Upper edge, Hz.
    pub f_hi_hz: f64,
    /// Centre, Hz.
    pub f_center_hz: f64,
    /// The magnitude-squared coherence estimate (0 to 1).
    pub coherence: f64,
    /// Its 95 % interval (Carter, Knapp & Nuttall 1973).
    pub ci95: (f64, f64),
    /// Equivalent independent averages n = ν/2.
    pub averages: f64,
    /// The designed coherence, when judged (bands inside the profile's band).
    pub designed: Option<f64>,
    /// The two-sided probability of an estimate this far from the design.
    pub p_value: Option<f64>,
    /// Whether the estimate is within its limits.
    pub pass: Option<bool>,
}

impl PairReport {
    /// Whether the pair failed any test.
    pub fn failed(&self) -> bool {
        self.pass == Some(false) || self.bands.iter().any(|b| b.pass == Some(false))
    }

    /// What failed, in words ("" when nothing did).
    pub fn failure_text(&self) -> String {
        let (i, j) = self.channels;
        let mut parts = Vec::new();
        if self.pass == Some(false) {
            parts.push(format!(
                "correlation {:+.4} (95 % {:+.4}..{:+.4}) where {:+.4} is designed (p = {:.1e})",
                self.r,
                self.ci95.0,
                self.ci95.1,
                self.designed.unwrap_or(f64::NAN),
                self.p_value.unwrap_or(f64::NAN)
            ));
        }
        let bad: Vec<&BandCoherence> = self
            .bands
            .iter()
            .filter(|b| b.pass == Some(false))
            .collect();
        if let Some(w) = bad
            .iter()
            .min_by(|a, b| a.p_value.partial_cmp(&b.p_value).expect("finite"))
        {
            parts.push(format!(
                "coherence outside its limits in {} band(s), worst {:.4} at {} where {:.4} is \
                 designed (p = {:.1e})",
                bad.len(),
                w.coherence,
                crate::profile::format_quantity(w.f_center_hz, "Hz"),
                w.designed.unwrap_or(f64::NAN),
                w.p_value.unwrap_or(f64::NAN)
            ));
        }
        match parts.is_empty() {
            true => String::new(),
            false => format!("channels {i} and {j}: {}", parts.join("; ")),
        }
    }
}

/// The designed correlation of the analysed channels, or why there is none (`Ok(None)`:
/// no profile).
fn designed_matrix(s: &Setup) -> std::result::Result<Option<Vec<Vec<f64>>>, String> {
    let Some(p) = &s.profile else {
        return Ok(None);
    };
    if p.channels == 1 {
        return Err(format!(
            "{} describes one channel: every channel is judged against its density, and their \
             correlation is measured, not judged",
            p.label()
        ));
    }
    let k = &s.channels;
    Ok(Some(
        k.iter()
            .map(|&a| k.iter().map(|&b| p.correlation[a][b]).collect())
            .collect(),
    ))
}

/// The bands judged (those inside the profile's band, as indices into the first channel's
/// bands) and, for every band, the designed density's share S/(S + q) of what a channel holds
/// (q the quantisation floor, unit²/Hz).
fn band_design(s: &Setup, first: &CaptureReport, q_psd: f64) -> (Vec<usize>, Vec<f64>) {
    let (Some(p), Some(d)) = (&s.profile, &s.design) else {
        return (Vec::new(), Vec::new());
    };
    let inside = bands_inside(&first.bands, &p.band);
    let judged = (0..first.bands.len())
        .filter(|&b| inside.iter().any(|i| i.bins == first.bands[b].bins))
        .collect();
    let share = first
        .bands
        .iter()
        .map(|b| {
            let sd = expected_band_psd(&|f| d.density(f), &first.spectrum, b.bins.clone());
            sd / (sd + q_psd)
        })
        .collect();
    (judged, share)
}

/// The frames pass and the verdict; `each` holds the channels measured one by one.
pub(super) fn measure(
    s: &Setup,
    each: &[Measurement],
    seg_len: usize,
    interrupted: &AtomicBool,
) -> Result<CorrelationReport> {
    let first = &each[0].report;
    let ranges = first.bands.iter().map(|b| b.bins.clone()).collect();
    let mut cross = CrossPass::new(
        seg_len,
        each.iter().map(|m| m.removed).collect(),
        each.iter().map(|m| m.shift).collect(),
        ranges,
    );
    let stored = usize::from(s.info.channels);
    let picked = &s.channels;
    let mut frames = Vec::new();
    s.capture.frames(&s.scale, interrupted, &mut |x| {
        frames.clear();
        for f in x.chunks_exact(stored) {
            frames.extend(picked.iter().map(|&k| f[k]));
        }
        cross.push(&frames);
    })?;
    let estimate = cross.finish();
    let (design, note) = match designed_matrix(s) {
        Ok(d) => (d, None),
        Err(note) => (None, Some(note)),
    };
    // What the capture adds to the design: the quantisation floor (independent per channel)
    // and the tones (the same in every channel).
    let fs = s.info.sample_rate_hz;
    let q_psd = super::measure::quantisation_psd(s);
    let (judged, band_design) = match &design {
        Some(_) => band_design(s, first, q_psd),
        None => (Vec::new(), Vec::new()),
    };
    let n_pairs = picked.len() * (picked.len() - 1) / 2;
    let tests = match design {
        Some(_) => n_pairs * (1 + judged.len()),
        None => 0,
    };
    let alpha = (tests > 0).then(|| FALSE_ALARM / tests as f64);
    let zero_lag = |rho: f64| {
        let d = s.design.as_ref().expect("a design with a profile");
        let tone_power: f64 = s
            .profile
            .as_ref()
            .map_or(0.0, |p| p.tones.iter().map(|t| t.power()).sum());
        let var = d.noise_variance();
        (rho * var + tone_power) / (var + tone_power + q_psd * fs / 2.0)
    };
    let mut out = Vec::with_capacity(n_pairs);
    for (i, j) in pairs(picked.len()) {
        let r = estimate.correlation[i][j];
        let n_eff = estimate.n_eff[i][j];
        let designed = design.as_ref().map(|m| zero_lag(m[i][j]));
        let p_value = designed.map(|rho| fisher_p_value(r, rho, n_eff));
        let bands = first
            .bands
            .iter()
            .enumerate()
            .map(|(b, band)| {
                let c = estimate.coherence(i, j, b);
                let n = band.dof / 2.0;
                let designed = match (&design, judged.contains(&b)) {
                    (Some(m), true) => Some((m[i][j] * band_design[b]).powi(2)),
                    _ => None,
                };
                let p_value = designed.map(|d| msc_p_value(c, d, n));
                BandCoherence {
                    f_lo_hz: band.f_lo_hz,
                    f_hi_hz: band.f_hi_hz,
                    f_center_hz: band.f_center_hz,
                    coherence: c,
                    ci95: msc_interval(c, n, CI_P),
                    averages: n,
                    designed,
                    p_value,
                    pass: p_value.zip(alpha).map(|(p, a)| p >= a),
                }
            })
            .collect();
        out.push(PairReport {
            channels: (picked[i], picked[j]),
            r,
            ci95: fisher_interval(r, n_eff, CI_P),
            n_eff,
            designed,
            p_value,
            pass: p_value.zip(alpha).map(|(p, a)| p >= a),
            bands,
        });
    }
    let pass = alpha.map(|_| !out.iter().any(PairReport::failed));
    Ok(CorrelationReport {
        channels: picked.clone(),
        estimate,
        pairs: out,
        tests,
        false_alarm_per_test: alpha,
        pass,
        note,
    })
}

impl CorrelationReport {
    /// The coherence figure as SVG text: the failing pairs first, then the others in row
    /// order, at most [`crate::report::coherence::MAX_CURVES`] of them.
    pub fn coherence_svg(&self) -> String {
        use crate::report::coherence::{CoherenceCurve, CoherencePoint, coherence_svg};
        let mut order: Vec<&PairReport> = self.pairs.iter().filter(|p| p.failed()).collect();
        order.extend(self.pairs.iter().filter(|p| !p.failed()));
        let curves: Vec<CoherenceCurve> = order
            .iter()
            .map(|p| CoherenceCurve {
                label: format!("{}–{}", p.channels.0, p.channels.1),
                points: p
                    .bands
                    .iter()
                    .map(|b| CoherencePoint {
                        f_hz: b.f_center_hz,
                        coherence: b.coherence,
                        lo: b.ci95.0,
                        hi: b.ci95.1,
                        designed: b.designed,
                    })
                    .collect(),
            })
            .collect();
        coherence_svg(&curves, self.pairs.len())
    }

    /// The `correlation` object of `analyze --json`.
    pub fn to_json(&self) -> Value {
        let e = &self.estimate;
        let n = self.channels.len();
        let ci = |lo: bool| -> Vec<Vec<f64>> {
            (0..n)
                .map(|i| {
                    (0..n)
                        .map(|j| {
                            let (a, b) = fisher_interval(e.correlation[i][j], e.n_eff[i][j], CI_P);
                            if i == j {
                                1.0
                            } else if lo {
                                a
                            } else {
                                b
                            }
                        })
                        .collect()
                })
                .collect()
        };
        let pairs: Vec<Value> = self
            .pairs
            .iter()
            .map(|p| {
                json!({
                    "channels": [p.channels.0, p.channels.1],
                    "correlation": p.r,
                    "ci95_lo": p.ci95.0,
                    "ci95_hi": p.ci95.1,
                    "effective_samples": p.n_eff,
                    "designed": p.designed,
                    "p_value": p.p_value,
                    "pass": p.pass,
                    "coherence": p.bands.iter().map(|b| json!({
                        "low_hz": b.f_lo_hz, "high_hz": b.f_hi_hz, "center_hz": b.f_center_hz,
                        "coherence": b.coherence,
                        "ci95_lo": b.ci95.0, "ci95_hi": b.ci95.1,
                        "averages": b.averages,
                        "designed": b.designed, "p_value": b.p_value, "pass": b.pass,
                    })).collect::<Vec<_>>(),
                })
            })
            .collect();
        json!({
            "channels": self.channels,
            "frames": e.frames,
            "segments": e.segments,
            "matrix": e.correlation,
            "ci95_lo": ci(true),
            "ci95_hi": ci(false),
            "effective_samples": e.n_eff,
            "covariance": e.covariance,
            "pairs": pairs,
            "tests": self.tests,
            "false_alarm": if self.tests > 0 { Some(FALSE_ALARM) } else { None },
            "false_alarm_per_test": self.false_alarm_per_test,
            "pass": self.pass,
            "note": self.note,
        })
    }
}
