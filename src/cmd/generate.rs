//! `noisewright generate`: a profile becomes a noise file, a manifest and a summary.

use std::cell::RefCell;
use std::fs;
use std::io::{self, BufWriter, IsTerminal};
use std::path::{Path, PathBuf};
use std::rc::Rc;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::{Arc, Mutex};

use super::pending::{PendingFile, commit_all};
use crate::adc::{Adc, Coding, Container, Dither, parse_range};
use crate::analysis::stats::RunningStats;
use crate::density;
use crate::error::{Error, Result};
use crate::profile::{Dimension, Profile, format_quantity, parse_profile, parse_quantity};
use crate::sink::{
    CsvSink, FLUSH_BYTES, Format, Manifest, SampleFormat, Sink, SinkSpec, open_sink,
    rms_digital_from_dbfs, wav_plan, write_manifest,
};
use crate::synth::tone;
use crate::synth::{ChannelGenerator, Generator, periodic_buffer, periodic_variance};

mod manifest;
mod summary;

use manifest::{burst_manifest, channel_manifest, tone_manifest};
use summary::{
    burst_summary, channel_summary, coding_words, quantisation_note, range_text, summary_text,
    tone_summary,
};

/// Samples produced and written per step.
const CHUNK: usize = 1 << 16;
/// Runs longer than this many samples show a progress bar (when stderr is a terminal).
const PROGRESS_MIN_SAMPLES: u64 = 1 << 23;
/// WAV and integer formats default to this level (dBFS, AES17 convention).
const DEFAULT_LEVEL_DBFS: f64 = -20.0;
/// Default length of a run, in seconds.
const DEFAULT_DURATION_S: f64 = 10.0;

/// Options of `noisewright generate`.
#[derive(Debug, Clone, clap::Args)]
pub struct GenerateArgs {
    /// The profile (TOML) to synthesise.
    pub profile: PathBuf,
    /// Output file; `-` streams raw samples to standard output. Default: `out/<profile stem>.wav`
    #[arg(short = 'o', long = "output", value_name = "OUT")]
    pub output: Option<String>,
    /// Length of the run, e.g. `10s`, `250 ms`, `2 min`; `inf` (standard output only) runs
    /// until the reader closes. Default: 10 s.
    #[arg(long, value_name = "TIME", conflicts_with = "samples")]
    pub duration: Option<String>,
    /// Length of the run in samples (instead of --duration).
    #[arg(long, value_name = "N")]
    pub samples: Option<u64>,
    /// Start the run at this time, e.g. `3600s`, `2 h`: the output is exactly what a run from
    /// 0 writes from there on (a segment; --duration/--samples give its length). Must fall on a
    /// whole sample.
    #[arg(
        long,
        value_name = "TIME",
        conflicts_with = "start_sample",
        allow_hyphen_values = true
    )]
    pub start: Option<String>,
    /// Start the run at this sample index (0-based) instead of --start.
    #[arg(long = "start-sample", value_name = "N")]
    pub start_sample: Option<u64>,
    /// Sample rate, overriding the profile's, e.g. `96 kHz` (reported in the summary and manifest).
    #[arg(long, value_name = "R")]
    pub rate: Option<String>,
    /// Seed of the random numbers: the same profile, seed and version give the same bytes.
    #[arg(long, default_value_t = 1)]
    pub seed: u64,
    /// Write one periodic buffer whose end joins its start (for generators that repeat a buffer).
    #[arg(long = "loop")]
    pub loop_buffer: bool,
    /// Output format: wav, csv, raw, npy or c (a C header). Default: from the extension of OUT.
    #[arg(long, value_name = "FORMAT")]
    pub format: Option<String>,
    /// Name of the C array (--format c), a C identifier; its macros are NAME_LENGTH etc.
    /// Default: the output file's stem, made a valid identifier.
    #[arg(long, value_name = "NAME")]
    pub name: Option<String>,
    /// Sample format: f32, f64 (raw/CSV only), i16, i24 or i32. Default: the extension of a
    /// raw file (.i16, .i24, .i32, .f64), else f32.
    #[arg(long = "sample-format", value_name = "F")]
    pub sample_format: Option<String>,
    /// Physical value that maps to digital 1.0, e.g. `10uV`.
    #[arg(long = "full-scale", value_name = "Q", conflicts_with = "level")]
    pub full_scale: Option<String>,
    /// Expected RMS relative to full scale, e.g. `-20dBFS` (AES17: 0 dBFS is the RMS of a
    /// full-scale sine). WAV and integer formats default to -20 dBFS.
    #[arg(long, value_name = "DBFS", allow_hyphen_values = true)]
    pub level: Option<String>,
    /// Write even if samples exceed full scale (they are clipped, counted and reported).
    #[arg(long = "allow-clipping")]
    pub allow_clipping: bool,
    /// Print no summary.
    #[arg(short, long)]
    pub quiet: bool,
    /// CSV columns: `total` (time and value) or `sources` (also one physical column per
    /// source: the Gaussian sum and each burst).
    #[arg(long, value_name = "WHICH", default_value = "total")]
    pub columns: String,
    /// Worker threads of the engine. Default: all cores (or `RAYON_NUM_THREADS`). The output is
    /// the same for any number.
    #[arg(long, value_name = "N")]
    pub threads: Option<usize>,
    /// ADC codes: quantise to N-bit integer codes (1 to 32) over --range like an ideal
    /// converter, mid-tread; CSV or raw output (raw in the smallest u8/u16/u32 or i8/i16/i32).
    #[arg(long, value_name = "N")]
    pub bits: Option<u32>,
    /// The ADC's input range in the profile's unit, e.g. `-1.65V..1.65V` or `0V..3.3V`
    /// (needs --bits).
    #[arg(long, value_name = "LO..HI", allow_hyphen_values = true)]
    pub range: Option<String>,
    /// ADC code numbering: `twos` (two's complement, signed; default when the range holds
    /// both signs) or `offset` (offset binary, unsigned; default otherwise).
    #[arg(long, value_name = "CODING")]
    pub code: Option<String>,
    /// Dither added before rounding: `tpdf` (triangular, ±1 LSB peak) or `none` (default).
    #[arg(long, value_name = "KIND")]
    pub dither: Option<String>,
}

