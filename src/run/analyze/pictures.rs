//! What an analysis's pictures and its integrated noise need beyond the measurement: the
//! bins left out of the verdict (tones, spurs, excluded spans) and the integrated noise over
//! the profile's band.

use std::ops::Range;

use serde_json::Value;

use super::measure::Measured;
use super::setup::Setup;
use crate::analysis::integrated::{IntegratedNoise, integrated_noise};

/// Every bin range left out of the verdict, from the JSON parts that list them: each tone's,
/// each spur's and each excluded span's `excluded_bins` ([start, end) of the Welch bins).
pub(super) fn left_out_bins(tones: &Value, spurs: &Value, excluded: &Value) -> Vec<Range<usize>> {
    let list = |v: &Value| v.as_array().cloned().unwrap_or_default();
    list(tones)
        .iter()
        .chain(list(&spurs["found"]).iter())
        .chain(list(excluded).iter())
        .filter_map(|e| {
            let b = e["excluded_bins"].as_array()?;
            Some(b.first()?.as_u64()? as usize..b.get(1)?.as_u64()? as usize)
        })
        .collect()
}

/// The left-out bin ranges as frequency spans in Hz (each bin ± half a bin width).
pub(super) fn left_out_hz(bins: &[Range<usize>], bin_width_hz: f64) -> Vec<(f64, f64)> {
    bins.iter()
        .filter(|r| r.end > r.start)
        .map(|r| {
            (
                (r.start as f64 - 0.5).max(0.0) * bin_width_hz,
                (r.end as f64 - 0.5) * bin_width_hz,
            )
        })
        .collect()
}

/// The integrated noise over the profile's band (or, without a profile, over the bands
/// estimated), measured and, with a profile, designed (the design plus the quantisation floor
/// of an integer format, as the verdict compares).
pub(super) fn integrated(
    s: &Setup,
    m: &Measured,
    left_out: &[Range<usize>],
) -> Option<IntegratedNoise> {
    let fs = s.info.sample_rate_hz;
    let (lo, hi) = match &s.profile {
        Some(p) => (p.band.low_hz, p.band.high_hz.min(fs / 2.0)),
        None => (m.bands.first()?.f_lo_hz, m.bands.last()?.f_hi_hz),
    };
    let q = m.q_psd;
    let designed = s.design.as_ref().map(|d| move |f: f64| d.density(f) + q);
    integrated_noise(
        &m.spectrum,
        lo,
        hi,
        left_out,
        designed.as_ref().map(|d| d as &dyn Fn(f64) -> f64),
    )
}
