//! The measurement: the Welch segment length, pass 1 (statistics, offset and drift, trace),
//! the burst-level search beside pass 2 (moments, histogram, and the density and windowed
//! peak-to-peak of the samples less the drift), the density's bands, and the report that
//! gathers them.

use std::sync::atomic::AtomicBool;

use super::setup::Setup;
use crate::analysis::capture::{
    BANDS_PER_DECADE, CaptureReport, FIRST_BIN, FirstPass, SecondPass, rms_per_decade,
    segment_length,
};
use crate::analysis::compare::Comparison;
use crate::analysis::levels::Levels;
use crate::analysis::moments::CentralMoments;
use crate::analysis::stats::RunningStats;
use crate::analysis::trend::Trend;
use crate::analysis::welch::{BandEstimate, Spectrum};
use crate::analysis::window_pp::{WindowPeaks, band_filter};
use crate::error::{Error, Result};

/// Samples of the trace kept for the picture.
const TRACE_SAMPLES: usize = 4096;
/// Histogram bins between the record's min and max.
const HIST_BINS: usize = 201;

/// What the passes measured, in the capture's physical unit.
pub(super) struct Measured {
    pub(super) stats: RunningStats,
    pub(super) moments: CentralMoments,
    pub(super) levels: Option<Levels>,
    pub(super) spectrum: Spectrum,
    /// Log-spaced bands of the estimate (the tones' bins taken out later).
    pub(super) bands: Vec<BandEstimate>,
    pub(super) trace: Vec<f64>,
    /// The quantisation floor of an integer format, unit²/Hz (0 otherwise).
    pub(super) q_psd: f64,
    /// The least-squares line through the record (unit, unit per sample).
    pub(super) trend: Trend,
    /// The windowed peak-to-peak, when measured, and its window in samples.
    pub(super) peaks: Option<WindowPeaks>,
    pub(super) pp_window: usize,
}

/// The Welch segment length (samples) for the capture's estimated length and the settings.
pub(super) fn segment_length_of(s: &Setup) -> Result<usize> {
    let n_hint = s.capture.sample_count(&s.info)?;
    if n_hint < 16 {
        // The hint may count header bytes as samples (a WAV whose size is a placeholder):
        // so few are counted exactly for the message.
        let mut n = 0u64;
        s.capture
            .pass(s.channel, &s.scale, &AtomicBool::new(false), &mut |x| {
                n += x.len() as u64
            })?;
        return Err(Error::input(
            &s.name,
            format!("{n} samples: too few to analyse; a density estimate needs at least 16"),
        ));
    }
    segment_length(
        s.info.sample_rate_hz,
        n_hint,
        s.resolution,
        s.profile.as_ref().map(|p| p.band.low_hz),
    )
}

/// Both passes over the capture, with segments of `seg_len` samples.
pub(super) fn measure(s: &Setup, seg_len: usize, interrupted: &AtomicBool) -> Result<Measured> {
    let fs = s.info.sample_rate_hz;
    let mut first = FirstPass::new(fs, TRACE_SAMPLES);
    s.capture
        .pass(s.channel, &s.scale, interrupted, &mut |x| first.push(x))?;
    let st = first.stats;
    if st.count() < 16 {
        return Err(Error::input(
            &s.name,
            format!("{} samples: too few to analyse", st.count()),
        ));
    }
    // One LSB of an integer file, in the capture's unit: codes of a coarsely quantised signal
    // are not burst levels.
    let quantum = match (s.info.sample_format, s.scale.full_scale) {
        (Some(sf), Some(fsc)) => sf.lsb(fsc),
        (Some(sf), None) if sf.is_integer() => sf.lsb(1.0),
        _ => None,
    };
    let trend = first.trend.finish();
    let pp_window = s.bench.pp_window_samples(fs, st.count(), &s.name)?;
    let peaks = pp_window.map(|w| {
        let (lo, hi) = s.bench.pp_band;
        WindowPeaks::new(band_filter(lo, hi, fs), w, s.bench.settle_samples(fs))
    });
    let removed = if s.bench.keep_drift {
        Trend::none()
    } else {
        trend
    };
    // The burst-level search needs only pass 1's trace: it runs on the pool while pass 2 reads
    // the capture again.
    let moments = CentralMoments::new(st.mean(), st.std(), st.min(), st.max(), HIST_BINS);
    let mut second_pass = SecondPass::new(moments, fs, seg_len, removed, peaks);
    // The levels are looked for with the drift taken out too (keeping the offset: levels are
    // absolute values).
    let (levels, second) = rayon::join(
        || match s.bench.keep_drift {
            true => first.levels.detect(quantum),
            false => first
                .levels
                .less_line(trend.slope_per_sample, trend.centre)
                .detect(quantum),
        },
        || {
            s.capture.pass(s.channel, &s.scale, interrupted, &mut |x| {
                second_pass.push(x)
            })
        },
    );
    second?;
    let SecondPass {
        moments,
        welch,
        peaks,
        ..
    } = second_pass;

    let spectrum = welch.finish();
    if spectrum.segments == 0 {
        return Err(Error::Unsupported(format!(
            "{} has {} samples, fewer than one {seg_len}-sample segment; ask for a coarser \
             \u{1}resolution\u{1}",
            s.name,
            st.count()
        )));
    }
    let bands = if spectrum.psd.len() > FIRST_BIN {
        spectrum.log_bands(FIRST_BIN, BANDS_PER_DECADE)
    } else {
        Vec::new()
    };
    let q_psd = quantisation_psd(s);
    Ok(Measured {
        stats: st,
        moments,
        levels,
        spectrum,
        bands,
        trace: first.trace,
        q_psd,
        trend,
        peaks,
        pp_window: pp_window.unwrap_or(0),
    })
}

/// The quantisation floor of an integer format (unit²/Hz; 0 otherwise), added to the
/// designed density (uniform error model, Q/√(6·fs) per √Hz with Q one LSB; REFERENCES §9,
/// IEEE Std 1241).
pub(super) fn quantisation_psd(s: &Setup) -> f64 {
    match (s.info.sample_format, s.scale.full_scale) {
        (Some(sf), Some(fsc)) if sf.is_integer() => {
            let lsb = sf.lsb(fsc).expect("integer");
            lsb * lsb / (6.0 * s.info.sample_rate_hz)
        }
        _ => 0.0,
    }
}

/// Everything measured, with the capture's facts, the comparison and the notes.
pub(super) fn report(
    s: &Setup,
    m: Measured,
    comparison: Option<Comparison>,
    notes: Vec<String>,
) -> CaptureReport {
    let decades = rms_per_decade(&m.spectrum);
    CaptureReport {
        file: serde_json::json!({
            "name": s.name,
            "format": s.capture.container(&s.info),
            "sample_format": s.info.sample_format.map(|f| f.name()),
            "channels": s.info.channels,
            "full_scale": s.scale.full_scale,
            "scale_origin": s.scale.origin,
            "manifest": s.manifest.as_ref().is_some_and(|m| !m.wav_comment),
        }),
        unit: s.scale.symbol().to_string(),
        sample_rate_hz: s.info.sample_rate_hz,
        stats: m.stats,
        moments: m.moments,
        spectrum: m.spectrum,
        bands: m.bands,
        decades,
        trace: m.trace,
        comparison,
        levels: m.levels,
        notes,
    }
}
