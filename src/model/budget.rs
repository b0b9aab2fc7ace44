//! A noise budget: what each source of a profile contributes in a band, and what they add up
//! to.
//!
//! **What is measured.** A budget measures the design — the sum of the profile's sources,
//! S(f) = Σ Sᵢ(f) in unit²/Hz, amplifier parts with their closed-loop pole included — through
//! the band's filter, not the engine's synthesis tapers or the file's sample rate. A band
//! ([`BandSpec`]) has a brick-wall lower edge at `low_hz` and, at `high_hz`, a brick wall
//! (order 0) or an n-th order Butterworth low-pass whose tail is integrated to infinity:
//! variance = ∫_low^∞ S(f)·w(f) df with w = 1/(1 + (f/high)^(2n)) (w = 1 up to `high` and 0
//! above for n = 0). The profile's own band is `[band.low, band.high]` with `band.order`; a
//! band given on the command line takes the profile's order at its own upper edge (the same
//! measuring filter, moved), and the profile's roll-off at `band.high` is not applied on top,
//! so a band beyond the profile's reports what the design would give there (with a note).
//!
//! **Totals.** Every source's variance is integrated numerically
//! ([`crate::model::density::integrate_pieces`]) and, where a closed form exists, also in closed
//! form (REFERENCES §6): white and 1/f^α floors, resistors and amplifier parts in a brick-wall
//! band; white and 1/f parts through a one-pole closed loop or a first-order band. The band's
//! RMS is the closed form when every source has one, else the numeric integral; both are
//! reported. Uncorrelated sources add in power, so each share is its variance over the total.

use std::io::{self, Write};

use serde::Serialize;

use crate::model::amplifier::StagePart;
use crate::model::burst::BurstModel;
use crate::model::density::{
    BOLTZMANN, butterworth_enbw_ratio, floor_band_variance, integrate_pieces,
    resistance_for_density, source_kinks, source_psd,
};
use crate::profile::{
    DEFAULT_TEMPERATURE_K, InertialTerm, Profile, Source, SourceKind, Unit, format_quantity,
};

/// One budget band: a brick-wall lower edge and a Butterworth (or brick-wall) upper edge.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct BandSpec {
    /// Lower edge in Hz (> 0), a brick wall.
    pub low_hz: f64,
    /// Upper edge in Hz (> `low_hz`): the −3 dB point of the Butterworth, or the brick wall.
    pub high_hz: f64,
    /// Butterworth order at `high_hz`; 0 = brick wall.
    pub order: u32,
}

impl BandSpec {
    /// The profile's own band: `[band.low, band.high]` with `band.order`.
    pub fn of_profile(profile: &Profile) -> BandSpec {
        BandSpec {
            low_hz: profile.band.low_hz,
            high_hz: profile.band.high_hz,
            order: profile.band.order,
        }
    }

    /// Power weight (0..=1, dimensionless) of the band's filter at `f` Hz.
    pub fn weight(&self, f: f64) -> f64 {
        if f.is_nan() || f < self.low_hz {
            return 0.0;
        }
        if self.order == 0 {
            return if f <= self.high_hz { 1.0 } else { 0.0 };
        }
        1.0 / (1.0 + (f / self.high_hz).powi(2 * self.order as i32))
    }

    /// Where the numeric integral stops, in Hz: `high_hz` for a brick wall; for order n the
    /// frequency high·10^(12/(2n−1)), above which a white density's Butterworth tail holds
    /// less than 1e−12 of high·ENBW.
    pub fn upper_limit_hz(&self) -> f64 {
        if self.order == 0 {
            self.high_hz
        } else {
            self.high_hz * 10f64.powf(12.0 / f64::from(2 * self.order - 1))
        }
    }

    /// Noise bandwidth in Hz of the band's filter for a white density, ∫_low^∞ w(f) df:
    /// high − low for a brick wall; high·atan(high/low) for order 1; numeric otherwise
    /// (≈ high·ENBW ratio − low when low ≪ high).
    pub fn noise_bandwidth_hz(&self) -> f64 {
        match self.order {
            0 => self.high_hz - self.low_hz,
            1 => self.high_hz * (self.high_hz / self.low_hz).atan(),
            _ => integrate_pieces(
                &|f| self.weight(f),
                &[self.low_hz, self.high_hz, self.upper_limit_hz()],
            ),
        }
    }
}

/// What a source is, for the notes: the amplifier's own noise, resistor thermal noise, or
/// anything else (floors, tables).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum SourceClass {
    /// An amplifier's voltage noise or a current noise times a resistance.
    Amplifier,
    /// Thermal noise of a resistor (a `[[resistor]]` or a resistor of a stage).
    Resistor,
    /// A floor or a table.
    Other,
    /// A burst (random telegraph) source: its continuous Lorentzian density, AC part only.
    Burst,
}

/// The class of `source`.
pub fn class_of(source: &Source) -> SourceClass {
    match &source.kind {
        SourceKind::Resistor { .. } => SourceClass::Resistor,
        SourceKind::AmplifierPart { part, .. } if part.is_resistor_thermal() => {
            SourceClass::Resistor
        }
        SourceKind::AmplifierPart { .. } => SourceClass::Amplifier,
        _ => SourceClass::Other,
    }
}

/// The white level of `source` in unit²/Hz: its density where 1/f rises and the closed-loop
/// pole do not act (a table's last point).
pub fn white_psd(source: &Source, profile: &Profile) -> f64 {
    match &source.kind {
        SourceKind::Floor { density, .. } | SourceKind::AmplifierPart { density, .. } => {
            density * density
        }
        SourceKind::Resistor { .. } => source_psd(source, profile, 1.0),
        SourceKind::Table { points } => points.last().map_or(0.0, |p| p.1 * p.1),
        SourceKind::Inertial {
            term: InertialTerm::RandomWalk,
            ..
        } => source_psd(source, profile, 1.0),
        SourceKind::Inertial { .. } => 0.0,
    }
}

/// Sum of every source's density in unit²/Hz at `f` Hz, without band shaping.
pub fn total_psd(profile: &Profile, f: f64) -> f64 {
    profile
        .sources
        .iter()
        .map(|s| source_psd(s, profile, f))
        .sum()
}

/// Sorted integration breaks for `sources` over `[lo, hi]` within `band`.
fn breaks_for(sources: &[&Source], band: &BandSpec, lo: f64, hi: f64) -> Vec<f64> {
    let mut b = vec![lo, hi];
    if band.high_hz > lo && band.high_hz < hi {
        b.push(band.high_hz);
    }
    for s in sources {
        b.extend(source_kinks(s).into_iter().filter(|&k| k >= lo && k <= hi));
    }
    b.sort_by(f64::total_cmp);
    b.dedup();
    b
}

/// Numeric variance in unit² of the sum of `sources` through `band` over `[lo, hi]` Hz
/// (clipped to the band's support): the sum of each source's integral, split at that
/// source's own kinks (powers add), so a table of many points costs its own pieces only,
/// not those pieces times every other source.
fn numeric_variance(
    profile: &Profile,
    sources: &[&Source],
    band: &BandSpec,
    lo: f64,
    hi: f64,
) -> f64 {
    let lo = lo.max(band.low_hz);
    let hi = hi.min(band.upper_limit_hz());
    if hi <= lo || hi.is_nan() || lo.is_nan() {
        return 0.0;
    }
    sources
        .iter()
        .map(|s| {
            let breaks = breaks_for(&[s], band, lo, hi);
            integrate_pieces(&|f| band.weight(f) * source_psd(s, profile, f), &breaks)
        })
        .sum()
}

/// Numeric variance in unit² of one source through `band` (∫_low^∞ Sᵢ·w df).
pub fn source_variance_numeric(source: &Source, profile: &Profile, band: &BandSpec) -> f64 {
    numeric_variance(profile, &[source], band, band.low_hz, f64::INFINITY)
}

