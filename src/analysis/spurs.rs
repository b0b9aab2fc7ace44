//! Narrow spurs in a Welch estimate: lines standing clearly above the local density, found at a
//! stated false-alarm probability, with their frequency, RMS, height and mains family.
//!
//! **Floor.** For bin k the local floor is the median of the bins k − G − w .. k − G − 1 and
//! k + G + 1 ..= k + G + w (a guard of G = 2 bins each side, the Hann main lobe, so a line does
//! not lift its own floor; w = clamp(k/4, 8, 64) neighbours each side), divided by the median
//! of χ²_ν/ν so that it estimates the mean density (robust running median: common practice).
//! Only bins with a full, symmetric neighbourhood are searched; bins the caller skips (a
//! profile's tones) are neither searched nor used as neighbours. On a density that falls or
//! rises monotonically over the window the median of a symmetric window sits near the centre's
//! value (on 1/f slightly above it, which only raises the threshold).
//!
//! **Threshold.** For Gaussian noise a bin is `S·χ²_ν/ν` (ν from [`Spectrum::dof`]; P. D. Welch
//! 1967). The median of M neighbours has the asymptotic variance `1/(4·M_eff·f(m)²)`, f the
//! density of χ²_ν/ν at its median m (the sample median's large-sample variance: common
//! practice, e.g. H. Cramér, *Mathematical Methods of Statistics*, 1946, §28.5 [from memory]),
//! with `M_eff = M·ν_block/(16·ν)` counting the correlation of neighbouring bins (ν_block: the
//! degrees of freedom of the mean of 16 adjacent bins, [`Spectrum::band_dof`]). That spread is
//! matched by an equivalent χ²_{ν_F}/ν_F with `ν_F = 2/var_rel`, so the ratio bin/floor is taken
//! as F(ν, ν_F)-distributed, and a bin is a line when it exceeds the floor by the F quantile at
//! `1 − p`, `p = false_alarm / bins searched` (Bonferroni over the bins; so a capture of noise
//! alone shows a spur with probability at most about `false_alarm`).
//!
//! **A spur** is a run of bins above their threshold (bins at most two apart joined). Its peak
//! bin k_p, its lobe k_p − 2 ..= k_p + 2 (the Hann main lobe, holding ≥ 99.96 % of a line's
//! power wherever the line falls between bins). Its power is `Σ_lobe (P_k − F)·Δf` with F the
//! floor at the peak: summing a line's density over its bins times Δf gives its power exactly
//! (Parseval), which is its peak density times the window's equivalent noise bandwidth, 1.5
//! bins for Hann (F. J. Harris, Proc. IEEE 66(1), 1978). Its frequency is the centroid of
//! `P_k − F` over the lobe; its height `10·log10(P_{k_p}/F)` dB.
//!
//! **Uncertainty of the power** (one standard deviation, Gaussian noise of density F under the
//! line): the noise in the lobe, `(F·5·Δf)²·2/ν_lobe`; the floor's own error,
//! `(F·5·Δf)²·var_rel`; and the line beating with the noise, `2·F·Δf·P·(41/18)/K` for Hann at
//! 50 % overlap over K segments (the windowed cross term `4σ²P·Σw⁴/(Σw²)²`, with
//! `L·Σw⁴/(Σw²)² = 35/18` for the periodic Hann window and a correlation of 3/35 between
//! overlapping segments; derived here). The RMS error is σ_P/(2·RMS) (delta method).

use std::collections::HashMap;
use std::ops::Range;

use statrs::distribution::{ChiSquared, Continuous, ContinuousCDF, FisherSnedecor};

use super::welch::Spectrum;