/// Whatever produces the next samples (unit) into a slice.
type Engine = Box<dyn FnMut(&mut [f64])>;

enum Target {
    Stdout,
    File(PathBuf),
}

/// How the physical values map to digital ones.
struct Scale {
    full_scale: Option<f64>,
    level_dbfs: Option<f64>,
}

/// Run `generate`; returns the summary text (empty when a reader closed the output pipe).
/// `interrupted` is polled between chunks: when it becomes true the run stops, and no file is
/// left under the target name.
///
/// The run happens on a worker of a rayon pool of `--threads` threads (by default the
/// global pool's size); from outside any pool every parallel step would be a hand-off.
pub fn run(args: &GenerateArgs, interrupted: &AtomicBool) -> Result<String> {
    if args.threads == Some(0) {
        return Err(Error::option(
            "--threads",
            "expected a whole number of threads of at least 1, got 0",
        ));
    }
    super::on_pool(args.threads, || run_here(args, interrupted))
}

/// [`run`] on the current rayon pool.
fn run_here(args: &GenerateArgs, interrupted: &AtomicBool) -> Result<String> {
    let file = args.profile.display().to_string();
    let text = fs::read_to_string(&args.profile)
        .map_err(|e| Error::option("PROFILE", format!("cannot read {file}: {e}")))?;
    let mut profile = parse_profile(&text, &file)?;
    let unit = profile.unit.symbol();
    let mut notes = Vec::new();

    if let Some(r) = &args.rate {
        let rate = parse_quantity(r, Dimension::Frequency, unit)
            .map_err(|m| Error::option("--rate", m))?;
        if !(rate > 0.0 && rate.is_finite()) {
            return Err(Error::option(
                "--rate",
                format!("expected a positive sample rate such as 96 kHz, got {r:?}"),
            ));
        }
        if profile.band.high_hz > rate / 2.0 {
            return Err(Error::option(
                "--rate",
                format!(
                    "band.high = {} in {file} is above half of {} ({}): choose a rate of at \
                     least {}",
                    format_quantity(profile.band.high_hz, "Hz"),
                    format_quantity(rate, "Hz"),
                    format_quantity(rate / 2.0, "Hz"),
                    format_quantity(2.0 * profile.band.high_hz, "Hz")
                ),
            ));
        }
        if rate != profile.sample_rate_hz {
            notes.push(format!(
                "sample rate {} from --rate replaces the profile's {}",
                format_quantity(rate, "Hz"),
                format_quantity(profile.sample_rate_hz, "Hz")
            ));
            profile.sample_rate_hz = rate;
        }
    }
    let fs = profile.sample_rate_hz;
    if let Some(t) = profile.tones.iter().find(|t| t.frequency_hz >= fs / 2.0) {
        return Err(Error::option(
            "--rate",
            format!(
                "{} at {} in {file} would be at or above half of {}: choose a rate above {}",
                t.name,
                format_quantity(t.frequency_hz, "Hz"),
                format_quantity(fs, "Hz"),
                format_quantity(2.0 * t.frequency_hz, "Hz")
            ),
        ));
    }
    let adc = adc_from_args(args, &profile)?;

    let target = match args.output.as_deref() {
        Some("-") => Target::Stdout,
        Some(p) => Target::File(PathBuf::from(p)),
        None => {
            let stem = args
                .profile
                .file_stem()
                .map_or("noise".into(), |s| s.to_string_lossy().into_owned());
            // ADC codes cannot go to WAV: default to a raw file named after their container.
            let ext = adc.as_ref().map_or("wav", |a| a.container().name());
            Target::File(Path::new("out").join(format!("{stem}.{ext}")))
        }
    };
    let format = match (&args.format, &target) {
        (Some(f), _) => f
            .parse::<Format>()
            .map_err(|m| Error::option("--format", m))?,
        (None, Target::Stdout) => Format::Raw,
        (None, Target::File(p)) => {
            let ext = p.extension().map(|e| e.to_string_lossy().to_lowercase());
            ext.as_deref()
                .and_then(Format::from_extension)
                .ok_or_else(|| {
                    Error::option(
                        "--output",
                        format!(
                            "cannot tell the format of {} from its extension: use .wav, .csv, \
                         .raw/.f32/.i16/.bin, .npy, .h, or give --format",
                            p.display()
                        ),
                    )
                })?
        }
    };
    let extension = match &target {
        Target::File(p) => p.extension().map(|e| e.to_string_lossy().to_lowercase()),
        Target::Stdout => None,
    };
    if let (Some(ext), Format::Raw) = (&extension, format) {
        let named = Container::from_extension(ext);
        let names_type = named.is_some() || SampleFormat::from_extension(ext).is_some();
        match &adc {
            Some(a) if names_type && named != Some(a.container()) => {
                return Err(Error::option(
                    "--output",
                    format!(
                        "the extension .{ext} names {ext} samples, but {}-bit {} codes are \
                         stored as {} (the smallest integer that holds them): name the file \
                         .{}, .raw or .bin",
                        a.bits(),
                        coding_words(a.coding()),
                        a.container(),
                        a.container()
                    ),
                ));
            }
            None if named.is_some() && SampleFormat::from_extension(ext).is_none() => {
                return Err(Error::option(
                    "--output",
                    format!(
                        "the extension .{ext} names unsigned or 8-bit ADC codes: give --bits and \
                         --range, or use .raw, .f32, .f64, .i16, .i24 or .i32"
                    ),
                ));
            }
            _ => {}
        }
    }
    let sample_format = match &args.sample_format {
        Some(s) => {
            let given = s
                .parse::<SampleFormat>()
                .map_err(|m| Error::option("--sample-format", m))?;
            // A raw file named .i16/.f64/… says its own sample format: the two must agree.
            let named = match (&extension, format) {
                (Some(ext), Format::Raw) => SampleFormat::from_extension(ext),
                _ => None,
            };
            if let Some(named) = named.filter(|n| *n != given) {
                return Err(Error::option(
                    "--sample-format",
                    format!(
                        "{given} samples cannot go into {}: its extension .{named} names {named} \
                         samples; name the file .{given}, .raw or .bin, or drop --sample-format",
                        args.output.as_deref().unwrap_or_default()
                    ),
                ));
            }
            given
        }
        // A raw file named .i16/.i24/.i32/.f64 says its own sample format.
        None => match (&target, format) {
            (Target::File(p), Format::Raw) => p
                .extension()
                .and_then(|e| SampleFormat::from_extension(&e.to_string_lossy()))
                .unwrap_or(SampleFormat::F32),
            _ => SampleFormat::F32,
        },
    };

    if matches!(format, Format::Npy | Format::C) {
        if let Target::Stdout = target {
            return Err(Error::option(
                "--output",
                format!(
                    "{format} output is written to a file (standard output carries streams, and \
                     its header needs the sample count); give -o FILE.{}",
                    if format == Format::Npy { "npy" } else { "h" }
                ),
            ));
        }
    }
    let array_name = match (&args.name, format, &target) {
        (Some(n), Format::C, _) => {
            crate::sink::validate_array_name(n)?;
            Some(n.clone())
        }
        (Some(_), _, _) => {
            return Err(Error::option(
                "--name",
                format!(
                    "names the array of a C header, but the output is {format}; write a .h \
                     file or give --format c"
                ),
            ));
        }
        (None, Format::C, Target::File(p)) => Some(crate::sink::default_array_name(
            &p.file_stem()
                .map_or(String::new(), |s| s.to_string_lossy().into_owned()),
        )),
        (None, _, _) => None,
    };

    // Length.
    let samples: Option<u64> = match (&args.samples, args.duration.as_deref()) {
        (Some(n), _) => Some(*n),
        (None, Some("inf")) => match target {
            Target::Stdout if !args.loop_buffer => None,
            _ => {
                return Err(Error::option(
                    "--duration",
                    "inf is only possible when streaming to standard output (-o -) without --loop",
                ));
            }
        },
        (None, d) => {
            let secs = match d {
                Some(d) => parse_quantity(d, Dimension::Time, unit)
                    .map_err(|m| Error::option("--duration", m))?,
                None => DEFAULT_DURATION_S,
            };
            let given = d.unwrap_or("the default");
            if !(secs > 0.0 && secs.is_finite()) {
                return Err(Error::option(
                    "--duration",
                    format!("expected a positive time such as 10s, got {given:?}"),
                ));
            }
            let n = (secs * fs).round();
            if n < 1.0 {
                return Err(Error::option(
                    "--duration",
                    format!(
                        "{given:?} is shorter than one sample at {}",
                        format_quantity(fs, "Hz")
                    ),
                ));
            }
            Some(n as u64)
        }
    };
    if samples == Some(0) {
        return Err(Error::option(
            "--samples",
            "expected at least one sample, got 0",
        ));
    }
    let start = start_index(args, fs, unit)?;
    // The dither of each stored value depends on its index in the run from 0 (interleaved
    // values of several channels each count).
    let adc = adc.map(|a| a.starting_at(start * profile.channels as u64));
    let segment = args.start.is_some() || args.start_sample.is_some();
    if segment && args.loop_buffer {
        return Err(Error::option(
            "--loop",
            "a loop buffer is one whole period, not a part of a longer run: --start and \
             --start-sample cannot be used with --loop",
        ));
    }

    let per_source = match args.columns.as_str() {
        "total" => false,
        "sources" => true,
        other => {
            return Err(Error::option(
                "--columns",
                format!(
                    "expected total (time and value) or sources (also one column per source), \
                     got {other:?}"
                ),
            ));
        }
    };
    if per_source && format != Format::Csv {
        return Err(Error::option(
            "--columns",
            format!(
                "sources writes one column per source, which only CSV output can hold \
                 (the output is {format}); write a .csv file or give --format csv"
            ),
        ));
    }
    if per_source && args.loop_buffer {
        return Err(Error::option(
            "--columns",
            "sources writes the parts of the streaming engine, but a --loop buffer is made in \
             one piece; use --columns total with --loop",
        ));
    }
    let channels = profile.channels as u16;
    if channels > 1 && per_source {
        return Err(Error::option(
            "--columns",
            format!(
                "sources writes one column per source of one channel, but {file} has \
                 channels = {channels}; use --columns total"
            ),
        ));
    }
    if channels > 1 && args.loop_buffer {
        return Err(Error::option(
            "--loop",
            format!(
                "{file} has channels = {channels}; the loop buffer is made for one channel; \
                 generate a stream instead (without --loop)"
            ),
        ));
    }
    if args.loop_buffer && !profile.bursts.is_empty() {
        return Err(Error::option(
            "--loop",
            format!(
                "{file} has burst sources, whose steps cannot be made to join a loop seamlessly; \
                 generate a stream instead (without --loop)"
            ),
        ));
    }

    if let (true, Some(n)) = (args.loop_buffer, samples) {
        for t in &profile.tones {
            if let Err(near) = tone::loop_cycles(t.frequency_hz, fs, n) {
                return Err(Error::option(
                    "--loop",
                    format!(
                        "{} at {} in {file} does not complete a whole number of cycles in the \
                         {n}-sample loop ({:.6} cycles), so the loop would not join seamlessly; \
                         the nearest frequency that loops is {near} Hz, {} cycles (or change \
                         the length)",
                        t.name,
                        format_quantity(t.frequency_hz, "Hz"),
                        t.frequency_hz * n as f64 / fs,
                        (near * n as f64 / fs).round()
                    ),
                ));
            }
        }
    }

    // Engine and expected variance.
    let target_psd = |f: f64| density::target_psd(&profile, f);
    let band_variance = density::integrate(&target_psd, profile.band.low_hz, profile.band.high_hz);
    let mut generator: Option<Rc<RefCell<Generator>>> = None;
    let mut multi: Option<Rc<RefCell<ChannelGenerator>>> = None;
    let parts: Arc<Mutex<Vec<Vec<f64>>>> = Arc::default();
    let (mut engine, expected_variance): (Engine, f64) = if args.loop_buffer {
        let n = samples.unwrap_or(0) as usize;
        let mut buffer = periodic_buffer(&target_psd, fs, n, args.seed)?;
        // Tones (whole cycles, checked above) and the offset, from sample index 0.
        tone::add_deterministic(&profile.tones, profile.offset, fs, 0, &mut buffer);
        let var = periodic_variance(&target_psd, fs, n)
            + profile.tones.iter().map(|t| t.power()).sum::<f64>();
        let mut pos = 0;
        (
            Box::new(move |out: &mut [f64]| {
                for x in out {
                    *x = buffer[pos % buffer.len()];
                    pos += 1;
                }
            }),
            var,
        )
    } else if channels > 1 {
        let m = Rc::new(RefCell::new(ChannelGenerator::starting_at(
            &profile, args.seed, start,
        )?));
        let var = m.borrow().generator().variance();
        multi = Some(m.clone());
        (
            Box::new(move |out: &mut [f64]| m.borrow_mut().fill_frames(out)),
            var,
        )
    } else {
        let g = Rc::new(RefCell::new(Generator::starting_at(
            &profile, args.seed, start,
        )?));
        let var = g.borrow().variance();
        generator = Some(g.clone());
        if per_source {
            let parts = parts.clone();
            lock(&parts).resize(g.borrow().part_count(), Vec::new());
            (
                Box::new(move |out: &mut [f64]| {
                    g.borrow_mut().fill_sources(out, &mut lock(&parts))
                }),
                var,
            )
        } else {
            (
                Box::new(move |out: &mut [f64]| g.borrow_mut().fill(out)),
                var,
            )
        }
    };
    // Bursts are DC-coupled: the expected RMS is AC + DC, √(variance + mean²).
    let expected_mean = match (&generator, &multi) {
        (Some(g), _) => g.borrow().mean(),
        (_, Some(m)) => m.borrow().generator().mean(),
        _ => profile.offset,
    };
    let expected_rms = (expected_variance + expected_mean * expected_mean).sqrt();
    let source_names = source_names(&profile);
    // The tones' figures need the designed noise density (also in --loop mode, which has no
    // streaming generator): one design, only when there are tones or an offset.
    let figures = (!profile.tones.is_empty() || profile.offset != 0.0)
        .then(|| Generator::new(&profile, 0))
        .transpose()?;
    let make_sink = |spec: &SinkSpec, w: Box<dyn io::Write + Send>| -> Result<Box<dyn Sink>> {
        if per_source {
            Ok(Box::new(SourcesSink {
                inner: Box::new(CsvSink::with_sources(spec, w, &source_names)?),
                parts: parts.clone(),
            }))
        } else {
            open_sink(spec, w)
        }
    };

    // Scale.
    let needs_scale = (format == Format::Wav || sample_format.is_integer()) && adc.is_none();
    let scale = if adc.is_some() {
        // ADC codes are scaled by their range (adc_from_args refuses --full-scale/--level).
        Scale {
            full_scale: None,
            level_dbfs: None,
        }
    } else if let Some(q) = &args.full_scale {
        let v = parse_quantity(q, Dimension::Amplitude, unit)
            .map_err(|m| Error::option("--full-scale", m))?;
        if !(v > 0.0 && v.is_finite()) {
            return Err(Error::option(
                "--full-scale",
                format!("expected a positive value such as 10uV, got {q:?}"),
            ));
        }
        Scale {
            full_scale: Some(v),
            level_dbfs: None,
        }
    } else if args.level.is_some() || needs_scale {
        let level = match &args.level {
            Some(l) => parse_dbfs(l)?,
            None => DEFAULT_LEVEL_DBFS,
        };
        Scale {
            full_scale: Some(expected_rms / rms_digital_from_dbfs(level)),
            level_dbfs: Some(level),
        }
    } else {
        Scale {
            full_scale: None,
            level_dbfs: None,
        }
    };
    // The quantisation noise density of the stored codes: Q/√(6·fs) for integer formats and
    // undithered ADC codes, Q/√(2·fs) with TPDF dither (REFERENCES §9).
    let floor = match (&adc, scale.full_scale) {
        (Some(a), _) => Some((
            match a.dither() {
                Dither::None => format!("{}-bit ADC's quantisation noise", a.bits()),
                Dither::Tpdf => {
                    format!("{}-bit ADC's added noise (TPDF dither included)", a.bits())
                }
            },
            a.added_noise_psd(fs).sqrt(),
            "more bits or a narrower --range",
        )),
        (None, Some(fsc)) if sample_format.is_integer() => {
            let bits = (sample_format.bytes() * 8) as i32;
            let lsb = 2.0 * fsc / 2f64.powi(bits);
            Some((
                format!("{bits}-bit quantisation noise"),
                lsb / (6.0 * fs).sqrt(),
                "more bits or a smaller full scale",
            ))
        }
        _ => None,
    };
    // Bursts alone have no density floor to compare quantisation noise with.
    if let (Some((what, density, advice)), false) = (floor, profile.sources.is_empty()) {
        if let Some(note) = quantisation_note(&profile, &what, density, advice) {
            notes.push(note);
        }
    }

    if let (Format::Wav, Some(n)) = (format, samples) {
        wav_plan(n, channels, sample_format)?;
    }
    let spec = SinkSpec {
        format,
        sample_format,
        sample_rate_hz: fs,
        full_scale: scale.full_scale,
        frames: samples,
        channels,
        start_frame: start,
        unit: profile.unit,
        adc: adc.clone(),
        name: array_name,
        provenance: vec![
            format!(
                "profile: {} ({file})",
                profile.name.as_deref().unwrap_or("(unnamed profile)")
            ),
            format!("seed: {}", args.seed),
        ],
    };
    // Refuse what the format cannot hold before any file or folder is made.
    spec.validate()?;
    let (container_keys, container_notes) = crate::sink::container_facts(&spec)?;
    notes.extend(container_notes);

    let mut stats = RunningStats::new();
    let mut channel_stats = vec![RunningStats::new(); usize::from(channels)];
    let progress = progress_bar(samples);
    // Writing beside the engine pays off with a second core; per-source CSV columns are
    // written from buffers the engine refills, so that path stays in step.
    let overlap = !per_source && rayon::current_num_threads() > 1;
    let report;
    match &target {
        Target::Stdout => {
            let mut sink = make_sink(
                &spec,
                Box::new(BufWriter::with_capacity(FLUSH_BYTES, io::stdout())),
            )?;
            let result = pump(
                &mut *engine,
                &mut *sink,
                samples,
                &mut stats,
                &mut channel_stats,
                interrupted,
                &progress,
                overlap,
            )
            .and_then(|_| sink.finish())
            .map_err(|e| naming_output(e, "standard output"));
            match result {
                Ok(r) => report = r,
                Err(Error::Io { source, .. }) if source.kind() == io::ErrorKind::BrokenPipe => {
                    return Ok(String::new());
                }
                Err(e) => return Err(e),
            }
        }
        Target::File(path) => {
            let shown = path.display().to_string();
            let manifest_path = manifest_path(path);
            // Both files are made before the run, so a folder that cannot take them fails
            // before the work, and neither lands unless both were written (commit_all).
            let pending = PendingFile::create(path)?;
            // A device or a named pipe is written in place, and has no folder of its own
            // for a manifest beside it.
            let mp = if pending.is_direct() {
                notes.push(format!(
                    "no manifest: {shown} is a device or pipe, not a file, so nothing was \
                     written beside it"
                ));
                None
            } else {
                Some(PendingFile::create(&manifest_path)?)
            };
            {
                let writer = BufWriter::with_capacity(FLUSH_BYTES, pending.file()?);
                let mut sink = make_sink(&spec, Box::new(writer))?;
                pump(
                    &mut *engine,
                    &mut *sink,
                    samples,
                    &mut stats,
                    &mut channel_stats,
                    interrupted,
                    &progress,
                    overlap,
                )
                .map_err(|e| naming_output(e, &shown))?;
                report = sink.finish().map_err(|e| naming_output(e, &shown))?;
            }
            if let (Some(a), true) = (&adc, report.clipped > 0 && !args.allow_clipping) {
                let (lo, hi) = a.suggest_range(stats.min(), stats.max());
                return Err(Error::ClippedRange {
                    count: report.clipped,
                    total: report.samples,
                    range: range_text(a.lo(), a.hi(), unit),
                    // Two significant digits by design: the display form reads them as meant.
                    suggested: format!(
                        "{}..{}",
                        format_quantity(lo, unit),
                        format_quantity(hi, unit)
                    ),
                });
            }
            if report.clipped > 0 && !args.allow_clipping {
                let fsc = scale.full_scale.unwrap_or(1.0);
                return Err(Error::Clipped {
                    count: report.clipped,
                    total: report.samples,
                    full_scale: format_quantity(fsc, unit),
                    suggested: format_quantity(round_up(report.peak_abs), unit),
                });
            }
            if report.clipped > 0 {
                notes.push(match &adc {
                    Some(a) => format!(
                        "{} samples outside the ADC range {} clamped to the end codes \
                         (--allow-clipping)",
                        report.clipped,
                        range_text(a.lo(), a.hi(), unit)
                    ),
                    None => format!(
                        "{} samples clipped at full scale (--allow-clipping)",
                        report.clipped
                    ),
                });
            }
            match mp {
                None => commit_all(vec![pending])?,
                Some(mp) => {
                    let mut manifest =
                        Manifest::new(&spec, args.seed, &report, &stats, expected_rms);
                    manifest.profile = profile.to_json();
                    manifest.level_dbfs = scale.level_dbfs;
                    manifest.looped = args.loop_buffer;
                    manifest.start_sample = start;
                    manifest.start_s = start as f64 / fs;
                    manifest.notes = notes.clone();
                    manifest.extra.extend(container_keys);
                    if let Some(a) = &adc {
                        manifest.extra.insert("adc".into(), a.to_json(fs));
                    }
                    if let Some(g) = &generator {
                        burst_manifest(&mut manifest, &g.borrow(), &profile, per_source, &spec);
                    }
                    if let Some(fg) = &figures {
                        tone_manifest(&mut manifest, &profile, fg, adc.as_ref());
                    }
                    if let Some(m) = &multi {
                        burst_manifest(
                            &mut manifest,
                            m.borrow().generator(),
                            &profile,
                            false,
                            &spec,
                        );
                        channel_manifest(&mut manifest, &profile, expected_rms, &channel_stats);
                    }
                    write_manifest(&manifest, BufWriter::new(mp.file()?))
                        .map_err(|e| naming_output(e, &manifest_path.display().to_string()))?;
                    // The noise file last: where it exists, its manifest does too.
                    commit_all(vec![mp, pending])?;
                }
            }
        }
    }
    progress.finish_and_clear();

    let mut summary = summary_text(
        &profile,
        &target,
        args,
        &scale,
        band_variance.sqrt(),
        expected_rms,
        &stats,
        report.clipped,
        adc.as_ref(),
        &notes,
    );
    if segment {
        summary += &format!(
            "  start           sample {start} ({} s); a segment of the run from 0\n",
            start as f64 / fs
        );
    }
    if let Some(g) = &generator {
        summary += &burst_summary(&g.borrow(), &profile, expected_variance, expected_mean);
    }
    if let Some(fg) = &figures {
        summary += &tone_summary(&profile, fg, adc.as_ref());
    }
    if let Some(m) = &multi {
        summary += &burst_summary(
            m.borrow().generator(),
            &profile,
            expected_variance,
            expected_mean,
        );
        summary += &channel_summary(&profile, expected_rms, &channel_stats);
    }
    Ok(summary)
}