/// Closed-form variance in unit² of one source through `band`, where one exists
/// (REFERENCES §6): white and 1/f^α shapes in a brick-wall band (α = 1 only with a
/// closed-loop pole), white and 1/f shapes through a first-order band with or without a pole
/// (the pole at least 1 % away from the band edge, so the partial fractions stay accurate).
/// `None` for tables and the other cases.
pub fn source_variance_closed(source: &Source, profile: &Profile, band: &BandSpec) -> Option<f64> {
    let (lo, hi) = (band.low_hz, band.high_hz);
    let (a, corner, slope, pole) = match &source.kind {
        SourceKind::Floor {
            density,
            corner_hz,
            slope,
        } => (density * density, corner_hz.unwrap_or(0.0), *slope, None),
        SourceKind::Resistor { .. } => (white_psd(source, profile), 0.0, 1.0, None),
        SourceKind::AmplifierPart {
            density,
            corner_hz,
            pole_hz,
            ..
        } => (density * density, corner_hz.unwrap_or(0.0), 1.0, *pole_hz),
        SourceKind::Inertial {
            term: InertialTerm::RandomWalk,
            ..
        } => (white_psd(source, profile), 0.0, 1.0, None),
        SourceKind::Table { .. } | SourceKind::Inertial { .. } => return None,
    };
    match (band.order, pole) {
        (0, None) => Some(floor_band_variance(a.sqrt(), corner, slope, lo, hi)),
        _ if corner > 0.0 && slope != 1.0 => None,
        (0, Some(p)) => {
            // ∫ 1/(1+(f/p)²) = p·atan(f/p); ∫ (1/f)/(1+(f/p)²) = ln f − ½ ln(1+(f/p)²).
            let white = p * ((hi - lo) * p / (p * p + hi * lo)).atan();
            let rise = (hi / lo).ln() - 0.5 * ((hi / p).powi(2).ln_1p() - (lo / p).powi(2).ln_1p());
            Some(a * (white + corner * rise))
        }
        (1, None) => {
            // ∫_lo^∞ 1/(1+(f/h)²) = h·atan(h/lo); ∫_lo^∞ (1/f)/(1+(f/h)²) = ½ ln(1+(h/lo)²).
            let white = hi * (hi / lo).atan();
            let rise = 0.5 * (hi / lo).powi(2).ln_1p();
            Some(a * (white + corner * rise))
        }
        (1, Some(p)) if (p - hi).abs() > 0.01 * p.max(hi) => {
            // Partial fractions in x = f²: 1/((1+x/p²)(1+x/h²)) = (u/(1+ux) − v/(1+vx))/(u − v)
            // with u = 1/p², v = 1/h².
            let (u, v) = (1.0 / (p * p), 1.0 / (hi * hi));
            let white = ((p / lo).atan() / p - (hi / lo).atan() / hi) / (u - v);
            let rise =
                0.5 * (u * (p / lo).powi(2).ln_1p() - v * (hi / lo).powi(2).ln_1p()) / (u - v);
            Some(a * (white + corner * rise))
        }
        _ => None,
    }
}

/// One source's part of a band.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SourceShare {
    /// The source's name.
    pub name: String,
    /// Amplifier, resistor or other.
    pub class: SourceClass,
    /// RMS in the profile unit (closed form where one exists, else numeric).
    pub rms: f64,
    /// Share of the band's total power, 0..=1.
    pub share: f64,
    /// Numeric RMS in the profile unit.
    pub rms_numeric: f64,
    /// Closed-form RMS in the profile unit, where one exists.
    pub rms_closed_form: Option<f64>,
}

/// RMS over one decade (or part of one) of a band.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DecadeRms {
    /// Lower edge in Hz.
    pub low_hz: f64,
    /// Upper edge in Hz; `None` for the Butterworth tail above the band's `high_hz`.
    pub high_hz: Option<f64>,
    /// RMS in the profile unit of the total density through the band's filter in this span.
    pub rms: f64,
}

/// The budget of one band.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BandBudget {
    /// Lower edge in Hz.
    pub low_hz: f64,
    /// Upper edge in Hz.
    pub high_hz: f64,
    /// Butterworth order at `high_hz` (0 = brick wall).
    pub order: u32,
    /// ENBW of the band's low-pass relative to `high_hz`: (π/2n)/sin(π/2n), 1 for a brick wall.
    pub enbw_ratio: f64,
    /// ∫_low^∞ w(f) df in Hz: the bandwidth a white density is integrated over.
    pub noise_bandwidth_hz: f64,
    /// The band RMS in the profile unit: the target density (every source and every burst's
    /// continuous density) through the band's declared edges, integrated over
    /// [`low_hz`](Self::low_hz), [`high_hz`](Self::high_hz) only ([`band_rms`]). The figure
    /// tones' SNR is quoted against, and the one `generate` and `analyze` print.
    pub band_rms: f64,
    /// The analog total RMS in the profile unit: through the band's filter from `low_hz` to
    /// infinity, its roll-off tail included (closed form when every source has one, else
    /// numeric).
    pub rms: f64,
    /// Total RMS by numeric integration of the summed density.
    pub rms_numeric: f64,
    /// Total RMS in closed form, when every source has one.
    pub rms_closed_form: Option<f64>,
    /// Peak-to-peak as 6σ of the analog total [`rms`](Self::rms) (±3σ, exceeded by 0.27 %
    /// of Gaussian samples), profile unit.
    pub p2p_6sigma: f64,
    /// Peak-to-peak as 6.6σ of the analog total (±3.3σ, ≈ 0.1 %), profile unit.
    pub p2p_6_6sigma: f64,
    /// Each source's RMS and share, in profile order.
    pub sources: Vec<SourceShare>,
    /// RMS per decade from `low_hz` (edges at powers of ten), with the roll-off tail last.
    pub per_decade: Vec<DecadeRms>,
    /// Total RMS in the profile unit counting only frequencies up to the profile's fs/2: what
    /// a file at the profile's sample rate can carry of this band (numeric).
    pub rms_to_nyquist: f64,
    /// Total resistor thermal noise RMS in the band, profile unit.
    pub resistor_rms: f64,
    /// Total RMS of the amplifiers' own voltage and current noise, profile unit.
    pub amplifier_rms: f64,
    /// Findings in words: a source holding ≥ 90 % of the power, resistors noisier than the
    /// amplifier, a band beyond the profile's, a band reaching past fs/2.
    pub notes: Vec<String>,
    /// The profile's tones against this band's noise, in profile order.
    pub tones: Vec<ToneBudget>,
    /// The integrated noise: RMS in the profile unit from `low_hz` up to each frequency,
    /// 20 points per decade up to `high_hz` (the last is [`band_rms`](Self::band_rms)).
    pub integrated: Integrated,
}

/// Integrated noise: the RMS from a band's low edge up to each frequency (common practice
/// for reading how much of a band's RMS lies below a frequency).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Integrated {
    /// Upper ends of the integral in Hz, increasing.
    pub frequency_hz: Vec<f64>,
    /// RMS in the profile unit from the band's low edge up to each frequency.
    pub rms: Vec<f64>,
}

/// Points per decade of an [`Integrated`] curve.
pub const INTEGRATED_PER_DECADE: usize = 20;

/// One tone of the profile against a band's noise.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ToneBudget {
    /// The tone's name.
    pub name: String,
    /// Frequency in Hz.
    pub frequency_hz: f64,
    /// Peak amplitude A in the profile unit.
    pub peak: f64,
    /// RMS amplitude A/√2 in the profile unit.
    pub rms: f64,
    /// True when the tone's frequency lies inside the band.
    pub in_band: bool,
    /// SNR in dB: A²/2 over the band's noise power (`rms`²).
    pub snr_db: f64,
    /// ENOB in bits, (SNR − 1.76)/6.02 (IEEE Std 1241, SINAD = SNR: no distortion modelled).
    pub enob_bits: f64,
}

