//! `noisewright analyze`: the flags become an [`Analysis`]; its summary or JSON object is
//! printed, and a capture that fails its profile ends the command with exit code 1.

use std::path::PathBuf;
use std::sync::atomic::AtomicBool;

use noisewright::{Analysis, AnalysisReport};
use noisewright::{Result, Setting};

/// Options of `noisewright analyze`.
#[derive(Debug, Clone, clap::Args)]
pub struct AnalyzeArgs {
    /// The capture: WAV, CSV, or raw (by extension: .wav, .csv, anything else is raw). A
    /// manifest FILE.json beside it supplies the scale, unit, rate and sample format.
    pub file: PathBuf,
    /// Judge the capture against this profile (TOML): exit 0 when it passes, 1 when not.
    #[arg(long, value_name = "P")]
    pub profile: Option<PathBuf>,
    /// Physical value of digital 1.0, e.g. `2V` (overrides the manifest).
    #[arg(long = "full-scale", value_name = "Q")]
    pub full_scale: Option<String>,
    /// Sample rate, e.g. `48kHz` (raw files and CSV without a time column need it unless a
    /// manifest gives it; otherwise it overrides the file's).
    #[arg(long, value_name = "R")]
    pub rate: Option<String>,
    /// Sample format of a raw file: f32, f64, i16, i24, i32 (default: the extension or the
    /// manifest).
    #[arg(long = "sample-format", value_name = "F")]
    pub sample_format: Option<String>,
    /// Bin width of the density estimate, e.g. `0.1Hz` (sets the Welch segment length fs/R).
    /// Default: chosen from the record length (see README).
    #[arg(long, value_name = "HZ")]
    pub resolution: Option<String>,
    /// Engineering tolerance added on both sides of each band's statistical interval, e.g.
    /// `1dB` (default 1 dB).
    #[arg(long, value_name = "DB")]
    pub tolerance: Option<String>,
    /// Write an SVG picture of the density (measured with its 95 % band, designed, sources).
    #[arg(long, value_name = "OUT.svg")]
    pub plot: Option<PathBuf>,
    /// Write a self-contained HTML report with all pictures and tables.
    #[arg(long, value_name = "OUT.html")]
    pub report: Option<PathBuf>,
    /// Print one JSON object with every number instead of the text summary.
    #[arg(long)]
    pub json: bool,
    /// Fit floor density, corner and slope (and burst levels when clearly present) and write
    /// a profile that `generate` accepts. The fit covers the band of --profile, else the band
    /// in the file's manifest, else bin 3 to fs/4.
    #[arg(long, value_name = "OUT.toml")]
    pub fit: Option<PathBuf>,
    /// Keep the offset and linear drift in the density estimate, the verdict, the fit and the
    /// windowed peak-to-peak (by default the least-squares line is taken out first).
    #[arg(long = "keep-drift")]
    pub keep_drift: bool,
    /// Frequencies to leave out of the verdict and the fit, e.g. `50Hz,150Hz` or a range
    /// `1kHz..1.2kHz` (each with ±2 bins, the window's main lobe); repeatable.
    #[arg(long, value_name = "F[,F…]")]
    pub exclude: Vec<String>,
    /// Band of the windowed peak-to-peak, e.g. `0.1Hz..10Hz` (the default, measured when the
    /// record holds a window).
    #[arg(long = "pp-band", value_name = "LO..HI")]
    pub pp_band: Option<String>,
    /// Window of the windowed peak-to-peak, e.g. `10s` (the default).
    #[arg(long = "pp-window", value_name = "T")]
    pub pp_window: Option<String>,
    /// Measure the overlapping Allan deviation of the capture (a rate) at octave τ with 95 %
    /// intervals, fit the random walk N, bias instability B and rate random walk K, and with
    /// --profile check each τ against the profile's own Allan deviation.
    #[arg(long)]
    pub allan: bool,
    /// Write an SVG picture of the Allan deviation (implies --allan).
    #[arg(long = "allan-plot", value_name = "OUT.svg")]
    pub allan_plot: Option<PathBuf>,
    /// Analyse only channel N of a multi-channel capture (0-based); repeatable. Default: every
    /// channel.
    #[arg(long = "channel", value_name = "N")]
    pub channel: Vec<usize>,
    /// Print the band table of every channel of a multi-channel capture (by default only of
    /// the channels that fail).
    #[arg(long = "band-tables")]
    pub band_tables: bool,
}

/// Runs `analyze`: reads, measures and judges the capture, writes the files asked for, and
/// returns the report. A capture that fails its profile is not an error here: see
/// [`AnalysisReport::verdict`].
pub fn run(args: &AnalyzeArgs, interrupted: &AtomicBool) -> Result<AnalysisReport> {
    let mut analysis = Analysis::of_path(&args.file).interrupt_on(interrupted);
    if let Some(p) = &args.profile {
        analysis = analysis.profile_path(p);
    }
    let exclude = (!args.exclude.is_empty()).then(|| args.exclude.join(","));
    let texts = [
        (Setting::FullScale, &args.full_scale),
        (Setting::Rate, &args.rate),
        (Setting::SampleFormat, &args.sample_format),
        (Setting::Resolution, &args.resolution),
        (Setting::Tolerance, &args.tolerance),
        (Setting::Exclude, &exclude),
        (Setting::PpBand, &args.pp_band),
        (Setting::PpWindow, &args.pp_window),
    ];
    for (setting, text) in texts {
        if let Some(t) = text {
            analysis = analysis.text(setting, t)?;
        }
    }
    if let Some(p) = &args.plot {
        analysis = analysis.plot(p);
    }
    if let Some(p) = &args.report {
        analysis = analysis.report(p);
    }
    if let Some(p) = &args.fit {
        analysis = analysis.fit(p);
    }
    if let Some(p) = &args.allan_plot {
        analysis = analysis.allan_plot(p);
    }
    analysis
        .keep_drift(args.keep_drift)
        .allan(args.allan || args.allan_plot.is_some())
        .channels(&args.channel)
        .band_tables(args.band_tables)
        .run()
}

/// What `analyze` prints: the JSON object with `--json`, else the text summary.
pub fn output(args: &AnalyzeArgs, report: &AnalysisReport) -> String {
    if args.json {
        report.json_text()
    } else {
        report.summary.clone()
    }
}
