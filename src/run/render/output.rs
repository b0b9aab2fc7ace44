//! Writing a run: a stream, or a file and its manifest (both or neither), refusing clipped
//! output unless allowed; then the report and its summary.

use std::io::{self, BufWriter};
use std::path::PathBuf;
use std::sync::atomic::AtomicBool;

use super::engine::Built;
use super::manifest::{burst_manifest, channel_manifest, tone_manifest};
use super::plan::Plan;
use super::pump::{SourcesSink, progress_bar, pump, source_names};
use super::summary::{burst_summary, channel_summary, range_text, summary_text, tone_summary};
use super::{RenderReport, Settings, Target};
use crate::analysis::stats::RunningStats;
use crate::error::{Error, Result};
use crate::io::manifest::{Manifest, write_manifest};
use crate::io::sink::{CsvSink, FLUSH_BYTES, Sink, SinkReport, SinkSpec, open_sink};
use crate::profile::format_quantity;
use crate::run::{PendingFile, commit_all, manifest_path};

/// The statistics of what was written: over every sample, and per channel (only kept for more
/// than one channel).
struct Measured {
    all: RunningStats,
    channels: Vec<RunningStats>,
}

/// Runs the engine into the plan's target and returns the report with its summary.
pub(super) fn write(
    mut plan: Plan,
    mut built: Built,
    s: &Settings,
    interrupted: &AtomicBool,
) -> Result<RenderReport> {
    let channels = plan.profile.channels;
    let mut measured = Measured {
        all: RunningStats::new(),
        channels: vec![RunningStats::new(); channels],
    };
    let progress = progress_bar(plan.samples, s.progress);
    let target = std::mem::replace(&mut plan.target, Target::File(PathBuf::new()));
    let shown = target.shown();
    let mut notes = std::mem::take(&mut plan.notes);
    let mut run = |w: Box<dyn io::Write + Send>, built: &mut Built| -> Result<SinkReport> {
        let mut sink = make_sink(&plan, built, w)?;
        // Writing beside the engine pays off with a second core; per-source CSV columns are
        // written from buffers the engine refills, so that path stays in step.
        let overlap = !plan.per_source && rayon::current_num_threads() > 1;
        let design = built
            .generator
            .as_ref()
            .map(|g| g.borrow().design().clone())
            .or_else(|| {
                built
                    .multi
                    .as_ref()
                    .map(|m| m.borrow().generator().design().clone())
            });
        let hint = |frames: usize| design.as_ref().map_or(frames, |d| d.block_samples(frames));
        pump(
            &mut *built.engine,
            &hint,
            &mut *sink,
            plan.samples,
            &mut measured.all,
            &mut measured.channels,
            interrupted,
            &progress,
            overlap,
        )
        .and_then(|_| sink.finish())
        .map_err(|e| naming_output(e, &shown))
    };
    let (sink_report, path, manifest_file, manifest_value) = match target {
        Target::Stream { writer, .. } => {
            match run(
                Box::new(BufWriter::with_capacity(FLUSH_BYTES, writer)),
                &mut built,
            ) {
                Ok(r) => (r, None, None, None),
                Err(Error::Io { source, .. }) if source.kind() == io::ErrorKind::BrokenPipe => {
                    return Ok(closed_report(&built));
                }
                Err(e) => return Err(e),
            }
        }
        Target::File(path) | Target::Folder(path) => {
            let mp = manifest_path(&path);
            // Both files are made before the run, so a folder that cannot take them fails
            // before the work, and neither lands unless both were written (commit_all).
            let pending = PendingFile::create(&path)?;
            // A device or a named pipe is written in place, and has no folder of its own for
            // a manifest beside it.
            let manifest = if pending.is_direct() {
                notes.push(format!(
                    "no manifest: {shown} is a device or pipe, not a file, so nothing was \
                     written beside it"
                ));
                None
            } else {
                Some(PendingFile::create(&mp)?)
            };
            let writer = BufWriter::with_capacity(FLUSH_BYTES, pending.file()?);
            let report = run(Box::new(writer), &mut built)?;
            check_clipping(&plan, &built, s, &report, &measured.all)?;
            if report.clipped > 0 {
                notes.push(clipping_note(&plan, report.clipped));
            }
            match manifest {
                None => {
                    commit_all(vec![pending])?;
                    (report, Some(path), None, None)
                }
                Some(m) => {
                    let doc = manifest_doc(&plan, &built, s, &report, &measured, &notes);
                    write_manifest(&doc, BufWriter::new(m.file()?))
                        .map_err(|e| naming_output(e, &mp.display().to_string()))?;
                    let value = serde_json::to_value(&doc)
                        .map_err(|e| Error::io("writing the manifest", e.into()))?;
                    // The noise file last: where it exists, its manifest does too.
                    commit_all(vec![m, pending])?;
                    (report, Some(path), Some(mp), Some(value))
                }
            }
        }
    };
    progress.finish_and_clear();
    let summary = summary(&plan, &built, s, &shown, &sink_report, &measured, &notes);
    Ok(RenderReport {
        expected_rms: built.expected_rms,
        measured_rms: measured.all.rms(),
        band_rms: built.band_variance.sqrt(),
        file_noise_rms: built.noise_variance.sqrt(),
        clipped: sink_report.clipped,
        frames: measured.all.count() / channels.max(1) as u64,
        path,
        manifest_path: manifest_file,
        manifest: manifest_value,
        notes,
        reader_closed: false,
        summary,
    })
}

