//! Everything `analyze` measures on a capture, computed in two streaming passes with bounded
//! memory, and its JSON form.
//!
//! * Pass 1 ([`FirstPass`]): running statistics, the least-squares offset and drift, the first
//!   samples of the trace (for a picture) and the decimated trace for burst levels.
//! * Pass 2 ([`SecondPass`]): skewness, kurtosis, σ-fractions and the histogram, about the mean
//!   and σ of pass 1; the Welch estimate and the windowed low-frequency peak-to-peak, of the
//!   samples less the line of pass 1 (or of the samples as they are, when the drift is kept).
//!
//! All values are in the capture's physical unit u (after scaling), densities in u²/Hz (PSD)
//! or u/√Hz (density).

use serde_json::{Value, json};

use super::compare::{Comparison, chi2_interval};
use super::levels::{LevelTrace, Levels};
use super::moments::{CentralMoments, SIGMA_LEVELS, gaussian_within};
use super::stats::RunningStats;
use super::trend::{Trend, TrendFit};
use super::welch::{BandEstimate, Spectrum, Welch};
use super::window_pp::WindowPeaks;
use crate::error::{Error, Result, Setting};

/// Longest default segment, in samples.
pub const MAX_DEFAULT_SEGMENT: usize = 1 << 20;
/// Log-spaced bands per decade for the density table, the plot, the comparison and the fit.
pub const BANDS_PER_DECADE: usize = 10;
/// First Welch bin used in bands: lower bins sit in the Hann main lobe of DC (REFERENCES §3).
pub const FIRST_BIN: usize = 3;

/// The Welch segment length L (even, samples) for a capture of `samples` samples at
/// `sample_rate_hz` Hz.
///
/// * With `resolution_hz` (the bin width fs/L): L = 2·round(fs/(2·resolution)); a resolution
///   that needs fewer than 16 samples or more than the record is refused.
/// * Otherwise the largest power of two ≤ N/8 (so at least 15 segments at 50 % overlap, ν ≳
///   28 per bin), at most [`MAX_DEFAULT_SEGMENT`], at least 256 (or the largest power of two
///   ≤ N/2 for shorter records); with a profile's `band_low_hz`, no longer than the power of
///   two ≥ 8·fs/band_low (the band's low edge at bin 8 or above), since longer segments only
///   cost averaging.
pub fn segment_length(
    sample_rate_hz: f64,
    samples: u64,
    resolution_hz: Option<f64>,
    band_low_hz: Option<f64>,
) -> Result<usize> {
    let n = samples as usize;
    if n < 16 {
        return Err(Error::Unsupported(format!(
            "the capture has {n} samples; a density estimate needs at least 16"
        )));
    }
    if let Some(r) = resolution_hz {
        if !(r.is_finite() && r > 0.0) {
            return Err(Error::setting(
                Setting::Resolution,
                "expected a positive frequency such as 0.1Hz",
            ));
        }
        let half = (sample_rate_hz / (2.0 * r)).round();
        if half < 8.0 {
            return Err(Error::setting(
                Setting::Resolution,
                format!(
                    "a resolution of {r} Hz needs segments of {:.1} samples, but a density \
                     estimate needs at least 16; ask for at most {:.4} Hz",
                    sample_rate_hz / r,
                    sample_rate_hz / 16.0
                ),
            ));
        }
        let l = 2 * half as usize;
        if l > n {
            return Err(Error::setting(
                Setting::Resolution,
                format!(
                    "a resolution of {r} Hz needs segments of {l} samples, but the capture has \
                     only {n}; ask for at least {:.4} Hz",
                    sample_rate_hz / (n - n % 2) as f64
                ),
            ));
        }
        return Ok(l);
    }
    let pow2_le = |x: usize| {
        if x == 0 {
            0
        } else {
            1usize << (usize::BITS - 1 - x.leading_zeros())
        }
    };
    let mut l = pow2_le(n / 8).min(MAX_DEFAULT_SEGMENT);
    if let Some(lo) = band_low_hz {
        let need = (8.0 * sample_rate_hz / lo).ceil().max(2.0) as usize;
        l = l.min(need.next_power_of_two());
    }
    if l < 256 {
        l = pow2_le(n / 2).clamp(16, 256);
    }
    Ok(l)
}

