//! [`Render`]: a profile becomes a noise file (or stream), a manifest beside it and a summary
//! — everything `generate` does, as a library call.
//!
//! The settings are kept as they were given (a command line's text, or the canonical text of
//! a typed setter) and checked when the run starts, in one fixed order, so a run refuses the
//! same thing with the same words however it was asked for. The steps: `plan` checks the
//! settings against the profile and each other, `engine` builds the synthesiser and the
//! scale, `pump` moves blocks from the engine to the sink, `output` writes the file and
//! its manifest (or a stream), and `summary` and `manifest` word the results.

mod engine;
mod manifest;
mod output;
mod plan;
mod pump;
mod summary;

use std::fmt;
use std::io;
use std::path::{Path, PathBuf};
use std::sync::atomic::AtomicBool;

use crate::error::{Error, Result, Setting};
use crate::io::adc::{Coding, Dither};
use crate::io::sink::{Format, SampleFormat};
use crate::profile::{Profile, format_quantity_exact};
use crate::run::shard::Shard;

/// The WAV and integer formats' default level, dBFS (AES17 convention: 0 dBFS is the RMS of a
/// full-scale sine).
pub const DEFAULT_LEVEL_DBFS: f64 = -20.0;
/// The default length of a run, seconds.
pub const DEFAULT_DURATION_S: f64 = 10.0;

/// The settings of a run, as given: text is parsed (in the library's own quantity syntax)
/// when the run starts.
#[derive(Debug, Clone)]
struct Settings {
    duration: Option<String>,
    samples: Option<u64>,
    start: Option<String>,
    start_sample: Option<u64>,
    shard: Option<String>,
    rate: Option<String>,
    seed: u64,
    loop_buffer: bool,
    format: Option<String>,
    name: Option<String>,
    sample_format: Option<String>,
    full_scale: Option<String>,
    level: Option<String>,
    allow_clipping: bool,
    columns: String,
    threads: Option<usize>,
    bits: Option<u32>,
    range: Option<String>,
    code: Option<String>,
    dither: Option<String>,
    progress: bool,
}

/// Everything `generate` does, as a builder: a profile, its settings, then one of the
/// `to_*` calls that runs it.
///
/// Defaults: seed 1; 10 s ([`DEFAULT_DURATION_S`]); the profile's sample rate; the format
/// from the output's extension (raw for a stream); f32 samples; WAV and integer formats at
/// −20 dBFS ([`DEFAULT_LEVEL_DBFS`]); other formats in physical units; clipping refused;
/// all cores (the output is the same for any thread count).
///
/// ```
/// use noisewright::{Profile, Render};
///
/// let profile = Profile::from_toml_str(
///     "sample_rate = \"48 kHz\"\n[band]\nlow = \"10 Hz\"\nhigh = \"20 kHz\"\n\
///      [[floor]]\ndensity = \"4 nV/rtHz\"\n",
///     "inline",
/// )?;
/// let dir = std::env::temp_dir().join(format!("nw-render-doc-{}", std::process::id()));
/// std::fs::create_dir_all(&dir).unwrap();
/// let report = Render::new(&profile)
///     .seed(7)
///     .samples(48_000)
///     .level_dbfs(-20.0)
///     .sample_format(noisewright::io::sink::SampleFormat::I24)
///     .to_path(dir.join("floor.wav"))?;
/// // 4 nV/√Hz over 10 Hz – 20 kHz: about 0.57 µV RMS expected; one second measures close.
/// assert!((report.measured_rms / report.expected_rms - 1.0).abs() < 0.05);
/// assert_eq!(report.clipped, 0);
/// assert!(dir.join("floor.wav.json").exists()); // the manifest beside the file
/// # std::fs::remove_dir_all(&dir).unwrap();
/// # Ok::<(), noisewright::Error>(())
/// ```
#[derive(Debug, Clone)]
pub struct Render<'a> {
    profile: &'a Profile,
    s: Settings,
    interrupt: Option<&'a AtomicBool>,
}

