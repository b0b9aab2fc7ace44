//! An analysis's settings resolved before any sample is read, in one fixed order: the
//! capture's manifest, the profile, the sample format, the rate, the full scale, the
//! resolution and the tolerance; then the capture's header, its scale, and the profile's
//! design at the capture's rate.

use super::bench::BenchSpec;
use super::read::Capture;
use super::{Analysis, DEFAULT_TOLERANCE_DB, Input, ProfileInput, Settings};
use crate::error::{Error, Result, Setting};
use crate::io::manifest::SideManifest;
use crate::io::sink::{Format, SampleFormat};
use crate::io::source::{Scale, SourceOptions, StreamInfo};
use crate::model::budget::{BandSpec, band_rms};
use crate::profile::{Dimension, Profile, Unit, format_quantity, parse_quantity};
use crate::run::manifest_path;
use crate::stop::Stop;
use crate::synth::{Generator, design_profile_until};

/// Everything known before the passes.
pub(super) struct Setup<'a> {
    /// How messages and the report name the capture.
    pub(super) name: String,
    pub(super) capture: Capture<'a>,
    pub(super) manifest: Option<SideManifest>,
    /// The profile, its sample rate replaced by the capture's.
    pub(super) profile: Option<Profile>,
    pub(super) info: StreamInfo,
    pub(super) scale: Scale,
    /// Remarks so far (the reader's, a replaced rate).
    pub(super) notes: Vec<String>,
    /// The profile's whole design at the capture's rate.
    pub(super) design: Option<Generator>,
    /// The profile's band RMS (unit, [`crate::model::budget::band_rms`]): the figure its
    /// tones' SNR is quoted against and `profile_rms` reports.
    pub(super) band_rms: Option<f64>,
    /// The bin width asked for, Hz.
    pub(super) resolution: Option<f64>,
    pub(super) tolerance_db: f64,
    /// Drift, exclusions and the windowed peak-to-peak.
    pub(super) bench: BenchSpec,
    /// The channel the per-channel steps measure now (0-based).
    pub(super) channel: usize,
    /// The channels analysed, in order (0-based; every channel unless some were picked).
    pub(super) channels: Vec<usize>,
}

/// The settings given as text, parsed.
struct Parsed {
    sample_format: Option<SampleFormat>,
    rate: Option<f64>,
    full_scale: Option<f64>,
    resolution: Option<f64>,
    tolerance_db: f64,
    bench: BenchSpec,
}

