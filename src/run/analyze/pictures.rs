//! What an analysis's pictures and its integrated noise need beyond the measurement: the
//! bins left out of the verdict (tones, spurs, excluded spans) as frequency spans, and the
//! integrated noise over the profile's band.

use std::ops::Range;

use super::measure::Measured;
use super::setup::Setup;
use crate::analysis::integrated::{IntegratedNoise, integrated_noise};

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