/// What a finished run wrote and measured.
#[derive(Debug, Clone)]
pub struct RenderReport {
    /// The RMS the output is expected to have, in the profile's unit (AC + DC: noise, bursts,
    /// tones and offset).
    pub expected_rms: f64,
    /// The RMS of the written values, in the profile's unit (before quantisation).
    pub measured_rms: f64,
    /// The band RMS in the profile unit: the target density (bursts included) through the
    /// band's declared edges over [low, high] ([`crate::model::budget::band_rms`]).
    pub band_rms: f64,
    /// The file RMS of the noise in the profile unit (AC): what the output holds of the noise,
    /// up to fs/2, without offset, tones or bursts' mean.
    pub file_noise_rms: f64,
    /// Samples clipped at full scale or clamped to an ADC's end codes (0 unless clipping was
    /// allowed).
    pub clipped: u64,
    /// Frames written (samples per channel).
    pub frames: u64,
    /// The noise file written, `None` for a stream.
    pub path: Option<PathBuf>,
    /// The manifest written beside it (`None` for a stream, a device or a pipe).
    pub manifest_path: Option<PathBuf>,
    /// The manifest's content as written to [`RenderReport::manifest_path`] (`None` when no
    /// manifest was written); numbers in SI units and the profile's unit.
    pub manifest: Option<serde_json::Value>,
    /// What the run changed or noticed (a replaced rate, a quantisation floor, clipping …),
    /// also in the summary and the manifest.
    pub notes: Vec<String>,
    /// The reader of a stream closed it before the end (a pipe into `head`); nothing else
    /// in the report is meaningful then.
    pub reader_closed: bool,
    /// The text summary `generate` prints (empty when the reader closed the stream).
    pub summary: String,
}

impl fmt::Display for RenderReport {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.summary)
    }
}

/// Where a run's samples go.
pub(crate) enum Target {
    /// A stream, named in messages by `name` (standard output is "standard output").
    Stream {
        writer: Box<dyn io::Write + Send>,
        name: String,
    },
    /// A file, written under a temporary name and renamed with its manifest.
    File(PathBuf),
    /// `<folder>/<profile stem>.<wav, or the ADC codes' container>`.
    Folder(PathBuf),
}

impl Target {
    fn is_stream(&self) -> bool {
        matches!(self, Target::Stream { .. })
    }

    /// How the summary names it.
    fn shown(&self) -> String {
        match self {
            Target::Stream { name, .. } => name.clone(),
            Target::File(p) | Target::Folder(p) => p.display().to_string(),
        }
    }
}

impl<'a> Render<'a> {
    /// A run of `profile` with every default (see [`Render`]).
    pub fn new(profile: &'a Profile) -> Render<'a> {
        Render {
            profile,
            s: Settings {
                duration: None,
                samples: None,
                start: None,
                start_sample: None,
                shard: None,
                rate: None,
                seed: 1,
                loop_buffer: false,
                format: None,
                name: None,
                sample_format: None,
                full_scale: None,
                level: None,
                allow_clipping: false,
                columns: "total".into(),
                threads: None,
                bits: None,
                range: None,
                code: None,
                dither: None,
                progress: false,
            },
            interrupt: None,
        }
    }

    /// A setting given as text, spelled as the profile's quantities are (`10 s`, `96 kHz`,
    /// `-20dBFS`, `-1.65V..1.65V`, `i24`, `tpdf` …); checked when the run starts, with the
    /// same messages as the typed setters. Settings that are numbers or switches
    /// ([`Setting::Samples`], [`Setting::Bits`] …) are refused here: use their setters.
    pub fn text(mut self, setting: Setting, text: &str) -> Result<Render<'a>> {
        let t = Some(text.to_string());
        let s = &mut self.s;
        match setting {
            Setting::Duration => (s.duration, s.samples) = (t, None),
            Setting::Start => (s.start, s.start_sample) = (t, None),
            Setting::Shard => s.shard = t,
            Setting::Rate => s.rate = t,
            Setting::Format => s.format = t,
            Setting::Name => s.name = t,
            Setting::SampleFormat => s.sample_format = t,
            Setting::FullScale => (s.full_scale, s.level) = (t, None),
            Setting::Level => (s.level, s.full_scale) = (t, None),
            Setting::Columns => s.columns = text.to_string(),
            Setting::Range => s.range = t,
            Setting::Code => s.code = t,
            Setting::Dither => s.dither = t,
            other => {
                return Err(Error::setting(
                    other,
                    "is not given as text: use its own setter",
                ));
            }
        }
        Ok(self)
    }