/// Each source's density at one frequency.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DensityRow {
    /// Frequency in Hz.
    pub frequency_hz: f64,
    /// Density of each source in unit/√Hz, in profile order.
    pub sources: Vec<f64>,
    /// √(Σ Sᵢ) in unit/√Hz.
    pub total: f64,
}

/// A whole budget: the bands, and the profile's densities.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Budget {
    /// The profile's display name, if any.
    pub name: Option<String>,
    /// The profile's unit symbol (`"V"`, `"A"`, `"g"`, `"°/s"` …): every RMS is in this unit,
    /// every density in this unit per √Hz.
    pub unit: &'static str,
    /// The bands, in the order asked.
    pub bands: Vec<BandBudget>,
    /// Source names, in profile order.
    pub source_names: Vec<String>,
    /// Density of every source and the total at each decade (10^k Hz) the bands span; the
    /// band edges when no decade falls inside.
    pub densities: Vec<DensityRow>,
    /// The white floor in unit/√Hz: √(Σ white levels), above the 1/f corners and below the
    /// band edge and any closed-loop pole.
    pub floor_density: f64,
    /// The resistance in Ω whose thermal noise at [`floor_temperature_k`](Self::floor_temperature_k)
    /// equals the white floor: e²/(4kT) in a volt profile, 4kT/i² in an ampere profile; NaN
    /// (JSON null) in a sensor's unit.
    pub floor_resistance_ohm: f64,
    /// The temperature in K of that resistance: the profile's resistors' when they share one,
    /// else 25 °C.
    pub floor_temperature_k: f64,
    /// The file RMS of the noise in the profile unit: what a file generated from the profile
    /// holds (its designed density up to fs/2, bursts included, their mean excluded). Made
    /// from the design, so [`budget`] leaves it `None`; [`crate::run::budget::budget_of`]
    /// fills it.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub file_noise_rms: Option<f64>,
    /// The Allan deviation the profile predicts at decades of τ (a sensor's unit or
    /// `[[inertial]]` terms only; `None` otherwise): JSON `allan`.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub allan: Option<AllanPrediction>,
}

/// The Allan deviation a profile predicts from its density, before any data exists
/// ([`crate::model::allan::profile_adev`], for samples at the profile's rate).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct AllanPrediction {
    /// Averaging times in s (decades).
    pub tau_s: Vec<f64>,
    /// The Allan deviation at each, in the unit.
    pub adev: Vec<f64>,
}

impl AllanPrediction {
    /// The prediction for `profile` when it is a sensor's (a unit other than V or A, or
    /// `[[inertial]]` terms); `None` otherwise.
    pub fn of(profile: &Profile) -> Option<AllanPrediction> {
        let inertial = profile
            .sources
            .iter()
            .any(|s| matches!(s.kind, SourceKind::Inertial { .. }));
        if profile.unit.is_electrical() && !inertial {
            return None;
        }
        let tau_s = crate::model::allan::decade_taus(profile);
        let tau0 = 1.0 / profile.sample_rate_hz;
        let adev = crate::model::allan::profile_adev(profile, &tau_s, Some(tau0));
        Some(AllanPrediction { tau_s, adev })
    }
}

/// Share of the band's power at or above which a single source gets a note.
pub const DOMINANT_SHARE: f64 = 0.9;

/// The budget of `profile` in each of `bands` (the profile's own band when `bands` is empty).
pub fn budget(profile: &Profile, bands: &[BandSpec]) -> Budget {
    let own = [BandSpec::of_profile(profile)];
    let bands = if bands.is_empty() { &own[..] } else { bands };
    let unit = profile.unit.symbol();
    let band_budgets: Vec<BandBudget> = bands.iter().map(|b| band_budget(profile, b)).collect();
    let lo = bands.iter().map(|b| b.low_hz).fold(f64::INFINITY, f64::min);
    let hi = bands.iter().map(|b| b.high_hz).fold(0.0, f64::max);
    let mut freqs: Vec<f64> = decade_points(lo, hi);
    if freqs.is_empty() {
        freqs = vec![lo, hi];
    }
    let bursts = burst_models(profile);
    let densities = freqs
        .into_iter()
        .map(|f| {
            let mut sources: Vec<f64> = profile
                .sources
                .iter()
                .map(|s| source_psd(s, profile, f).sqrt())
                .collect();
            sources.extend(bursts.iter().map(|m| m.continuous_density(f).sqrt()));
            DensityRow {
                frequency_hz: f,
                total: total_with_bursts(profile, &bursts, f).sqrt(),
                sources,
            }
        })
        .collect();
    let white: f64 = profile.sources.iter().map(|s| white_psd(s, profile)).sum();
    let floor_temperature_k = resistor_temperature_k(profile);
    let four_kt = 4.0 * BOLTZMANN * floor_temperature_k;
    let floor_resistance_ohm = match profile.unit {
        Unit::Volt => resistance_for_density(white.sqrt(), floor_temperature_k),
        Unit::Ampere => four_kt / white,
        // A sensor's floor is no resistor's thermal noise.
        _ => f64::NAN,
    };
    Budget {
        name: profile.name.clone(),
        unit,
        bands: band_budgets,
        source_names: profile
            .sources
            .iter()
            .map(|s| s.name.clone())
            .chain(bursts.iter().map(|m| m.burst().name.clone()))
            .collect(),
        densities,
        floor_density: white.sqrt(),
        floor_resistance_ohm,
        floor_temperature_k,
        file_noise_rms: None,
        allan: AllanPrediction::of(profile),
    }
}

/// The temperature in K of the profile's resistors (`[[resistor]]` sources and an amplifier
/// stage's resistors) when they all share one, else 25 °C.
fn resistor_temperature_k(profile: &Profile) -> f64 {
    let mut temps = profile.sources.iter().filter_map(|s| match &s.kind {
        SourceKind::Resistor { temperature_k, .. } => Some(*temperature_k),
        SourceKind::AmplifierPart {
            part: StagePart::Thermal { temperature_k, .. },
            ..
        } => Some(*temperature_k),
        _ => None,
    });
    match temps.next() {
        Some(t) if temps.all(|u| u == t) => t,
        _ => DEFAULT_TEMPERATURE_K,
    }
}

/// The band RMS of `profile` in `band`, in the profile unit: √∫ over [low, high] of every
/// Gaussian source's density and every burst's continuous density, each weighted by the
/// band's declared edges. One definition for `generate`, `budget` and `analyze`.
pub fn band_rms(profile: &Profile, band: &BandSpec) -> f64 {
    BandInputs::new(profile, band)
        .variance_between(band.low_hz, band.high_hz)
        .sqrt()
}

/// Powers of ten in `[lo, hi]` (with a relative slack of 1e−9 at both ends).
fn decade_points(lo: f64, hi: f64) -> Vec<f64> {
    let first = (lo.log10() - 1e-9).ceil() as i32;
    let last = (hi.log10() + 1e-9).floor() as i32;
    (first..=last).map(|k| 10f64.powi(k)).collect()
}

/// The Gaussian sources' summed density plus the bursts' AC densities, unit²/Hz at `f` Hz.
pub(crate) fn total_with_bursts(profile: &Profile, bursts: &[BurstModel], f: f64) -> f64 {
    total_psd(profile, f) + bursts.iter().map(|m| m.continuous_density(f)).sum::<f64>()
}

/// The burst sources' chain models (continuous densities); bursts that cannot be modelled
/// at the profile's rate were already refused when the profile was read.
pub(crate) fn burst_models(profile: &Profile) -> Vec<BurstModel> {
    profile
        .bursts
        .iter()
        .filter_map(|b| BurstModel::new(b, profile.sample_rate_hz).ok())
        .collect()
}

