//! `analyze --allan`: one more pass over the capture for the overlapping Allan deviation, the
//! fit of N, B and K, and (with a profile) each τ checked against the profile's own Allan
//! deviation from its density; the JSON object `allan`, its summary lines and its picture.

use std::sync::atomic::AtomicBool;

use serde_json::{Value, json};

use super::setup::Setup;
use super::{FALSE_ALARM, Verdict};
use crate::analysis::allan::{AllanDeviation, AllanStream, CONFIDENCE, InertialFit, octave_ms};
use crate::error::{Error, Result};
use crate::model::allan::profile_adev;
use crate::profile::{InertialTerm, Profile, format_quantity};

/// What the Allan pass measured and decided.
pub(super) struct AllanRun {
    pub(super) dev: AllanDeviation,
    pub(super) fit: InertialFit,
    /// The profile's Allan deviation at each τ (unit), when it was checked.
    pub(super) profile: Option<Vec<f64>>,
    /// Indices of the τ whose widened interval misses the profile's value.
    outside: Vec<usize>,
    /// The object `allan` of `analyze --json`.
    pub(super) json: Value,
}

/// Reads the capture once more and measures, fits and checks its Allan deviation.
pub(super) fn measure(s: &Setup, interrupted: &AtomicBool) -> Result<AllanRun> {
    let fs = s.info.sample_rate_hz;
    let n_hint = s.capture.sample_count(&s.info)?;
    let mut stream = AllanStream::new(&octave_ms(n_hint));
    s.capture
        .pass(s.channel, &s.scale, interrupted, &mut |x| stream.push(x))?;
    let dev = stream.finish(1.0 / fs);
    if dev.tau_s.is_empty() {
        return Err(Error::input(
            &s.name,
            format!(
                "{} samples: too few for an Allan deviation (at least 4 are needed)",
                dev.samples
            ),
        ));
    }
    let fit = dev.fit();
    let checkable = s
        .profile
        .as_ref()
        .filter(|p| p.bursts.is_empty() && p.tones.is_empty());
    let profile = checkable.map(|p| {
        let q = quantisation_psd(s);
        let mut adev = profile_adev(p, &dev.tau_s, Some(1.0 / fs));
        // An integer file's quantisation error is white of one-sided density q: it adds
        // q/(2τ) to σ² (exact for m-sample means, see `model::allan`).
        for (a, t) in adev.iter_mut().zip(&dev.tau_s) {
            *a = (*a * *a + q / (2.0 * t)).sqrt();
        }
        adev
    });
    let widen = 10f64.powf(s.tolerance_db / 20.0);
    let confidence = 1.0 - FALSE_ALARM / dev.tau_s.len() as f64;
    let outside: Vec<usize> = match &profile {
        Some(p) => (0..dev.tau_s.len())
            .filter(|&i| {
                let (lo, hi) = dev.interval(i, confidence);
                p[i] < lo / widen || p[i] > hi * widen
            })
            .collect(),
        None => Vec::new(),
    };
    let mut out = AllanRun {
        dev,
        fit,
        profile,
        outside,
        json: Value::Null,
    };
    out.json = out.to_json(s, confidence, checkable.is_none() && s.profile.is_some());
    Ok(out)
}

/// The white quantisation density of an integer capture, unit²/Hz (Q²/(6·fs), IEEE Std 1241;
/// the figure the density verdict adds), 0 otherwise.
fn quantisation_psd(s: &Setup) -> f64 {
    match (s.info.sample_format, s.scale.full_scale) {
        (Some(sf), Some(fsc)) if sf.is_integer() => {
            let lsb = sf.lsb(fsc).expect("integer");
            lsb * lsb / (6.0 * s.info.sample_rate_hz)
        }
        _ => 0.0,
    }
}