    /// The seed of every random number: the same profile, seed and version give the same
    /// bytes. Default 1.
    pub fn seed(mut self, seed: u64) -> Self {
        self.s.seed = seed;
        self
    }

    /// The run's length in frames (samples per channel), at least 1.
    pub fn samples(mut self, frames: u64) -> Self {
        (self.s.samples, self.s.duration) = (Some(frames), None);
        self
    }

    /// The run's length in seconds (rounded to whole samples). Default 10 s.
    pub fn seconds(mut self, seconds: f64) -> Self {
        (self.s.duration, self.s.samples) = (Some(format!("{seconds} s")), None);
        self
    }

    /// No end: the run goes on until the reader of the stream closes it or the run is
    /// interrupted (streams only, not with a loop buffer).
    pub fn endless(mut self) -> Self {
        (self.s.duration, self.s.samples) = (Some("inf".into()), None);
        self
    }

    /// Starts at this frame of the run from 0 (a segment: the output is exactly that part of
    /// the longer run).
    pub fn start_sample(mut self, frame: u64) -> Self {
        (self.s.start_sample, self.s.start) = (Some(frame), None);
        self
    }

    /// Makes only this shard of the run: the `index`-th (0-based) of `count` consecutive,
    /// equal-as-possible parts of the run that the length defines (a segment, see
    /// [`crate::run::shard`]); `{shard}` in the output's name becomes the index. The manifest
    /// records the shard, so [`crate::run::Join`] can put the parts back together.
    pub fn shard(mut self, shard: Shard) -> Self {
        self.s.shard = Some(shard.to_string());
        self
    }

    /// The sample rate, Hz, in place of the profile's (reported in the summary and manifest).
    pub fn rate_hz(mut self, rate_hz: f64) -> Self {
        self.s.rate = Some(format_quantity_exact(rate_hz, "Hz"));
        self
    }

    /// One periodic buffer whose end joins its start, instead of a stream.
    pub fn loop_buffer(mut self, on: bool) -> Self {
        self.s.loop_buffer = on;
        self
    }

    /// The file format. Default: from the output's extension; raw for a stream.
    pub fn format(mut self, format: Format) -> Self {
        self.s.format = Some(format.name().into());
        self
    }

    /// The name of the C array (C headers only), a C identifier.
    pub fn array_name(mut self, name: &str) -> Self {
        self.s.name = Some(name.into());
        self
    }

    /// The stored sample format. Default: a raw file's extension (.i16, .i24, .i32, .f64),
    /// else f32.
    pub fn sample_format(mut self, format: SampleFormat) -> Self {
        self.s.sample_format = Some(format.name().into());
        self
    }

    /// The physical value (profile's unit) that maps to digital 1.0.
    pub fn full_scale(mut self, value: f64) -> Self {
        let unit = self.profile.unit.symbol();
        (self.s.full_scale, self.s.level) = (Some(format!("{value} {unit}")), None);
        self
    }

    /// The expected RMS relative to full scale, dBFS (≤ 0; AES17).
    pub fn level_dbfs(mut self, dbfs: f64) -> Self {
        (self.s.level, self.s.full_scale) = (Some(format!("{dbfs}dBFS")), None);
        self
    }

