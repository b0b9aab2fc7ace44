//! The synthesiser a run needs (a loop buffer, one channel, or several), what it is expected
//! to put out, the scale from physical values to digital ones, and the sink's specification.

use std::cell::RefCell;
use std::rc::Rc;
use std::sync::{Arc, Mutex};

use super::Settings;
use super::plan::Plan;
use super::pump::lock;
use super::summary::quantisation_note;
use crate::error::{Error, Result, Setting};
use crate::io::adc::Dither;
use crate::io::sink::{Format, SampleFormat, SinkSpec, wav_plan};
use crate::model::budget::{BandSpec, band_rms};
use crate::model::density;
use crate::profile::{Profile, format_quantity};
use crate::stop::Stop;
use crate::synth::tone;
use crate::synth::{
    ChannelGenerator, Design, Generator, design_profile_until, periodic_buffer_until,
    periodic_variance,
};
use crate::units::rms_digital_from_dbfs;

/// Whatever produces the next samples (unit) into a slice.
pub(super) type Engine = Box<dyn FnMut(&mut [f64])>;

/// How the physical values map to digital ones.
pub(super) struct Scale {
    /// The physical value (unit) of digital 1.0, when the output is scaled.
    pub(super) full_scale: Option<f64>,
    /// The level it was chosen for, dBFS.
    pub(super) level_dbfs: Option<f64>,
}

/// The engine of a run with everything the summary and manifest say about it.
pub(super) struct Built {
    pub(super) engine: Engine,
    /// Expected variance (unit²) and mean (unit) of the output.
    pub(super) expected_variance: f64,
    pub(super) expected_mean: f64,
    /// Expected RMS (unit), AC + DC.
    pub(super) expected_rms: f64,
    /// The band RMS squared (unit²): [`crate::model::budget::band_rms`] of the profile's band.
    pub(super) band_variance: f64,
    /// The file's noise variance (unit², AC): the design (or loop buffer) without tones.
    pub(super) noise_variance: f64,
    /// The one-channel streaming generator (its bursts' models), when that is the engine.
    pub(super) generator: Option<Rc<RefCell<Generator>>>,
    /// The several-channel generator, when that is the engine.
    pub(super) multi: Option<Rc<RefCell<ChannelGenerator>>>,
    /// The per-source parts of the last block (CSV columns per source).
    pub(super) parts: Arc<Mutex<Vec<Vec<f64>>>>,
    /// A design for the tones' figures (only with tones or an offset).
    pub(super) figures: Option<Generator>,
    pub(super) scale: Scale,
    pub(super) spec: SinkSpec,
    /// The container's keys for the manifest.
    pub(super) container_keys: serde_json::Map<String, serde_json::Value>,
}

