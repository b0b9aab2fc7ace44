//! The density model: the one-sided power density S(f) (unit²/Hz) of every source, the band
//! shaping, their sum, and integrals of it.
//!
//! Conventions: one-sided PSD on 0 < f ≤ fs/2 in unit²/Hz (unit = V or A of the profile);
//! density = √S in unit/√Hz; variance = ∫ S df in unit².
//!
//! Band shaping ([`band_gain`]) is a power gain, the product of one factor per edge:
//! - low edge, `low_order` n ≥ 1: the Butterworth high-pass power response
//!   1/(1 + (low/f)^(2n));
//! - low edge, `low_order` 0 (brick wall, the default): 1 down to `band.low` and a little
//!   below, then 0 below low·2^(−[`LOW_STEP_OCTAVES`]) (1/64 octave, 1.1 %);
//! - high edge, order n ≥ 1: the Butterworth power response 1/(1 + (f/high)^(2n)) up to fs/2;
//! - high edge, order 0 (brick wall): 1 up to `band.high` and a little above, then 0 above
//!   min(high·2^[`HIGH_STEP_OCTAVES`], fs/2) (1/96 octave, 0.72 %); none if high = fs/2;
//! - nothing at f ≤ 0 or above fs/2.
//!
//! A brick wall's step lies just outside the band, so the density is the sources' sum right up
//! to the edge; the engine holds it within 0.01 dB there and at least 60 dB below the in-band
//! level from 1/24 octave beyond the edge on ([`edge_guards`]). The step is nearer the high
//! edge than the low one because the high edge decides how much the file holds above the band
//! (+0.36 % in RMS for a white band), the low edge how fine the engine's lowest filter must be.

use crate::profile::{Band, InertialTerm, Profile, Source, SourceKind, Unit};
pub use crate::units::BOLTZMANN;

/// Where a brick-wall low edge's density steps to zero: this many octaves below `band.low`.
pub const LOW_STEP_OCTAVES: f64 = 1.0 / 64.0;
/// Where a brick-wall high edge's density steps to zero: this many octaves above `band.high`.
pub const HIGH_STEP_OCTAVES: f64 = 1.0 / 96.0;
/// Beyond a brick-wall edge, the transition band in which the engine's density falls by at
/// least 60 dB: 1/24 octave.
pub const EDGE_GUARD_OCTAVES: f64 = 1.0 / 24.0;

/// One-sided power density of one source at `f` Hz, in unit²/Hz, before band shaping.
///
/// - floor: density²·(1 + (corner/f)^slope), or density² without a corner;
/// - resistor: 4kTR in V²/Hz in a volt profile, 4kT/R in A²/Hz in an ampere profile
///   (Johnson–Nyquist, valid for hf ≪ kT);
/// - amplifier part: density²·(1 + corner/f)/(1 + (f/pole)²) in V²/Hz (see
///   [`crate::model::amplifier::part_psd`]);
/// - table: the density interpolated linearly in log f–log density between points, held at
///   the first/last point's density outside them; the power is its square.
///
/// Returns 0 for f ≤ 0 (the model is one-sided and has nothing at DC).
pub fn source_psd(source: &Source, profile: &Profile, f: f64) -> f64 {
    if f.is_nan() || f <= 0.0 {
        return 0.0;
    }
    match &source.kind {
        SourceKind::Floor {
            density,
            corner_hz,
            slope,
        } => {
            let d2 = density * density;
            match corner_hz {
                Some(fc) => d2 * (1.0 + (fc / f).powf(*slope)),
                None => d2,
            }
        }
        SourceKind::Resistor {
            resistance_ohm,
            temperature_k,
        } => {
            let four_kt = 4.0 * BOLTZMANN * temperature_k;
            // The parser refuses resistors outside volt and ampere profiles.
            match profile.unit {
                Unit::Ampere => four_kt / resistance_ohm,
                _ => four_kt * resistance_ohm,
            }
        }
        SourceKind::Table { points } => {
            let d = table_density(points, f);
            d * d
        }
        SourceKind::AmplifierPart {
            density,
            corner_hz,
            pole_hz,
            ..
        } => crate::model::amplifier::part_psd(*density, *corner_hz, *pole_hz, f),
        SourceKind::Inertial { term, coefficient } => inertial_psd(*term, *coefficient, f),
    }
}