/// Variance in unit² of a burst's AC part (its continuous sum of Lorentzians, REFERENCES §4)
/// through `band` over `[lo, hi]` Hz, by numeric integration split at its corners.
fn burst_variance(model: &BurstModel, band: &BandSpec, lo: f64, hi: f64) -> f64 {
    let lo = lo.max(band.low_hz);
    let hi = hi.min(band.upper_limit_hz());
    if hi <= lo || hi.is_nan() || lo.is_nan() {
        return 0.0;
    }
    let mut breaks = vec![lo, hi];
    breaks.extend(
        model
            .corners_hz()
            .into_iter()
            .chain([band.high_hz])
            .filter(|&c| c > lo && c < hi),
    );
    breaks.sort_by(f64::total_cmp);
    breaks.dedup();
    integrate_pieces(&|f| band.weight(f) * model.continuous_density(f), &breaks)
}

/// What one band's budget is computed from: the profile, the band, and the sources to sum.
struct BandInputs<'a> {
    profile: &'a Profile,
    band: &'a BandSpec,
    /// Every Gaussian source of the profile, in profile order.
    all: Vec<&'a Source>,
    /// The burst sources' models, in profile order.
    bursts: Vec<BurstModel>,
}

impl<'a> BandInputs<'a> {
    /// The inputs of `band`'s budget of `profile`.
    fn new(profile: &'a Profile, band: &'a BandSpec) -> BandInputs<'a> {
        BandInputs {
            profile,
            band,
            all: profile.sources.iter().collect(),
            bursts: burst_models(profile),
        }
    }

    /// Variance in unit² of the bursts' AC parts through the band over `[lo, hi]` Hz.
    fn bursts_between(&self, lo: f64, hi: f64) -> f64 {
        self.bursts
            .iter()
            .map(|m| burst_variance(m, self.band, lo, hi))
            .sum()
    }

    /// Variance in unit² of every Gaussian source and every burst through the band over
    /// `[lo, hi]` Hz, by numeric integration.
    fn variance_between(&self, lo: f64, hi: f64) -> f64 {
        numeric_variance(self.profile, &self.all, self.band, lo, hi) + self.bursts_between(lo, hi)
    }
}

/// A band's variances in unit²: the total and each source's.
struct BandVariances {
    /// Each Gaussian source's (numeric, closed-form) variance, in profile order.
    per_source: Vec<(f64, Option<f64>)>,
    /// Each burst's variance (numeric), in profile order.
    per_burst: Vec<f64>,
    /// Numeric variance of the summed density and the bursts.
    total_numeric: f64,
    /// Closed-form total, when every source has one and there is no burst.
    total_closed: Option<f64>,
    /// The closed-form total where there is one, else the numeric one.
    total: f64,
}

/// The variances of every source of `inputs` through its band, and their total.
fn band_variances(inputs: &BandInputs<'_>) -> BandVariances {
    let (profile, band) = (inputs.profile, inputs.band);
    let per_burst: Vec<f64> = inputs
        .bursts
        .iter()
        .map(|m| burst_variance(m, band, band.low_hz, f64::INFINITY))
        .collect();
    let total_numeric = numeric_variance(profile, &inputs.all, band, band.low_hz, f64::INFINITY)
        + per_burst.iter().sum::<f64>();
    let per_source: Vec<(f64, Option<f64>)> = profile
        .sources
        .iter()
        .map(|s| {
            (
                source_variance_numeric(s, profile, band),
                source_variance_closed(s, profile, band),
            )
        })
        .collect();
    // Bursts have no closed form through the band's filter here: with any burst the total
    // is numeric only.
    let total_closed: Option<f64> = if inputs.bursts.is_empty() {
        per_source.iter().map(|p| p.1).sum()
    } else {
        None
    };
    BandVariances {
        total: total_closed.unwrap_or(total_numeric),
        per_source,
        per_burst,
        total_numeric,
        total_closed,
    }
}

/// Each source's and then each burst's RMS and share of the band's total power.
fn source_shares(inputs: &BandInputs<'_>, v: &BandVariances) -> Vec<SourceShare> {
    let total = v.total;
    let share = |var: f64| if total > 0.0 { var / total } else { 0.0 };
    let mut sources: Vec<SourceShare> = inputs
        .profile
        .sources
        .iter()
        .zip(&v.per_source)
        .map(|(s, &(num, closed))| {
            let var = closed.unwrap_or(num);
            SourceShare {
                name: s.name.clone(),
                class: class_of(s),
                rms: var.sqrt(),
                share: share(var),
                rms_numeric: num.sqrt(),
                rms_closed_form: closed.map(f64::sqrt),
            }
        })
        .collect();
    sources.extend(
        inputs
            .bursts
            .iter()
            .zip(&v.per_burst)
            .map(|(m, &var)| SourceShare {
                name: m.burst().name.clone(),
                class: SourceClass::Burst,
                rms: var.sqrt(),
                share: share(var),
                rms_numeric: var.sqrt(),
                rms_closed_form: None,
            }),
    );
    sources
}

/// Summed variance in unit² of the `sources` of class `class`.
fn class_variance(sources: &[SourceShare], class: SourceClass) -> f64 {
    sources
        .iter()
        .filter(|s| s.class == class)
        .map(|s| s.rms * s.rms)
        .sum()
}

/// RMS per decade of the band, edges at powers of ten inside it, then the roll-off tail
/// above `high_hz` when the band has a Butterworth edge.
fn decade_rms(inputs: &BandInputs<'_>) -> Vec<DecadeRms> {
    let band = inputs.band;
    let mut edges = vec![band.low_hz];
    edges.extend(
        decade_points(band.low_hz, band.high_hz)
            .into_iter()
            .filter(|&d| d > band.low_hz * (1.0 + 1e-9) && d < band.high_hz * (1.0 - 1e-9)),
    );
    edges.push(band.high_hz);
    let mut per_decade: Vec<DecadeRms> = edges
        .windows(2)
        .map(|w| DecadeRms {
            low_hz: w[0],
            high_hz: Some(w[1]),
            rms: inputs.variance_between(w[0], w[1]).sqrt(),
        })
        .collect();
    if band.order > 0 {
        per_decade.push(DecadeRms {
            low_hz: band.high_hz,
            high_hz: None,
            rms: inputs.variance_between(band.high_hz, f64::INFINITY).sqrt(),
        });
    }
    per_decade
}

/// Notes on who holds the power: a source with at least [`DOMINANT_SHARE`] of it, and
/// resistors noisier than the amplifier (`resistor_var`, `amplifier_var` in unit²).
fn share_notes(
    sources: &[SourceShare],
    resistor_var: f64,
    amplifier_var: f64,
    unit: &str,
) -> Vec<String> {
    let q = |x: f64| format_quantity(x, unit);
    let mut notes = Vec::new();
    // With one source there are no others to compare it with.
    if let Some(top) = sources
        .iter()
        .filter(|s| sources.len() > 1 && s.share >= DOMINANT_SHARE)
        .max_by(|a, b| a.share.total_cmp(&b.share))
    {
        notes.push(format!(
            "{} holds {:.1} % of the power: the others barely matter here",
            top.name,
            100.0 * top.share
        ));
    }
    if amplifier_var > 0.0 && resistor_var > amplifier_var {
        notes.push(format!(
            "resistor thermal noise ({} RMS) exceeds the amplifier's own voltage and current \
             noise ({} RMS): lower the resistances before buying a quieter amplifier",
            q(resistor_var.sqrt()),
            q(amplifier_var.sqrt())
        ));
    }
    notes
}

/// Notes on what the figures leave out: a band beyond the profile's, the bursts' DC means,
/// and the part of the band above fs/2 (`to_nyquist` and `total` variances in unit²).
fn reach_notes(inputs: &BandInputs<'_>) -> Vec<String> {
    let (profile, band) = (inputs.profile, inputs.band);
    let q = |x: f64| format_quantity(x, profile.unit.symbol());
    let hz = |x: f64| format_quantity(x, "Hz");
    let mut notes = Vec::new();
    let pb = &profile.band;
    if band.low_hz < pb.low_hz * (1.0 - 1e-12) || band.high_hz > pb.high_hz * (1.0 + 1e-12) {
        notes.push(format!(
            "this band reaches beyond the profile's band ({} .. {}): generated noise does not \
             carry the part outside it",
            hz(pb.low_hz),
            hz(pb.high_hz)
        ));
    }
    for m in &inputs.bursts {
        notes.push(format!(
            "{} is DC-coupled: its mean of {} is not in these RMS figures, which count only \
             what the band passes of its steps",
            m.burst().name,
            q(m.mean())
        ));
    }
    notes
}

