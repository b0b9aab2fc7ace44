//! [`Analysis`]: a capture measured (density, statistics, burst levels, tones), judged
//! against a profile, fitted and drawn — everything `analyze` does, as a library call.
//!
//! The settings are kept as they were given (a command line's text, or the canonical text of
//! a typed setter) and checked when the analysis starts, in one fixed order, so an analysis
//! refuses the same thing with the same words however it was asked for. The steps: `read`
//! reads the capture (its manifest, its header, and each pass over its samples with a
//! read-ahead thread), `setup` resolves the settings, the scale, the rate and the design,
//! `measure` makes the passes and the density estimate, `verdict` fits the tones and compares
//! with the design, `fit` fits a profile, `output` writes the pictures and the report, and
//! `summary` words the results.

mod allan;
mod bench;
mod channels;
mod correlation;
mod fit;
mod measure;
mod output;
mod pictures;
mod read;
mod setup;
mod summary;
mod verdict;

use std::fmt;
use std::path::{Path, PathBuf};
use std::sync::atomic::AtomicBool;

use crate::analysis::capture::CaptureReport;
use crate::analysis::integrated::IntegratedNoise;
use crate::analysis::trend::Trend;
use crate::error::{Error, Result, Setting};
use crate::io::sink::SampleFormat;
use crate::profile::{Profile, Unit};

pub use channels::ChannelReport;
pub use correlation::{BandCoherence, CorrelationReport, PairReport};

/// A tone's leakage is left out of the bins where it exceeds this fraction of the designed
/// noise density (biasing a kept bin by < 0.005 dB).
pub const TONE_LEAKAGE: f64 = 1e-3;
/// Total false-failure probability of the band verdicts, split over the bands (Bonferroni).
pub const FALSE_ALARM: f64 = 1e-3;
/// Default engineering tolerance of the verdict, dB.
pub const DEFAULT_TOLERANCE_DB: f64 = 1.0;

/// The settings of an analysis, as given: text is parsed (in the library's own quantity
/// syntax) when the analysis starts.
#[derive(Debug, Clone, Default)]
struct Settings {
    full_scale: Option<String>,
    rate: Option<String>,
    sample_format: Option<String>,
    resolution: Option<String>,
    tolerance: Option<String>,
    /// The unit of samples given in memory.
    unit: Option<Unit>,
    /// How messages and the report name samples given in memory.
    label: Option<String>,
    plot: Option<PathBuf>,
    report: Option<PathBuf>,
    fit: Option<PathBuf>,
    /// Keep the offset and drift in the density estimate.
    keep_drift: bool,
    exclude: Option<String>,
    pp_band: Option<String>,
    pp_window: Option<String>,
    /// Measure the overlapping Allan deviation.
    allan: bool,
    /// Draw the Allan deviation here.
    allan_plot: Option<PathBuf>,
    /// The channels to analyse (0-based); empty for every channel.
    channels: Vec<usize>,
    /// Print the band table of every channel of a multi-channel capture, not only of the
    /// failing ones.
    band_tables: bool,
}

/// What is analysed.
#[derive(Debug, Clone)]
enum Input<'a> {
    /// A capture file (WAV, CSV or raw), with the manifest `FILE.json` beside it if any.
    Path(PathBuf),
    /// Physical samples in memory at `rate_hz` samples per second.
    Samples { samples: &'a [f64], rate_hz: f64 },
}

/// The profile an analysis is judged against.
#[derive(Debug, Clone)]
enum ProfileInput<'a> {
    Given(&'a Profile),
    /// Read when the analysis starts, after the capture's manifest.
    Path(PathBuf),
}