/// One-sided density (unit²/Hz) at `f` > 0 Hz of an inertial term with `coefficient` (N in
/// unit·s^½, B in unit, K in unit·s^−½), before band shaping.
///
/// IEEE Std 952-1997 Annex C writes the terms as two-sided densities S of the rate,
/// S = N², (B²/2π)/f and (K/2π)²/f², whose Allan variances are N²/τ, (2 ln 2/π)B² and
/// K²τ/3; the one-sided density G = 2S carries the same power on f > 0 only:
/// G = 2N², B²/(π f), K²/(2π² f²).
pub fn inertial_psd(term: InertialTerm, coefficient: f64, f: f64) -> f64 {
    let c2 = coefficient * coefficient;
    match term {
        InertialTerm::RandomWalk => 2.0 * c2,
        InertialTerm::BiasInstability => c2 / (std::f64::consts::PI * f),
        InertialTerm::RateRandomWalk => c2 / (2.0 * std::f64::consts::PI.powi(2) * f * f),
    }
}

/// Log-log interpolation of a table's density (unit/√Hz) at `f` > 0 Hz.
fn table_density(points: &[(f64, f64)], f: f64) -> f64 {
    let (Some(&(f0, d0)), Some(&(f1, d1))) = (points.first(), points.last()) else {
        return 0.0;
    };
    if f <= f0 {
        return d0;
    }
    if f >= f1 {
        return d1;
    }
    // First point with frequency > f; 1 ≤ i < len because f0 < f < f1.
    let i = points.partition_point(|&(fp, _)| fp <= f);
    let (fa, da) = points[i - 1];
    let (fb, db) = points[i];
    let t = (f / fa).ln() / (fb / fa).ln();
    da * (db / da).powf(t)
}

/// Power gain (0..=1) of the band shaping at `f` Hz: the high-pass (or brick-wall taper) at
/// the low edge times the low-pass (or brick-wall taper) at the high edge.
///
/// See the module documentation for the exact shapes. `sample_rate_hz` is in samples per
/// second; the gain is 0 for f ≤ 0 and f > sample_rate_hz / 2.
pub fn band_gain(band: &Band, sample_rate_hz: f64, f: f64) -> f64 {
    let nyquist = sample_rate_hz / 2.0;
    if f.is_nan() || f <= 0.0 || f > nyquist {
        return 0.0;
    }
    let low = band.low_hz;
    let low_gain = if band.low_order >= 1 {
        1.0 / (1.0 + (low / f).powi(2 * band.low_order as i32))
    } else if f >= low * (-LOW_STEP_OCTAVES).exp2() {
        1.0
    } else {
        return 0.0;
    };
    let high = band.high_hz;
    let high_gain = if band.order >= 1 {
        1.0 / (1.0 + (f / high).powi(2 * band.order as i32))
    } else if f <= brick_wall_top(band, sample_rate_hz) {
        1.0
    } else {
        return 0.0;
    };
    low_gain * high_gain
}

/// Where an order-0 high edge steps to zero (Hz): min(high·2^(1/96), fs/2).
fn brick_wall_top(band: &Band, sample_rate_hz: f64) -> f64 {
    (band.high_hz * HIGH_STEP_OCTAVES.exp2()).min(sample_rate_hz / 2.0)
}

/// The transition bands of `band`'s brick-wall edges at `sample_rate_hz` (Hz, low end first):
/// the [`EDGE_GUARD_OCTAVES`] beyond each edge, outside the band, within which the density
/// falls from its in-band value to 60 dB below it or less. None for an edge at fs/2.
pub fn edge_guards(band: &Band, sample_rate_hz: f64) -> Vec<(f64, f64)> {
    let mut guards = Vec::new();
    if band.low_order == 0 {
        guards.push((band.low_hz * (-EDGE_GUARD_OCTAVES).exp2(), band.low_hz));
    }
    let nyquist = sample_rate_hz / 2.0;
    if band.order == 0 && band.high_hz < nyquist {
        guards.push((
            band.high_hz,
            (band.high_hz * EDGE_GUARD_OCTAVES.exp2()).min(nyquist),
        ));
    }
    guards
}

/// The frequency range (Hz) outside which [`band_gain`] is zero, or below which it is
/// negligible: from the brick-wall step below `band.low` (`low_order` 0) or from where a
/// Butterworth high-pass is 10⁻¹² down (`low_order` n ≥ 1), to `sample_rate_hz / 2`
/// (order ≥ 1) or to the brick-wall step above `band.high` (order 0).
pub fn band_support(band: &Band, sample_rate_hz: f64) -> (f64, f64) {
    let top = if band.order == 0 {
        brick_wall_top(band, sample_rate_hz)
    } else {
        sample_rate_hz / 2.0
    };
    let bottom = if band.low_order == 0 {
        band.low_hz * (-LOW_STEP_OCTAVES).exp2()
    } else {
        band.low_hz * 1e-6f64.powf(1.0 / f64::from(band.low_order))
    };
    (bottom, top)
}

