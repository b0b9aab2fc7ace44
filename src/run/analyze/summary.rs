//! The text summary `analyze` prints: the capture, its scale and statistics, the density
//! table (with the verdict of each band), RMS per decade, burst levels, the fit, the notes,
//! the verdict, and one line per fitted tone.

use crate::analysis::capture::CaptureReport;
use crate::analysis::moments::{SIGMA_LEVELS, gaussian_within};
use crate::profile::{Profile, format_quantity};

/// Summary lines for the fitted tones of `json["tones"]` (empty without any).
pub(super) fn tone_text(json: &serde_json::Value, unit: &str) -> String {
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
             noise), SNR {} (designed {} against the band RMS)\n",
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

/// The summary of `r` (`json` holds the fit, if any); with a profile, its verdict.
pub(super) fn summary_text(
    r: &CaptureReport,
    json: &serde_json::Value,
    profile: Option<&Profile>,
) -> String {
    let mut s = head(r);
    if let Some(e) = json.get("profile_rms") {
        let q = |k: &str| format_quantity(e[k].as_f64().unwrap_or(f64::NAN), &r.unit);
        s += &format!(
            "  profile RMS     band {} (the target over the band), file {} (the noise up to \
             fs/2)\n",
            q("band_rms"),
            q("file_noise_rms")
        );
    }
    s += &drift_text(json, &r.unit);
    s += &density_table(r);
    s += &tail(r, json, profile);
    s
}

/// The first lines: the capture, its scale, the statistics and the shape.
fn head(r: &CaptureReport) -> String {
    let u = r.unit.as_str();
    let q = |v: f64| format_quantity(v, u);
    let st = &r.stats;
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
    s += &scale_line(r);
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
    s
}

/// The scale line: the full scale and where it came from, or what the values are.
pub(super) fn scale_line(r: &CaptureReport) -> String {
    let u = r.unit.as_str();
    let f = &r.file;
    match f["full_scale"].as_f64() {
        Some(fsc) => format!(
            "  scale           digital 1.0 = {} (from {})\n",
            format_quantity(fsc, u),
            match f["scale_origin"].as_str().unwrap_or("") {
                "info_comment" => "the WAV's INFO comment, no manifest beside it",
                other => other,
            }
        ),
        None if u == "FS" => {
            "  scale           digital values (no full scale known: give --full-scale)\n".into()
        }
        None => format!("  scale           physical values ({u})\n"),
    }
}

/// The density estimate and its bands, each with its verdict when compared.
pub(super) fn density_table(r: &CaptureReport) -> String {
    let u = r.unit.as_str();
    let sp = &r.spectrum;
    let mut s = String::new();
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
    s
}

/// RMS per decade, burst levels, the fit, the notes and the verdict.
fn tail(r: &CaptureReport, json: &serde_json::Value, profile: Option<&Profile>) -> String {
    let u = r.unit.as_str();
    let q = |v: f64| format_quantity(v, u);
    let du = format!("{u}/√Hz");
    let checks = r.comparison.as_ref();
    let mut s = String::new();
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
    s += &spur_text(json, u);
    s += &pp_text(json, u);
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

/// The offset and drift line (from `json["dc"]` and `json["drift"]`).
fn drift_text(json: &serde_json::Value, unit: &str) -> String {
    let (dc, drift) = (&json["dc"], &json["drift"]);
    let num = |v: &serde_json::Value| v.as_f64().unwrap_or(f64::NAN);
    format!(
        "  offset, drift   {} at the middle of the record; drift {} (±{} 1σ for white noise), {} \
         over the record; {}\n",
        format_quantity(num(&dc["offset"]), unit),
        format_quantity(num(&drift["slope_per_s"]), &format!("{unit}/s")),
        format_quantity(num(&drift["slope_se_white_per_s"]), &format!("{unit}/s")),
        format_quantity(num(&drift["change_over_record"]), unit),
        if drift["removed"].as_bool().unwrap_or(false) {
            "both taken out before the density estimate"
        } else {
            "both kept in the density estimate, as asked"
        }
    )
}

/// The spurs found and the frequencies left out (from `json["spurs"]`, `json["excluded"]`).
fn spur_text(json: &serde_json::Value, unit: &str) -> String {
    let sp = &json["spurs"];
    let num = |v: &serde_json::Value| v.as_f64().unwrap_or(f64::NAN);
    let found = sp["found"].as_array().map_or(&[][..], |v| v.as_slice());
    let mut s = format!(
        "  spurs           {} above the local floor (false-alarm probability {} in all, {:.2e} \
         per bin over {} bins); left out of the verdict and the fit\n",
        found.len(),
        num(&sp["false_alarm"]),
        num(&sp["false_alarm_per_bin"]),
        sp["bins_searched"].as_u64().unwrap_or(0)
    );
    for p in found {
        let mains = match p["mains"].as_object() {
            Some(m) => format!(
                " — mains {} Hz, harmonic {}",
                num(&m["family_hz"]),
                m["harmonic"].as_u64().unwrap_or(0)
            ),
            None => String::new(),
        };
        s += &format!(
            "    {:<12} {} RMS (±{} 1σ), {:.1} dB above the floor{mains}\n",
            format_quantity(num(&p["frequency_hz"]), "Hz"),
            format_quantity(num(&p["rms"]), unit),
            format_quantity(num(&p["rms_se"]), unit),
            num(&p["height_db"]),
        );
    }
    let excluded: Vec<String> = json["excluded"]
        .as_array()
        .map_or(&[][..], |v| v.as_slice())
        .iter()
        .map(|e| {
            let (lo, hi) = (num(&e["low_hz"]), num(&e["high_hz"]));
            if lo == hi {
                format_quantity(lo, "Hz")
            } else {
                format!(
                    "{}..{}",
                    format_quantity(lo, "Hz"),
                    format_quantity(hi, "Hz")
                )
            }
        })
        .collect();
    if !excluded.is_empty() {
        s += &format!(
            "  excluded        {} (as asked): left out of the verdict and the fit\n",
            excluded.join(", ")
        );
    }
    s
}

/// The windowed peak-to-peak line (from `json["window_peak_to_peak"]`; none when not measured).
fn pp_text(json: &serde_json::Value, unit: &str) -> String {
    let pp = &json["window_peak_to_peak"];
    if pp.is_null() {
        return String::new();
    }
    let num = |k: &str| pp[k].as_f64().unwrap_or(f64::NAN);
    let mut s = format!(
        "  window p-p      {}..{}, {} windows of {}: median {}, largest {}",
        format_quantity(num("low_hz"), "Hz"),
        format_quantity(num("high_hz"), "Hz"),
        pp["windows"].as_u64().unwrap_or(0),
        format_quantity(num("window_s"), "s"),
        format_quantity(num("median"), unit),
        format_quantity(num("max"), unit),
    );
    if pp["sigma_band"].is_number() {
        s += &format!(
            "; profile 6σ {}, 6.6σ {} (σ {} in the band, {} through the filter)",
            format_quantity(num("expected_p2p_6sigma"), unit),
            format_quantity(num("expected_p2p_6_6sigma"), unit),
            format_quantity(num("sigma_band"), unit),
            format_quantity(num("sigma_filtered"), unit),
        );
    }
    s + "\n"
}