/// Builds the engine and the scale for `plan`; notes go to `plan.notes`. Refuses what the
/// format cannot hold before any file or folder is made. The design, the loop buffer and the
/// bursts' catch-up poll `stop`.
pub(super) fn build(plan: &mut Plan, s: &Settings, stop: Stop<'_>) -> Result<Built> {
    let profile = &plan.profile;
    let fs = profile.sample_rate_hz;
    let band_variance = band_rms(profile, &BandSpec::of_profile(profile)).powi(2);
    let parts: Arc<Mutex<Vec<Vec<f64>>>> = Arc::default();
    // One design for the run: every channel's engine and the tones' figures share it (a loop
    // buffer is made from the target density and needs it only for the figures).
    let has_figures = !profile.tones.is_empty() || profile.offset != 0.0;
    let design = (!s.loop_buffer || has_figures)
        .then(|| design_profile_until(profile, stop).map(Arc::new))
        .transpose()?;
    let (engine, noise_variance, generator, multi) = engine(plan, s, design.clone(), &parts, stop)?;
    let expected_variance = noise_variance + profile.tones.iter().map(|t| t.power()).sum::<f64>();
    // Bursts are DC-coupled: the expected RMS is AC + DC, √(variance + mean²).
    let expected_mean = match (&generator, &multi) {
        (Some(g), _) => g.borrow().mean(),
        (_, Some(m)) => m.borrow().generator().mean(),
        _ => profile.offset,
    };
    let expected_rms = (expected_variance + expected_mean * expected_mean).sqrt();
    // The tones' figures need the designed noise density (also in loop mode, which has no
    // streaming generator): one design, only when there are tones or an offset.
    let figures = match (has_figures, design) {
        (true, Some(d)) => Some(Generator::from_design_until(profile, d, 0, 0, stop)?),
        _ => None,
    };
    not_all_zero(plan, expected_rms * expected_rms, None)?;
    let scale = scale(plan, s, expected_rms)?;
    not_all_zero(plan, expected_rms * expected_rms, Some(&scale))?;
    let profile = &plan.profile;
    if let Some(note) = floor_note(plan, &scale, fs) {
        plan.notes.push(note);
    }
    if let (Format::Wav, Some(n)) = (plan.format, plan.samples) {
        // Feasibility only (sizes past 2^64 bytes); `validate` checks it again with the
        // INFO comment.
        wav_plan(n, profile.channels as u16, plan.sample_format, None)?;
    }
    let spec = SinkSpec {
        format: plan.format,
        sample_format: plan.sample_format,
        sample_rate_hz: fs,
        full_scale: scale.full_scale,
        frames: plan.samples,
        channels: profile.channels as u16,
        start_frame: plan.start,
        unit: profile.unit,
        adc: plan.adc.clone(),
        name: plan.array_name.clone(),
        provenance: vec![
            format!(
                "profile: {} ({})",
                profile.name.as_deref().unwrap_or("(unnamed profile)"),
                plan.file
            ),
            format!("seed: {}", s.seed),
        ],
        profile_name: profile.name.clone(),
        seed: Some(s.seed),
    };
    spec.validate()?;
    let (container_keys, container_notes) = crate::io::manifest::container_facts(&spec)?;
    plan.notes.extend(container_notes);
    Ok(Built {
        engine,
        expected_variance,
        noise_variance,
        expected_mean,
        expected_rms,
        band_variance,
        generator,
        multi,
        parts,
        figures,
        scale,
        spec,
        container_keys,
    })
}

type Engines = (
    Engine,
    f64,
    Option<Rc<RefCell<Generator>>>,
    Option<Rc<RefCell<ChannelGenerator>>>,
);

/// The engine and the expected variance of its noise (unit², tones not included): a loop buffer, several channels, or one
/// channel (writing its per-source parts into `parts` when CSV columns per source are asked).
fn engine(
    plan: &Plan,
    s: &Settings,
    design: Option<Arc<Design>>,
    parts: &Arc<Mutex<Vec<Vec<f64>>>>,
    stop: Stop<'_>,
) -> Result<Engines> {
    let profile = &plan.profile;
    let fs = profile.sample_rate_hz;
    let target_psd = |f: f64| density::target_psd(profile, f);
    if s.loop_buffer {
        let n = plan.samples.unwrap_or(0) as usize;
        let mut buffer = periodic_buffer_until(&target_psd, fs, n, s.seed, stop)?;
        // Tones (whole cycles, checked by the plan) and the offset, from sample index 0.
        tone::add_deterministic(&profile.tones, profile.offset, fs, 0, &mut buffer);
        let var = periodic_variance(&target_psd, fs, n);
        let mut pos = 0;
        let engine: Engine = Box::new(move |out: &mut [f64]| {
            for x in out {
                *x = buffer[pos % buffer.len()];
                pos += 1;
            }
        });
        return Ok((engine, var, None, None));
    }
    let design = design.expect("a stream's design is made before its engine");
    if profile.channels > 1 {
        let m = Rc::new(RefCell::new(ChannelGenerator::from_design_until(
            profile, design, s.seed, plan.start, stop,
        )?));
        let var = m.borrow().generator().noise_variance();
        let engine_m = m.clone();
        let engine: Engine =
            Box::new(move |out: &mut [f64]| engine_m.borrow_mut().fill_frames(out));
        return Ok((engine, var, None, Some(m)));
    }
    let g = Rc::new(RefCell::new(Generator::from_design_until(
        profile, design, s.seed, plan.start, stop,
    )?));
    let var = g.borrow().noise_variance();
    let engine_g = g.clone();
    let engine: Engine = if plan.per_source {
        let parts = parts.clone();
        lock(&parts).resize(g.borrow().part_count(), Vec::new());
        Box::new(move |out: &mut [f64]| engine_g.borrow_mut().fill_sources(out, &mut lock(&parts)))
    } else {
        Box::new(move |out: &mut [f64]| engine_g.borrow_mut().fill(out))
    };
    Ok((engine, var, Some(g), None))
}