/// Guard bins each side of a candidate, left out of its floor (the Hann main lobe).
pub const GUARD: usize = 2;
/// Fewest neighbours each side of a candidate.
pub const MIN_NEIGHBOURS: usize = 8;
/// Most neighbours each side of a candidate.
pub const MAX_NEIGHBOURS: usize = 64;
/// Lowest bin whose neighbourhood is used: bins below sit in the main lobe of DC.
const LOWEST_NEIGHBOUR: usize = 3;
/// Mains frequencies looked for, Hz.
pub const MAINS_HZ: [f64; 2] = [50.0, 60.0];
/// Highest mains harmonic named.
pub const MAX_HARMONIC: u32 = 50;
/// A spur belongs to a mains harmonic h·f_m when within max(1.5 bins, h·f_m·0.5 %) of it
/// (a grid's frequency wanders by a few tenths of a hertz: common practice).
pub const MAINS_TOLERANCE: f64 = 0.005;

/// The mains family of a spur.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Mains {
    /// The mains frequency, Hz (50 or 60).
    pub family_hz: f64,
    /// The harmonic number (1 for the fundamental).
    pub harmonic: u32,
}

/// One spur found.
#[derive(Debug, Clone, PartialEq)]
pub struct Spur {
    /// Frequency, Hz (centroid over the lobe).
    pub frequency_hz: f64,
    /// The peak bin (index into `spectrum.psd`).
    pub peak_bin: usize,
    /// The lobe summed for the power (indices into `spectrum.psd`).
    pub lobe: Range<usize>,
    /// RMS of the line, in the capture's unit.
    pub rms: f64,
    /// One standard deviation of `rms`, unit (see the module docs).
    pub rms_se: f64,
    /// Peak bin over the local floor, dB.
    pub height_db: f64,
    /// The local floor at the peak, unit²/Hz.
    pub floor_psd: f64,
    /// Threshold of the peak bin over its floor (ratio of densities).
    pub threshold: f64,
    /// The mains family, when the spur is one of its harmonics.
    pub mains: Option<Mains>,
}

impl Spur {
    /// Power of the line, unit².
    pub fn power(&self) -> f64 {
        self.rms * self.rms
    }
}

/// What a search found, and how.
#[derive(Debug, Clone, PartialEq)]
pub struct SpurSearch {
    /// Total false-alarm probability asked for.
    pub false_alarm: f64,
    /// False-alarm probability per bin searched.
    pub per_bin: f64,
    /// Bins searched.
    pub bins_searched: usize,
    /// Degrees of freedom ν of one bin.
    pub dof: f64,
    /// The threshold with the most neighbours (2·64), ratio of densities: the least one used.
    pub threshold_wide: f64,
    /// The spurs, in frequency order.
    pub spurs: Vec<Spur>,
}

/// The neighbourhood and threshold of one candidate bin.
struct Floor {
    psd: f64,
    threshold: f64,
    var_rel: f64,
}

/// Context of a search: the spectrum, the skipped bins, the statistics of one bin.
struct Search<'a> {
    s: &'a Spectrum,
    skip: Vec<bool>,
    dof: f64,
    /// Median of χ²_ν/ν.
    median: f64,
    /// Density of χ²_ν/ν at its median.
    pdf_at_median: f64,
    /// ν of the mean of 16 adjacent bins over 16·ν.
    efficiency: f64,
    per_bin: f64,
    thresholds: HashMap<usize, (f64, f64)>,
}