    /// Writes even if samples exceed full scale (or an ADC's range): they are clipped,
    /// counted and reported. Default: such a run fails and writes nothing.
    pub fn allow_clipping(mut self, on: bool) -> Self {
        self.s.allow_clipping = on;
        self
    }

    /// CSV only: also one physical column per source (the Gaussian sum, each burst, each
    /// tone, the offset) beside the total.
    pub fn source_columns(mut self, on: bool) -> Self {
        self.s.columns = if on { "sources" } else { "total" }.into();
        self
    }

    /// Worker threads of the engine (at least 1). Default: all cores, or the caller's rayon
    /// pool. The output is the same for any number.
    pub fn threads(mut self, threads: usize) -> Self {
        self.s.threads = Some(threads);
        self
    }

    /// ADC codes: the integer codes of an ideal `bits`-bit converter (1 to 32) over `lo..hi`
    /// (profile's unit), mid-tread, stored in the smallest integer that holds them.
    pub fn adc(mut self, bits: u32, lo: f64, hi: f64) -> Self {
        let unit = self.profile.unit.symbol();
        self.s.bits = Some(bits);
        self.s.range = Some(format!("{lo}{unit}..{hi}{unit}"));
        self
    }

    /// The ADC codes' resolution alone (the range given as text with [`Setting::Range`]).
    pub fn bits(mut self, bits: u32) -> Self {
        self.s.bits = Some(bits);
        self
    }

    /// The ADC codes' numbering. Default: two's complement when the range holds both signs,
    /// offset binary otherwise.
    pub fn coding(mut self, coding: Coding) -> Self {
        self.s.code = Some(coding.name().into());
        self
    }

    /// Dither added before the ADC's rounding. Default: none.
    pub fn dither(mut self, dither: Dither) -> Self {
        self.s.dither = Some(dither.name().into());
        self
    }

    /// Shows a progress bar on standard error for long runs when it is a terminal.
    pub fn progress(mut self, on: bool) -> Self {
        self.s.progress = on;
        self
    }

    /// Polled between blocks: when it becomes true the run stops with
    /// [`Error::Interrupted`] and leaves no file under the target name.
    pub fn interrupt_on(mut self, flag: &'a AtomicBool) -> Self {
        self.interrupt = Some(flag);
        self
    }

    /// Writes the file at `path` (format from its extension unless set) and its manifest
    /// `path.json`, both or neither.
    pub fn to_path(&self, path: impl AsRef<Path>) -> Result<RenderReport> {
        self.run(Target::File(path.as_ref().to_path_buf()))
    }

    /// Writes `<folder>/<profile file's stem>.wav` (`.u16` etc. for ADC codes) and its
    /// manifest.
    pub fn to_folder(&self, folder: impl AsRef<Path>) -> Result<RenderReport> {
        self.run(Target::Folder(folder.as_ref().to_path_buf()))
    }

    /// Streams the samples (raw unless a format is set) into `writer`; no manifest.
    pub fn to_writer(&self, writer: impl io::Write + Send + 'static) -> Result<RenderReport> {
        self.run(Target::Stream {
            writer: Box::new(writer),
            name: "the writer".into(),
        })
    }

    /// Streams the samples to standard output; no manifest.
    pub fn to_stdout(&self) -> Result<RenderReport> {
        self.run(Target::Stream {
            writer: Box::new(io::stdout()),
            name: "standard output".into(),
        })
    }

    /// Runs on a worker of a pool of the chosen size (from outside any pool every parallel
    /// step would be a hand-off).
    fn run(&self, target: Target) -> Result<RenderReport> {
        super::check_threads(self.s.threads)?;
        let never = AtomicBool::new(false);
        let interrupted = self.interrupt.unwrap_or(&never);
        super::on_pool(self.s.threads, || {
            let mut plan = plan::Plan::new(self.profile, &self.s, target)?;
            let built = engine::build(&mut plan, &self.s, crate::stop::Stop::on(interrupted))?;
            output::write(plan, built, &self.s, interrupted)
        })
    }
}
