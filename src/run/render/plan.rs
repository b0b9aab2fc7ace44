//! A run's settings checked against the profile and against each other, in one fixed order,
//! before anything is made: the rate, the ADC, the target and its format, the sample format,
//! the length, the start, the columns and the loop.

use std::path::Path;

use super::summary::coding_words;
use super::{DEFAULT_DURATION_S, Settings, Target};
use crate::error::{Error, Result, Setting};
use crate::io::adc::{Adc, Coding, Container, Dither, parse_range};
use crate::io::sink::{Format, SampleFormat};
use crate::profile::{Dimension, Profile, format_quantity, parse_quantity};
use crate::run::guard::{Read, Written, check_outputs};
use crate::run::shard::{SHARD_PLACEHOLDER, Shard};
use crate::run::{is_direct_target, manifest_path};
use crate::synth::tone;

/// What a run will do, every setting resolved and checked.
pub(super) struct Plan {
    /// The profile, its sample rate replaced when the settings give one.
    pub(super) profile: Profile,
    /// How messages name the profile.
    pub(super) file: String,
    pub(super) notes: Vec<String>,
    pub(super) adc: Option<Adc>,
    pub(super) target: Target,
    pub(super) format: Format,
    pub(super) sample_format: SampleFormat,
    pub(super) array_name: Option<String>,
    /// Frames to write; `None`: until the reader closes the stream.
    pub(super) samples: Option<u64>,
    /// The first frame, of the run from 0.
    pub(super) start: u64,
    /// Whether the run is a segment (a start was given).
    pub(super) segment: bool,
    /// CSV columns per source.
    pub(super) per_source: bool,
    /// The shard this run makes, and the frames of the whole run it is a part of.
    pub(super) shard: Option<ShardOfRun>,
}

/// A shard and the frames of the whole run it is a part of.
pub(super) type ShardOfRun = (Shard, u64);

impl Plan {
    pub(super) fn new(profile: &Profile, s: &Settings, target: Target) -> Result<Plan> {
        let file = profile.label().to_string();
        let mut notes = Vec::new();
        let profile = with_rate(profile, s, &file, &mut notes)?;
        let fs = profile.sample_rate_hz;
        if let Some(t) = profile.tones.iter().find(|t| t.frequency_hz >= fs / 2.0) {
            return Err(Error::setting(
                Setting::Rate,
                format!(
                    "{} at {} in {file} would be at or above half of {}: choose a rate above {}",
                    t.name,
                    format_quantity(t.frequency_hz, "Hz"),
                    format_quantity(fs, "Hz"),
                    format_quantity(2.0 * t.frequency_hz, "Hz")
                ),
            ));
        }
        let adc = adc_from_settings(s, &profile)?;
        let shard = s.shard.as_deref().map(str::parse::<Shard>).transpose()?;
        let target = match target {
            Target::Folder(dir) => {
                let stem = Path::new(&file)
                    .file_stem()
                    .map_or("noise".into(), |s| s.to_string_lossy().into_owned());
                // ADC codes cannot go to WAV: default to a raw file named after their container.
                let ext = adc.as_ref().map_or("wav", |a| a.container().name());
                let name = match shard {
                    Some(_) => format!("{stem}-{SHARD_PLACEHOLDER}.{ext}"),
                    None => format!("{stem}.{ext}"),
                };
                Target::File(dir.join(name))
            }
            t => t,
        };
        // A C array is named after the output without the shard's index, so every shard of
        // a run names it alike.
        let array_stem = match &target {
            Target::File(p) if shard.is_some() => {
                Some(p.to_string_lossy().replace(SHARD_PLACEHOLDER, ""))
            }
            Target::File(p) => Some(p.to_string_lossy().into_owned()),
            _ => None,
        };
        let target = match (target, shard) {
            (Target::File(p), Some(sh)) => Target::File(sh.file_name(&p)),
            (t, _) => t,
        };
        let format = format_of(s, &target)?;
        let extension = match &target {
            Target::File(p) => p.extension().map(|e| e.to_string_lossy().to_lowercase()),
            _ => None,
        };
        check_extension(extension.as_deref(), format, adc.as_ref())?;
        let sample_format = sample_format_of(s, &target, extension.as_deref(), format)?;
        let array_name = array_name(s, format, &target, array_stem.as_deref().map(Path::new))?;
        let samples = length(s, &target, fs, profile.unit.symbol())?;
        let start = start_index(s, fs, profile.unit.symbol())?;
        let (start, samples, shard) = shard_part(s, shard, start, samples)?;
        // The dither of each stored value depends on its index in the run from 0 (interleaved
        // values of several channels each count).
        let adc = adc.map(|a| a.starting_at(start * profile.channels as u64));
        let segment = s.start.is_some() || s.start_sample.is_some() || shard.is_some();
        if segment && s.loop_buffer {
            return Err(Error::setting(
                Setting::Loop,
                "a loop buffer is one whole period, not a part of a longer run: \u{1}start\u{1} \
                 and \u{1}start_sample\u{1} cannot be used with \u{1}loop\u{1}",
            ));
        }
        let per_source = columns(s, format, &profile, &file)?;
        check_loop(s, &profile, &file, samples)?;
        check_target(&profile, &target)?;
        Ok(Plan {
            profile,
            file,
            notes,
            adc,
            target,
            format,
            sample_format,
            array_name,
            samples,
            start,
            segment,
            per_source,
            shard,
        })
    }
}