/// Pass 1 over a capture's physical samples.
#[derive(Debug)]
pub struct FirstPass {
    /// Running statistics (unit).
    pub stats: RunningStats,
    /// The least-squares line through the samples (unit, unit per sample).
    pub trend: TrendFit,
    /// The first samples (unit), up to `trace_len`.
    pub trace: Vec<f64>,
    trace_len: usize,
    /// The low-passed, decimated trace for level detection.
    pub levels: LevelTrace,
}

impl FirstPass {
    /// For samples at `sample_rate_hz` Hz, keeping `trace_len` samples.
    pub fn new(sample_rate_hz: f64, trace_len: usize) -> FirstPass {
        FirstPass {
            stats: RunningStats::new(),
            trend: TrendFit::new(),
            trace: Vec::with_capacity(trace_len),
            trace_len,
            levels: LevelTrace::new(sample_rate_hz),
        }
    }

    /// Adds the next physical samples.
    pub fn push(&mut self, x: &[f64]) {
        self.stats.push(x);
        self.trend.push(x);
        let room = self.trace_len - self.trace.len();
        self.trace.extend_from_slice(&x[..room.min(x.len())]);
        self.levels.push(x);
    }
}

/// Pass 2 over a capture's physical samples: the moments of the samples as they are, and the
/// density and windowed peak-to-peak of the samples less a line.
#[derive(Debug)]
pub struct SecondPass {
    /// Moments and histogram (unit).
    pub moments: CentralMoments,
    /// The Welch estimator (Hann, 50 % overlap), fed the samples less `removed`.
    pub welch: Welch,
    /// Peak-to-peak over windows of the band-limited samples less `removed`, if asked for.
    pub peaks: Option<WindowPeaks>,
    removed: Trend,
    index: u64,
    buffer: Vec<f64>,
}

impl SecondPass {
    /// Moments as given; segments of `seg_len` at `sample_rate_hz` Hz; the line `removed`
    /// ([`Trend::none`] keeps the samples as they are) taken out before the Welch estimate and
    /// the windows.
    pub fn new(
        moments: CentralMoments,
        sample_rate_hz: f64,
        seg_len: usize,
        removed: Trend,
        peaks: Option<WindowPeaks>,
    ) -> SecondPass {
        SecondPass {
            moments,
            welch: Welch::new(seg_len, seg_len / 2, sample_rate_hz),
            peaks,
            removed,
            index: 0,
            buffer: Vec::new(),
        }
    }

    /// Adds the next physical samples.
    pub fn push(&mut self, x: &[f64]) {
        self.moments.push(x);
        let (t, i0) = (self.removed, self.index);
        self.buffer.clear();
        self.buffer.extend(x.iter().enumerate().map(|(j, v)| {
            if t.samples == 0 {
                *v
            } else {
                v - t.at(i0 + j as u64)
            }
        }));
        self.index += x.len() as u64;
        self.welch.push(&self.buffer);
        if let Some(p) = &mut self.peaks {
            p.push(&self.buffer);
        }
    }
}

/// RMS (unit) of the density in one decade, from the Welch bins whose centres fall in it.
#[derive(Debug, Clone, PartialEq)]
pub struct DecadeRms {
    /// Lower edge in Hz (a power of ten, or the lowest bin used).
    pub f_lo_hz: f64,
    /// Upper edge in Hz (a power of ten, or fs/2).
    pub f_hi_hz: f64,
    /// √(Σ psd_k·Δf) over the decade's bins, in unit.
    pub rms: f64,
}

