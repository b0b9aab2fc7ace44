//! `noisewright analyze`: measure a capture — density, statistics, burst levels — and judge
//! it against a profile; optionally fit a profile to it and draw pictures.

use std::fs;
use std::io::{BufReader, Read};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::mpsc;

use crate::analysis::capture::{
    BANDS_PER_DECADE, CaptureReport, FIRST_BIN, FirstPass, rms_per_decade, segment_length,
};
use crate::analysis::compare::{Comparison, compare_with_design, expected_band_psd};
use crate::analysis::fit::{FitOptions, fit_floor};
use crate::analysis::moments::{CentralMoments, SIGMA_LEVELS, gaussian_within};
use crate::analysis::tones::{ToneFit, without_tones};
use crate::error::{Error, Result, Setting};
use crate::io::sink::{Format, SampleFormat};
use crate::io::source::{Scale, SideManifest, SourceOptions, StreamInfo, open_source};
use crate::model::burst::BurstModel;
use crate::model::tone::enob;
use crate::profile::{Burst, BurstSampling};
use crate::profile::{Dimension, Profile, Unit, format_quantity, parse_profile, parse_quantity};
use crate::report::figure;
use crate::run::{PendingFile, commit_all, manifest_path};
use crate::synth::Generator;

/// Samples read per block.
const BLOCK: usize = 1 << 16;
/// Samples of the trace kept for the picture.
const TRACE_SAMPLES: usize = 4096;
/// Histogram bins between the record's min and max.
const HIST_BINS: usize = 201;
/// A tone's leakage is left out of the bins where it exceeds this fraction of the designed
/// noise density (biasing a kept bin by < 0.005 dB).
pub const TONE_LEAKAGE: f64 = 1e-3;
/// Total false-failure probability of the band verdicts, split over the bands (Bonferroni).
pub const FALSE_ALARM: f64 = 1e-3;
/// Default engineering tolerance, dB.
pub const DEFAULT_TOLERANCE_DB: f64 = 1.0;

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
}

/// The container of a capture, from its extension: `.wav`, `.csv`, `.npy` and `.h` (both
/// refused by the readers), anything else raw.
fn format_of(path: &Path) -> Format {
    match path
        .extension()
        .map(|e| e.to_string_lossy().to_ascii_lowercase())
        .as_deref()
    {
        Some("wav") => Format::Wav,
        Some("csv") => Format::Csv,
        // Not read: named so the refusal says why instead of reading a header as samples.
        Some("npy") => Format::Npy,
        Some("h") => Format::C,
        _ => Format::Raw,
    }
}