/// The profile's tones against the band's noise: its band RMS squared, `total` unit².
fn tone_budgets(profile: &Profile, band: &BandSpec, total: f64) -> Vec<ToneBudget> {
    profile
        .tones
        .iter()
        .map(|t| {
            let snr_db = crate::model::tone::snr_db(t.power(), total, 0.0);
            ToneBudget {
                name: t.name.clone(),
                frequency_hz: t.frequency_hz,
                peak: t.peak,
                rms: t.rms(),
                in_band: t.frequency_hz >= band.low_hz && t.frequency_hz <= band.high_hz,
                snr_db,
                enob_bits: crate::model::tone::enob(snr_db),
            }
        })
        .collect()
}

/// The budget of `profile` in one band: see [`BandBudget`].
fn band_budget(profile: &Profile, band: &BandSpec) -> BandBudget {
    let inputs = BandInputs::new(profile, band);
    let variances = band_variances(&inputs);
    let total = variances.total;
    let sources = source_shares(&inputs, &variances);
    let resistor_var = class_variance(&sources, SourceClass::Resistor);
    let amplifier_var = class_variance(&sources, SourceClass::Amplifier);
    let per_decade = decade_rms(&inputs);
    let to_nyquist = inputs.variance_between(band.low_hz, profile.sample_rate_hz / 2.0);
    let band_variance = inputs.variance_between(band.low_hz, band.high_hz);
    let mut notes = share_notes(&sources, resistor_var, amplifier_var, profile.unit.symbol());
    notes.extend(reach_notes(&inputs));
    let rms = total.sqrt();
    BandBudget {
        band_rms: band_variance.sqrt(),
        low_hz: band.low_hz,
        high_hz: band.high_hz,
        order: band.order,
        enbw_ratio: butterworth_enbw_ratio(band.order),
        noise_bandwidth_hz: band.noise_bandwidth_hz(),
        rms,
        rms_numeric: variances.total_numeric.sqrt(),
        rms_closed_form: variances.total_closed.map(f64::sqrt),
        p2p_6sigma: 6.0 * rms,
        p2p_6_6sigma: 6.6 * rms,
        rms_to_nyquist: to_nyquist.sqrt(),
        sources,
        per_decade,
        resistor_rms: resistor_var.sqrt(),
        amplifier_rms: amplifier_var.sqrt(),
        notes,
        tones: tone_budgets(profile, band, band_variance),
        integrated: integrated(&inputs),
    }
}

/// The band's integrated noise from its low to its high edge, [`INTEGRATED_PER_DECADE`]
/// points per decade, each piece integrated once and summed (powers add).
fn integrated(inputs: &BandInputs<'_>) -> Integrated {
    let band = inputs.band;
    let frequency_hz = log_spaced(band.low_hz, band.high_hz, INTEGRATED_PER_DECADE);
    let mut variance = 0.0;
    let mut from = band.low_hz;
    let rms = frequency_hz
        .iter()
        .map(|&f| {
            variance += inputs.variance_between(from, f);
            from = f;
            variance.sqrt()
        })
        .collect();
    Integrated { frequency_hz, rms }
}

/// `per_decade` frequencies per decade from `lo` to `hi` Hz (both included, at least two),
/// evenly spaced in log f.
pub fn log_spaced(lo: f64, hi: f64, per_decade: usize) -> Vec<f64> {
    let n = (((hi / lo).log10() * per_decade as f64).ceil() as usize).max(1);
    (0..=n)
        .map(|i| match i {
            0 => lo,
            i if i == n => hi,
            i => lo * (hi / lo).powf(i as f64 / n as f64),
        })
        .collect()
}

/// Parse a band such as `0.1Hz..10Hz`, `"20 Hz .. 20 kHz"` or `1..100` (bare numbers in Hz),
/// returning (low, high) in Hz. The error says what was expected.
pub fn parse_band(text: &str) -> Result<(f64, f64), String> {
    let Some((a, b)) = text.split_once("..") else {
        return Err(format!(
            "expected a band such as \"0.1Hz..10Hz\" (low..high), got \"{text}\""
        ));
    };
    let f = |s: &str| crate::profile::parse_quantity(s, crate::profile::Dimension::Frequency, "V");
    let (lo, hi) = (f(a)?, f(b)?);
    if !(lo > 0.0 && hi > lo) {
        return Err(format!(
            "expected 0 < low < high, got {} .. {}",
            format_quantity(lo, "Hz"),
            format_quantity(hi, "Hz")
        ));
    }
    Ok((lo, hi))
}

/// Write the budget as text for a terminal: per band a table of sources (RMS, share), the
/// total (closed form and numeric), peak-to-peak, RMS per decade and notes; then the density
/// of every source at each decade and the white floor's equivalent resistance.
pub fn write_text(budget: &Budget, out: &mut dyn Write) -> io::Result<()> {
    let unit = budget.unit;
    let density_unit = format!("{unit}/\u{221a}Hz");
    let width = budget
        .source_names
        .iter()
        .map(|n| n.chars().count())
        .max()
        .unwrap_or(0)
        .max(12);
    writeln!(
        out,
        "noisewright budget: {} (RMS in {unit}, densities in {density_unit})",
        budget.name.as_deref().unwrap_or("unnamed profile")
    )?;
    for b in &budget.bands {
        writeln!(out)?;
        write_band_sources(b, unit, width, out)?;
        write_band_details(b, unit, out)?;
    }
    if let Some(f) = budget.file_noise_rms {
        writeln!(
            out,
            "\nfile RMS of the noise {} (what a file generated from the profile holds, up to \
             fs/2)",
            format_quantity(f, unit)
        )?;
    }
    if let Some(a) = &budget.allan {
        writeln!(
            out,
            "\nAllan deviation predicted from the density (samples at the profile's rate):"
        )?;
        for (tau, adev) in a.tau_s.iter().zip(&a.adev) {
            writeln!(
                out,
                "  tau {:>12}  {}",
                format_quantity(*tau, "s"),
                format_quantity(*adev, unit)
            )?;
        }
    }
    writeln!(out)?;
    write_density_table(budget, width, out)
}

/// One band's heading line (edges, filter, noise bandwidth), then its sources' RMS and share
/// in a column `width` characters wide, the total and the peak-to-peak, in `unit`.
fn write_band_sources(
    b: &BandBudget,
    unit: &str,
    width: usize,
    out: &mut dyn Write,
) -> io::Result<()> {
    let q = |x: f64| format_quantity(x, unit);
    let hz = |x: f64| format_quantity(x, "Hz");
    let filter = if b.order == 0 {
        "brick wall".to_string()
    } else {
        format!(
            "Butterworth order {} at {}, ENBW {:.4} \u{d7} {}",
            b.order,
            hz(b.high_hz),
            b.enbw_ratio,
            hz(b.high_hz)
        )
    };
    writeln!(
        out,
        "band {} .. {} ({filter}; noise bandwidth {})",
        hz(b.low_hz),
        hz(b.high_hz),
        hz(b.noise_bandwidth_hz)
    )?;
    writeln!(out, "  {:<width$}  {:>12}  {:>7}", "source", "RMS", "share")?;
    for s in &b.sources {
        writeln!(
            out,
            "  {:<width$}  {:>12}  {:>6.2} %",
            s.name,
            q(s.rms),
            100.0 * s.share
        )?;
    }
    let forms = match b.rms_closed_form {
        Some(c) => format!("closed form {}, numeric {}", q(c), q(b.rms_numeric)),
        None => format!("no closed form; numeric {}", q(b.rms_numeric)),
    };
    writeln!(
        out,
        "  {:<width$}  {:>12}  (analog: through the band's filter to infinity; {forms})",
        "total",
        q(b.rms),
    )?;
    writeln!(
        out,
        "  band RMS {} (the target over {} .. {} with its declared edges)",
        q(b.band_rms),
        hz(b.low_hz),
        hz(b.high_hz)
    )?;
    writeln!(
        out,
        "  peak-to-peak {} (6\u{3c3}), {} (6.6\u{3c3}) of the analog total",
        q(b.p2p_6sigma),
        q(b.p2p_6_6sigma)
    )
}