impl Search<'_> {
    /// (threshold, relative variance of the floor) for `m` neighbours.
    fn threshold(&mut self, m: usize) -> (f64, f64) {
        if let Some(t) = self.thresholds.get(&m) {
            return *t;
        }
        let m_eff = m as f64 * self.efficiency;
        let var = 1.0 / (4.0 * m_eff * self.pdf_at_median * self.pdf_at_median);
        let var_rel = var / (self.median * self.median);
        let nu_f = 2.0 / var_rel;
        // P(F(ν, ν_F) > t) = P(F(ν_F, ν) < 1/t): the lower tail keeps its precision.
        let t = 1.0
            / FisherSnedecor::new(nu_f, self.dof)
                .expect("positive degrees of freedom")
                .inverse_cdf(self.per_bin);
        self.thresholds.insert(m, (t, var_rel));
        (t, var_rel)
    }

    /// The floor at bin `k`, or `None` when its neighbourhood is too small.
    fn floor(&mut self, k: usize, scratch: &mut Vec<f64>) -> Option<Floor> {
        let n = self.s.psd.len();
        let w = (k / 4).clamp(MIN_NEIGHBOURS, MAX_NEIGHBOURS);
        let below = k.checked_sub(GUARD + LOWEST_NEIGHBOUR)?;
        let above = (n - 1).checked_sub(k + GUARD)?;
        let w = w.min(below).min(above);
        if w < MIN_NEIGHBOURS {
            return None;
        }
        scratch.clear();
        let sides = (k - GUARD - w..k - GUARD).chain(k + GUARD + 1..=k + GUARD + w);
        scratch.extend(sides.filter(|&j| !self.skip[j]).map(|j| self.s.psd[j]));
        if scratch.len() < MIN_NEIGHBOURS {
            return None;
        }
        let mid = scratch.len() / 2;
        let (_, upper, _) = scratch.select_nth_unstable_by(mid, f64::total_cmp);
        let mut med = *upper;
        if scratch.len() % 2 == 0 {
            let lower = scratch[..mid].iter().copied().fold(f64::MIN, f64::max);
            med = 0.5 * (med + lower);
        }
        let (threshold, var_rel) = self.threshold(scratch.len());
        Some(Floor {
            psd: med / self.median,
            threshold,
            var_rel,
        })
    }
}

/// Searches `spectrum` for spurs at a total false-alarm probability `false_alarm`, leaving the
/// bins of `skip` (indices into `spectrum.psd`) out of the search and out of every floor.
/// Needs at least one averaged segment; finds nothing in a spectrum too short for a
/// neighbourhood.
pub fn find_spurs(spectrum: &Spectrum, skip: &[Range<usize>], false_alarm: f64) -> SpurSearch {
    let n = spectrum.psd.len();
    let mut skip_mask = vec![false; n];
    for r in skip {
        skip_mask[r.start.min(n)..r.end.min(n)].fill(true);
    }
    let dof = if spectrum.segments > 0 {
        spectrum.dof(n / 2)
    } else {
        0.0
    };
    let first = LOWEST_NEIGHBOUR + GUARD + MIN_NEIGHBOURS;
    let candidates: Vec<usize> = (first..n.saturating_sub(GUARD + MIN_NEIGHBOURS))
        .filter(|&k| !skip_mask[k])
        .collect();
    let mut out = SpurSearch {
        false_alarm,
        per_bin: false_alarm / candidates.len().max(1) as f64,
        bins_searched: candidates.len(),
        dof,
        threshold_wide: f64::NAN,
        spurs: Vec::new(),
    };
    if dof <= 0.0 || candidates.is_empty() || n < 40 {
        return out;
    }
    let chi = ChiSquared::new(dof).expect("positive dof");
    let median = chi.inverse_cdf(0.5) / dof;
    let block = 16.min(n / 2 - 1);
    let mut search = Search {
        s: spectrum,
        skip: skip_mask,
        dof,
        median,
        pdf_at_median: dof * chi.pdf(median * dof),
        efficiency: spectrum.band_dof(n / 4..n / 4 + block) / (block as f64 * dof),
        per_bin: out.per_bin,
        thresholds: HashMap::new(),
    };
    out.threshold_wide = search.threshold(2 * MAX_NEIGHBOURS).0;
    let mut scratch = Vec::with_capacity(2 * MAX_NEIGHBOURS);
    let mut above: Vec<(usize, Floor)> = Vec::new();
    for k in candidates {
        if let Some(f) = search.floor(k, &mut scratch) {
            if spectrum.psd[k] > f.threshold * f.psd {
                above.push((k, f));
            }
        }
    }
    // Runs of bins above threshold, joined across gaps of at most two bins.
    let mut runs: Vec<Vec<(usize, Floor)>> = Vec::new();
    for (k, f) in above {
        match runs.last_mut() {
            Some(run) if k <= run.last().expect("non-empty").0 + 3 => run.push((k, f)),
            _ => runs.push(vec![(k, f)]),
        }
    }
    out.spurs = runs.into_iter().map(|run| measure(spectrum, run)).collect();
    name_mains(&mut out.spurs, spectrum.bin_width_hz());
    out
}