/// Everything `analyze` does, as a builder: a capture (a file, or samples in memory), its
/// settings, then [`Analysis::run`].
///
/// Without a profile the capture is measured only; with one its density is judged band by
/// band against the profile's design (at the capture's rate) within a χ² interval at a total
/// false-alarm probability of [`FALSE_ALARM`], widened by the tolerance (default
/// [`DEFAULT_TOLERANCE_DB`]). Default: the Welch segment length chosen from the record's
/// length; no pictures, report or fitted profile.
///
/// ```
/// use noisewright::{Analysis, Generator, Profile};
///
/// let profile = Profile::from_toml_str(
///     "sample_rate = \"48 kHz\"\n[band]\nlow = \"10 Hz\"\nhigh = \"20 kHz\"\n\
///      [[floor]]\ndensity = \"4 nV/rtHz\"\n",
///     "inline",
/// )?;
/// let mut noise = Generator::new(&profile, 11)?;
/// let mut samples = vec![0.0; 96_000]; // 2 s, in volts
/// noise.fill(&mut samples);
/// let report = Analysis::of_samples(&samples, 48_000.0)
///     .resolution_hz(10.0)
///     .run()?;
/// // The bin at 1 kHz of the white 4 nV/√Hz floor: 39 Hann segments at 50 % overlap give
/// // ν ≈ 74 degrees of freedom, a relative σ of the density of 1/√(2ν) ≈ 0.08; ±0.5 is 6σ.
/// let density = report.measurement.spectrum.psd[100].sqrt();
/// assert!((density / 4e-9 - 1.0).abs() < 0.5);
/// assert_eq!(report.json["density"]["segment_length"], 4800); // fs / 10 Hz
/// assert_eq!(report.json["unit"], "V");
/// assert!(!report.verdict.judged()); // no profile: measured only
/// # Ok::<(), noisewright::Error>(())
/// ```
#[derive(Debug, Clone)]
pub struct Analysis<'a> {
    input: Input<'a>,
    profile: Option<ProfileInput<'a>>,
    s: Settings,
    interrupt: Option<&'a AtomicBool>,
}

/// What an analysis measured and decided.
#[derive(Debug)]
pub struct AnalysisReport {
    /// The object `analyze --json` prints: every number, in SI units and the capture's unit
    /// (keys documented in the README, "analyze: JSON keys").
    pub json: serde_json::Value,
    /// The text summary `analyze` prints.
    pub summary: String,
    /// The verdict against the profile.
    pub verdict: Verdict,
    /// Everything measured, typed: statistics, the Welch estimate, its bands, the comparison
    /// with the profile, burst levels, notes (values in the capture's unit, densities in
    /// unit²/Hz). For a capture of several channels: of the first channel analysed.
    pub measurement: CaptureReport,
    /// For a capture of several channels: each channel analysed, with its own verdict (the
    /// objects of `json["channels"]`); empty for a capture of one channel.
    pub channels: Vec<ChannelReport>,
    /// For two or more channels analysed: their correlation matrix and coherence, judged
    /// against the profile's correlation when it describes them (`json["correlation"]`).
    pub correlation: Option<CorrelationReport>,
}

impl AnalysisReport {
    /// The JSON object as `analyze --json` prints it: indented, with a final newline.
    pub fn json_text(&self) -> String {
        let mut s = serde_json::to_string_pretty(&self.json).expect("JSON values serialise");
        s.push('\n');
        s
    }
}

impl fmt::Display for AnalysisReport {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.summary)
    }
}

/// Whether a capture matches its profile.
#[derive(Debug)]
pub enum Verdict {
    /// No profile was given: the capture was measured only.
    NotJudged,
    /// Every band inside the profile's band is within its limits.
    Pass,
    /// A band is outside its limits, or no band lies inside the profile's band; the
    /// [`Error::Mismatch`] says which (exit code 1 on the command line).
    Fail(Error),
}

impl Verdict {
    /// True when a profile was given and the capture passed it.
    pub fn passed(&self) -> bool {
        matches!(self, Verdict::Pass)
    }

    /// True when a profile was given.
    pub fn judged(&self) -> bool {
        !matches!(self, Verdict::NotJudged)
    }

    /// The failure as an error; `Ok` when the capture passed or was not judged.
    pub fn into_result(self) -> Result<()> {
        match self {
            Verdict::Fail(e) => Err(e),
            _ => Ok(()),
        }
    }
}