/// Refuses an output file, or the manifest beside it, that names a folder, has a name its
/// file system cannot hold, or is the profile's own file (by any name or link).
fn check_target(profile: &Profile, target: &Target) -> Result<()> {
    let Target::File(path) = target else {
        return Ok(());
    };
    let manifest = manifest_path(path);
    let mut written = vec![Written {
        setting: Setting::Output,
        path,
        beside: None,
    }];
    // A device or pipe is written in place, with no manifest beside it.
    if !is_direct_target(path) {
        written.push(Written {
            setting: Setting::Output,
            path: &manifest,
            beside: Some(path),
        });
    }
    let profile_file = profile.source_file().map(|path| Read {
        what: "the profile",
        path,
        shown: profile.label().to_string(),
    });
    check_outputs(&written, profile_file.as_slice())
}

/// The profile with the settings' rate, checked against its band; a replaced rate is noted.
fn with_rate(
    profile: &Profile,
    s: &Settings,
    file: &str,
    notes: &mut Vec<String>,
) -> Result<Profile> {
    let mut profile = profile.clone();
    let Some(r) = &s.rate else {
        return Ok(profile);
    };
    let rate = parse_quantity(r, Dimension::Frequency, profile.unit.symbol())
        .map_err(|m| Error::setting(Setting::Rate, m))?;
    if !(rate > 0.0 && rate.is_finite()) {
        return Err(Error::setting(
            Setting::Rate,
            format!("expected a positive sample rate such as 96 kHz, got {r:?}"),
        ));
    }
    if profile.band.high_hz > rate / 2.0 {
        return Err(Error::setting(
            Setting::Rate,
            format!(
                "band.high = {} in {file} is above half of {} ({}): choose a rate of at least {}",
                format_quantity(profile.band.high_hz, "Hz"),
                format_quantity(rate, "Hz"),
                format_quantity(rate / 2.0, "Hz"),
                format_quantity(2.0 * profile.band.high_hz, "Hz")
            ),
        ));
    }
    if rate != profile.sample_rate_hz {
        // The manifest's notes keep the command line's wording (issue-stable text).
        notes.push(format!(
            "sample rate {} from --rate replaces the profile's {}",
            format_quantity(rate, "Hz"),
            format_quantity(profile.sample_rate_hz, "Hz")
        ));
        profile.sample_rate_hz = rate;
    }
    Ok(profile)
}

/// The output format: as set, else raw for a stream, else from the file's extension.
fn format_of(s: &Settings, target: &Target) -> Result<Format> {
    match (&s.format, target) {
        (Some(f), _) => f
            .parse::<Format>()
            .map_err(|m| Error::setting(Setting::Format, m)),
        (None, Target::File(p)) => {
            let ext = p.extension().map(|e| e.to_string_lossy().to_lowercase());
            ext.as_deref()
                .and_then(Format::from_extension)
                .ok_or_else(|| {
                    Error::setting(
                        Setting::Output,
                        format!(
                            "cannot tell the format of {} from its extension: use .wav, .csv, \
                             .raw/.f32/.i16/.bin, .npy, .h, or give \u{1}format\u{1}",
                            p.display()
                        ),
                    )
                })
        }
        (None, _) => Ok(Format::Raw),
    }
}