/// The scale: by the ADC's range (none here), a full scale as given, or one that puts the
/// expected RMS at the level (WAV and integer formats default to −20 dBFS).
fn scale(plan: &Plan, s: &Settings, expected_rms: f64) -> Result<Scale> {
    let unscaled = Scale {
        full_scale: None,
        level_dbfs: None,
    };
    let needs_scale = plan.format == Format::Wav || plan.sample_format.is_integer();
    if plan.adc.is_some() {
        // ADC codes are scaled by their range (the plan refuses a full scale or level).
        return Ok(unscaled);
    }
    if let Some(q) = &s.full_scale {
        let v = crate::units::parse_amplitude(
            q,
            plan.profile.unit.symbol(),
            plan.profile.sensitivity_v_per_unit,
        )
        .map_err(|m| Error::setting(Setting::FullScale, m))?;
        if !(v > 0.0 && v.is_finite()) {
            return Err(Error::setting(
                Setting::FullScale,
                format!("expected a positive value such as 10uV, got {q:?}"),
            ));
        }
        return Ok(Scale {
            full_scale: Some(v),
            level_dbfs: None,
        });
    }
    if s.level.is_none() && !needs_scale {
        return Ok(unscaled);
    }
    let level = match &s.level {
        Some(l) => parse_dbfs(l)?,
        None => super::DEFAULT_LEVEL_DBFS,
    };
    Ok(Scale {
        full_scale: Some(expected_rms / rms_digital_from_dbfs(level)),
        level_dbfs: Some(level),
    })
}

/// How many expected RMS a stored value must be able to reach: a Gaussian exceeds 10σ with
/// probability 1.5e−23 per sample (common practice: the normal tail), and a tone's peak is
/// √2 times its RMS, so a run whose 10·RMS stores as 0 stores only zeros.
const REACH: f64 = 10.0;