/// The spur of a run of bins above threshold (see the module docs).
fn measure(s: &Spectrum, run: Vec<(usize, Floor)>) -> Spur {
    let (kp, f) = run
        .into_iter()
        .max_by(|a, b| s.psd[a.0].total_cmp(&s.psd[b.0]))
        .expect("a run holds a bin");
    let n = s.psd.len();
    let lobe = kp.saturating_sub(GUARD)..(kp + GUARD + 1).min(n);
    let df = s.bin_width_hz();
    let excess: Vec<f64> = lobe.clone().map(|k| s.psd[k] - f.psd).collect();
    let power = (excess.iter().sum::<f64>() * df).max(0.0);
    let weight: f64 = excess.iter().sum();
    let centroid = lobe
        .clone()
        .zip(&excess)
        .map(|(k, e)| k as f64 * e)
        .sum::<f64>()
        / weight;
    let noise = f.psd * lobe.len() as f64 * df;
    let var = noise * noise * (2.0 / s.band_dof(lobe.clone()) + f.var_rel)
        + 2.0 * f.psd * df * power * (41.0 / 18.0) / s.segments as f64;
    let rms = power.sqrt();
    Spur {
        frequency_hz: centroid * df,
        peak_bin: kp,
        lobe,
        rms,
        rms_se: var.sqrt() / (2.0 * rms.max(f64::MIN_POSITIVE)),
        height_db: 10.0 * (s.psd[kp] / f.psd).log10(),
        floor_psd: f.psd,
        threshold: f.threshold,
        mains: None,
    }
}

/// Names the spurs that are mains harmonics: each spur within tolerance of h·50 Hz or h·60 Hz
/// ([`MAINS_TOLERANCE`], at least 1.5 bins of `bin_hz`) belongs to that family, provided the
/// family's fundamental or second harmonic is among the spurs (every round frequency is some
/// multiple of 50 Hz: a lone 1 kHz line is not hum); a spur that fits both families takes the
/// one with more members found (50 Hz on a tie).
pub fn name_mains(spurs: &mut [Spur], bin_hz: f64) {
    let harmonic_of = |f: f64, m: f64| {
        let h = (f / m).round();
        let tol = (1.5 * bin_hz).max(h * m * MAINS_TOLERANCE);
        (h >= 1.0 && h <= f64::from(MAX_HARMONIC) && (f - h * m).abs() <= tol).then_some(h as u32)
    };
    let members = |m: f64| {
        let rooted = spurs
            .iter()
            .any(|s| matches!(harmonic_of(s.frequency_hz, m), Some(1 | 2)));
        let count = spurs
            .iter()
            .filter(|s| harmonic_of(s.frequency_hz, m).is_some())
            .count();
        if rooted { count } else { 0 }
    };
    let (n50, n60) = (members(MAINS_HZ[0]), members(MAINS_HZ[1]));
    let order = if n60 > n50 {
        [MAINS_HZ[1], MAINS_HZ[0]]
    } else {
        MAINS_HZ
    };
    let eligible = |m: f64| if m == MAINS_HZ[0] { n50 > 0 } else { n60 > 0 };
    for s in spurs.iter_mut() {
        s.mains = order.iter().filter(|&&m| eligible(m)).find_map(|&m| {
            harmonic_of(s.frequency_hz, m).map(|harmonic| Mains {
                family_hz: m,
                harmonic,
            })
        });
    }
}

/// The Welch bins a frequency `f_hz` (Hz) left out by a user covers: the Hann main lobe around
/// it, ±[`GUARD`] bins of `bin_hz` (indices, clipped to `bins`).
pub fn bins_around(f_lo_hz: f64, f_hi_hz: f64, bin_hz: f64, bins: usize) -> Range<usize> {
    let lo = ((f_lo_hz / bin_hz).floor() as usize).saturating_sub(GUARD);
    let hi = ((f_hi_hz / bin_hz).ceil() as usize + GUARD + 1).min(bins);
    lo.min(hi)..hi
}

#[cfg(test)]
mod tests;