/// The profile's target one-sided power density at `f` Hz in unit²/Hz: the sum of all sources
/// times the band shaping.
pub fn target_psd(profile: &Profile, f: f64) -> f64 {
    let g = band_gain(&profile.band, profile.sample_rate_hz, f);
    if g == 0.0 {
        return 0.0;
    }
    g * profile
        .sources
        .iter()
        .map(|s| source_psd(s, profile, f))
        .sum::<f64>()
}

/// Variance of the target density in unit² (∫ [`target_psd`] df over the whole band, taper
/// included), computed with [`integrate_pieces`] split at the band edges, corners and table
/// points. Its square root is the RMS in the profile unit.
pub fn target_variance(profile: &Profile) -> f64 {
    let band = &profile.band;
    let fs = profile.sample_rate_hz;
    let (lo, hi) = band_support(band, fs);
    let mut breaks = vec![lo, band.low_hz, band.high_hz, hi];
    for s in &profile.sources {
        breaks.extend(source_kinks(s));
    }
    breaks.retain(|&b| b >= lo && b <= hi);
    breaks.sort_by(f64::total_cmp);
    breaks.dedup();
    integrate_pieces(&|f| target_psd(profile, f), &breaks)
}

/// Frequencies in Hz where a source's density bends or changes its law (corners, closed-loop
/// poles, table points): good panel edges for [`integrate_pieces`].
pub fn source_kinks(source: &Source) -> Vec<f64> {
    match &source.kind {
        SourceKind::Floor {
            corner_hz: Some(fc),
            ..
        } => vec![*fc],
        SourceKind::Table { points } => points.iter().map(|p| p.0).collect(),
        SourceKind::AmplifierPart {
            corner_hz, pole_hz, ..
        } => corner_hz.iter().chain(pole_hz).copied().collect(),
        _ => Vec::new(),
    }
}

/// Thermal (Johnson–Nyquist) voltage density √(4kTR) in V/√Hz of `resistance_ohm` Ω at
/// `temperature_k` K (one-sided; valid for hf ≪ kT).
pub fn thermal_density(resistance_ohm: f64, temperature_k: f64) -> f64 {
    (4.0 * BOLTZMANN * temperature_k * resistance_ohm).sqrt()
}

/// The resistance in Ω whose thermal voltage density at `temperature_k` K is `density`
/// V/√Hz: R = density² / (4kT). The inverse of [`thermal_density`].
pub fn resistance_for_density(density: f64, temperature_k: f64) -> f64 {
    density * density / (4.0 * BOLTZMANN * temperature_k)
}

/// Closed form of ∫ density²·(1 + (corner/f)^slope) df over [lo, hi] Hz, in unit².
///
/// `density` is in unit/√Hz, `corner` in Hz (0 for a white floor), `slope` the exponent α of
/// the power density (> 0). α = 1: d²[(hi − lo) + fc·ln(hi/lo)]; otherwise
/// d²[(hi − lo) + fc^α (hi^(1−α) − lo^(1−α))/(1 − α)], evaluated with `exp_m1` so that it
/// stays accurate for α near 1. Requires 0 < lo ≤ hi.
pub fn floor_band_variance(density: f64, corner: f64, slope: f64, lo: f64, hi: f64) -> f64 {
    let d2 = density * density;
    let white = hi - lo;
    if corner == 0.0 {
        return d2 * white;
    }
    let ln_ratio = (hi / lo).ln();
    let rise = if slope == 1.0 {
        corner * ln_ratio
    } else {
        let b = 1.0 - slope;
        // fc^α·lo^(1−α)·(e^{(1−α)ln(hi/lo)} − 1)/(1 − α) = fc^α (hi^(1−α) − lo^(1−α))/(1 − α)
        corner.powf(slope) * lo.powf(b) * (b * ln_ratio).exp_m1() / b
    };
    d2 * (white + rise)
}

/// Equivalent noise bandwidth of an n-th order Butterworth low-pass relative to its −3 dB
/// frequency (dimensionless): (π/2n)/sin(π/2n), the closed form of ∫₀^∞ dx/(1 + x^(2n)).
/// Order 0 (brick wall) gives 1.
pub fn butterworth_enbw_ratio(order: u32) -> f64 {
    if order == 0 {
        return 1.0;
    }
    let x = std::f64::consts::PI / (2.0 * f64::from(order));
    x / x.sin()
}

