//! `noisewright generate`: the flags become a [`Render`]; its summary is printed.

use std::path::PathBuf;
use std::sync::atomic::AtomicBool;

use noisewright::{Profile, Render, RenderReport};
use noisewright::{Result, Setting};

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
    /// Make only shard K (0-based) of N consecutive, equal-as-possible parts of the run that
    /// --duration/--samples define; `{shard}` in OUT becomes K (zero-padded). The N shards
    /// joined (`noisewright join`) are the whole run, byte for byte.
    #[arg(long, value_name = "K/N")]
    pub shard: Option<String>,
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
    /// converter, mid-tread; CSV, raw, .npy or C header output (raw in the smallest
    /// u8/u16/u32 or i8/i16/i32).
    #[arg(long, value_name = "N")]
    pub bits: Option<u32>,
    /// The ADC's input range in the profile's unit, e.g. `-1.65V..1.65V` or `0V..3.3V`
    /// (needs --bits).
    #[arg(long, value_name = "LO..HI", allow_hyphen_values = true)]
    pub range: Option<String>,
    /// ADC code numbering: `twos` (two's complement, signed; default when the range holds
    /// both signs) or `offset-binary` (unsigned; default otherwise; `offset` is accepted too).
    #[arg(long, value_name = "CODING")]
    pub code: Option<String>,
    /// Dither added before rounding: `tpdf` (triangular, ±1 LSB peak) or `none` (default).
    #[arg(long, value_name = "KIND")]
    pub dither: Option<String>,
}

/// Runs `generate`; returns the report (its summary is empty when a reader closed the output
/// pipe). `interrupted` is polled between chunks: when it becomes true the run stops, and no
/// file is left under the target name.
pub fn run(args: &GenerateArgs, interrupted: &AtomicBool) -> Result<RenderReport> {
    // Checked before the profile is read, as the command always has.
    noisewright::run::check_threads(args.threads)?;
    let profile = Profile::from_path(&args.profile)?;
    let mut render = Render::new(&profile)
        .seed(args.seed)
        .loop_buffer(args.loop_buffer)
        .allow_clipping(args.allow_clipping)
        .progress(true)
        .interrupt_on(interrupted);
    let texts = [
        (Setting::Duration, &args.duration),
        (Setting::Start, &args.start),
        (Setting::Shard, &args.shard),
        (Setting::Rate, &args.rate),
        (Setting::Format, &args.format),
        (Setting::Name, &args.name),
        (Setting::SampleFormat, &args.sample_format),
        (Setting::FullScale, &args.full_scale),
        (Setting::Level, &args.level),
        (Setting::Range, &args.range),
        (Setting::Code, &args.code),
        (Setting::Dither, &args.dither),
    ];
    for (setting, text) in texts {
        if let Some(t) = text {
            render = render.text(setting, t)?;
        }
    }
    render = render.text(Setting::Columns, &args.columns)?;
    if let Some(n) = args.samples {
        render = render.samples(n);
    }
    if let Some(n) = args.start_sample {
        render = render.start_sample(n);
    }
    if let Some(n) = args.threads {
        render = render.threads(n);
    }
    if let Some(b) = args.bits {
        render = render.bits(b);
    }
    match args.output.as_deref() {
        Some("-") => render.to_stdout(),
        Some(p) => render.to_path(p),
        None => render.to_folder("out"),
    }
}