impl AllanRun {
    fn to_json(&self, s: &Setup, confidence: f64, skipped: bool) -> Value {
        let d = &self.dev;
        let f = &self.fit;
        let mut j = json!({
            "tau_s": d.tau_s,
            "adev": d.adev,
            "adev_low": d.adev_low,
            "adev_high": d.adev_high,
            "edf": d.edf,
            "noise": d.noise,
            "confidence": CONFIDENCE,
            "fit": {
                "random_walk": f.random_walk,
                "bias_instability": f.bias_instability,
                "rate_random_walk": f.rate_random_walk,
                "uncertainty": {
                    "random_walk": f.uncertainty[0],
                    "bias_instability": f.uncertainty[1],
                    "rate_random_walk": f.uncertainty[2],
                },
                "reduced_chi2": f.reduced_chi2,
                "min_tau_s": d.tau0_s * crate::analysis::allan::FIT_MIN_M as f64,
            },
        });
        if let Some(p) = &self.profile {
            j["profile"] = json!({
                "adev": p,
                "confidence": confidence,
                "tolerance_db": s.tolerance_db,
                "outside_tau_s": self.outside.iter().map(|&i| d.tau_s[i]).collect::<Vec<_>>(),
                "pass": self.outside.is_empty(),
            });
        } else if skipped {
            j["profile"] = json!({
                "skipped": "the profile has tones or bursts, which its density leaves out",
            });
        }
        j
    }

    /// The summary lines: the table of τ, σ, its interval and the profile's σ, then the fit.
    pub(super) fn text(&self, unit: &str) -> String {
        let d = &self.dev;
        let q = |x: f64| format_quantity(x, unit);
        let mut t = format!(
            "\nAllan deviation (overlapping, octave \u{3c4}, {:.0} % intervals from the EDF)\n",
            CONFIDENCE * 100.0
        );
        for i in 0..d.tau_s.len() {
            t += &format!(
                "  \u{3c4} {:>12}  {:>14}  [{} .. {}]",
                format_quantity(d.tau_s[i], "s"),
                q(d.adev[i]),
                q(d.adev_low[i]),
                q(d.adev_high[i])
            );
            if let Some(p) = &self.profile {
                let mark = if self.outside.contains(&i) {
                    "  OUTSIDE"
                } else {
                    ""
                };
                t += &format!("  profile {}{mark}", q(p[i]));
            }
            t.push('\n');
        }
        let f = &self.fit;
        let terms = [
            (InertialTerm::RandomWalk, f.random_walk, f.uncertainty[0]),
            (
                InertialTerm::BiasInstability,
                f.bias_instability,
                f.uncertainty[1],
            ),
            (
                InertialTerm::RateRandomWalk,
                f.rate_random_walk,
                f.uncertainty[2],
            ),
        ];
        t += "  fit (slopes -1/2, 0, +1/2):";
        for (term, v, u) in terms {
            let cu = term.coefficient_unit(unit);
            t += &format!("  {} {}", term.key(), format_quantity(v, &cu));
            if let Some(u) = u {
                t += &format!(" \u{b1} {}", format_quantity(u, &cu));
            }
        }
        t.push('\n');
        t
    }

    /// The verdict with the Allan check added: a capture that passed its density check fails
    /// when a τ misses the profile's Allan deviation.
    pub(super) fn judge(&self, verdict: Verdict) -> Verdict {
        if self.outside.is_empty() || matches!(verdict, Verdict::Fail(_)) {
            return verdict;
        }
        let i = self.outside[0];
        let p = self.profile.as_ref().expect("outside needs a profile");
        Verdict::Fail(Error::Mismatch(format!(
            "the Allan deviation at \u{3c4} = {} s is {:.4e}, outside its interval about the \
             profile's {:.4e} ({} of {} averaging times outside)",
            self.dev.tau_s[i],
            self.dev.adev[i],
            p[i],
            self.outside.len(),
            self.dev.tau_s.len()
        )))
    }

    /// The picture: measured σ(τ) with its intervals, the profile's curve, the fitted lines.
    pub(super) fn svg(&self, unit: &str, profile: Option<&Profile>) -> String {
        crate::report::allan::allan_svg(
            &self.dev,
            &self.fit,
            self.profile.as_deref(),
            unit,
            profile.and_then(|p| p.name.as_deref()),
        )
    }
}