impl<'a> Analysis<'a> {
    /// An analysis of the capture file at `path`: WAV, CSV, or raw (by extension: `.wav`,
    /// `.csv`, anything else is raw). A manifest `FILE.json` beside it (as `generate` writes)
    /// supplies the scale, unit, rate and sample format.
    pub fn of_path(path: impl AsRef<Path>) -> Analysis<'a> {
        Analysis::new(Input::Path(path.as_ref().to_path_buf()))
    }

    /// An analysis of physical samples in memory (one channel), `rate_hz` samples per second.
    /// Their unit is the profile's, or volts, unless set with [`Analysis::unit`].
    pub fn of_samples(samples: &'a [f64], rate_hz: f64) -> Analysis<'a> {
        Analysis::new(Input::Samples { samples, rate_hz })
    }

    fn new(input: Input<'a>) -> Analysis<'a> {
        Analysis {
            input,
            profile: None,
            s: Settings::default(),
            interrupt: None,
        }
    }

    /// Judges the capture against `profile` (designed at the capture's rate when the two
    /// differ).
    pub fn profile(mut self, profile: &'a Profile) -> Self {
        self.profile = Some(ProfileInput::Given(profile));
        self
    }

    /// Judges the capture against the profile file at `path`, read when the analysis starts
    /// (after the capture's manifest).
    pub fn profile_path(mut self, path: impl AsRef<Path>) -> Self {
        self.profile = Some(ProfileInput::Path(path.as_ref().to_path_buf()));
        self
    }

    /// A setting given as text, spelled as the profile's quantities are (`2V`, `48kHz`,
    /// `0.1Hz`, `1dB`, `i24` …): [`Setting::FullScale`], [`Setting::Rate`],
    /// [`Setting::SampleFormat`], [`Setting::Resolution`], [`Setting::Tolerance`],
    /// [`Setting::Exclude`] (frequencies or ranges, comma-separated: `50Hz,150Hz,1kHz..1.2kHz`),
    /// [`Setting::PpBand`] (`0.1Hz..10Hz`) or [`Setting::PpWindow`] (`10s`); checked when the
    /// analysis starts, with the same messages as the typed setters. Others are refused here:
    /// use their setters.
    pub fn text(mut self, setting: Setting, text: &str) -> Result<Analysis<'a>> {
        let t = Some(text.to_string());
        let s = &mut self.s;
        match setting {
            Setting::FullScale => s.full_scale = t,
            Setting::Rate => s.rate = t,
            Setting::SampleFormat => s.sample_format = t,
            Setting::Resolution => s.resolution = t,
            Setting::Tolerance => s.tolerance = t,
            Setting::Exclude => s.exclude = t,
            Setting::PpBand => s.pp_band = t,
            Setting::PpWindow => s.pp_window = t,
            other => {
                return Err(Error::setting(
                    other,
                    "is not given as text: use its own setter",
                ));
            }
        }
        Ok(self)
    }

    /// The physical value of digital 1.0, in the capture's unit (the profile's, else the
    /// manifest's, else volts): the values are taken as digital and multiplied by it
    /// (overriding a manifest).
    pub fn full_scale(mut self, value: f64) -> Self {
        self.s.full_scale = Some(format!("{value:e}"));
        self
    }

    /// The sample rate, Hz: required for a raw file (and a CSV file without a time column)
    /// unless a manifest gives it; otherwise it replaces the file's (or the samples') rate.
    pub fn rate_hz(mut self, rate_hz: f64) -> Self {
        self.s.rate = Some(format!("{rate_hz:e}"));
        self
    }

    /// The sample format of a raw file. Default: its extension (`.i16`, `.i24`, `.i32`,
    /// `.f32`, `.f64`) or its manifest.
    pub fn sample_format(mut self, format: SampleFormat) -> Self {
        self.s.sample_format = Some(format.name().into());
        self
    }

    /// The bin width of the density estimate, Hz (the Welch segment length is fs/bin width).
    /// Default: chosen from the record's length.
    pub fn resolution_hz(mut self, resolution_hz: f64) -> Self {
        self.s.resolution = Some(format!("{resolution_hz:e}"));
        self
    }

    /// The engineering tolerance added on both sides of each band's statistical interval,
    /// dB (≥ 0). Default [`DEFAULT_TOLERANCE_DB`].
    pub fn tolerance_db(mut self, tolerance_db: f64) -> Self {
        self.s.tolerance = Some(format!("{tolerance_db}"));
        self
    }

    /// The unit of samples given in memory (a file's comes from the file, its manifest or
    /// the profile). Default: the profile's, else volts; it must agree with the profile's.
    pub fn unit(mut self, unit: Unit) -> Self {
        self.s.unit = Some(unit);
        self
    }

    /// How the summary, the report and messages name samples given in memory. Default
    /// `samples`.
    pub fn label(mut self, label: &str) -> Self {
        self.s.label = Some(label.into());
        self
    }

    /// Writes an SVG picture of the density at `path` (measured with its 95 % band, designed,
    /// sources).
    pub fn plot(mut self, path: impl AsRef<Path>) -> Self {
        self.s.plot = Some(path.as_ref().to_path_buf());
        self
    }

    /// Writes a self-contained HTML report with every picture and table at `path`.
    pub fn report(mut self, path: impl AsRef<Path>) -> Self {
        self.s.report = Some(path.as_ref().to_path_buf());
        self
    }

    /// Fits the floor density, corner and slope (and burst levels when clearly present) and
    /// writes a profile `generate` accepts at `path`. The fit covers the profile's band, else
    /// the band in the capture's manifest, else bin 3 to fs/4.
    pub fn fit(mut self, path: impl AsRef<Path>) -> Self {
        self.s.fit = Some(path.as_ref().to_path_buf());
        self
    }

    /// Keeps the capture's offset and linear drift in the density estimate, the verdict, the
    /// fit and the windowed peak-to-peak (they are still reported). Default: the least-squares
    /// line through the record is taken out first.
    pub fn keep_drift(mut self, keep: bool) -> Self {
        self.s.keep_drift = keep;
        self
    }

    /// Frequencies left out of the verdict and the fit, Hz, each as a range `(lo, hi)` (equal
    /// ends for one frequency): the Welch bins from `lo` to `hi` and the Hann main lobe (±2
    /// bins) beyond. Default: none (spurs found are left out all the same).
    pub fn exclude_hz(mut self, ranges: &[(f64, f64)]) -> Self {
        let parts: Vec<String> = ranges
            .iter()
            .map(|&(lo, hi)| {
                if lo == hi {
                    format!("{lo:e}")
                } else {
                    format!("{lo:e}..{hi:e}")
                }
            })
            .collect();
        self.s.exclude = Some(parts.join(","));
        self
    }

    /// The band of the windowed peak-to-peak, Hz (`lo` > 0, `hi` below half the rate).
    /// Default 0.1 Hz to 10 Hz, measured only when the record holds a window and the rate the
    /// band; a band or window given must be measurable.
    pub fn pp_band_hz(mut self, lo_hz: f64, hi_hz: f64) -> Self {
        self.s.pp_band = Some(format!("{lo_hz:e}..{hi_hz:e}"));
        self
    }

    /// The window of the windowed peak-to-peak, s (> 0). Default 10 s.
    pub fn pp_window_s(mut self, window_s: f64) -> Self {
        self.s.pp_window = Some(format!("{window_s:e}"));
        self
    }

    /// Measures the overlapping Allan deviation of the capture (as a rate) at octave τ with
    /// its 95 % intervals, fits the inertial terms N, B and K, and with a profile checks each
    /// τ against the profile's own Allan deviation: JSON `allan` (see
    /// [`crate::analysis::allan`]).
    pub fn allan(mut self, on: bool) -> Self {
        self.s.allan = on;
        self
    }

    /// Writes an SVG picture of the Allan deviation at `path` (implies [`Analysis::allan`]).
    pub fn allan_plot(mut self, path: impl AsRef<Path>) -> Self {
        self.s.allan = true;
        self.s.allan_plot = Some(path.as_ref().to_path_buf());
        self
    }

    /// Analyses only these channels of a capture of several (0-based, in any order; repeats
    /// count once). Default: every channel.
    pub fn channels(mut self, channels: &[usize]) -> Self {
        self.s.channels = channels.to_vec();
        self
    }

    /// Prints the band table of every channel of a multi-channel capture in the summary, not
    /// only of the channels that fail. Default false.
    pub fn band_tables(mut self, all: bool) -> Self {
        self.s.band_tables = all;
        self
    }

    /// Polled between blocks: when it becomes true the analysis stops with
    /// [`Error::Interrupted`] and leaves none of its output files.
    pub fn interrupt_on(mut self, flag: &'a AtomicBool) -> Self {
        self.interrupt = Some(flag);
        self
    }

    /// Reads and measures the capture, judges it, writes the files asked for (all of them or
    /// none) and returns the report. A capture that fails its profile is not an error here:
    /// see [`AnalysisReport::verdict`].
    pub fn run(&self) -> Result<AnalysisReport> {
        let never = AtomicBool::new(false);
        let interrupted = self.interrupt.unwrap_or(&never);
        super::check_threads(None)?;
        super::on_pool(None, || self.analyse(interrupted))
    }

    fn analyse(&self, interrupted: &AtomicBool) -> Result<AnalysisReport> {
        output::check_paths(self)?;
        let mut setup = setup::Setup::new(self)?;
        let seg_len = measure::segment_length_of(&setup)?;
        // The output files are made before the passes, so a folder that cannot take them fails
        // before the work; they land together at the end or not at all.
        let outputs = output::Outputs::create(&self.s)?;
        let mut each = Vec::with_capacity(setup.channels.len());
        for k in setup.channels.clone() {
            setup.channel = k;
            each.push(measure_channel(&setup, seg_len, interrupted)?);
        }
        setup.channel = setup.channels[0];
        if setup.info.channels > 1 {
            return channels::several(self, &setup, each, seg_len, outputs, interrupted);
        }
        let Measurement {
            report,
            mut json,
            left_out_hz,
            integrated,
            ..
        } = each.pop().expect("one channel");
        let fitted = match &self.s.fit {
            Some(path) => {
                let (toml, fit_json) = fit::fit(&setup, &report)?;
                json["fit"] = fit_json;
                json["fit"]["profile_file"] = serde_json::json!(path.display().to_string());
                Some(toml)
            }
            None => None,
        };
        let allan = match self.s.allan {
            true => Some(allan::measure(&setup, interrupted)?),
            false => None,
        };
        if let Some(a) = &allan {
            json["allan"] = a.json.clone();
        }
        let allan_svg = allan.as_ref().and_then(|a| {
            self.s
                .allan_plot
                .as_ref()
                .map(|_| a.svg(&report.unit, setup.profile.as_ref()))
        });
        let extras = output::Extras {
            allan_svg: allan_svg.as_deref(),
            left_out: &left_out_hz,
            integrated: integrated.as_ref(),
            more: &[],
        };
        outputs.write(&report, &json, fitted.as_deref(), &setup, &extras)?;
        let mut summary = summary::summary_text(&report, &json, setup.profile.as_ref())
            + &summary::tone_text(&json, &report.unit);
        let mut verdict = verdict::verdict(&report, &setup);
        if let Some(a) = &allan {
            summary += &a.text(&report.unit);
            verdict = a.judge(verdict);
        }
        Ok(AnalysisReport {
            json,
            summary,
            verdict,
            measurement: report,
            channels: Vec::new(),
            correlation: None,
        })
    }
}