/// Numerical integral of `f` over [lo, hi] (both in Hz or any positive variable), for
/// functions that may span many decades.
///
/// Substitutes u = ln x (∫ f(x) dx = ∫ f(eᵘ) eᵘ du), starts from four panels per decade and
/// refines the worst panel (adaptive 15-point Gauss–Kronrod) until the estimated error is
/// below 1e-13 of the result. Relative accuracy is better than 1e-10 for smooth integrands
/// such as power laws, 1/f and Butterworth responses. `hi < lo` gives the negated integral.
///
/// # Panics
/// If `lo` or `hi` is not finite and > 0.
pub fn integrate(f: &dyn Fn(f64) -> f64, lo: f64, hi: f64) -> f64 {
    if hi < lo {
        return -integrate(f, hi, lo);
    }
    integrate_pieces(f, &[lo, hi])
}

/// Like [`integrate`], over `breaks[0]..=breaks[last]` with panel edges at every break (sorted,
/// increasing). Putting breaks at kinks (band edges, table points) speeds convergence.
///
/// # Panics
/// If a break is not finite and > 0 or the breaks are not increasing.
pub fn integrate_pieces(f: &dyn Fn(f64) -> f64, breaks: &[f64]) -> f64 {
    assert!(
        breaks.iter().all(|b| b.is_finite() && *b > 0.0),
        "integration limits must be finite and > 0, got {breaks:?}"
    );
    assert!(
        breaks.windows(2).all(|w| w[0] <= w[1]),
        "integration breaks must increase, got {breaks:?}"
    );
    let g = |u: f64| {
        let x = u.exp();
        f(x) * x
    };
    let mut panels: Vec<Panel> = Vec::new();
    for w in breaks.windows(2) {
        let (a, b) = (w[0].ln(), w[1].ln());
        if b <= a {
            continue;
        }
        let n = ((b - a) / std::f64::consts::LN_10 * 4.0)
            .ceil()
            .clamp(1.0, 4096.0) as usize;
        let h = (b - a) / n as f64;
        for k in 0..n {
            let lo = a + h * k as f64;
            let hi = if k + 1 == n {
                b
            } else {
                a + h * (k + 1) as f64
            };
            panels.push(Panel::new(&g, lo, hi));
        }
    }
    refine(&g, panels)
}

/// One panel of the adaptive rule, in u = ln x.
struct Panel {
    a: f64,
    b: f64,
    value: f64,
    error: f64,
}

impl Panel {
    fn new(g: &dyn Fn(f64) -> f64, a: f64, b: f64) -> Panel {
        let (value, error) = gauss_kronrod_15(g, a, b);
        Panel { a, b, value, error }
    }
}

/// Relative error target of [`integrate`].
const REL_TOL: f64 = 1e-13;
/// Most panels [`integrate`] will use before returning its best estimate.
const MAX_PANELS: usize = 50_000;

fn refine(g: &dyn Fn(f64) -> f64, mut panels: Vec<Panel>) -> f64 {
    use std::collections::BinaryHeap;
    // Max-heap of (error, index); errors are ≥ 0 so their bit patterns order like the values.
    let mut heap: BinaryHeap<(u64, usize)> = panels
        .iter()
        .enumerate()
        .map(|(i, p)| (p.error.to_bits(), i))
        .collect();
    let mut total: f64 = panels.iter().map(|p| p.value).sum();
    let mut error: f64 = panels.iter().map(|p| p.error).sum();
    while panels.len() < MAX_PANELS {
        if error <= REL_TOL * total.abs() || !error.is_finite() {
            break;
        }
        let Some((_, i)) = heap.pop() else { break };
        let (a, b) = (panels[i].a, panels[i].b);
        let mid = 0.5 * (a + b);
        if !(a < mid && mid < b) {
            // The panel cannot be split further in floating point; accept it.
            error -= panels[i].error;
            panels[i].error = 0.0;
            continue;
        }
        let left = Panel::new(g, a, mid);
        let right = Panel::new(g, mid, b);
        total += left.value + right.value - panels[i].value;
        error += left.error + right.error - panels[i].error;
        panels[i] = left;
        heap.push((panels[i].error.to_bits(), i));
        heap.push((right.error.to_bits(), panels.len()));
        panels.push(right);
        // Re-sum now and then so that the running sums do not drift.
        if panels.len() % 1024 == 0 {
            total = panels.iter().map(|p| p.value).sum();
            error = panels.iter().map(|p| p.error).sum();
        }
    }
    panels.sort_by(|p, q| p.a.total_cmp(&q.a));
    panels.iter().map(|p| p.value).sum()
}