/// A raw file's extension that names a sample type must agree with the ADC codes' container,
/// and an extension of ADC codes needs an ADC.
fn check_extension(ext: Option<&str>, format: Format, adc: Option<&Adc>) -> Result<()> {
    let (Some(ext), Format::Raw) = (ext, format) else {
        return Ok(());
    };
    let named = Container::from_extension(ext);
    let names_type = named.is_some() || SampleFormat::from_extension(ext).is_some();
    match adc {
        Some(a) if names_type && named != Some(a.container()) => Err(Error::setting(
            Setting::Output,
            format!(
                "the extension .{ext} names {ext} samples, but {}-bit {} codes are stored as {} \
                 (the smallest integer that holds them): name the file .{}, .raw or .bin",
                a.bits(),
                coding_words(a.coding()),
                a.container(),
                a.container()
            ),
        )),
        None if named.is_some() && SampleFormat::from_extension(ext).is_none() => {
            Err(Error::setting(
                Setting::Output,
                format!(
                    "the extension .{ext} names unsigned or 8-bit ADC codes: give \u{1}bits\u{1} \
                     and \u{1}range\u{1}, or use .raw, .f32, .f64, .i16, .i24 or .i32"
                ),
            ))
        }
        _ => Ok(()),
    }
}

/// The sample format: as set (agreeing with a raw file's extension), else a raw file's
/// extension, else f32.
fn sample_format_of(
    s: &Settings,
    target: &Target,
    ext: Option<&str>,
    format: Format,
) -> Result<SampleFormat> {
    let named = match (ext, format) {
        (Some(ext), Format::Raw) => SampleFormat::from_extension(ext),
        _ => None,
    };
    let Some(text) = &s.sample_format else {
        return Ok(match (target, named) {
            (Target::File(_), Some(n)) => n,
            _ => SampleFormat::F32,
        });
    };
    let given = text
        .parse::<SampleFormat>()
        .map_err(|m| Error::setting(Setting::SampleFormat, m))?;
    // A raw file named .i16/.f64/… says its own sample format: the two must agree.
    if let Some(named) = named.filter(|n| *n != given) {
        return Err(Error::setting(
            Setting::SampleFormat,
            format!(
                "{given} samples cannot go into {}: its extension .{named} names {named} \
                 samples; name the file .{given}, .raw or .bin, or drop \u{1}sample_format\u{1}",
                target.shown()
            ),
        ));
    }
    Ok(given)
}

/// The C array's name (C headers only): as set, else the stem of `named_after` (the output
/// file's name) made an identifier.
fn array_name(
    s: &Settings,
    format: Format,
    target: &Target,
    named_after: Option<&Path>,
) -> Result<Option<String>> {
    if matches!(format, Format::Npy | Format::C) && target.is_stream() {
        return Err(Error::setting(
            Setting::Output,
            format!(
                "{format} output is written to a file (standard output carries streams, and its \
                 header needs the sample count); give -o FILE.{}",
                if format == Format::Npy { "npy" } else { "h" }
            ),
        ));
    }
    match (&s.name, format, target) {
        (Some(n), Format::C, _) => {
            crate::io::sink::validate_array_name(n)?;
            Ok(Some(n.clone()))
        }
        (Some(_), _, _) => Err(Error::setting(
            Setting::Name,
            format!(
                "names the array of a C header, but the output is {format}; write a .h file or \
                 give \u{1}format\u{1} c"
            ),
        )),
        (None, Format::C, Target::File(_)) => Ok(Some(crate::io::sink::default_array_name(
            &named_after
                .and_then(Path::file_stem)
                .map_or(String::new(), |s| s.to_string_lossy().into_owned()),
        ))),
        (None, _, _) => Ok(None),
    }
}

/// Frames to write: the samples, or the duration (default 10 s) on the sample grid; `None`
/// for an endless stream.
fn length(s: &Settings, target: &Target, fs: f64, unit: &str) -> Result<Option<u64>> {
    let samples = match (&s.samples, s.duration.as_deref()) {
        (Some(n), _) => *n,
        (None, Some("inf")) if target.is_stream() && !s.loop_buffer => return Ok(None),
        (None, Some("inf")) => {
            return Err(Error::setting(
                Setting::Duration,
                "inf is only possible when streaming to standard output (-o -) without \
                 \u{1}loop\u{1}",
            ));
        }
        (None, d) => {
            let secs = match d {
                Some(d) => parse_quantity(d, Dimension::Time, unit)
                    .map_err(|m| Error::setting(Setting::Duration, m))?,
                None => DEFAULT_DURATION_S,
            };
            let given = d.unwrap_or("the default");
            if !(secs > 0.0 && secs.is_finite()) {
                return Err(Error::setting(
                    Setting::Duration,
                    format!("expected a positive time such as 10s, got {given:?}"),
                ));
            }
            let n = (secs * fs).round();
            if n < 1.0 {
                return Err(Error::setting(
                    Setting::Duration,
                    format!(
                        "{given:?} is shorter than one sample at {}",
                        format_quantity(fs, "Hz")
                    ),
                ));
            }
            n as u64
        }
    };
    if samples == 0 {
        return Err(Error::setting(
            Setting::Samples,
            "expected at least one sample, got 0",
        ));
    }
    Ok(Some(samples))
}