impl<'a> Setup<'a> {
    pub(super) fn new(a: &'a Analysis<'_>) -> Result<Setup<'a>> {
        let mut early_notes = Vec::new();
        let (name, manifest, length_bytes) = match &a.input {
            Input::Path(p) => {
                // First: a pipe is refused before anything else reads it.
                let length = Capture::length_of(p)?;
                let name = p.display().to_string();
                let m = SideManifest::read(&manifest_path(p))?;
                let m = with_wav_comment(m, p, length, &name, &mut early_notes);
                (name, m, length)
            }
            Input::Samples { .. } => (a.s.label.clone().unwrap_or("samples".into()), None, None),
        };
        let mut profile = load_profile(a.profile.as_ref())?;
        let samples_unit = match &a.input {
            Input::Samples { .. } => Some(samples_unit(&a.s, profile.as_ref(), &name)?),
            Input::Path(_) => None,
        };
        // The unit of the capture's values, and who says so (for errors).
        let (unit_hint, unit_from) = profile
            .as_ref()
            .map(|p| (p.unit.symbol(), "the profile"))
            .or(manifest
                .as_ref()
                .and_then(|m| Some((m.unit?.symbol(), m.said_by()))))
            .or(samples_unit.map(|u| (u.symbol(), "the samples' label")))
            .or(a.s.full_scale.as_deref().and_then(unit_written_in))
            .unwrap_or(("V", "the default (no profile or manifest says otherwise)"));
        if let Some(fs) = &a.s.full_scale {
            if let Some((other, _)) = unit_written_in(fs).filter(|(u, _)| *u != unit_hint) {
                return Err(Error::setting(
                    Setting::FullScale,
                    format!(
                        "{fs:?} is in {other}, but the capture's values are in {unit_hint} \
                         (said by {unit_from}); write the full scale in {unit_hint}"
                    ),
                ));
            }
        }
        let sample_format = sample_format(&a.s, &a.input, manifest.as_ref(), &name)?;
        let parsed = Parsed::new(&a.s, sample_format, unit_hint)?;
        let capture = match &a.input {
            Input::Path(path) => Capture::File {
                path,
                options: SourceOptions {
                    format: Capture::format_of(path),
                    sample_format: parsed.sample_format,
                    rate_hz: parsed.rate,
                    fallback_rate_hz: manifest.as_ref().and_then(|m| m.sample_rate_hz),
                    name: name.clone(),
                    length_bytes,
                    // A raw file holds as many channels as its manifest, else its profile,
                    // says.
                    channels: manifest.as_ref().and_then(|m| m.channels).or(profile
                        .as_ref()
                        .map(|p| p.channels as u16)
                        .filter(|&c| c > 1)),
                },
            },
            Input::Samples { samples, rate_hz } => Capture::Memory {
                samples,
                rate_hz: parsed.rate.unwrap_or(*rate_hz),
                unit: samples_unit.expect("samples have a unit"),
                name: name.clone(),
            },
        };
        // The header alone, to settle the scale, rate and segment length before the passes.
        let info = capture.header()?;
        let channels = super::channels::picked(&a.s.channels, &info, profile.as_ref(), &name)?;
        let scale = scale(
            &info,
            manifest.as_ref(),
            profile.as_ref(),
            &parsed,
            unit_hint,
            &name,
        )?;
        let mut notes = early_notes;
        notes.extend(info.notes.iter().cloned());
        let design = match profile.as_mut() {
            Some(p) => {
                let stop = a.interrupt.map_or_else(Stop::default, Stop::on);
                Some(design(
                    p,
                    &scale,
                    info.sample_rate_hz,
                    &name,
                    &mut notes,
                    stop,
                )?)
            }
            None => None,
        };
        let band_rms = profile
            .as_ref()
            .map(|p| band_rms(p, &BandSpec::of_profile(p)));
        Ok(Setup {
            name,
            capture,
            manifest,
            profile,
            info,
            scale,
            notes,
            design,
            band_rms,
            resolution: parsed.resolution,
            tolerance_db: parsed.tolerance_db,
            bench: parsed.bench,
            channel: channels[0],
            channels,
        })
    }

    /// How messages name the profile: its file as given, or the label it was parsed with.
    pub(super) fn profile_name(&self) -> &str {
        self.profile.as_ref().map_or("", |p| p.label())
    }
}

/// The manifest beside the capture `path`, or, when there is none and the capture is a WAV
/// with noisewright's INFO comment, the comment in its place (see [`crate::io::wav_info`]).
/// With both, the manifest wins and a note says so if they disagree; a comment that is
/// another program's or malformed is ignored with a note. A WAV whose header cannot be read
/// gives nothing here: reading its header for the analysis reports why.
fn with_wav_comment(
    manifest: Option<SideManifest>,
    path: &std::path::Path,
    length_bytes: Option<u64>,
    name: &str,
    notes: &mut Vec<String>,
) -> Option<SideManifest> {
    if Capture::format_of(path) != Format::Wav {
        return manifest;
    }
    let comment = Capture::wav_comment(path, length_bytes, name);
    match (manifest, comment) {
        (Some(m), Some(Ok(c))) => {
            let differs = m.full_scale.is_some_and(|fs| fs != c.full_scale)
                || m.unit.is_some_and(|u| u != c.unit);
            if differs {
                notes.push(format!(
                    "the WAV's INFO comment says digital 1.0 = {}, its manifest {}: the \
                     manifest is used",
                    format_quantity(c.full_scale, c.unit.symbol()),
                    m.full_scale.map_or("physical values".to_string(), |fs| {
                        format_quantity(fs, m.unit.unwrap_or(c.unit).symbol())
                    })
                ));
            }
            Some(m)
        }
        (Some(m), _) => Some(m),
        (None, Some(Ok(c))) => Some(SideManifest::of_wav_info(&c, name)),
        (None, Some(Err(why))) => {
            notes.push(format!(
                "no manifest beside {name} and {why}: its INFO comment is ignored"
            ));
            None
        }
        (None, None) => None,
    }
}