/// RMS per decade from bin [`FIRST_BIN`] − 1 = 2 upwards (bins 0 and 1 hold the mean, with the
/// periodic Hann window), decade edges at powers of ten, clipped to the bins present.
pub fn rms_per_decade(s: &Spectrum) -> Vec<DecadeRms> {
    let df = s.bin_width_hz();
    let first = 2usize.min(s.psd.len() - 1);
    let mut out: Vec<DecadeRms> = Vec::new();
    let mut power = 0.0f64;
    let mut decade = i32::MIN;
    for k in first..s.psd.len() {
        let f = k as f64 * df;
        let d = f.log10().floor() as i32;
        if d != decade {
            if decade != i32::MIN {
                out.last_mut().expect("pushed").rms = power.sqrt();
            }
            decade = d;
            power = 0.0;
            out.push(DecadeRms {
                f_lo_hz: 10f64.powi(d).max(first as f64 * df),
                f_hi_hz: 10f64.powi(d + 1).min(s.sample_rate_hz / 2.0),
                rms: 0.0,
            });
        }
        power += s.psd[k] * df;
    }
    if let Some(last) = out.last_mut() {
        last.rms = power.sqrt();
    }
    out
}

/// Everything measured, ready for the text summary, JSON, plots and report.
#[derive(Debug, Clone)]
pub struct CaptureReport {
    /// File facts for the JSON: name, format, sample format, unit symbol, scale origin.
    pub file: Value,
    /// Physical unit symbol (V, A, FS for digital values).
    pub unit: String,
    /// Sample rate in Hz.
    pub sample_rate_hz: f64,
    /// Pass-1 statistics.
    pub stats: RunningStats,
    /// Pass-2 moments.
    pub moments: CentralMoments,
    /// The Welch estimate.
    pub spectrum: Spectrum,
    /// Log-spaced bands of the estimate from bin [`FIRST_BIN`].
    pub bands: Vec<BandEstimate>,
    /// RMS per decade.
    pub decades: Vec<DecadeRms>,
    /// The first samples of the trace.
    pub trace: Vec<f64>,
    /// The comparison with a profile, if one was given.
    pub comparison: Option<Comparison>,
    /// Detected burst levels, if any.
    pub levels: Option<Levels>,
    /// Remarks (from the reader, the scale, the analysis).
    pub notes: Vec<String>,
}

/// Probability outside the 95 % confidence interval of a band's density.
const CI_P: f64 = 0.05;

impl CaptureReport {
    /// Crest factor: max |x − μ| / σ (dimensionless).
    pub fn crest_factor(&self) -> f64 {
        let m = self.stats.mean();
        (self.stats.max() - m)
            .abs()
            .max((self.stats.min() - m).abs())
            / self.stats.std()
    }

    /// The 95 % confidence interval (unit²/Hz) of the true mean density of a band given its
    /// estimate: `[ν·Ŝ/χ²_ν(0.975), ν·Ŝ/χ²_ν(0.025)]` (REFERENCES §3).
    pub fn band_ci95(b: &BandEstimate) -> (f64, f64) {
        let (lo, hi) = chi2_interval(b.dof, CI_P);
        (b.psd_mean / hi, b.psd_mean / lo)
    }