/// A shard's first frame and length in the run the length defines (the start and length as
/// they are without a shard); refuses a shard with a start of its own, a loop or no end.
fn shard_part(
    s: &Settings,
    shard: Option<Shard>,
    start: u64,
    samples: Option<u64>,
) -> Result<(u64, Option<u64>, Option<ShardOfRun>)> {
    let Some(shard) = shard else {
        return Ok((start, samples, None));
    };
    let why = if s.start.is_some() || s.start_sample.is_some() {
        "a shard starts where K/N puts it in the run from 0: \u{1}shard\u{1} cannot be used with \
         \u{1}start\u{1} or \u{1}start_sample\u{1}"
    } else if s.loop_buffer {
        "a loop buffer is one whole period, not a part of a longer run: \u{1}shard\u{1} cannot \
         be used with \u{1}loop\u{1}"
    } else if samples.is_none() {
        "a run without an end cannot be cut into parts: give \u{1}duration\u{1} or \
         \u{1}samples\u{1} for the whole run"
    } else {
        ""
    };
    if !why.is_empty() {
        return Err(Error::setting(Setting::Shard, why));
    }
    let total = samples.expect("checked above");
    let (first, n) = shard.part(total)?;
    if first >= crate::synth::MAX_START {
        return Err(Error::setting(
            Setting::Shard,
            format!(
                "{shard} starts at sample {first}, beyond the last possible start, sample {}",
                crate::synth::MAX_START - 1
            ),
        ));
    }
    Ok((first, Some(n), Some((shard, total))))
}

/// Relative tolerance for a start time to count as on a sample: far above the rounding of
/// two parsed decimals and their product (a few 1e-16), far below one sample up to 10^12
/// samples.
const START_TOLERANCE: f64 = 1e-13;

/// The first frame of the run from a start time (on the sample grid) or a start sample.
fn start_index(s: &Settings, fs: f64, unit: &str) -> Result<u64> {
    let limit = crate::synth::MAX_START;
    if let Some(n) = s.start_sample {
        crate::run::generator::check_start_sample(n)?;
        return Ok(n);
    }
    let Some(text) = &s.start else {
        return Ok(0);
    };
    let t = parse_quantity(text, Dimension::Time, unit)
        .map_err(|m| Error::setting(Setting::Start, m))?;
    if t < 0.0 {
        return Err(Error::setting(
            Setting::Start,
            format!("{text:?} is before the start of the run: expected 0 s or later"),
        ));
    }
    let x = t * fs;
    let k = x.round();
    if k >= limit as f64 {
        return Err(Error::setting(
            Setting::Start,
            format!(
                "{text:?} is beyond the last possible start, sample {}",
                limit - 1
            ),
        ));
    }
    if (x - k).abs() > START_TOLERANCE * x.max(1.0) {
        let (lo, hi) = (x.floor(), x.floor() + 1.0);
        return Err(Error::setting(
            Setting::Start,
            format!(
                "{text:?} is not on a sample at {}: the nearest sample times are {} s (sample \
                 {}) and {} s (sample {}); or give \u{1}start_sample\u{1} N",
                format_quantity(fs, "Hz"),
                lo / fs,
                lo as u64,
                hi / fs,
                hi as u64
            ),
        ));
    }
    Ok(k as u64)
}

/// Whether CSV columns per source are asked for, and possible with this output and profile.
fn columns(s: &Settings, format: Format, profile: &Profile, file: &str) -> Result<bool> {
    let per_source = match s.columns.as_str() {
        "total" => false,
        "sources" => true,
        other => {
            return Err(Error::setting(
                Setting::Columns,
                format!(
                    "expected total (time and value) or sources (also one column per source), \
                     got {other:?}"
                ),
            ));
        }
    };
    if !per_source {
        return Ok(false);
    }
    if format != Format::Csv {
        return Err(Error::setting(
            Setting::Columns,
            format!(
                "sources writes one column per source, which only CSV output can hold (the \
                 output is {format}); write a .csv file or give \u{1}format\u{1} csv"
            ),
        ));
    }
    if s.loop_buffer {
        return Err(Error::setting(
            Setting::Columns,
            "sources writes the parts of the streaming engine, but a \u{1}loop\u{1} buffer is \
             made in one piece; use \u{1}columns\u{1} total with \u{1}loop\u{1}",
        ));
    }
    if profile.channels > 1 {
        return Err(Error::setting(
            Setting::Columns,
            format!(
                "sources writes one column per source of one channel, but {file} has channels = \
                 {}; use \u{1}columns\u{1} total",
                profile.channels
            ),
        ));
    }
    Ok(true)
}