/// Refuses a run whose every stored value would be 0, before anything is written (exit 2, as
/// a value that cannot be used). Without `scale`: the expected mean square `mean_square`
/// (unit², noise, tones, bursts and offset) below the smallest normal double (IEEE 754
/// binary64, 2.2e−308), where densities have underflowed. With it: [`REACH`] times the
/// expected RMS below half a code step of an integer format (the writers round half away
/// from zero) or below the smallest f32 (2^−149 ≈ 1.4e−45, IEEE 754 binary32) for f32. ADC codes are
/// not judged: their range, not zero, sets what a small signal becomes.
fn not_all_zero(plan: &Plan, mean_square: f64, scale: Option<&Scale>) -> Result<()> {
    let unit = plan.profile.unit.symbol();
    let Some(scale) = scale else {
        if mean_square >= f64::MIN_POSITIVE {
            return Ok(());
        }
        return Err(Error::setting(
            Setting::Profile,
            format!(
                "{}: every sample would be 0: the expected RMS of the output, {} {unit}, is \
                 below 1.5e-154 {unit}, the smallest a double holds the square of (its \
                 densities or levels underflow); give larger values",
                plan.file,
                crate::io::source::short(mean_square.sqrt())
            ),
        ));
    };
    if plan.adc.is_some() {
        return Ok(());
    }
    let reach = REACH * mean_square.sqrt();
    let sf = plan.sample_format;
    let fs = scale.full_scale.unwrap_or(1.0);
    let floor = match sf.lsb(fs) {
        Some(lsb) => (reach < lsb / 2.0).then(|| {
            format!(
                "half a code step of {sf} at a full scale of {}, {}",
                format_quantity(fs, unit),
                format_quantity(lsb / 2.0, unit)
            )
        }),
        None if sf == SampleFormat::F32 && ((reach / fs) as f32) == 0.0 => {
            // The smallest positive f32 (a subnormal), 2^−149.
            let tiny = f64::from(f32::from_bits(1));
            Some(match scale.full_scale {
                Some(_) => format!(
                    "the smallest f32 times the full scale of {}, {}",
                    format_quantity(fs, unit),
                    format_quantity(tiny * fs, unit)
                ),
                None => format!("the smallest f32, {}", format_quantity(tiny, unit)),
            })
        }
        None => None,
    };
    let Some(floor) = floor else {
        return Ok(());
    };
    let (setting, advice) = match (scale.level_dbfs, scale.full_scale) {
        (Some(_), _) => (Setting::Level, "a higher level"),
        (None, Some(_)) => (Setting::FullScale, "a smaller full scale"),
        (None, None) => (Setting::SampleFormat, "f64 or a full scale"),
    };
    Err(Error::setting(
        setting,
        format!(
            "every stored value would be 0: {REACH} times the expected RMS, {}, is below {floor}; \
             use {advice}",
            format_quantity(reach, unit)
        ),
    ))
}

/// The note on the stored codes' quantisation noise density when it comes near the profile's
/// floor: Q/√(6·fs) for integer formats and undithered ADC codes, Q/√(2·fs) with TPDF dither
/// (REFERENCES §9). Bursts alone have no density floor to compare it with.
fn floor_note(plan: &Plan, scale: &Scale, fs: f64) -> Option<String> {
    let profile: &Profile = &plan.profile;
    if profile.sources.is_empty() {
        return None;
    }
    let (what, density, advice) = match (&plan.adc, scale.full_scale) {
        (Some(a), _) => (
            match a.dither() {
                Dither::None => format!("{}-bit ADC's quantisation noise", a.bits()),
                Dither::Tpdf => {
                    format!("{}-bit ADC's added noise (TPDF dither included)", a.bits())
                }
            },
            a.added_noise_psd(fs).sqrt(),
            "more bits or a narrower --range",
        ),
        (None, Some(fsc)) if plan.sample_format.is_integer() => (
            format!("{}-bit quantisation noise", plan.sample_format.bytes() * 8),
            plan.sample_format.lsb(fsc).expect("integer") / (6.0 * fs).sqrt(),
            "more bits or a smaller full scale",
        ),
        _ => return None,
    };
    quantisation_note(profile, &what, density, advice)
}

/// A level such as `-20dBFS` or `-6.5`, at most 0 dBFS.
pub(crate) fn parse_dbfs(text: &str) -> Result<f64> {
    let t = text.trim();
    let number = t
        .strip_suffix("dBFS")
        .or_else(|| t.strip_suffix("dbfs"))
        .unwrap_or(t)
        .trim();
    match number.parse::<f64>() {
        Ok(v) if v.is_finite() && v <= 0.0 => Ok(v),
        Ok(v) if v.is_finite() => Err(Error::setting(
            Setting::Level,
            format!("{v} dBFS is above full scale: expected 0 dBFS or less, e.g. -20dBFS"),
        )),
        _ => Err(Error::setting(
            Setting::Level,
            format!("expected a level such as -20dBFS, got {text:?}"),
        )),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn levels_parse() {
        assert_eq!(parse_dbfs("-20dBFS").unwrap(), -20.0);
        assert_eq!(parse_dbfs("-6.5").unwrap(), -6.5);
        assert!(parse_dbfs("3dBFS").is_err());
        assert!(parse_dbfs("loud").is_err());
    }
}