    /// The JSON object with every number (keys documented in README "analyze: JSON keys").
    /// Non-finite numbers become `null`.
    pub fn to_json(&self) -> Value {
        let s = &self.stats;
        let sigma = s.std();
        let within: Vec<Value> = SIGMA_LEVELS
            .iter()
            .zip(self.moments.within())
            .map(|(k, f)| json!({"k": k, "fraction": f, "gaussian": gaussian_within(*k)}))
            .collect();
        let bands: Vec<Value> = self
            .bands
            .iter()
            .map(|b| {
                let (lo, hi) = Self::band_ci95(b);
                json!({
                    "low_hz": b.f_lo_hz, "high_hz": b.f_hi_hz, "center_hz": b.f_center_hz,
                    "psd": b.psd_mean, "density": b.psd_mean.sqrt(),
                    "density_ci95_lo": lo.sqrt(), "density_ci95_hi": hi.sqrt(),
                    "dof": b.dof, "bins": b.bins.len(),
                })
            })
            .collect();
        let sp = &self.spectrum;
        let mut o = json!({
            "file": self.file,
            "unit": self.unit,
            "sample_rate_hz": self.sample_rate_hz,
            "samples": s.count(),
            "duration_s": s.count() as f64 / self.sample_rate_hz,
            "mean": s.mean(),
            "rms": s.rms(),
            "std": sigma,
            "peak_to_peak": s.peak_to_peak(),
            "min": s.min(),
            "max": s.max(),
            "p2p_6sigma": 6.0 * sigma,
            "p2p_6_6sigma": 6.6 * sigma,
            "crest_factor": self.crest_factor(),
            "skewness": self.moments.skewness(),
            "excess_kurtosis": self.moments.excess_kurtosis(),
            "within_sigma": within,
            "density": {
                "unit": format!("{}/√Hz", self.unit),
                "window": "hann",
                "overlap": 0.5,
                "segment_length": sp.seg_len,
                "segments": sp.segments,
                "resolution_hz": sp.bin_width_hz(),
                "dof_per_bin": if sp.segments > 0 { sp.dof(sp.psd.len() / 2) } else { 0.0 },
                "bands_per_decade": BANDS_PER_DECADE,
                "bands": bands,
            },
            "rms_per_decade": self.decades.iter().map(|d| json!({
                "low_hz": d.f_lo_hz, "high_hz": d.f_hi_hz, "rms": d.rms })).collect::<Vec<_>>(),
            "histogram": {
                "lo": self.moments.histogram().lo,
                "hi": self.moments.histogram().hi,
                "counts": self.moments.histogram().counts,
            },
            "notes": self.notes,
        });
        if let Some(c) = &self.comparison {
            o["pass"] = json!(c.pass);
            o["comparison"] = json!({
                "pass": c.pass,
                "tolerance_db": c.tolerance_db,
                "false_alarm": c.false_alarm,
                "bands_checked": c.bands.len(),
                "bands_failed": c.failed(),
                "bands": c.bands.iter().map(|b| json!({
                    "low_hz": b.band.f_lo_hz, "high_hz": b.band.f_hi_hz,
                    "center_hz": b.band.f_center_hz,
                    "measured_density": b.band.psd_mean.sqrt(),
                    "designed_density": b.expected_psd.sqrt(),
                    "ratio_db": b.ratio_db,
                    "stat_lo_db": b.stat_db.0, "stat_hi_db": b.stat_db.1,
                    "limit_lo_db": b.limit_db.0, "limit_hi_db": b.limit_db.1,
                    "dof": b.band.dof, "pass": b.pass,
                })).collect::<Vec<_>>(),
            });
        }
        o["levels"] = match &self.levels {
            Some(l) => l.to_json(),
            None => Value::Null,
        };
        o
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn default_segment_lengths_follow_the_rule() {
        assert_eq!(segment_length(48e3, 480_000, None, None).unwrap(), 32_768);
        assert_eq!(segment_length(48e3, 1 << 30, None, None).unwrap(), 1 << 20);
        // band.low 20 Hz at 48 kHz: 8·48000/20 = 19200 → 32768 ≥ it, N/8 → 65536.
        assert_eq!(
            segment_length(48e3, 1 << 19, None, Some(20.0)).unwrap(),
            32_768
        );
        assert_eq!(segment_length(1e3, 1000, None, None).unwrap(), 256);
        assert_eq!(segment_length(1e3, 100, None, None).unwrap(), 32);
        assert_eq!(segment_length(1e3, 10_000, Some(0.5), None).unwrap(), 2000);
        assert!(segment_length(1e3, 1000, Some(0.1), None).is_err());
        assert!(segment_length(1e3, 10, None, None).is_err());
    }

    #[test]
    fn decade_rms_adds_up_to_the_ac_power() {
        let x: Vec<f64> = (0..1 << 16)
            .map(|i| ((i * 7919) % 1013) as f64 / 1013.0 - 0.5)
            .collect();
        let s = super::super::welch::welch(&x, 1024, 10_000.0);
        let d = rms_per_decade(&s);
        assert_eq!(d.first().unwrap().f_lo_hz, 2.0 * 10_000.0 / 1024.0);
        assert_eq!(d.last().unwrap().f_hi_hz, 5000.0);
        let total: f64 = d.iter().map(|d| d.rms * d.rms).sum();
        let direct: f64 = s.psd[2..].iter().sum::<f64>() * s.bin_width_hz();
        assert!((total - direct).abs() < 1e-12 * direct);
    }
}