/// Relative tolerance for a start time to count as on a sample: far above the rounding of
/// two parsed decimals and their product (a few 1e-16), far below one sample up to 10^12
/// samples.
const START_TOLERANCE: f64 = 1e-13;

/// The first sample of the run from `--start` (a time on the sample grid) or `--start-sample`.
fn start_index(args: &GenerateArgs, fs: f64, unit: &str) -> Result<u64> {
    let limit = crate::synth::MAX_START;
    if let Some(n) = args.start_sample {
        if n >= limit {
            return Err(Error::option(
                "--start-sample",
                format!(
                    "{n} is beyond the last possible start, sample {}",
                    limit - 1
                ),
            ));
        }
        return Ok(n);
    }
    let Some(text) = &args.start else {
        return Ok(0);
    };
    let t = parse_quantity(text, Dimension::Time, unit).map_err(|m| Error::option("--start", m))?;
    if t < 0.0 {
        return Err(Error::option(
            "--start",
            format!("{text:?} is before the start of the run: expected 0 s or later"),
        ));
    }
    let x = t * fs;
    let k = x.round();
    if k >= limit as f64 {
        return Err(Error::option(
            "--start",
            format!(
                "{text:?} is beyond the last possible start, sample {}",
                limit - 1
            ),
        ));
    }
    if (x - k).abs() > START_TOLERANCE * x.max(1.0) {
        let (lo, hi) = (x.floor(), x.floor() + 1.0);
        return Err(Error::option(
            "--start",
            format!(
                "{text:?} is not on a sample at {}: the nearest sample times are {} s (sample \
                 {}) and {} s (sample {}); or give --start-sample N",
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

fn parse_dbfs(text: &str) -> Result<f64> {
    let t = text.trim();
    let number = t
        .strip_suffix("dBFS")
        .or_else(|| t.strip_suffix("dbfs"))
        .unwrap_or(t)
        .trim();
    match number.parse::<f64>() {
        Ok(v) if v.is_finite() && v <= 0.0 => Ok(v),
        Ok(v) if v.is_finite() => Err(Error::option(
            "--level",
            format!("{v} dBFS is above full scale: expected 0 dBFS or less, e.g. -20dBFS"),
        )),
        _ => Err(Error::option(
            "--level",
            format!("expected a level such as -20dBFS, got {text:?}"),
        )),
    }
}

/// The ADC named by `--bits`, `--range`, `--code` and `--dither` (`None` without `--bits`),
/// its dither seeded by `--seed`. Refuses the ADC options without `--bits`, `--bits` without
/// `--range`, and `--full-scale`, `--level` or `--sample-format` beside `--bits`.
fn adc_from_args(args: &GenerateArgs, profile: &Profile) -> Result<Option<Adc>> {
    let unit = profile.unit.symbol();
    let Some(bits) = args.bits else {
        for (given, option) in [
            (args.range.is_some(), "--range"),
            (args.code.is_some(), "--code"),
            (args.dither.is_some(), "--dither"),
        ] {
            if given {
                return Err(Error::option(
                    option,
                    format!(
                        "belongs to ADC codes and needs --bits N (the resolution, 1 to 32), \
                         e.g. --bits 12 --range \"-1.65{unit}..1.65{unit}\""
                    ),
                ));
            }
        }
        return Ok(None);
    };
    for (given, option) in [
        (args.full_scale.is_some(), "--full-scale"),
        (args.level.is_some(), "--level"),
        (args.sample_format.is_some(), "--sample-format"),
    ] {
        if given {
            return Err(Error::option(
                option,
                "cannot be combined with --bits: ADC codes are scaled by --range and stored in \
                 the smallest integer that holds them (u8/u16/u32 for offset, i8/i16/i32 for \
                 twos); drop it",
            ));
        }
    }
    let Some(range) = &args.range else {
        return Err(Error::option(
            "--bits",
            format!(
                "needs --range, the converter's input range in {unit}, e.g. --range \
                 \"-1.65{unit}..1.65{unit}\" or --range \"0{unit}..3.3{unit}\""
            ),
        ));
    };
    let (lo, hi) = parse_range(range, unit).map_err(|m| Error::option("--range", m))?;
    let coding = args.code.as_deref().map(str::parse::<Coding>).transpose()?;
    let dither = match args.dither.as_deref() {
        Some(d) => d.parse::<Dither>()?,
        None => Dither::None,
    };
    Ok(Some(
        Adc::new(bits, lo, hi, coding, dither)?.with_seed(args.seed),
    ))
}

/// Round a peak up to two significant digits (a full scale that holds it).
fn round_up(x: f64) -> f64 {
    if x <= 0.0 {
        return 0.0;
    }
    let p = 10f64.powf(x.log10().floor() - 1.0);
    (x / p).ceil() * p
}

/// The manifest beside an output file: the file's name with `.json` appended.
pub(crate) fn manifest_path(path: &Path) -> PathBuf {
    let mut s = path.as_os_str().to_owned();
    s.push(".json");
    PathBuf::from(s)
}

/// An I/O error of a writer names where its bytes were going (`target`: the output file
/// the user named, not its temporary name, or standard output); other errors pass as they
/// are.
fn naming_output(e: Error, target: &str) -> Error {
    match e {
        Error::Io { context, source } => Error::Io {
            context: format!("{context} to {target}"),
            source,
        },
        other => other,
    }
}

/// Runs the engine into the sink: `samples` frames (None: until interrupted) of
/// `channel_stats.len()` interleaved channels; `stats` over every sample, `channel_stats`
/// per channel (only kept for more than one channel).
///
/// With `overlap` (a pool of two or more threads), the statistics, the encoding and the
/// writing of each block run as a job on the rayon pool while this thread makes the next
/// block (the engine stays on the calling thread, inside the pool). The blocks, their order
/// and so the bytes are the same either way.
#[allow(clippy::too_many_arguments)]
fn pump(
    engine: &mut dyn FnMut(&mut [f64]),
    sink: &mut dyn Sink,
    samples: Option<u64>,
    stats: &mut RunningStats,
    channel_stats: &mut [RunningStats],
    interrupted: &AtomicBool,
    progress: &indicatif::ProgressBar,
    overlap: bool,
) -> Result<()> {
    let ch = channel_stats.len().max(1);
    let mut blocks = Blocks {
        samples,
        done: 0,
        frames: (CHUNK / ch).max(MIN_BLOCK_FRAMES),
    };
    let mut tally = Tally {
        stats,
        channel_stats,
        column: Vec::new(),
        written: 0,
        progress,
    };
    if !overlap {
        let mut buf = vec![0.0; blocks.frames * ch];
        while let Some(n) = blocks.next_len() {
            if interrupted.load(Ordering::Relaxed) {
                return Err(Error::Interrupted);
            }
            let block = &mut buf[..n * ch];
            engine(block);
            tally.take(block, sink)?;
        }
        return Ok(());
    }
    // Two buffers: while this thread makes the next block (its FFTs and draws spread over
    // the pool), the previous one is tallied and written as a job of the same pool, which
    // an idle worker takes; no extra thread competes with the engine for the cores.
    let mut fill = vec![0.0; blocks.frames * ch];
    let mut full = vec![0.0; blocks.frames * ch];
    let mut pending = 0;
    loop {
        if interrupted.load(Ordering::Relaxed) {
            return Err(Error::Interrupted);
        }
        let next = blocks.next_len();
        if next.is_none() && pending == 0 {
            return Ok(());
        }
        let mut written = Ok(());
        rayon::in_place_scope(|scope| {
            if pending > 0 {
                let (block, tally, sink, written) =
                    (&full[..pending], &mut tally, &mut *sink, &mut written);
                scope.spawn(move |_| *written = tally.take(block, sink));
            }
            if let Some(n) = next {
                engine(&mut fill[..n * ch]);
            }
        });
        written?;
        match next {
            Some(n) => {
                std::mem::swap(&mut fill, &mut full);
                pending = n * ch;
            }
            None => return Ok(()),
        }
    }
}

/// Fewest frames per block, however many channels (a block holds about [`CHUNK`] samples).
const MIN_BLOCK_FRAMES: usize = 1024;

/// The lengths, in frames, of the run's consecutive blocks.
struct Blocks {
    samples: Option<u64>,
    done: u64,
    frames: usize,
}

impl Blocks {
    /// Frames in the next block; `None` when the run is complete.
    fn next_len(&mut self) -> Option<usize> {
        let n = match self.samples {
            Some(total) if self.done >= total => return None,
            Some(total) => ((total - self.done) as usize).min(self.frames),
            None => self.frames,
        };
        self.done += n as u64;
        Some(n)
    }
}

/// What happens to each block after the engine: statistics, the sink, the progress bar.
struct Tally<'a> {
    stats: &'a mut RunningStats,
    channel_stats: &'a mut [RunningStats],
    column: Vec<f64>,
    /// Frames written so far.
    written: u64,
    progress: &'a indicatif::ProgressBar,
}

impl Tally<'_> {
    fn take(&mut self, block: &[f64], sink: &mut dyn Sink) -> Result<()> {
        self.stats.push(block);
        let ch = self.channel_stats.len();
        if ch > 1 {
            for (k, s) in self.channel_stats.iter_mut().enumerate() {
                self.column.clear();
                self.column.extend(block.iter().skip(k).step_by(ch));
                s.push(&self.column);
            }
        }
        sink.write(block)?;
        self.written += (block.len() / ch.max(1)) as u64;
        self.progress.set_position(self.written);
        Ok(())
    }
}

fn progress_bar(samples: Option<u64>) -> indicatif::ProgressBar {
    match samples {
        Some(n) if n >= PROGRESS_MIN_SAMPLES && io::stderr().is_terminal() => {
            let bar = indicatif::ProgressBar::new(n);
            if let Ok(style) = indicatif::ProgressStyle::with_template(
                "{bar:40} {percent:>3}% {pos}/{len} samples, {eta} left",
            ) {
                bar.set_style(style);
            }
            bar
        }
        _ => indicatif::ProgressBar::hidden(),
    }
}

/// Hands the engine's per-source parts of each block to the CSV writer beside the totals
/// (`--columns sources`): the engine fills `parts` with the block it has just produced.
struct SourcesSink {
    inner: Box<dyn Sink>,
    parts: Arc<Mutex<Vec<Vec<f64>>>>,
}

/// The per-source parts, also after a panic elsewhere poisoned the lock (they are plain data).
fn lock(parts: &Mutex<Vec<Vec<f64>>>) -> std::sync::MutexGuard<'_, Vec<Vec<f64>>> {
    parts
        .lock()
        .unwrap_or_else(std::sync::PoisonError::into_inner)
}

impl Sink for SourcesSink {
    fn write(&mut self, samples: &[f64]) -> Result<()> {
        let parts = lock(&self.parts);
        let slices: Vec<&[f64]> = parts.iter().map(|p| &p[..samples.len()]).collect();
        self.inner.write_sources(samples, &slices)
    }

    fn finish(&mut self) -> Result<crate::sink::SinkReport> {
        self.inner.finish()
    }
}

/// The names of the `--columns sources` columns: the Gaussian sum, each burst, each tone, and
/// `offset` when the profile's offset is not 0 (the order of [`Generator::fill_sources`]).
fn source_names(profile: &Profile) -> Vec<String> {
    std::iter::once("gaussian".to_string())
        .chain(profile.bursts.iter().map(|b| b.name.clone()))
        .chain(profile.tones.iter().map(|t| t.name.clone()))
        .chain((profile.offset != 0.0).then(|| "offset".to_string()))
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn round_up_holds_the_peak() {
        assert!((round_up(1.234e-6) - 1.3e-6).abs() < 1e-18);
        assert!(round_up(9.99) >= 9.99);
        assert!(round_up(0.0123) >= 0.0123);
    }

    #[test]
    fn levels_parse() {
        assert_eq!(parse_dbfs("-20dBFS").unwrap(), -20.0);
        assert_eq!(parse_dbfs("-6.5").unwrap(), -6.5);
        assert!(parse_dbfs("3dBFS").is_err());
        assert!(parse_dbfs("loud").is_err());
    }
}
