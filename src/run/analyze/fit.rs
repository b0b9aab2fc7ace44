//! A profile fitted to the capture: floor density, corner and slope over the profile's band
//! (else the manifest's), with detected bursts' density taken out first.

use serde_json::Value;

use super::setup::Setup;
use crate::analysis::capture::CaptureReport;
use crate::analysis::compare::expected_band_psd;
use crate::analysis::fit::{FitOptions, fit_floor};
use crate::error::{Error, Result, Setting};
use crate::model::burst::BurstModel;
use crate::profile::{Burst, BurstSampling};

/// The fitted profile's TOML text and the fit's JSON object.
pub(super) fn fit(s: &Setup, report: &CaptureReport) -> Result<(String, Value)> {
    // The band of the profile, else the band recorded in the manifest of a generated file.
    let band = s
        .profile
        .as_ref()
        .map(|p| p.band)
        .or(s.manifest.as_ref().and_then(|m| m.band));
    let options = FitOptions { band };
    // When the bursts dominate nearly every band, too few remain: fit them all then.
    let fit = match without_bursts(report) {
        Some(r) => fit_floor(&r, &options).or_else(|_| fit_floor(report, &options)),
        None => fit_floor(report, &options),
    }
    .map_err(|e| match e {
        Error::Unsupported(m) => Error::setting(Setting::Fit, format!("{}: {m}", s.name)),
        e => e,
    })?;
    Ok((fit.to_profile_toml(report, &s.name), fit.to_json()))
}

/// Detected bursts add their own (Lorentzian) density: the report with the model of the
/// detected chain taken out of each band, so the floor fit sees the Gaussian part only, and
/// the bands the bursts dominate left out (`None` when no burst levels were detected).
fn without_bursts(report: &CaptureReport) -> Option<CaptureReport> {
    let lv = report.levels.as_ref()?;
    let mut r = report.clone();
    let burst = Burst {
        name: "detected".into(),
        levels: lv.levels.clone(),
        dwell_s: lv.dwell_s.clone(),
        next: Burst::default_next(lv.levels.len()),
        sampling: BurstSampling::Instant,
    };
    if let Ok(model) = BurstModel::new(&burst, report.sample_rate_hz) {
        r.bands.retain_mut(|b| {
            let burst_psd = expected_band_psd(&|f| model.density(f), &r.spectrum, b.bins.clone());
            let rest = b.psd_mean - burst_psd;
            // Bands the burst dominates say little about the floor: leave them out.
            let keep = rest > 0.5 * b.psd_mean;
            b.psd_mean = rest;
            keep
        });
    }
    Some(r)
}
