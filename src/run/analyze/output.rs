//! The files an analysis writes — the fitted profile, the density picture, the HTML report —
//! made before the passes and landing together at the end, or not at all.

use std::path::PathBuf;

use super::setup::Setup;
use super::{Analysis, Input, ProfileInput, Settings};
use crate::analysis::capture::CaptureReport;
use crate::analysis::integrated::IntegratedNoise;
use crate::error::{Result, Setting};
use crate::report::chart::{AnalysisView, analysis_figures};
use crate::report::figure::page;
use crate::report::html::{self, ReportFigures};
use crate::run::guard::{Read, Written, check_outputs};
use crate::run::{PendingFile, commit_all, manifest_path};

/// Refuses, before anything is read or written, an output that names a folder, has a name
/// its file system cannot hold, is the same file as another output, or is the same file as
/// an input: the capture, the manifest beside it, or the profile's file.
pub(super) fn check_paths(a: &Analysis) -> Result<()> {
    let capture = match &a.input {
        Input::Path(p) => Some(p.as_path()),
        Input::Samples { .. } => None,
    };
    let side = capture.map(manifest_path);
    let mut read: Vec<Read> = [
        ("the capture", capture),
        ("the capture's manifest", side.as_deref()),
    ]
    .into_iter()
    .filter_map(|(what, path)| path.map(|path| Read::new(what, path)))
    .collect();
    match &a.profile {
        Some(ProfileInput::Path(p)) => read.push(Read::new("the profile", p)),
        Some(ProfileInput::Given(p)) => read.extend(p.source_file().map(|f| Read {
            what: "the profile",
            path: f,
            shown: p.label().to_string(),
        })),
        None => {}
    }
    let s = &a.s;
    let written: Vec<Written> = [
        (Setting::Fit, &s.fit),
        (Setting::Plot, &s.plot),
        (Setting::Report, &s.report),
        (Setting::AllanPlot, &s.allan_plot),
    ]
    .into_iter()
    .filter_map(|(setting, path)| {
        path.as_deref().map(|path| Written {
            setting,
            path,
            beside: None,
        })
    })
    .collect();
    check_outputs(&written, &read)
}

/// What the pictures need beyond the measurement.
#[derive(Clone, Copy)]
pub(super) struct Extras<'a> {
    /// The Allan deviation picture, when asked for.
    pub(super) allan_svg: Option<&'a str>,
    /// Spans left out of the verdict (tones, spurs, excluded), Hz.
    pub(super) left_out: &'a [(f64, f64)],
    /// The integrated noise.
    pub(super) integrated: Option<&'a IntegratedNoise>,
}

/// The output files asked for, under temporary names until [`Outputs::write`] renames them.
pub(super) struct Outputs {
    fit: Option<PendingFile>,
    plot: Option<PendingFile>,
    report: Option<PendingFile>,
    allan_plot: Option<PendingFile>,
}

impl Outputs {
    /// Creates the temporary files (a folder that cannot take them fails now, before the
    /// work).
    pub(super) fn create(s: &Settings) -> Result<Outputs> {
        let pending = |p: &Option<PathBuf>| p.as_deref().map(PendingFile::create).transpose();
        Ok(Outputs {
            fit: pending(&s.fit)?,
            plot: pending(&s.plot)?,
            report: pending(&s.report)?,
            allan_plot: pending(&s.allan_plot)?,
        })
    }

    /// Writes the fitted profile's `fit_toml`, the pictures (density and integrated noise)
    /// and the report (with `json`, every number, and every picture), then renames them all
    /// into place. `left_out` lists the spans (Hz) left out of the verdict.
    pub(super) fn write(
        self,
        report: &CaptureReport,
        json: &serde_json::Value,
        fit_toml: Option<&str>,
        s: &Setup,
        extra: &Extras<'_>,
    ) -> Result<()> {
        let Extras {
            allan_svg,
            left_out,
            integrated,
        } = *extra;
        if let (Some(out), Some(svg)) = (&self.allan_plot, allan_svg) {
            out.write_all(svg.as_bytes())?;
        }
        if let (Some(out), Some(toml)) = (&self.fit, fit_toml) {
            out.write_all(toml.as_bytes())?;
        }
        if self.plot.is_some() || self.report.is_some() {
            let tones: Vec<f64> = json["tones"]
                .as_array()
                .map_or(&[][..], |t| t.as_slice())
                .iter()
                .filter_map(|t| t["frequency_hz"].as_f64())
                .collect();
            let view = AnalysisView {
                report,
                file: json["file"]["name"].as_str().unwrap_or("capture"),
                profile: s.profile.as_ref(),
                design: s.design.as_ref(),
                left_out,
                tones: &tones,
                integrated,
            };
            let (figures, amplitude) = analysis_figures(&view);
            if let Some(out) = &self.plot {
                out.write_all(page(&figures).as_bytes())?;
            }
            if let Some(out) = &self.report {
                let parts = ReportFigures {
                    density: figures,
                    amplitude,
                };
                let html = html::report_html(report, json, &parts, s.profile.as_ref());
                out.write_all(html.as_bytes())?;
            }
        }
        commit_all(
            [self.fit, self.plot, self.report, self.allan_plot]
                .into_iter()
                .flatten()
                .collect(),
        )
    }
}