/// The profile given, or read from its file (a file that cannot be read is a bad setting).
fn load_profile(profile: Option<&ProfileInput>) -> Result<Option<Profile>> {
    match profile {
        None => Ok(None),
        Some(ProfileInput::Given(p)) => Ok(Some((*p).clone())),
        // Read as `generate` reads it: bounded by `MAX_PROFILE_BYTES`.
        Some(ProfileInput::Path(p)) => Ok(Some(Profile::from_path(p)?)),
    }
}

/// The unit of samples in memory: the one set, else the profile's, else volts.
fn samples_unit(s: &Settings, profile: Option<&Profile>, name: &str) -> Result<Unit> {
    match (s.unit, profile) {
        (Some(u), Some(p)) if u != p.unit => Err(Error::setting(
            Setting::Unit,
            format!(
                "{name} is in {} but {} is in {}: they must describe the same quantity",
                u.symbol(),
                p.label(),
                p.unit.symbol()
            ),
        )),
        (Some(u), _) => Ok(u),
        (None, Some(p)) => Ok(p.unit),
        (None, None) => Ok(Unit::Volt),
    }
}

/// The sample format given, else a raw file's extension, else the manifest's (the two must
/// agree).
fn sample_format(
    s: &Settings,
    input: &Input,
    manifest: Option<&SideManifest>,
    name: &str,
) -> Result<Option<SampleFormat>> {
    if let Some(text) = &s.sample_format {
        return Ok(Some(text.parse::<SampleFormat>()?));
    }
    let Input::Path(path) = input else {
        return Ok(None);
    };
    let named = match Capture::format_of(path) {
        Format::Raw => path
            .extension()
            .and_then(|e| SampleFormat::from_extension(&e.to_string_lossy())),
        _ => None,
    };
    let stated = manifest.and_then(|m| m.sample_format);
    if let (Some(n), Some(m)) = (named, stated) {
        if n != m {
            return Err(Error::input(
                manifest_path(path).display().to_string(),
                format!(
                    "sample_format: says {m}, but the name of {name} (.{n}) says {n}; give \
                     \u{1}sample_format\u{1} to say which is right"
                ),
            ));
        }
    }
    Ok(named.or(stated))
}

/// The unit a full scale is written in, with where that came from: `("A", …)` for a value
/// in amperes, `("V", …)` for one in volts, `None` for a bare number (which takes the
/// capture's unit).
fn unit_written_in(full_scale: &str) -> Option<(&'static str, &'static str)> {
    let reads_in = |u: &Unit| parse_quantity(full_scale, Dimension::Amplitude, u.symbol()).is_ok();
    let mut units = Unit::ALL.iter().filter(|u| reads_in(u));
    match (units.next(), units.next()) {
        (Some(u), None) => Some((u.symbol(), "the unit of the full scale")),
        _ => None,
    }
}

impl Parsed {
    /// Parses the rate, full scale, resolution, tolerance, exclusions, peak-to-peak band and
    /// window, in that order; quantities with a unit of their own are read in `unit_hint`.
    fn new(s: &Settings, sample_format: Option<SampleFormat>, unit_hint: &str) -> Result<Parsed> {
        let quantity = |text: &Option<String>, dim: Dimension, setting: Setting| {
            text.as_ref()
                .map(|t| parse_quantity(t, dim, unit_hint).map_err(|m| Error::setting(setting, m)))
                .transpose()
        };
        let rate = quantity(&s.rate, Dimension::Frequency, Setting::Rate)?;
        let full_scale = quantity(&s.full_scale, Dimension::Amplitude, Setting::FullScale)?;
        if let (Some(v), Some(q)) = (full_scale, &s.full_scale) {
            if !(v.is_finite() && v > 0.0) {
                return Err(Error::setting(
                    Setting::FullScale,
                    format!("expected a positive value such as 2V, got {q:?}"),
                ));
            }
        }
        let resolution = quantity(&s.resolution, Dimension::Frequency, Setting::Resolution)?;
        let tolerance_db = match &s.tolerance {
            Some(t) => parse_db(t)?,
            None => DEFAULT_TOLERANCE_DB,
        };
        Ok(Parsed {
            sample_format,
            rate,
            full_scale,
            resolution,
            tolerance_db,
            bench: BenchSpec::new(s)?,
        })
    }
}