/// One channel measured and compared, with its JSON object as a capture of one channel has.
struct Measurement {
    report: CaptureReport,
    json: serde_json::Value,
    /// The line taken out before the density (none when the drift is kept), and the mean of
    /// what is left (unit).
    removed: Trend,
    shift: f64,
    /// Spans left out of the verdict (tones, spurs, excluded), Hz.
    left_out_hz: Vec<(f64, f64)>,
    /// The integrated noise over the profile's band.
    integrated: Option<IntegratedNoise>,
}

/// Measures channel `setup.channel`: the passes, the tones, the spurs, the comparison with the
/// profile and the JSON object.
fn measure_channel(
    setup: &setup::Setup,
    seg_len: usize,
    interrupted: &AtomicBool,
) -> Result<Measurement> {
    let mut measured = measure::measure(setup, seg_len, interrupted)?;
    let mut notes = setup.notes.clone();
    let (tones, tone_bins) = verdict::tones(setup, &mut measured, &mut notes, interrupted)?;
    let (spurs, excluded, lines) = bench::lines(setup, &mut measured, &tone_bins, &setup.bench);
    let comparison = verdict::compare(setup, &measured, &mut notes);
    let left_out = [tone_bins, lines].concat();
    let integrated = pictures::integrated(setup, &measured, &left_out);
    let left_out_hz = pictures::left_out_hz(&left_out, measured.spectrum.bin_width_hz());
    let fs = setup.info.sample_rate_hz;
    let (dc, drift) = bench::drift_json(&measured.trend, fs, !setup.bench.keep_drift);
    let pp = bench::pp_json(setup, &measured, &setup.bench, measured.pp_window);
    let removed = match setup.bench.keep_drift {
        true => Trend::none(),
        false => measured.trend,
    };
    let shift = measured.stats.mean() - removed.offset;
    let report = measure::report(setup, measured, comparison, notes);
    let mut json = report.to_json();
    if !tones.is_empty() {
        json["tones"] = serde_json::json!(tones);
    }
    if let (Some(band), Some(d)) = (setup.band_rms, &setup.design) {
        // The profile's own figures, by the functions `generate` and `budget` use.
        json["profile_rms"] = serde_json::json!({
            "band_rms": band,
            "file_noise_rms": d.noise_variance().sqrt(),
        });
    }
    json["dc"] = dc;
    json["drift"] = drift;
    json["spurs"] = spurs;
    json["excluded"] = excluded;
    json["window_peak_to_peak"] = pp;
    json["integrated"] = serde_json::json!(integrated);
    Ok(Measurement {
        report,
        json,
        removed,
        shift,
        left_out_hz,
        integrated,
    })
}

#[cfg(test)]
mod tests;