/// 15-point Kronrod rule with its embedded 7-point Gauss rule on [a, b]: (Kronrod value,
/// |Kronrod − Gauss| as the error estimate). Nodes and weights: R. Piessens et al., QUADPACK
/// (Springer, 1983), routine QK15 (quoted from memory; the tests below check them against
/// closed-form integrals).
fn gauss_kronrod_15(g: &dyn Fn(f64) -> f64, a: f64, b: f64) -> (f64, f64) {
    const XGK: [f64; 8] = [
        0.991_455_371_120_812_6,
        0.949_107_912_342_758_5,
        0.864_864_423_359_769_1,
        0.741_531_185_599_394_4,
        0.586_087_235_467_691_1,
        0.405_845_151_377_397_2,
        0.207_784_955_007_898_5,
        0.0,
    ];
    const WGK: [f64; 8] = [
        0.022_935_322_010_529_22,
        0.063_092_092_629_978_55,
        0.104_790_010_322_250_2,
        0.140_653_259_715_525_9,
        0.169_004_726_639_267_9,
        0.190_350_578_064_785_4,
        0.204_432_940_075_298_9,
        0.209_482_141_084_727_8,
    ];
    // Gauss weights for the nodes XGK[1], XGK[3], XGK[5], XGK[7].
    const WG: [f64; 4] = [
        0.129_484_966_168_869_7,
        0.279_705_391_489_276_7,
        0.381_830_050_505_118_9,
        0.417_959_183_673_469_4,
    ];
    let c = 0.5 * (a + b);
    let h = 0.5 * (b - a);
    let fc = g(c);
    let mut kronrod = WGK[7] * fc;
    let mut gauss = WG[3] * fc;
    for j in 0..7 {
        let s = g(c - h * XGK[j]) + g(c + h * XGK[j]);
        kronrod += WGK[j] * s;
        if j % 2 == 1 {
            gauss += WG[j / 2] * s;
        }
    }
    (kronrod * h, ((kronrod - gauss) * h).abs())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn profile(unit: Unit, band: Band, fs: f64, kinds: Vec<SourceKind>) -> Profile {
        Profile {
            label: Default::default(),
            channels: 1,
            correlation: vec![vec![1.0]],
            sensitivity_v_per_unit: None,
            name: None,
            unit,
            sample_rate_hz: fs,
            band,
            sources: kinds
                .into_iter()
                .enumerate()
                .map(|(i, kind)| Source {
                    name: format!("s{i}"),
                    kind,
                })
                .collect(),
            bursts: Vec::new(),
            tones: Vec::new(),
            offset: 0.0,
        }
    }

    fn floor(density: f64, corner_hz: Option<f64>, slope: f64) -> SourceKind {
        SourceKind::Floor {
            density,
            corner_hz,
            slope,
        }
    }

    const AUDIO: Band = Band {
        low_hz: 20.0,
        high_hz: 20e3,
        order: 2,
        low_order: 0,
    };

    fn rel(a: f64, b: f64) -> f64 {
        ((a - b) / b).abs()
    }

    // Check values: REFERENCES §5 [V] table; Johnson (1928), Nyquist (1928); k from the BIPM SI
    // Brochure, 9th ed. (2019). "To 5 significant figures" = within half a unit of the 5th digit.
    #[test]
    fn thermal_density_matches_johnson_nyquist_table() {
        assert!((thermal_density(1e3, 298.15) - 4.0578e-9).abs() <= 0.00005e-9);
        assert!((thermal_density(1e3, 300.0) - 4.0704e-9).abs() <= 0.00005e-9);
        assert!((thermal_density(1e3, 290.0) - 4.0019e-9).abs() <= 0.00005e-9);
        assert!((thermal_density(10e3, 298.15) - 12.832e-9).abs() <= 0.0005e-9);
        assert!((thermal_density(50.0, 298.15) - 0.9073e-9).abs() <= 0.00005e-9);
        // REFERENCES §5 quotes 60.73 Ω (4 significant figures).
        assert!((resistance_for_density(1e-9, 298.15) - 60.73).abs() <= 0.005);
        assert!((resistance_for_density(1e-9, 290.0) - 62.44).abs() <= 0.005);
        // Exact inverse up to rounding (a few ulps).
        let r = resistance_for_density(thermal_density(4.7e3, 310.0), 310.0);
        assert!(rel(r, 4.7e3) < 1e-14);
    }

    #[test]
    fn resistor_psd_is_4ktr_in_volts_and_4kt_over_r_in_amperes() {
        let r = SourceKind::Resistor {
            resistance_ohm: 1e3,
            temperature_k: 298.15,
        };
        let pv = profile(Unit::Volt, AUDIO, 48e3, vec![r.clone()]);
        let pa = profile(Unit::Ampere, AUDIO, 48e3, vec![r]);
        let sv = source_psd(&pv.sources[0], &pv, 1e3);
        let sa = source_psd(&pa.sources[0], &pa, 1e3);
        assert!((sv.sqrt() - 4.0578e-9).abs() <= 0.00005e-9); // REFERENCES §5
        assert!((sa.sqrt() - 4.058e-12).abs() <= 0.0005e-12); // REFERENCES §5, i_n of 1 kΩ
        assert!(rel(sv * sa, (4.0 * BOLTZMANN * 298.15).powi(2)) < 1e-14);
    }

    #[test]
    fn floor_psd_doubles_at_the_corner_and_follows_the_slope() {
        let p = profile(
            Unit::Volt,
            AUDIO,
            48e3,
            vec![
                floor(4e-9, Some(100.0), 1.0),
                floor(4e-9, Some(100.0), 0.5),
                floor(4e-9, None, 1.0),
            ],
        );
        let d2 = 16e-18;
        // Exact math: 1 + (fc/f)^α at f = fc is 2; at f = fc/4 with α = 0.5 it is 3.
        assert!(rel(source_psd(&p.sources[0], &p, 100.0), 2.0 * d2) < 1e-15);
        assert!(rel(source_psd(&p.sources[0], &p, 10.0), 11.0 * d2) < 1e-15);
        assert!(rel(source_psd(&p.sources[1], &p, 25.0), 3.0 * d2) < 1e-15);
        assert_eq!(source_psd(&p.sources[2], &p, 0.001), d2);
        assert_eq!(source_psd(&p.sources[0], &p, 0.0), 0.0);
    }

    #[test]
    fn table_interpolates_log_log_and_holds_its_ends() {
        let pts = vec![(1.0, 30e-9), (10.0, 12e-9), (1000.0, 5e-9)];
        let p = profile(
            Unit::Volt,
            AUDIO,
            48e3,
            vec![SourceKind::Table { points: pts }],
        );
        let s = |f: f64| source_psd(&p.sources[0], &p, f);
        // Exact math: halfway in log f the log-log line gives the geometric mean density.
        assert!(rel(s(10f64.sqrt()), 30e-9 * 12e-9) < 1e-14);
        assert!(rel(s(100.0), 12e-9 * 5e-9) < 1e-14);
        assert_eq!(s(10.0), 12e-9 * 12e-9);
        assert_eq!(s(0.5), 30e-9 * 30e-9);
        assert_eq!(s(1.0), 30e-9 * 30e-9);
        assert_eq!(s(1e4), 5e-9 * 5e-9);
        // Power law between points: density ∝ f^(ln(12/30)/ln 10) on [1, 10].
        let k = (12.0f64 / 30.0).ln() / 10f64.ln();
        assert!(rel(s(3.0), (30e-9 * 3f64.powf(k)).powi(2)) < 1e-13);
    }

    #[test]
    fn brick_wall_edges_step_just_outside_the_band_and_stop_at_nyquist() {
        let band = Band {
            low_hz: 10.0,
            high_hz: 1e3,
            order: 0,
            low_order: 0,
        };
        let g = |fs: f64, f: f64| band_gain(&band, fs, f);
        // Full gain from the step 1/64 octave below low to the step 1/96 octave above high.
        let (bottom, top) = (10.0 * 2f64.powf(-1.0 / 64.0), 1e3 * 2f64.powf(1.0 / 96.0));
        for f in [bottom, 10.0, 500.0, 1e3, top] {
            assert_eq!(g(1e4, f), 1.0, "f {f}");
        }
        for f in [
            bottom * (1.0 - 1e-12),
            5.0,
            0.0,
            -1.0,
            top * (1.0 + 1e-12),
            2e3,
        ] {
            assert_eq!(g(1e4, f), 0.0, "f {f}");
        }
        assert_eq!(band_support(&band, 1e4), (bottom, top));
        // A high edge at fs/2: full gain up to Nyquist, nothing above, no guard.
        assert_eq!(g(2000.0, 1000.0), 1.0);
        assert_eq!(g(2000.0, 1000.000001), 0.0);
        assert_eq!(edge_guards(&band, 2000.0).len(), 1);
        // The guards: 1/24 octave beyond each edge.
        let guards = edge_guards(&band, 1e4);
        assert_eq!(guards[0], (10.0 * 2f64.powf(-1.0 / 24.0), 10.0));
        assert_eq!(guards[1], (1e3, 1e3 * 2f64.powf(1.0 / 24.0)));
    }

    #[test]
    fn low_order_is_a_butterworth_high_pass_half_power_at_low() {
        for low_order in 1..=8 {
            let band = Band {
                low_hz: 100.0,
                high_hz: 1e3,
                order: 3,
                low_order,
            };
            let hp = 1.0 / (1.0 + 0.1f64.powi(2 * 3)); // the high edge's factor at 100 Hz
            // Exact math: 1/(1 + 1^(2n)) = 1/2 at low; one octave down 1/(1 + 4^n).
            assert!((band_gain(&band, 1e4, 100.0) / hp - 0.5).abs() < 1e-15);
            let lp = 1.0 / (1.0 + 0.05f64.powi(2 * 3));
            let expect = 1.0 / (1.0 + 4f64.powi(low_order as i32)) * lp;
            assert!(rel(band_gain(&band, 1e4, 50.0), expect) < 1e-14);
            assert!(edge_guards(&band, 1e4).is_empty());
            let (bottom, _) = band_support(&band, 1e4);
            assert!(rel(band_gain(&band, 1e4, bottom), 1e-12) < 1e-6);
        }
    }

    #[test]
    fn butterworth_edge_is_half_power_at_high() {
        for order in 1..=8 {
            let band = Band {
                low_hz: 1.0,
                high_hz: 100.0,
                order,
                low_order: 0,
            };
            // Exact math: 1/(1 + 1^(2n)) = 1/2; one octave up 1/(1 + 4^n).
            assert!((band_gain(&band, 1e4, 100.0) - 0.5).abs() < 1e-15);
            let expect = 1.0 / (1.0 + 4f64.powi(order as i32));
            assert!(rel(band_gain(&band, 1e4, 200.0), expect) < 1e-14);
            assert_eq!(band_gain(&band, 1e4, 5001.0), 0.0);
        }
    }

    #[test]
    fn target_psd_is_the_sum_of_sources_times_the_band() {
        let p = profile(
            Unit::Volt,
            AUDIO,
            48e3,
            vec![
                floor(4e-9, Some(100.0), 1.0),
                SourceKind::Resistor {
                    resistance_ohm: 1e3,
                    temperature_k: 300.0,
                },
            ],
        );
        for f in [19.9, 20.0, 1e3, 19e3, 24e3] {
            let sum = source_psd(&p.sources[0], &p, f) + source_psd(&p.sources[1], &p, f);
            let want = sum * band_gain(&p.band, 48e3, f);
            assert!(rel(target_psd(&p, f), want) < 1e-15, "{f}");
        }
        assert_eq!(target_psd(&p, 0.0), 0.0);
        assert_eq!(target_psd(&p, 9.8), 0.0);
        assert_eq!(target_psd(&p, 24001.0), 0.0);
    }

    // REFERENCES §6: closed forms of the band variance; "integrate the tool's own PSD model
    // numerically and assert agreement with these closed forms to 1e-9 relative".
    #[test]
    fn integrated_floor_density_matches_the_closed_form() {
        let (lo, hi) = (0.1, 20e3);
        for slope in [1.0, 0.5, 1.5, 2.0, 0.999_999] {
            let p = profile(
                Unit::Volt,
                AUDIO,
                48e3,
                vec![floor(4e-9, Some(100.0), slope)],
            );
            let numeric = integrate(&|f| source_psd(&p.sources[0], &p, f), lo, hi);
            let closed = floor_band_variance(4e-9, 100.0, slope, lo, hi);
            assert!(
                rel(numeric, closed) < 1e-9,
                "slope {slope}: {numeric} vs {closed}"
            );
        }
        assert!(
            rel(
                floor_band_variance(3e-9, 0.0, 1.0, lo, hi),
                9e-18 * (hi - lo)
            ) < 1e-15
        );
    }

    #[test]
    fn example_of_references_section_6_gives_74_80_nv_rms() {
        // REFERENCES §6 [V]: 10 nV/√Hz, corner 10 Hz, 0.1–10 Hz: 67.86 nV (1/f part),
        // 31.46 nV (white), 74.80 nV rms in all, quoted to 4 significant figures.
        let total = floor_band_variance(10e-9, 10.0, 1.0, 0.1, 10.0).sqrt();
        let white = floor_band_variance(10e-9, 0.0, 1.0, 0.1, 10.0).sqrt();
        let flicker = (total * total - white * white).sqrt();
        assert!((total - 74.80e-9).abs() <= 0.005e-9, "{total}");
        assert!((white - 31.46e-9).abs() <= 0.005e-9, "{white}");
        assert!((flicker - 67.86e-9).abs() <= 0.005e-9, "{flicker}");
    }

    // The table values are quoted as REFERENCES prints them, not as π/2 and π/3.
    #[allow(clippy::approx_constant)]
    #[test]
    fn butterworth_enbw_constants() {
        // REFERENCES §6 [V], to 4 decimals.
        for (n, want) in [
            (1, 1.5708),
            (2, 1.1107),
            (3, 1.0472),
            (4, 1.0262),
            (5, 1.0166),
            (6, 1.0115),
        ] {
            assert!(
                (butterworth_enbw_ratio(n) - want).abs() <= 0.00005,
                "n = {n}"
            );
        }
        assert_eq!(butterworth_enbw_ratio(0), 1.0);
        // ∫₀^∞ dx/(1+x^2n) numerically: [a, b] by quadrature plus the ends in closed form to
        // first order, ∫₀^a ≈ a and ∫_b^∞ ≈ b^(1−2n)/(2n−1); both ends' neglected terms are
        // below 1e-18 here.
        let (a, b) = (1e-9, 1e9);
        for n in 1..=8u32 {
            let e = 2 * n as i32;
            let body = integrate(&|x| 1.0 / (1.0 + x.powi(e)), a, b);
            let ends = a + b.powi(1 - e) / f64::from(e - 1);
            let closed = butterworth_enbw_ratio(n);
            assert!(rel(body + ends, closed) < 1e-10, "n = {n}: {}", body + ends);
        }
    }

    #[test]
    fn band_gain_of_butterworth_band_integrates_to_the_enbw() {
        // With the low edge at 1e-12 Hz and fs/2 = 1e12 Hz the taper and the missing tail each
        // change the area by < 1e-11 of high = 1 Hz (order 1 tail ≈ 1/(fs/2)).
        for order in 1..=6 {
            let band = Band {
                low_hz: 1e-12,
                high_hz: 1.0,
                order,
                low_order: 0,
            };
            let (lo, hi) = band_support(&band, 2e12);
            let area = integrate_pieces(&|f| band_gain(&band, 2e12, f), &[lo, 1e-12, hi]);
            assert!(
                rel(area, butterworth_enbw_ratio(order)) < 1e-10,
                "order {order}"
            );
        }
    }

    #[test]
    fn integrate_is_accurate_for_power_laws_over_many_decades() {
        // Exact math: ∫ x^k dx = (b^(k+1) − a^(k+1))/(k+1); ∫ dx/x = ln(b/a).
        let (a, b) = (1e-3, 1e6);
        assert!(rel(integrate(&|x| 1.0 / x, a, b), (b / a).ln()) < 1e-12);
        for k in [-2.5, -1.5, -0.5, 0.0, 1.0, 3.0] {
            let want = (b.powf(k + 1.0) - a.powf(k + 1.0)) / (k + 1.0);
            assert!(
                rel(integrate(&|x| x.powf(k), a, b), want) < 1e-11,
                "k = {k}"
            );
        }
        assert!(rel(integrate(&|x| x, 3.0, 1.0), -4.0) < 1e-14);
        assert_eq!(integrate(&|x| x, 2.0, 2.0), 0.0);
    }

    // Exact math (derived in the comments): areas of the band tapers for a white density.
    // Low taper: ∫_{L/2}^{L} sin²(π/2(log2(f/L)+1)) df = L/4·(1 + 3a²/(a² + π²)), a = ln 2.
    // Top taper over T octaves: H·a·½[(2^T − 1)/a − a(2^T + 1)/(a² + (π/T)²)].
    #[test]
    fn target_variance_of_a_white_band_reaches_both_steps() {
        // Exact math: a white density d² between the steps, low·2^(−1/64) and
        // min(high·2^(1/96), fs/2).
        let d = 5e-9;
        let below = |l: f64| l * (1.0 - 2f64.powf(-1.0 / 64.0));
        // high = fs/2: no step above.
        let p = profile(
            Unit::Volt,
            Band {
                low_hz: 20.0,
                high_hz: 24e3,
                order: 0,
                low_order: 0,
            },
            48e3,
            vec![floor(d, None, 1.0)],
        );
        let want = d * d * ((24e3 - 20.0) + below(20.0));
        assert!(rel(target_variance(&p), want) < 1e-10);
        // high = 20 kHz at 48 kHz: 1/96 octave more above it.
        let mut p2 = p.clone();
        p2.band.high_hz = 20e3;
        let want = d * d * (20e3 * 2f64.powf(1.0 / 96.0) - 20.0 + below(20.0));
        assert!(rel(target_variance(&p2), want) < 1e-10);
        // high just below fs/2: the step is cut at 24 kHz.
        p2.band.high_hz = 23.95e3;
        let want = d * d * (24e3 - 20.0 + below(20.0));
        assert!(rel(target_variance(&p2), want) < 1e-10);
    }
}