/// Parses a tolerance such as `1dB`, `0.5 dB` or `2` (dB), ≥ 0.
fn parse_db(text: &str) -> Result<f64> {
    let t = text.trim();
    let n = t
        .strip_suffix("dB")
        .or_else(|| t.strip_suffix("db"))
        .unwrap_or(t)
        .trim();
    match n.parse::<f64>() {
        Ok(v) if v.is_finite() && v >= 0.0 => Ok(v),
        _ => Err(Error::setting(
            Setting::Tolerance,
            format!("expected a non-negative level such as 1dB, got {text:?}"),
        )),
    }
}

/// The scale of the capture's values, from the file, its manifest, the full scale given and
/// the profile's unit.
fn scale(
    info: &StreamInfo,
    manifest: Option<&SideManifest>,
    profile: Option<&Profile>,
    parsed: &Parsed,
    unit_hint: &str,
    name: &str,
) -> Result<Scale> {
    // A full scale was parsed in the unit of the profile or manifest (volts when neither
    // says), so that is the unit of the scaled values.
    let full_scale_unit = parsed
        .full_scale
        .map(|_| Unit::from_text(unit_hint).unwrap_or(Unit::Volt));
    let full_scale_mark = Setting::FullScale.mark().to_string();
    let profile_name = profile.map_or(full_scale_mark.as_str(), |p| p.label());
    Scale::resolve(
        info.values,
        manifest,
        parsed.full_scale,
        profile
            .map(|p| p.unit)
            .or(full_scale_unit)
            .map(|u| (u, profile_name)),
        name,
    )
}

/// The profile's whole design at the capture's rate `fs` (Hz): the Gaussian design plus every
/// burst's sampled density (the seed is irrelevant: only the design is used). Refuses a
/// capture whose values are not physical, or whose rate cannot hold the profile's band.
fn design(
    p: &mut Profile,
    scale: &Scale,
    fs: f64,
    name: &str,
    notes: &mut Vec<String>,
    stop: Stop<'_>,
) -> Result<Generator> {
    if !scale.is_physical() {
        return Err(Error::setting(
            Setting::FullScale,
            format!(
                "{name} holds digital values and no manifest gives their scale: say which \
                 physical value digital 1.0 is, e.g. \u{1}full_scale\u{1} 2V"
            ),
        ));
    }
    if fs != p.sample_rate_hz {
        if p.band.high_hz > fs / 2.0 {
            return Err(Error::setting(
                Setting::Profile,
                format!(
                    "band.high = {} in {} is above half the rate of {name} ({} at {}): the \
                     capture cannot hold that band; judge it against a profile whose band ends \
                     at {} or lower",
                    format_quantity(p.band.high_hz, "Hz"),
                    p.label(),
                    format_quantity(fs / 2.0, "Hz"),
                    format_quantity(fs, "Hz"),
                    format_quantity(fs / 2.0, "Hz")
                ),
            ));
        }
        notes.push(format!(
            "the profile is designed at the capture's rate {} instead of its own {}",
            format_quantity(fs, "Hz"),
            format_quantity(p.sample_rate_hz, "Hz")
        ));
        p.sample_rate_hz = fs;
    }
    let d = std::sync::Arc::new(design_profile_until(p, stop)?);
    Generator::from_design_until(p, d, 0, 0, stop)
}
