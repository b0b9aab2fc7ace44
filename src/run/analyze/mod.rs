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

mod fit;
mod measure;
mod output;
mod read;
mod setup;
mod summary;
mod verdict;

use std::fmt;
use std::path::{Path, PathBuf};
use std::sync::atomic::AtomicBool;

use crate::analysis::capture::CaptureReport;
use crate::error::{Error, Result, Setting};
use crate::profile::{Profile, Unit};
use crate::sink::SampleFormat;

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
    /// unit²/Hz).
    pub measurement: CaptureReport,
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
    /// [`Setting::SampleFormat`], [`Setting::Resolution`] or [`Setting::Tolerance`]; checked
    /// when the analysis starts, with the same messages as the typed setters. Others are
    /// refused here: use their setters.
    pub fn text(mut self, setting: Setting, text: &str) -> Result<Analysis<'a>> {
        let t = Some(text.to_string());
        let s = &mut self.s;
        match setting {
            Setting::FullScale => s.full_scale = t,
            Setting::Rate => s.rate = t,
            Setting::SampleFormat => s.sample_format = t,
            Setting::Resolution => s.resolution = t,
            Setting::Tolerance => s.tolerance = t,
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
        super::on_pool(None, || self.analyse(interrupted))
    }

    fn analyse(&self, interrupted: &AtomicBool) -> Result<AnalysisReport> {
        let setup = setup::Setup::new(self)?;
        let seg_len = measure::segment_length_of(&setup)?;
        // The output files are made before the passes, so a folder that cannot take them fails
        // before the work; they land together at the end or not at all.
        let outputs = output::Outputs::create(&self.s)?;
        let mut measured = measure::measure(&setup, seg_len, interrupted)?;
        let mut notes = setup.notes.clone();
        let tones = verdict::tones(&setup, &mut measured, &mut notes, interrupted)?;
        let comparison = verdict::compare(&setup, &measured, &mut notes);
        let report = measure::report(&setup, measured, comparison, notes);
        let mut json = report.to_json();
        if !tones.is_empty() {
            json["tones"] = serde_json::json!(tones);
        }
        let fitted = match &self.s.fit {
            Some(path) => {
                let (toml, fit_json) = fit::fit(&setup, &report)?;
                json["fit"] = fit_json;
                json["fit"]["profile_file"] = serde_json::json!(path.display().to_string());
                Some(toml)
            }
            None => None,
        };
        outputs.write(&report, &json, fitted.as_deref(), &setup)?;
        let summary = summary::summary_text(&report, &json, setup.profile.as_ref())
            + &summary::tone_text(&json, &report.unit);
        let verdict = verdict::verdict(&report, &setup);
        Ok(AnalysisReport {
            json,
            summary,
            verdict,
            measurement: report,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::Generator;

    /// A white 4 nV/√Hz floor, 10 Hz – 20 kHz at 48 kHz.
    const WHITE: &str = "sample_rate = \"48 kHz\"\n[band]\nlow = \"10 Hz\"\nhigh = \"20 kHz\"\n\
                         [[floor]]\ndensity = \"4 nV/rtHz\"\n";

    fn white() -> Profile {
        Profile::from_toml_str(WHITE, "white.toml").unwrap()
    }

    /// Two seconds of the profile's noise, in volts.
    fn noise(p: &Profile, seed: u64) -> Vec<f64> {
        let mut x = vec![0.0; 96_000];
        Generator::new(p, seed).unwrap().fill(&mut x);
        x
    }

    fn scratch(tag: &str) -> PathBuf {
        let d = std::env::temp_dir().join(format!("nw-analysis-{}-{tag}", std::process::id()));
        std::fs::create_dir_all(&d).unwrap();
        d
    }

    /// The object without the facts about the container, which differ between a file and
    /// samples in memory.
    fn measured_part(mut json: serde_json::Value) -> serde_json::Value {
        json.as_object_mut().unwrap().remove("file");
        json
    }

    #[test]
    fn samples_in_memory_measure_as_their_raw_file() {
        let p = white();
        let x = noise(&p, 3);
        let d = scratch("raw");
        let path = d.join("x.f64");
        let bytes: Vec<u8> = x.iter().flat_map(|v| v.to_le_bytes()).collect();
        std::fs::write(&path, bytes).unwrap();
        let from_file = Analysis::of_path(&path)
            .rate_hz(48_000.0)
            .profile(&p)
            .run()
            .unwrap();
        let from_memory = Analysis::of_samples(&x, 48_000.0)
            .profile(&p)
            .run()
            .unwrap();
        // The same values in the same blocks: every number is the same bit for bit.
        assert_eq!(
            measured_part(from_file.json.clone()),
            measured_part(from_memory.json.clone())
        );
        assert!(from_file.verdict.passed() && from_memory.verdict.passed());
        assert_eq!(from_memory.json["file"]["format"], "memory");
        assert_eq!(from_memory.json["file"]["name"], "samples");
        assert_eq!(from_file.json["file"]["format"], "raw");
        assert!(
            from_memory
                .summary
                .contains("analyze samples (memory f64, 96000 samples")
        );
        std::fs::remove_dir_all(&d).unwrap();
    }

    #[test]
    fn typed_setters_read_as_their_text() {
        let p = white();
        let x = noise(&p, 4);
        let typed = Analysis::of_samples(&x, 48_000.0)
            .profile(&p)
            .resolution_hz(25.0)
            .tolerance_db(0.5)
            .full_scale(1e-6)
            .run()
            .unwrap();
        let text = Analysis::of_samples(&x, 48_000.0)
            .profile(&p)
            .text(Setting::Resolution, "25 Hz")
            .unwrap()
            .text(Setting::Tolerance, "0.5dB")
            .unwrap()
            .text(Setting::FullScale, "1 uV")
            .unwrap()
            .run()
            .unwrap();
        assert_eq!(typed.json, text.json);
        assert_eq!(typed.json["density"]["segment_length"], 1920); // 48 kHz / 25 Hz
        assert_eq!(typed.json["comparison"]["tolerance_db"], 0.5);
        assert_eq!(typed.json["file"]["full_scale"], 1e-6);
        assert_eq!(typed.json["file"]["scale_origin"], "--full-scale");
    }

    /// 6.02 dB above the design. A band whose upper limit is below +2 dB has a statistical
    /// interval (χ² at its Bonferroni share of 10⁻³, z ≈ 4) narrower than 1 dB, so its ratio's
    /// σ is under 0.25 dB: it measures 6.02 dB within 1 dB (4σ) and fails.
    #[test]
    fn a_capture_twice_the_design_fails_its_profile() {
        let p = white();
        let x: Vec<f64> = noise(&p, 5).iter().map(|v| 2.0 * v).collect();
        let report = Analysis::of_samples(&x, 48_000.0)
            .profile(&p)
            .label("doubled")
            .run()
            .unwrap();
        assert_eq!(report.json["pass"], false);
        let bands = report.json["comparison"]["bands"].as_array().unwrap();
        let narrow: Vec<_> = bands
            .iter()
            .filter(|b| b["limit_hi_db"].as_f64().unwrap() < 2.0)
            .collect();
        assert!(narrow.len() >= 10, "{} narrow bands", narrow.len());
        for b in narrow {
            let ratio = b["ratio_db"].as_f64().unwrap();
            assert!((ratio - 20.0 * 2f64.log10()).abs() < 1.0, "{b}");
            assert_eq!(b["pass"], false);
        }
        assert!(report.summary.contains("verdict         FAIL"));
        let Verdict::Fail(e) = report.verdict else {
            panic!("expected a failure");
        };
        assert_eq!(e.exit_code(), 1);
        assert!(
            e.to_string()
                .starts_with("doubled does not match white.toml: "),
            "{e}"
        );
    }

    #[test]
    fn refusals_name_their_setting() {
        let p = white();
        let x = noise(&p, 6);
        let setting_of = |r: Result<AnalysisReport>| match r {
            Err(Error::Setting { setting, .. }) => setting,
            other => panic!("expected a setting's error, got {other:?}"),
        };
        let amperes = Analysis::of_samples(&x, 48_000.0)
            .profile(&p)
            .unit(Unit::Ampere)
            .run();
        assert_eq!(setting_of(amperes), Setting::Unit);
        assert_eq!(
            setting_of(Analysis::of_samples(&x, 0.0).run()),
            Setting::Rate
        );
        assert_eq!(
            setting_of(Analysis::of_samples(&x, 48_000.0).tolerance_db(-1.0).run()),
            Setting::Tolerance
        );
        assert_eq!(
            setting_of(Analysis::of_samples(&x, 48_000.0).resolution_hz(0.0).run()),
            Setting::Resolution
        );
        let e = Analysis::of_samples(&x, 48_000.0)
            .text(Setting::Plot, "p.svg")
            .unwrap_err();
        assert!(e.to_string().starts_with("setting plot: "), "{e}");
        let few = Analysis::of_samples(&x[..10], 48_000.0).run().unwrap_err();
        assert_eq!(few.exit_code(), 2);
        let mut bad = x.clone();
        bad[70_000] = f64::NAN;
        let e = Analysis::of_samples(&bad, 48_000.0).run().unwrap_err();
        assert!(e.to_string().contains("sample 70000 is NaN"), "{e}");
    }

    #[test]
    fn an_interruption_leaves_none_of_the_files() {
        let p = white();
        let x = noise(&p, 7);
        let d = scratch("interrupt");
        let stop = AtomicBool::new(true);
        let r = Analysis::of_samples(&x, 48_000.0)
            .plot(d.join("p.svg"))
            .fit(d.join("f.toml"))
            .interrupt_on(&stop)
            .run();
        assert!(matches!(r, Err(Error::Interrupted)));
        assert_eq!(std::fs::read_dir(&d).unwrap().count(), 0);
        // Not interrupted, both land; the fitted profile reads back.
        let report = Analysis::of_samples(&x, 48_000.0)
            .plot(d.join("p.svg"))
            .fit(d.join("f.toml"))
            .run()
            .unwrap();
        assert!(
            std::fs::read_to_string(d.join("p.svg"))
                .unwrap()
                .starts_with("<svg")
        );
        Profile::from_path(d.join("f.toml")).unwrap();
        assert_eq!(
            report.json["fit"]["profile_file"],
            d.join("f.toml").display().to_string()
        );
        std::fs::remove_dir_all(&d).unwrap();
    }
}