fn open_file(path: &Path) -> Result<fs::File> {
    if path.is_dir() {
        return Err(Error::input(
            path.display().to_string(),
            "is a folder; expected a capture file (WAV, CSV or raw)",
        ));
    }
    fs::File::open(path)
        .map_err(|e| Error::input(path.display().to_string(), format!("cannot open: {e}")))
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

/// Blocks read ahead of the analysis in [`pass`].
const READ_AHEAD: usize = 3;

/// One pass over the capture: every physical sample goes to `each`, in order.
///
/// A reader thread opens, reads, decodes, checks and scales the file block by block while
/// `each` analyses the block before; blocks go back and forth through two channels, so at
/// most `READ_AHEAD + 1` blocks are held.
fn pass(
    path: &Path,
    options: &SourceOptions,
    scale: &Scale,
    interrupted: &AtomicBool,
    each: &mut dyn FnMut(&[f64]),
) -> Result<StreamInfo> {
    let (full_tx, full_rx) = mpsc::sync_channel::<Vec<f64>>(READ_AHEAD);
    let (empty_tx, empty_rx) = mpsc::channel::<Vec<f64>>();
    for _ in 0..=READ_AHEAD {
        empty_tx
            .send(Vec::with_capacity(BLOCK))
            .expect("the receiver is alive");
    }
    std::thread::scope(|threads| {
        let reader = threads.spawn(move || -> Result<StreamInfo> {
            let mut src = open_source(open_file(path)?, options)?;
            let mut done: u64 = 0;
            // The analysis hands every block back until it stops early.
            while let Ok(mut block) = empty_rx.recv() {
                if interrupted.load(Ordering::Relaxed) {
                    return Err(Error::Interrupted);
                }
                let n = src.read_block(&mut block, BLOCK)?;
                if n == 0 {
                    break;
                }
                if let Some(i) = block.iter().position(|v| !v.is_finite()) {
                    return Err(Error::input(
                        &options.name,
                        format!(
                            "sample {} is {}; only finite samples can be analysed",
                            done + i as u64,
                            block[i]
                        ),
                    ));
                }
                if scale.gain != 1.0 {
                    block.iter_mut().for_each(|v| *v *= scale.gain);
                }
                done += n as u64;
                if full_tx.send(block).is_err() {
                    break;
                }
            }
            Ok(src.info().clone())
        });
        for block in full_rx {
            each(&block);
            // The reader may have stopped already; then the block is simply dropped.
            let _ = empty_tx.send(block);
        }
        reader
            .join()
            .unwrap_or_else(|panic| std::panic::resume_unwind(panic))
    })
}

/// Samples in a capture, known or estimated before reading it: the header's count, the size
/// of a raw file or of a WAV whose header does not say (an upper bound), or the lines of a
/// CSV file.
fn sample_count(path: &Path, info: &StreamInfo) -> Result<u64> {
    if let Some(n) = info.frames {
        return Ok(n);
    }
    match info.format {
        Format::Raw | Format::Wav => {
            let len = fs::metadata(path)
                .map_err(|e| Error::io(format!("reading {}", path.display()), e))?
                .len();
            let frame = info.sample_format.map_or(1, |s| s.bytes()) * usize::from(info.channels);
            Ok(len / frame.max(1) as u64)
        }
        _ => {
            // Count newlines (an upper bound: headers, comments and blank lines count too).
            let mut r = BufReader::with_capacity(1 << 16, open_file(path)?);
            let mut buf = vec![0u8; 1 << 16];
            let mut lines = 0u64;
            loop {
                let n = r
                    .read(&mut buf)
                    .map_err(|e| Error::io(format!("reading {}", path.display()), e))?;
                if n == 0 {
                    break;
                }
                lines += buf[..n].iter().filter(|&&b| b == b'\n').count() as u64;
            }
            Ok(lines.saturating_sub(1).max(1))
        }
    }
}

/// What `run` hands back to the command line: text for standard output and whether the
/// capture passed (None without a profile).
pub struct AnalyzeOutcome {
    /// The summary text or the JSON object.
    pub output: String,
    /// The verdict's failure, when a profile was given and the capture failed it.
    pub failure: Option<Error>,
}

/// Run `analyze`.
pub fn run(args: &AnalyzeArgs, interrupted: &AtomicBool) -> Result<AnalyzeOutcome> {
    let name = args.file.display().to_string();
    let format = format_of(&args.file);
    let mpath = manifest_path(&args.file);
    let manifest = if mpath.is_file() {
        let text = fs::read_to_string(&mpath).map_err(|e| {
            if e.kind() == std::io::ErrorKind::InvalidData {
                Error::input(
                    mpath.display().to_string(),
                    "not valid UTF-8 text; expected the JSON manifest that generate writes \
                     beside its output (or remove it)",
                )
            } else {
                Error::io(format!("reading {}", mpath.display()), e)
            }
        })?;
        Some(SideManifest::parse(&text, &mpath.display().to_string())?)
    } else {
        None
    };
    let mut profile = match &args.profile {
        Some(p) => {
            let f = p.display().to_string();
            let text = fs::read_to_string(p)
                .map_err(|e| Error::setting(Setting::Profile, format!("cannot read {f}: {e}")))?;
            Some(parse_profile(&text, &f)?)
        }
        None => None,
    };
    let unit_hint = profile
        .as_ref()
        .map(|p| p.unit.symbol())
        .or(manifest.as_ref().and_then(|m| m.unit).map(|u| u.symbol()))
        .unwrap_or("V");
    let sample_format = match &args.sample_format {
        Some(s) => Some(s.parse::<SampleFormat>()?),
        None => {
            let named = match format {
                Format::Raw => args
                    .file
                    .extension()
                    .and_then(|e| SampleFormat::from_extension(&e.to_string_lossy())),
                _ => None,
            };
            let stated = manifest.as_ref().and_then(|m| m.sample_format);
            if let (Some(n), Some(m)) = (named, stated) {
                if n != m {
                    return Err(Error::input(
                        mpath.display().to_string(),
                        format!(
                            "sample_format: says {m}, but the name of {name} (.{n}) says {n}; \
                             give \u{1}sample_format\u{1} to say which is right"
                        ),
                    ));
                }
            }
            named.or(stated)
        }
    };
    let rate = match &args.rate {
        Some(r) => Some(
            parse_quantity(r, Dimension::Frequency, unit_hint)
                .map_err(|m| Error::setting(Setting::Rate, m))?,
        ),
        None => None,
    };
    let full_scale = match &args.full_scale {
        Some(q) => {
            let v = parse_quantity(q, Dimension::Amplitude, unit_hint)
                .map_err(|m| Error::setting(Setting::FullScale, m))?;
            if !(v.is_finite() && v > 0.0) {
                return Err(Error::setting(
                    Setting::FullScale,
                    format!("expected a positive value such as 2V, got {q:?}"),
                ));
            }
            Some(v)
        }
        None => None,
    };
    let resolution = match &args.resolution {
        Some(r) => Some(
            parse_quantity(r, Dimension::Frequency, unit_hint)
                .map_err(|m| Error::setting(Setting::Resolution, m))?,
        ),
        None => None,
    };
    let tolerance_db = match &args.tolerance {
        Some(t) => parse_db(t)?,
        None => DEFAULT_TOLERANCE_DB,
    };
    let options = SourceOptions {
        format,
        sample_format,
        rate_hz: rate,
        fallback_rate_hz: manifest.as_ref().and_then(|m| m.sample_rate_hz),
        name: name.clone(),
    };

    // The header alone, to settle the scale, rate and segment length before the passes.
    let info = open_source(open_file(&args.file)?, &options)?
        .info()
        .clone();
    // A --full-scale value was parsed in the unit of the profile or manifest (volts when
    // neither says), so that is the unit of the scaled values.
    let full_scale_unit = full_scale.map(|_| match unit_hint {
        "A" => Unit::Ampere,
        _ => Unit::Volt,
    });
    let profile_name = args
        .profile
        .as_ref()
        .map_or("--full-scale".to_string(), |p| p.display().to_string());
    let scale = Scale::resolve(
        info.values,
        manifest.as_ref(),
        full_scale,
        profile
            .as_ref()
            .map(|p| p.unit)
            .or(full_scale_unit)
            .map(|u| (u, profile_name.as_str())),
        &name,
    )?;
    let fs = info.sample_rate_hz;
    let mut notes = info.notes.clone();
    let design = match profile.as_mut() {
        None => None,
        Some(p) => {
            if !scale.is_physical() {
                return Err(Error::setting(
                    Setting::FullScale,
                    format!(
                        "{name} holds digital values and no manifest gives their scale: say \
                         which physical value digital 1.0 is, e.g. \u{1}full_scale\u{1} 2V"
                    ),
                ));
            }
            if fs != p.sample_rate_hz {
                if p.band.high_hz > fs / 2.0 {
                    return Err(Error::setting(
                        Setting::Profile,
                        format!(
                            "band.high = {} in {profile_name} is above half the rate of {name} \
                             ({} at {}): the capture cannot hold that band; judge it against a \
                             profile whose band ends at {} or lower",
                            format_quantity(p.band.high_hz, "Hz"),
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
            // The whole designed density: the Gaussian design plus every burst's sampled
            // density (the seed is irrelevant: only the design is used).
            Some(Generator::new(p, 0)?)
        }
    };
    let n_hint = sample_count(&args.file, &info)?;
    if n_hint < 16 {
        return Err(Error::input(
            &name,
            format!("{n_hint} samples: too few to analyse; a density estimate needs at least 16"),
        ));
    }
    let seg_len = segment_length(
        fs,
        n_hint,
        resolution,
        profile.as_ref().map(|p| p.band.low_hz),
    )?;

    // The output files are made before the passes, so a folder that cannot take them fails
    // before the work; they land together at the end or not at all.
    let pending = |p: &Option<PathBuf>| p.as_deref().map(PendingFile::create).transpose();
    let (fit_out, plot_out, report_out) = (
        pending(&args.fit)?,
        pending(&args.plot)?,
        pending(&args.report)?,
    );

    let mut first = FirstPass::new(fs, seg_len, TRACE_SAMPLES);
    pass(&args.file, &options, &scale, interrupted, &mut |x| {
        first.push(x)
    })?;
    let st = first.stats;
    if st.count() < 16 {
        return Err(Error::input(
            &name,
            format!("{} samples: too few to analyse", st.count()),
        ));
    }
    // One LSB of an integer file, in the capture's unit: codes of a coarsely quantised signal
    // are not burst levels.
    let quantum = match (info.sample_format, scale.full_scale) {
        (Some(sf), Some(fsc)) => sf.lsb(fsc),
        (Some(sf), None) if sf.is_integer() => sf.lsb(1.0),
        _ => None,
    };
    // The burst-level search needs only pass 1's trace: it runs on the pool while pass 2 reads
    // the file again.
    let mut moments = CentralMoments::new(st.mean(), st.std(), st.min(), st.max(), HIST_BINS);
    let (levels, second) = rayon::join(
        || first.levels.detect(quantum),
        || {
            pass(&args.file, &options, &scale, interrupted, &mut |x| {
                moments.push(x)
            })
        },
    );
    second?;

    let spectrum = first.welch.finish();
    if spectrum.segments == 0 {
        return Err(Error::Unsupported(format!(
            "{name} has {} samples, fewer than one {seg_len}-sample segment; ask for a coarser \
             \u{1}resolution\u{1}",
            st.count()
        )));
    }
    let mut bands = if spectrum.psd.len() > FIRST_BIN {
        spectrum.log_bands(FIRST_BIN, BANDS_PER_DECADE)
    } else {
        Vec::new()
    };

    // The quantisation floor of integer formats, added to the designed density (uniform
    // error model, Q/√(6·fs) per √Hz with Q one LSB; REFERENCES §9, IEEE Std 1241).
    let q_psd = match (info.sample_format, scale.full_scale) {
        (Some(sf), Some(fsc)) if sf.is_integer() => {
            let lsb = sf.lsb(fsc).expect("integer");
            lsb * lsb / (6.0 * fs)
        }
        _ => 0.0,
    };
    // Tones of the profile: leave the bins their leakage reaches out of every band (so the
    // comparison and the floor fit see the noise only) and fit their amplitudes.
    let mut tone_json = Vec::new();
    if let (Some(p), Some(d)) = (&profile, &design) {
        if !p.tones.is_empty() {
            let noise = |f: f64| d.density(f) + q_psd;
            let excluded;
            (bands, excluded) = without_tones(bands, &spectrum, &p.tones, &noise, TONE_LEAKAGE);
            let freqs: Vec<f64> = p.tones.iter().map(|t| t.frequency_hz).collect();
            let mut fit = ToneFit::new(&freqs, fs);
            pass(&args.file, &options, &scale, interrupted, &mut |x| {
                fit.push(x)
            })?;
            let fitted = fit.finish().map(|(t, _)| t);
            // Measured in-band noise: the Welch bins inside the band, each tone's excluded
            // bins counted at the designed density instead.
            let df = fs / spectrum.seg_len as f64;
            let in_band = |k: usize| {
                let f = k as f64 * df;
                f >= p.band.low_hz && f <= p.band.high_hz
            };
            let noise_power: f64 = (1..spectrum.psd.len())
                .filter(|&k| in_band(k))
                .map(|k| {
                    if excluded.iter().any(|e| e.contains(&k)) {
                        noise(k as f64 * df) * df
                    } else {
                        spectrum.psd[k] * df
                    }
                })
                .sum();
            let expected = d.tone_snr(p.band.low_hz, p.band.high_hz, q_psd * fs / 2.0);
            let sigma_a = (d.noise_variance() * 2.0 / st.count() as f64).sqrt();
            for (i, t) in p.tones.iter().enumerate() {
                let m = fitted.as_ref().map(|v| v[i]);
                let measured_snr = m.map(|m| 10.0 * (0.5 * m.peak * m.peak / noise_power).log10());
                tone_json.push(serde_json::json!({
                    "name": t.name,
                    "frequency_hz": t.frequency_hz,
                    "expected_peak": t.peak,
                    "measured_peak": m.map(|m| m.peak),
                    "measured_rms": m.map(|m| m.peak / std::f64::consts::SQRT_2),
                    "measured_phase_deg": m.map(|m| m.phase_rad.to_degrees()),
                    "peak_std_white": sigma_a,
                    "expected_snr_db": expected[i].0,
                    "measured_snr_db": measured_snr,
                    "measured_enob_bits": measured_snr.map(enob),
                    "excluded_bins": [excluded[i].start, excluded[i].end],
                }));
            }
            notes.push(format!(
                "{} tone(s) fitted by least squares at their frequencies; the Welch bins their \
                 leakage reaches are left out of the comparison and the fit",
                p.tones.len()
            ));
        }
    }
    let comparison: Option<Comparison> = match (&profile, &design) {
        (Some(p), Some(d)) => {
            let c = compare_with_design(
                &bands,
                &spectrum,
                &p.band,
                &|f| d.density(f) + q_psd,
                FALSE_ALARM,
                tolerance_db,
            );
            if c.bands.is_empty() {
                notes.push(
                    "no band of the estimate lies inside the profile's band: use a finer \
                     \u{1}resolution\u{1} or a longer capture"
                        .to_string(),
                );
            }
            if q_psd > 0.0 {
                notes.push(format!(
                    "the designed density includes the {}-bit quantisation floor {}",
                    info.sample_format.map_or(0, |s| 8 * s.bytes()),
                    format_quantity(q_psd.sqrt(), &format!("{}/√Hz", scale.symbol()))
                ));
            }
            Some(c)
        }
        _ => None,
    };
    let decades = rms_per_decade(&spectrum);
    let report = CaptureReport {
        file: serde_json::json!({
            "name": name,
            "format": info.format.name(),
            "sample_format": info.sample_format.map(|s| s.name()),
            "channels": info.channels,
            "full_scale": scale.full_scale,
            "scale_origin": scale.origin,
            "manifest": manifest.is_some(),
        }),
        unit: scale.symbol().to_string(),
        sample_rate_hz: fs,
        stats: st,
        moments,
        spectrum,
        bands,
        decades,
        trace: first.trace,
        comparison,
        levels,
        notes,
    };

    let mut json = report.to_json();
    if !tone_json.is_empty() {
        json["tones"] = serde_json::json!(tone_json);
    }
    if let (Some(path), Some(out)) = (&args.fit, &fit_out) {
        // The band of --profile, else the band recorded in the manifest of a generated file.
        let band = profile
            .as_ref()
            .map(|p| p.band)
            .or(manifest.as_ref().and_then(|m| m.band));
        // Detected bursts add their own (Lorentzian) density: take the model of the detected
        // chain out of the measurement first, so the floor fit sees the Gaussian part only.
        let without_bursts = report.levels.as_ref().map(|lv| {
            let mut r = report.clone();
            let burst = Burst {
                name: "detected".into(),
                levels: lv.levels.clone(),
                dwell_s: lv.dwell_s.clone(),
                next: Burst::default_next(lv.levels.len()),
                sampling: BurstSampling::Instant,
            };
            if let Ok(model) = BurstModel::new(&burst, fs) {
                r.bands.retain_mut(|b| {
                    let burst_psd =
                        expected_band_psd(&|f| model.density(f), &r.spectrum, b.bins.clone());
                    let rest = b.psd_mean - burst_psd;
                    // Bands the burst dominates say little about the floor: leave them out.
                    let keep = rest > 0.5 * b.psd_mean;
                    b.psd_mean = rest;
                    keep
                });
            }
            r
        });
        let options = FitOptions { band };
        // When the bursts dominate nearly every band, too few remain: fit them all then.
        let fit = match &without_bursts {
            Some(r) => fit_floor(r, &options).or_else(|_| fit_floor(&report, &options)),
            None => fit_floor(&report, &options),
        }
        .map_err(|e| match e {
            Error::Unsupported(m) => Error::setting(Setting::Fit, format!("{name}: {m}")),
            e => e,
        })?;
        let toml = fit.to_profile_toml(&report, &name);
        out.write_all(toml.as_bytes())?;
        json["fit"] = fit.to_json();
        json["fit"]["profile_file"] = serde_json::json!(path.display().to_string());
    }
    let density_svg = (args.plot.is_some() || args.report.is_some())
        .then(|| figure::density_svg(&report, profile.as_ref(), design.as_ref()));
    if let (Some(out), Some(svg)) = (&plot_out, &density_svg) {
        out.write_all(svg.as_bytes())?;
    }
    if let Some(out) = &report_out {
        let html = figure::report_html(
            &report,
            &json,
            density_svg.as_deref().unwrap_or(""),
            profile.as_ref(),
        );
        out.write_all(html.as_bytes())?;
    }
    commit_all(
        [fit_out, plot_out, report_out]
            .into_iter()
            .flatten()
            .collect(),
    )?;
    let output = if args.json {
        let mut s = serde_json::to_string_pretty(&json).expect("JSON values serialise");
        s.push('\n');
        s
    } else {
        summary_text(&report, &json, profile.as_ref()) + &tone_text(&json, &report.unit)
    };
    let failure = report.comparison.as_ref().and_then(|c| {
        if c.pass {
            return None;
        }
        let pname = args
            .profile
            .as_ref()
            .map_or(String::new(), |p| p.display().to_string());
        Some(Error::Mismatch(match c.failure_line() {
            Some(line) => format!("{name} does not match {pname}: {line}"),
            None => format!("{name} could not be checked against {pname}: no band inside its band"),
        }))
    });
    Ok(AnalyzeOutcome { output, failure })
}

/// Summary lines for the fitted tones of `json["tones"]` (empty without any).
fn tone_text(json: &serde_json::Value, unit: &str) -> String {
    let Some(tones) = json["tones"].as_array() else {
        return String::new();
    };
    let mut s = String::new();
    for t in tones {
        let q = |k: &str| {
            t[k].as_f64()
                .map_or("-".into(), |v| format_quantity(v, unit))
        };
        let db = |k: &str| t[k].as_f64().map_or("-".into(), |v| format!("{v:.2} dB"));
        s += &format!(
            "  tone            {} at {}: measured {} peak (designed {}, ±{} 1σ for white \
             noise), SNR {} (designed {})\n",
            t["name"].as_str().unwrap_or(""),
            format_quantity(t["frequency_hz"].as_f64().unwrap_or(0.0), "Hz"),
            q("measured_peak"),
            q("expected_peak"),
            q("peak_std_white"),
            db("measured_snr_db"),
            db("expected_snr_db"),
        );
    }
    s
}

fn summary_text(r: &CaptureReport, json: &serde_json::Value, profile: Option<&Profile>) -> String {
    let u = r.unit.as_str();
    let q = |v: f64| format_quantity(v, u);
    let st = &r.stats;
    let sp = &r.spectrum;
    let mut s = String::new();
    let f = &r.file;
    s += &format!(
        "noisewright {}: analyze {} ({} {}, {} samples at {}, {})\n",
        env!("CARGO_PKG_VERSION"),
        f["name"].as_str().unwrap_or(""),
        f["format"].as_str().unwrap_or(""),
        f["sample_format"].as_str().unwrap_or("text"),
        st.count(),
        format_quantity(r.sample_rate_hz, "Hz"),
        format_quantity(st.count() as f64 / r.sample_rate_hz, "s"),
    );
    match f["full_scale"].as_f64() {
        Some(fsc) => {
            s += &format!(
                "  scale           digital 1.0 = {} (from {})\n",
                q(fsc),
                f["scale_origin"].as_str().unwrap_or("")
            )
        }
        None if u == "FS" => {
            s += "  scale           digital values (no full scale known: give --full-scale)\n"
        }
        None => s += &format!("  scale           physical values ({u})\n"),
    }
    s += &format!("  mean            {}\n", q(st.mean()));
    s += &format!(
        "  RMS             {} (AC + DC), std {} (AC)\n",
        q(st.rms()),
        q(st.std())
    );
    s += &format!(
        "  peak-to-peak    {} measured, {} (6σ), {} (6.6σ)\n",
        q(st.peak_to_peak()),
        q(6.0 * st.std()),
        q(6.6 * st.std())
    );
    s += &format!(
        "  shape           crest factor {:.3}, skewness {:.4}, excess kurtosis {:.4}\n",
        r.crest_factor(),
        r.moments.skewness(),
        r.moments.excess_kurtosis()
    );
    let within = r.moments.within();
    let parts: Vec<String> = SIGMA_LEVELS
        .iter()
        .zip(within)
        .map(|(k, w)| {
            format!(
                "±{k}σ {:.3} % ({:.3} %)",
                100.0 * w,
                100.0 * gaussian_within(*k)
            )
        })
        .collect();
    s += &format!(
        "  within          {} (Gaussian in brackets)\n",
        parts.join(", ")
    );
    s += &format!(
        "  density         Welch, Hann, 50 % overlap: {} segments of {} samples, {} bins, ν = {:.1} per bin\n",
        sp.segments,
        sp.seg_len,
        format_quantity(sp.bin_width_hz(), "Hz"),
        sp.dof(sp.psd.len() / 2)
    );
    let du = format!("{u}/√Hz");
    let checks = r.comparison.as_ref();
    s += "    band                        density          95 % interval";
    if checks.is_some() {
        s += "                 designed         ratio     limits          verdict";
    }
    s += "\n";
    for b in &r.bands {
        let (lo, hi) = CaptureReport::band_ci95(b);
        s += &format!(
            "    {:>11} .. {:<11}  {:<15}  {:<14} .. {:<14}",
            format_quantity(b.f_lo_hz, "Hz"),
            format_quantity(b.f_hi_hz, "Hz"),
            format_quantity(b.psd_mean.sqrt(), &du),
            format_quantity(lo.sqrt(), &du),
            format_quantity(hi.sqrt(), &du)
        );
        if let Some(c) = checks.and_then(|c| c.bands.iter().find(|c| c.band.bins == b.bins)) {
            s += &format!(
                "  {:<15}  {:+6.2} dB  {:+.2}/{:+.2} dB  {}",
                format_quantity(c.expected_psd.sqrt(), &du),
                c.ratio_db,
                c.limit_db.0,
                c.limit_db.1,
                if c.pass { "ok" } else { "FAIL" }
            );
        }
        s = s.trim_end().to_string();
        s += "\n";
    }
    let dec: Vec<String> = r
        .decades
        .iter()
        .map(|d| {
            format!(
                "{}–{}: {}",
                format_quantity(d.f_lo_hz, "Hz"),
                format_quantity(d.f_hi_hz, "Hz"),
                q(d.rms)
            )
        })
        .collect();
    s += &format!("  RMS per decade  {}\n", dec.join("; "));
    match &r.levels {
        None => s += "  burst levels    none clearly present\n",
        Some(l) => {
            let parts: Vec<String> = (0..l.levels.len())
                .map(|i| {
                    format!(
                        "{} ({:.1} % of the time, mean dwell {})",
                        q(l.levels[i]),
                        100.0 * l.occupancy[i],
                        format_quantity(l.dwell_s[i], "s")
                    )
                })
                .collect();
            s += &format!(
                "  burst levels    {} levels: {}; resolution {}\n",
                l.levels.len(),
                parts.join(", "),
                format_quantity(l.resolution_s, "s")
            );
        }
    }
    if let Some(fit) = json.get("fit") {
        s += &format!(
            "  fit             floor {}, corner {}, slope {:.3} -> {}\n",
            format_quantity(fit["floor_density"].as_f64().unwrap_or(f64::NAN), &du),
            fit["corner_hz"]
                .as_f64()
                .map_or("none".to_string(), |c| format_quantity(c, "Hz")),
            fit["slope"].as_f64().unwrap_or(f64::NAN),
            fit["profile_file"].as_str().unwrap_or("")
        );
    }
    for n in &r.notes {
        s += &format!("  note: {n}\n");
    }
    if let (Some(c), Some(p)) = (checks, profile) {
        s += &format!(
            "  verdict         {}: {} of {} bands in {}..{} within their limits (χ² interval at a total false-alarm probability of {}, plus {} dB tolerance) against {}\n",
            if c.pass { "PASS" } else { "FAIL" },
            c.bands.len() - c.failed(),
            c.bands.len(),
            format_quantity(p.band.low_hz, "Hz"),
            format_quantity(p.band.high_hz, "Hz"),
            c.false_alarm,
            c.tolerance_db,
            p.name.as_deref().unwrap_or("the profile")
        );
    }
    s
}