/// One band's RMS per decade, its tones and its notes, in `unit`.
fn write_band_details(b: &BandBudget, unit: &str, out: &mut dyn Write) -> io::Result<()> {
    let q = |x: f64| format_quantity(x, unit);
    let hz = |x: f64| format_quantity(x, "Hz");
    writeln!(out, "  RMS per decade")?;
    for d in &b.per_decade {
        let span = match d.high_hz {
            Some(h) => format!("{} .. {}", hz(d.low_hz), hz(h)),
            None => format!("above {} (roll-off)", hz(d.low_hz)),
        };
        writeln!(out, "    {span:<28}  {:>12}", q(d.rms))?;
    }
    for t in &b.tones {
        writeln!(
            out,
            "  tone {} at {}{}: {} peak ({} RMS), SNR {:.2} dB against the band RMS, \
             ENOB {:.2} bits (IEEE 1241, SINAD = SNR)",
            t.name,
            hz(t.frequency_hz),
            if t.in_band { "" } else { " (outside the band)" },
            q(t.peak),
            q(t.rms),
            t.snr_db,
            t.enob_bits
        )?;
    }
    for n in &b.notes {
        writeln!(out, "  note: {n}")?;
    }
    Ok(())
}

/// The density of every source and the total at each of the budget's frequencies, names in
/// a column `width` characters wide, then the white floor and its equivalent resistance.
fn write_density_table(budget: &Budget, width: usize, out: &mut dyn Write) -> io::Result<()> {
    let unit = budget.unit;
    let density_unit = format!("{unit}/\u{221a}Hz");
    let hz = |x: f64| format_quantity(x, "Hz");
    write!(
        out,
        "{:<w$}",
        format!("density ({density_unit})"),
        w = width + 2
    )?;
    for r in &budget.densities {
        write!(out, "  {:>16}", hz(r.frequency_hz))?;
    }
    writeln!(out)?;
    let row = |out: &mut dyn Write, name: &str, values: &mut dyn Iterator<Item = f64>| {
        write!(out, "  {name:<width$}")?;
        for v in values {
            write!(out, "  {:>16}", format_quantity(v, &density_unit))?;
        }
        writeln!(out)
    };
    for (i, name) in budget.source_names.iter().enumerate() {
        row(
            out,
            name,
            &mut budget.densities.iter().map(|r| r.sources[i]),
        )?;
    }
    row(out, "total", &mut budget.densities.iter().map(|r| r.total))?;
    let law = if unit == "A" {
        "thermal current noise \u{221a}(4kT/R)"
    } else {
        "thermal noise \u{221a}(4kTR)"
    };
    if budget.floor_resistance_ohm.is_nan() {
        writeln!(
            out,
            "white floor {}",
            format_quantity(budget.floor_density, &density_unit)
        )?;
        return Ok(());
    }
    writeln!(
        out,
        "white floor {}: the {law} of {} at {}",
        format_quantity(budget.floor_density, &density_unit),
        format_quantity(budget.floor_resistance_ohm, "\u{3a9}"),
        format_quantity(budget.floor_temperature_k - 273.15, "\u{b0}C")
    )?;
    Ok(())
}