/// A loop buffer is one channel without bursts, and its tones complete whole cycles.
fn check_loop(s: &Settings, profile: &Profile, file: &str, samples: Option<u64>) -> Result<()> {
    if !s.loop_buffer {
        return Ok(());
    }
    if profile.channels > 1 {
        return Err(Error::setting(
            Setting::Loop,
            format!(
                "{file} has channels = {}; the loop buffer is made for one channel; generate a \
                 stream instead (without \u{1}loop\u{1})",
                profile.channels
            ),
        ));
    }
    if !profile.bursts.is_empty() {
        return Err(Error::setting(
            Setting::Loop,
            format!(
                "{file} has burst sources, whose steps cannot be made to join a loop \
                 seamlessly; generate a stream instead (without \u{1}loop\u{1})"
            ),
        ));
    }
    let (Some(n), fs) = (samples, profile.sample_rate_hz) else {
        return Ok(());
    };
    for t in &profile.tones {
        if let Err(near) = tone::loop_cycles(t.frequency_hz, fs, n) {
            return Err(Error::setting(
                Setting::Loop,
                format!(
                    "{} at {} in {file} does not complete a whole number of cycles in the \
                     {n}-sample loop ({:.6} cycles), so the loop would not join seamlessly; the \
                     nearest frequency that loops is {near} Hz, {} cycles (or change the length)",
                    t.name,
                    format_quantity(t.frequency_hz, "Hz"),
                    t.frequency_hz * n as f64 / fs,
                    (near * n as f64 / fs).round()
                ),
            ));
        }
    }
    Ok(())
}

/// The ADC from the bits, range, coding and dither (`None` without bits), its dither seeded
/// by the run's seed. Refuses the ADC settings without bits, bits without a range, and a full
/// scale, a level or a sample format beside bits.
fn adc_from_settings(s: &Settings, profile: &Profile) -> Result<Option<Adc>> {
    let unit = profile.unit.symbol();
    let Some(bits) = s.bits else {
        for (given, setting) in [
            (s.range.is_some(), Setting::Range),
            (s.code.is_some(), Setting::Code),
            (s.dither.is_some(), Setting::Dither),
        ] {
            if given {
                return Err(Error::setting(
                    setting,
                    format!(
                        "belongs to ADC codes and needs \u{1}bits\u{1} N (the resolution, 1 to \
                         32), e.g. \u{1}bits\u{1} 12 \u{1}range\u{1} \"-1.65{unit}..1.65{unit}\""
                    ),
                ));
            }
        }
        return Ok(None);
    };
    for (given, setting) in [
        (s.full_scale.is_some(), Setting::FullScale),
        (s.level.is_some(), Setting::Level),
        (s.sample_format.is_some(), Setting::SampleFormat),
    ] {
        if given {
            return Err(Error::setting(
                setting,
                "cannot be combined with \u{1}bits\u{1}: ADC codes are scaled by \
                 \u{1}range\u{1} and stored in the smallest integer that holds them (u8/u16/u32 \
                 for offset, i8/i16/i32 for twos); drop it",
            ));
        }
    }
    let Some(range) = &s.range else {
        return Err(Error::setting(
            Setting::Bits,
            format!(
                "needs \u{1}range\u{1}, the converter's input range in {unit}, e.g. \
                 \u{1}range\u{1} \"-1.65{unit}..1.65{unit}\" or \u{1}range\u{1} \
                 \"0{unit}..3.3{unit}\""
            ),
        ));
    };
    let (lo, hi) = parse_range(range, unit, profile.sensitivity_v_per_unit)
        .map_err(|m| Error::setting(Setting::Range, m))?;
    let coding = s.code.as_deref().map(str::parse::<Coding>).transpose()?;
    let dither = match s.dither.as_deref() {
        Some(d) => d.parse::<Dither>()?,
        None => Dither::None,
    };
    Ok(Some(
        Adc::new(bits, lo, hi, coding, dither)?.with_seed(s.seed),
    ))
}