/// The sink for the plan's format (with a column per source when asked).
fn make_sink(plan: &Plan, built: &Built, w: Box<dyn io::Write + Send>) -> Result<Box<dyn Sink>> {
    if plan.per_source {
        Ok(Box::new(SourcesSink {
            inner: Box::new(CsvSink::with_sources(
                &built.spec,
                w,
                &source_names(&plan.profile),
            )?),
            parts: built.parts.clone(),
        }))
    } else {
        open_sink(&built.spec, w)
    }
}

/// The report of a stream whose reader closed it early.
fn closed_report(built: &Built) -> RenderReport {
    RenderReport {
        expected_rms: built.expected_rms,
        measured_rms: f64::NAN,
        band_rms: built.band_variance.sqrt(),
        file_noise_rms: built.noise_variance.sqrt(),
        clipped: 0,
        frames: 0,
        path: None,
        manifest_path: None,
        manifest: None,
        notes: Vec::new(),
        reader_closed: true,
        summary: String::new(),
    }
}

/// Refuses a file whose samples clipped (or left the ADC's range) unless clipping is allowed;
/// when allowed, notes it.
fn check_clipping(
    plan: &Plan,
    built: &Built,
    s: &Settings,
    report: &SinkReport,
    stats: &RunningStats,
) -> Result<()> {
    let unit = plan.profile.unit.symbol();
    let allowed = s.allow_clipping;
    if let (Some(a), true) = (&plan.adc, report.clipped > 0 && !allowed) {
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
    if report.clipped > 0 && !allowed {
        let fsc = built.scale.full_scale.unwrap_or(1.0);
        return Err(Error::Clipped {
            count: report.clipped,
            total: report.samples,
            full_scale: format_quantity(fsc, unit),
            suggested: format_quantity(round_up(report.peak_abs), unit),
        });
    }
    Ok(())
}

/// The note on allowed clipping, in the command line's words (kept so the manifest's notes
/// stay as they were).
fn clipping_note(plan: &Plan, clipped: u64) -> String {
    let unit = plan.profile.unit.symbol();
    match &plan.adc {
        Some(a) => format!(
            "{clipped} samples outside the ADC range {} clamped to the end codes \
             (--allow-clipping)",
            range_text(a.lo(), a.hi(), unit)
        ),
        None => format!("{clipped} samples clipped at full scale (--allow-clipping)"),
    }
}

/// The manifest of a written file.
fn manifest_doc(
    plan: &Plan,
    built: &Built,
    s: &Settings,
    report: &SinkReport,
    measured: &Measured,
    notes: &[String],
) -> Manifest {
    let (profile, fs, spec): (_, _, &SinkSpec) =
        (&plan.profile, plan.profile.sample_rate_hz, &built.spec);
    let mut manifest = Manifest::new(spec, s.seed, report, &measured.all, built.expected_rms);
    manifest.profile = profile.to_json();
    manifest.level_dbfs = built.scale.level_dbfs;
    manifest.looped = s.loop_buffer;
    manifest.start_sample = plan.start;
    manifest.start_s = plan.start as f64 / fs;
    manifest.notes = notes.to_vec();
    manifest.extra.extend(built.container_keys.clone());
    if let Some((shard, run_samples)) = plan.shard {
        manifest.extra.insert(
            "shard".into(),
            serde_json::json!({
                "index": shard.index,
                "count": shard.count,
                "run_samples": run_samples,
            }),
        );
    }
    // The band RMS and the file RMS of the noise, as `budget` and `analyze` print them.
    manifest
        .extra
        .insert("band_rms".into(), built.band_variance.sqrt().into());
    manifest
        .extra
        .insert("file_noise_rms".into(), built.noise_variance.sqrt().into());
    if let Some(a) = &plan.adc {
        manifest.extra.insert("adc".into(), a.to_json(fs));
    }
    if let Some(v_per_unit) = profile.sensitivity_v_per_unit {
        use crate::units::volts;
        let full_scale = built.scale.full_scale;
        manifest.extra.insert(
            "sensor".into(),
            serde_json::json!({
                "unit": profile.unit.symbol(),
                "sensitivity_v_per_unit": v_per_unit,
                "full_scale": full_scale,
                "full_scale_v": full_scale.map(|x| volts(x, v_per_unit)),
                "range": plan.adc.as_ref().map(|a| [a.lo(), a.hi()]),
                "range_v": plan
                    .adc
                    .as_ref()
                    .map(|a| [volts(a.lo(), v_per_unit), volts(a.hi(), v_per_unit)]),
                "lsb_v": plan.adc.as_ref().map(|a| a.lsb() * v_per_unit),
            }),
        );
    }
    if let Some(g) = &built.generator {
        burst_manifest(&mut manifest, &g.borrow(), profile, plan.per_source, spec);
    }
    if built.figures.is_some() {
        tone_manifest(
            &mut manifest,
            profile,
            built.band_variance,
            plan.adc.as_ref(),
        );
    }
    if let Some(m) = &built.multi {
        burst_manifest(&mut manifest, m.borrow().generator(), profile, false, spec);
        channel_manifest(
            &mut manifest,
            profile,
            built.expected_rms,
            &measured.channels,
        );
    }
    manifest.set_fingerprint();
    manifest
}

/// The text summary of a finished run.
fn summary(
    plan: &Plan,
    built: &Built,
    s: &Settings,
    shown: &str,
    report: &SinkReport,
    measured: &Measured,
    notes: &[String],
) -> String {
    let profile = &plan.profile;
    // What the run holds besides the Gaussian noise, between the expected and the measured
    // lines, so every summary keeps one order.
    let mut details = String::new();
    if plan.segment {
        details += &format!(
            "  start           sample {} ({} s); a segment of the run from 0\n",
            plan.start,
            plan.start as f64 / profile.sample_rate_hz
        );
    }
    if let Some((shard, total)) = plan.shard {
        details += &format!("  shard           {shard} of a run of {total} samples\n");
    }
    let (var, mean) = (built.expected_variance, built.expected_mean);
    if let Some(g) = &built.generator {
        details += &burst_summary(&g.borrow(), profile, var, mean);
    }
    if let Some(fg) = &built.figures {
        details += &tone_summary(profile, fg, built.band_variance, plan.adc.as_ref());
    }
    if let Some(m) = &built.multi {
        details += &burst_summary(m.borrow().generator(), profile, var, mean);
        details += &channel_summary(profile, built.expected_rms, &measured.channels);
    }
    summary_text(
        profile,
        shown,
        s,
        &built.scale,
        [
            built.band_variance.sqrt(),
            built.noise_variance.sqrt(),
            built.expected_rms,
        ],
        &details,
        &measured.all,
        report.clipped,
        plan.adc.as_ref(),
        notes,
    )
}

/// Round a peak up to two significant digits (a full scale that holds it).
fn round_up(x: f64) -> f64 {
    if x <= 0.0 {
        return 0.0;
    }
    let p = 10f64.powf(x.log10().floor() - 1.0);
    (x / p).ceil() * p
}

/// An I/O error of a writer names where its bytes were going (`target`: the output file the
/// user named, not its temporary name, or the stream's name); other errors pass as they are.
fn naming_output(e: Error, target: &str) -> Error {
    match e {
        Error::Io { context, source } => Error::Io {
            context: format!("{context} to {target}"),
            source,
        },
        other => other,
    }
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
}