/// The budget as one JSON object: `{ "name", "unit", "bands": [ { "low_hz", "high_hz",
/// "order", "enbw_ratio", "noise_bandwidth_hz", "rms", "rms_numeric", "rms_closed_form",
/// "p2p_6sigma", "p2p_6_6sigma", "rms_to_nyquist", "sources": [ { "name", "class", "rms", "share",
/// "rms_numeric", "rms_closed_form" } ], "per_decade": [ { "low_hz", "high_hz", "rms" } ],
/// "resistor_rms", "amplifier_rms", "notes", "tones": [ { "name", "frequency_hz", "peak",
/// "rms", "in_band", "snr_db", "enob_bits" } ], "integrated": { "frequency_hz", "rms" } } ],
/// "source_names", "densities": [ { "frequency_hz", "sources", "total" } ], "floor_density",
/// "floor_resistance_ohm", "floor_temperature_k", "allan": { "tau_s", "adev" } (sensor profiles
/// only) }`. RMS values
/// are in `unit`, densities in `unit`/√Hz, frequencies in Hz, shares 0..1.
pub fn to_json(budget: &Budget) -> serde_json::Value {
    serde_json::to_value(budget).expect("a budget holds only numbers and strings")
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::profile::parse_profile;
    use std::f64::consts::PI;

    fn profile(body: &str) -> Profile {
        parse_profile(
            &format!(
                "sample_rate = \"48 kHz\"\n[band]\nlow = \"10 Hz\"\nhigh = \"20 kHz\"\n{body}"
            ),
            "t.toml",
        )
        .unwrap()
    }

    const WORKED: &str = "[[amplifier]]\nname = \"s\"\ntopology = \"non-inverting\"\n\
        voltage_density = \"5 nV/rtHz\"\ncurrent_density = \"1 pA/rtHz\"\n\
        source_resistance = \"1 kOhm\"\nfeedback_resistance = \"9 kOhm\"\n\
        gain_resistance = \"1 kOhm\"\ntemperature = \"25 C\"\n";

    fn rel(a: f64, b: f64) -> f64 {
        ((a - b) / b).abs()
    }

    // REFERENCES §7 [V] worked stage (W. Kester, ADI MT-049, 2008, from memory): every part
    // and the total at the output, and 7.622 nV/√Hz referred to the input, as the budget's
    // density table and white floor show them (4 significant figures).
    #[test]
    fn worked_stage_through_the_budget() {
        let p = profile(WORKED);
        let b = budget(&p, &[]);
        let row = &b.densities[0];
        assert_eq!(row.frequency_hz, 10.0);
        let want = [50.00, 10.00, 40.58, 9.00, 12.17, 36.52];
        for (i, nv) in want.iter().enumerate() {
            assert!(
                (row.sources[i] * 1e9 - nv).abs() <= 0.005,
                "{}: {}",
                b.source_names[i],
                row.sources[i]
            );
        }
        assert!((row.total * 1e9 - 76.22).abs() <= 0.005);
        assert!((b.floor_density * 1e9 - 76.22).abs() <= 0.005);
        let rti = budget(&profile(&format!("{WORKED}refer = \"input\"\n")), &[]);
        assert!((rti.densities[0].total * 1e9 - 7.622).abs() <= 0.0005);
        // Resistor thermal power 40.58² + 12.17² + 36.52² exceeds the amplifier's
        // 50² + 10² + 9²: the note says so (REFERENCES §7 numbers, exact arithmetic).
        let band = &b.bands[0];
        assert!(
            band.notes
                .iter()
                .any(|n| n.contains("exceeds the amplifier"))
        );
        let r2 = 40.58f64.powi(2) + 12.17f64.powi(2) + 36.52f64.powi(2);
        let a2 = 50f64.powi(2) + 10f64.powi(2) + 9f64.powi(2);
        assert!(rel(band.resistor_rms / band.amplifier_rms, (r2 / a2).sqrt()) < 1e-3);
        // Negative control: with no source resistance the amplifier dominates, no note.
        let quiet = budget(
            &profile(&WORKED.replace("source_resistance = \"1 kOhm\"\n", "")),
            &[],
        );
        assert!(!quiet.bands[0].notes.iter().any(|n| n.contains("exceeds")));
    }

    // REFERENCES §5 [V] (Johnson 1928, Nyquist 1928; k from the SI Brochure 2019): 1 kΩ at
    // 25 °C is 4.0578 nV/√Hz, and 60.73 Ω gives 1 nV/√Hz.
    #[test]
    fn johnson_nyquist_values_through_the_budget() {
        let b = budget(&profile("[[resistor]]\nresistance = \"1 kOhm\"\n"), &[]);
        assert!((b.densities[0].sources[0] * 1e9 - 4.0578).abs() <= 0.00005);
        assert!((b.floor_density * 1e9 - 4.0578).abs() <= 0.00005);
        assert!((b.floor_resistance_ohm - 1e3).abs() < 1e-9);
        let f = budget(&profile("[[floor]]\ndensity = \"1 nV/rtHz\"\n"), &[]);
        assert!((f.floor_resistance_ohm - 60.73).abs() <= 0.005);
        // In an ampere profile the same resistor is √(4kT/R) = 4.058 pA/√Hz (§5 table).
        let a = parse_profile(
            "unit = \"A\"\nsample_rate = 100\n[band]\nlow = 1\nhigh = 10\n\
             [[resistor]]\nresistance = \"1 kOhm\"\n",
            "a",
        )
        .unwrap();
        let ab = budget(&a, &[]);
        assert!((ab.floor_density * 1e12 - 4.058).abs() <= 0.0005);
        assert!(rel(ab.floor_resistance_ohm, 1e3) < 1e-12);
    }

    // Common practice (REFERENCES §8): uncorrelated sources add in power, √(3² + 5²) mV =
    // 5.83 mV; each share is its power over the total (9/34, 25/34).
    #[test]
    fn root_sum_square_of_3_and_5_mv_is_5_83_mv() {
        // 30 µV/√Hz and 50 µV/√Hz over a 10 kHz brick-wall band: 3 mV and 5 mV RMS.
        let p =
            profile("[[floor]]\ndensity = \"30 uV/rtHz\"\n[[floor]]\ndensity = \"50 uV/rtHz\"\n");
        let band = BandSpec {
            low_hz: 1.0,
            high_hz: 10_001.0,
            order: 0,
        };
        let b = &budget(&p, &[band]).bands[0];
        assert!(rel(b.sources[0].rms, 3e-3) < 1e-12);
        assert!(rel(b.sources[1].rms, 5e-3) < 1e-12);
        assert!((b.rms * 1e3 - 5.83).abs() <= 0.005);
        assert!(rel(b.rms, 34e-6f64.sqrt()) < 1e-12);
        assert!(rel(b.sources[0].share, 9.0 / 34.0) < 1e-12);
        assert!(rel(b.sources[1].share, 25.0 / 34.0) < 1e-12);
        // 6σ and 6.6σ conventions (REFERENCES §8).
        assert_eq!(b.p2p_6sigma, 6.0 * b.rms);
        assert_eq!(b.p2p_6_6sigma, 6.6 * b.rms);
    }

    // REFERENCES §6 [V]: 10 nV/√Hz with a 10 Hz corner over 0.1–10 Hz is 74.80 nV RMS
    // (67.86 nV of it 1/f, 31.46 nV white), ×6.6 = 493.7 nV and ×6 = 448.8 nV p-p; closed
    // form e_w²[(f_H − f_L) + f_c ln(f_H/f_L)] (W. Kester, ADI MT-048, from memory).
    #[test]
    fn one_over_f_example_of_section_6_in_closed_form_and_numerically() {
        let p = profile("[[floor]]\ndensity = \"10 nV/rtHz\"\ncorner = \"10 Hz\"\n");
        let band = BandSpec {
            low_hz: 0.1,
            high_hz: 10.0,
            order: 0,
        };
        let b = &budget(&p, &[band]).bands[0];
        let closed = b.rms_closed_form.unwrap();
        assert!((closed * 1e9 - 74.80).abs() <= 0.005);
        assert!((b.p2p_6_6sigma * 1e9 - 493.7).abs() <= 0.05);
        assert!((b.p2p_6sigma * 1e9 - 448.8).abs() <= 0.05);
        assert!(rel(b.rms_numeric, closed) < 1e-9);
        assert!(
            b.notes
                .iter()
                .any(|n| n.contains("beyond the profile's band"))
        );
    }

    // REFERENCES §6: "integrate the tool's own PSD model numerically and assert agreement
    // with these closed forms to 1e-9 relative", for every shape that has one.
    #[test]
    fn closed_forms_agree_with_numeric_integration_to_1e_9() {
        let body = "[[floor]]\ndensity = \"4 nV/rtHz\"\ncorner = \"100 Hz\"\n\
            [[floor]]\ndensity = \"2 nV/rtHz\"\ncorner = \"30 Hz\"\nslope = 1.5\n\
            [[floor]]\ndensity = \"3 nV/rtHz\"\n\
            [[resistor]]\nresistance = \"2 kOhm\"\n\
            [[amplifier]]\ntopology = \"inverting\"\nvoltage_density = \"3 nV/rtHz\"\n\
            voltage_corner = \"20 Hz\"\ncurrent_density = \"2 pA/rtHz\"\n\
            current_corner = \"200 Hz\"\nsource_resistance = 600\nfeedback_resistance = \"20 kOhm\"\n\
            gain_resistance = \"1.4 kOhm\"\nbias_resistance = \"1 kOhm\"\ngbw = \"3 MHz\"\n";
        let p = profile(body);
        let mut checked = 0;
        for (lo, hi) in [(0.1, 10.0), (10.0, 20e3), (1.0, 1e6), (1e3, 1e7)] {
            for order in [0, 1, 2] {
                let band = BandSpec {
                    low_hz: lo,
                    high_hz: hi,
                    order,
                };
                let b = &budget(&p, &[band]).bands[0];
                for s in &b.sources {
                    if let Some(c) = s.rms_closed_form {
                        assert!(
                            rel(s.rms_numeric, c) < 1e-9,
                            "{} in {lo}..{hi} order {order}: {} vs {c}",
                            s.name,
                            s.rms_numeric
                        );
                        checked += 1;
                    }
                }
                let floor_15 = b.sources[1].rms_closed_form;
                assert_eq!(floor_15.is_some(), order == 0, "slope 1.5, order {order}");
                if order == 2 {
                    assert!(b.rms_closed_form.is_none());
                } else {
                    assert_eq!(b.rms_closed_form.is_some(), order == 0);
                }
                // The total as one integral of the summed density equals the sum of the parts.
                let sum: f64 = b.sources.iter().map(|s| s.rms_numeric.powi(2)).sum();
                assert!(rel(b.rms_numeric.powi(2), sum) < 1e-9);
                // Per-decade pieces add up to the total (exact math: the pieces tile the band).
                let pieces: f64 = b.per_decade.iter().map(|d| d.rms * d.rms).sum();
                assert!(
                    rel(pieces, b.rms_numeric.powi(2)) < 1e-9,
                    "{lo}..{hi} {order}"
                );
                let shares: f64 = b.sources.iter().map(|s| s.share).sum();
                assert!((shares - 1.0).abs() < 1e-9);
            }
        }
        // 4 bands × (order 0: 3 floors, the resistor, 7 stage parts; order 1: the same but
        // the 1/f^1.5 floor).
        assert_eq!(checked, 4 * (11 + 10), "closed forms checked");
    }

    // REFERENCES §7: a single-pole closed loop at f_cl = GBW/G_n gives white output noise the
    // ENBW 1.57·f_cl; §6: the 1/f part sees f_cl itself, f_c[ln(f_p/f_L) + ½ ln(1+(f_L/f_p)²)].
    #[test]
    fn gbw_closes_the_band_with_one_pole() {
        let p = profile(
            "[[amplifier]]\ntopology = \"non-inverting\"\nvoltage_density = \"4 nV/rtHz\"\n\
             voltage_corner = \"10 Hz\"\ncurrent_density = 0\nfeedback_resistance = \"9 kOhm\"\n\
             gain_resistance = \"1 kOhm\"\ngbw = \"10 MHz\"\ntemperature = \"0.001 K\"\n",
        );
        let band = BandSpec {
            low_hz: 1.0,
            high_hz: 1e13,
            order: 0,
        };
        let b = &budget(&p, &[band]).bands[0];
        let e = &b.sources[0];
        assert!(e.name.ends_with("voltage noise"));
        let (d, fp, fc, fl) = (40e-9f64, 1e6f64, 10.0f64, 1.0f64);
        // White from f_L: π/2·f_p − f_L to first order; the brick wall at 1e13 Hz cuts a
        // further f_p²/1e13 = 0.1 Hz (relative 6e−8), the next term of atan f_L³/(3f_p²).
        let want = d
            * d
            * (std::f64::consts::FRAC_PI_2 * fp - fl
                + fc * ((fp / fl).ln() + 0.5 * (fl / fp).powi(2).ln_1p()));
        assert!(
            rel(e.rms.powi(2), want) < 1e-7,
            "{} vs {want}",
            e.rms.powi(2)
        );
        assert!(rel(e.rms_numeric, e.rms_closed_form.unwrap()) < 1e-9);
    }

    // REFERENCES §6 [V]: ENBW of an n-th order Butterworth relative to f_−3dB,
    // (π/2n)/sin(π/2n) = 1.5708, 1.1107, 1.0472, 1.0262 for n = 1…4 (to 4 decimals).
    #[allow(clippy::approx_constant)]
    #[test]
    fn butterworth_enbw_constants_and_noise_bandwidth() {
        let p = profile("[[floor]]\ndensity = \"1 nV/rtHz\"\n");
        for (n, want) in [(1, 1.5708), (2, 1.1107), (3, 1.0472), (4, 1.0262)] {
            let band = BandSpec {
                low_hz: 1e-3,
                high_hz: 1e3,
                order: n,
            };
            let b = &budget(&p, &[band]).bands[0];
            assert!((b.enbw_ratio - want).abs() <= 0.00005, "n = {n}");
            // Exact math: ∫_lo^∞ w = high·ratio − ∫_0^lo w, and ∫_0^lo w = lo(1 − O((lo/high)^2n)).
            let bw = b.noise_bandwidth_hz;
            assert!(rel(bw, 1e3 * b.enbw_ratio - 1e-3) < 1e-10, "n = {n}: {bw}");
            // A white density integrates over exactly that bandwidth.
            assert!(rel(b.rms_numeric.powi(2), 1e-18 * bw) < 1e-9, "n = {n}");
        }
    }

    // Exact math: ∫_lo^top d²/(1+(f/h)²) df = d²·h·(atan(top/h) − atan(lo/h)).
    #[test]
    fn the_part_below_nyquist_and_the_band_rms_have_their_closed_forms() {
        // A first-order low-pass on a white density e²: ∫ e²/(1 + (f/h)²) df = e²·h·atan(f/h)
        // (REFERENCES §6).
        let p = profile("[[floor]]\ndensity = \"1 nV/rtHz\"\n");
        let band = BandSpec {
            low_hz: 10.0,
            high_hz: 20e3,
            order: 1,
        };
        let b = &budget(&p, &[band]).bands[0];
        let h = 20e3f64;
        let want = 1e-18 * h * ((24e3 / h).atan() - (10.0 / h).atan());
        assert!(rel(b.rms_to_nyquist.powi(2), want) < 1e-9);
        // The band RMS stops at the band's upper edge: atan(1) − atan(10/h).
        let band_want = 1e-18 * h * (1f64.atan() - (10.0 / h).atan());
        assert!(rel(b.band_rms.powi(2), band_want) < 1e-9);
        // A brick-wall band inside fs/2 loses nothing: all three figures agree.
        let inside = &budget(&p, &[BandSpec { order: 0, ..band }]).bands[0];
        assert!(rel(inside.rms_to_nyquist, inside.rms) < 1e-12);
        assert!(rel(inside.band_rms, inside.rms) < 1e-9);
    }

    #[test]
    fn a_dominant_source_gets_a_note_and_a_near_one_does_not() {
        // Shares 0.9 and 0.1: power 9:1 → densities 3:1.
        let at = |weak: &str| {
            let p = profile(&format!(
                "[[floor]]\nname = \"big\"\ndensity = \"3 nV/rtHz\"\n\
                 [[floor]]\nname = \"small\"\ndensity = \"{weak}\"\n"
            ));
            budget(&p, &[]).bands[0].notes.clone()
        };
        let n = at("0.99 nV/rtHz");
        assert!(n.iter().any(|n| n.starts_with("big holds 90.")), "{n:?}");
        assert!(at("1.01 nV/rtHz").is_empty());
    }

    #[test]
    fn bands_parse_with_units_and_reject_nonsense() {
        assert_eq!(parse_band("0.1Hz..10Hz"), Ok((0.1, 10.0)));
        assert_eq!(parse_band("20 Hz .. 20 kHz"), Ok((20.0, 20e3)));
        assert_eq!(parse_band("1..100"), Ok((1.0, 100.0)));
        assert!(parse_band("10Hz-20Hz").unwrap_err().contains("low..high"));
        assert!(
            parse_band("10Hz..1Hz")
                .unwrap_err()
                .contains("0 < low < high")
        );
        assert!(parse_band("0..1Hz").is_err());
        assert!(
            parse_band("1 kOhm..2 kOhm")
                .unwrap_err()
                .contains("frequency")
        );
    }

    #[test]
    fn decades_are_the_powers_of_ten_inside() {
        assert_eq!(decade_points(0.1, 10.0), vec![0.1, 1.0, 10.0]);
        assert_eq!(decade_points(20.0, 20e3), vec![100.0, 1e3, 1e4]);
        assert!(decade_points(2.0, 5.0).is_empty());
        // A band narrower than a decade shows its edges instead.
        let b = budget(
            &profile("[[floor]]\ndensity = 1e-9\n"),
            &[BandSpec {
                low_hz: 2.0,
                high_hz: 5.0,
                order: 0,
            }],
        );
        let f: Vec<f64> = b.densities.iter().map(|r| r.frequency_hz).collect();
        assert_eq!(f, [2.0, 5.0]);
    }

    #[test]
    fn a_burst_enters_the_budget_by_its_lorentzian() {
        // REFERENCES §4 [V] two-level check: τ_up = 10 ms, τ_dn = 30 ms, Δ = 1 V → variance
        // 0.1875 V², λ = 1/τ_up + 1/τ_dn. Its density 4cλ/(λ² + (2πf)²) integrates in closed
        // form over a brick-wall band: (2c/π)[atan(2πf_H/λ) − atan(2πf_L/λ)] (exact calculus).
        let p = profile(
            "[[floor]]\ndensity = \"1 nV/rtHz\"\n[[burst]]\nname = \"trap\"\n\
             levels = [0.0, 1.0]\ndwell = [\"30 ms\", \"10 ms\"]\n",
        );
        let b = budget(&p, &[]);
        let band = &b.bands[0];
        let trap = band.sources.iter().find(|s| s.name == "trap").unwrap();
        assert_eq!(trap.class, SourceClass::Burst);
        let lam: f64 = 1.0 / 0.01 + 1.0 / 0.03;
        let want = (2.0 * 0.1875 / PI)
            * ((2.0 * PI * 20_000.0 / lam).atan() - (2.0 * PI * 10.0 / lam).atan());
        assert!(
            rel(trap.rms * trap.rms, want) < 1e-9,
            "{} vs {want}",
            trap.rms.powi(2)
        );
        let floor = 1e-18 * (20_000.0 - 10.0);
        assert!(rel(band.rms * band.rms, want + floor) < 1e-9);
        assert!(band.rms_closed_form.is_none());
        assert!(
            band.notes.iter().any(|n| n.contains("DC-coupled")),
            "{:?}",
            band.notes
        );
        assert_eq!(b.source_names.len(), 2);
    }
}
