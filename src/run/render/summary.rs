//! The text `generate` prints when a run ends: the summary's lines (band, expected and
//! measured levels, scale, seed, notes), the converter's lines with `--bits`, the lines for
//! several channels, tones and offset, and bursts, and the wording of the quantisation note.

use super::Settings;
use super::engine::Scale;
use crate::analysis::stats::RunningStats;
use crate::io::adc::{Adc, Coding, Dither};
use crate::model::density;
use crate::profile::{Profile, format_quantity, format_quantity_exact};
use crate::synth::Generator;

/// `lo..hi` with units, as `--range` accepts it, each end exactly as given (it parses back
/// to the same range).
pub(super) fn range_text(lo: f64, hi: f64, unit: &str) -> String {
    format!(
        "{}..{}",
        format_quantity_exact(lo, unit),
        format_quantity_exact(hi, unit)
    )
}

/// "two's-complement" or "offset-binary".
pub(super) fn coding_words(c: Coding) -> &'static str {
    match c {
        Coding::Twos => "two's-complement",
        Coding::Offset => "offset-binary",
    }
}

/// The summary's ADC lines: the converter, what its end and centre codes stand for, and the
/// noise it adds.
fn adc_summary(a: &Adc, profile: &Profile) -> String {
    let u = profile.unit.symbol();
    let q = |v: f64| format_quantity(v, u);
    let d = |v: f64| format_quantity(v, &format!("{u}/\u{221a}Hz"));
    let fs = profile.sample_rate_hz;
    let (cmin, cmax) = a.code_range();
    let zero_code = match a.coding() {
        Coding::Twos => 0,
        Coding::Offset => 1i64 << (a.bits() - 1),
    };
    let mut s = format!(
        "  ADC             {}-bit {} codes ({}) over {}, LSB {}\n",
        a.bits(),
        coding_words(a.coding()),
        a.container(),
        range_text(a.lo(), a.hi(), u),
        q(a.lsb())
    );
    s += &format!(
        "  codes           code c stands for {} + c·LSB: {cmin} = {}, {zero_code} = {} (centre), \
         {cmax} = {}\n",
        q(a.level(0)),
        q(a.level(cmin)),
        q(a.level(zero_code)),
        q(a.level(cmax))
    );
    s += &format!(
        "  quantisation    {} RMS (Q/√12), {} (Q/√(6·fs)) without dither\n",
        q(a.quantisation_noise_rms()),
        d(a.quantisation_noise_density(fs))
    );
    s += &match a.dither() {
        Dither::None => "  dither          none\n".to_string(),
        Dither::Tpdf => format!(
            "  dither          TPDF ±1 LSB: total added noise {} RMS (Q/2), {} (Q/√(2·fs))\n",
            q(a.added_noise_variance().sqrt()),
            d(a.added_noise_psd(fs).sqrt())
        ),
    };
    s
}

/// A note when the stored codes' quantisation noise density (REFERENCES §9: IEEE Std 1241
/// uniform-error model, Q/√(6·fs); with TPDF dither Q/√(2·fs)) comes within 10 dB of the
/// lowest target density in the band. `what` names the noise ("16-bit quantisation noise"),
/// `advice` the fix.
pub(super) fn quantisation_note(
    profile: &Profile,
    what: &str,
    q_density: f64,
    advice: &str,
) -> Option<String> {
    let (lo, hi) = (profile.band.low_hz, profile.band.high_hz);
    let lowest = (0..=200)
        .map(|i| lo * (hi / lo).powf(i as f64 / 200.0))
        .map(|f| density::target_psd(profile, f).sqrt())
        .fold(f64::INFINITY, f64::min);
    let margin_db = 20.0 * (lowest / q_density).log10();
    let unit = format!("{}/√Hz", profile.unit.symbol());
    (margin_db < 10.0).then(|| {
        // The sign picks the words, so the number printed is never negative.
        let how = if margin_db < 0.0 {
            format!("{:.1} dB above", -margin_db)
        } else {
            format!("only {margin_db:.1} dB below")
        };
        format!(
            "the {what} ({}) is {how} the lowest density in the band ({}): use {advice}",
            format_quantity(q_density, &unit),
            format_quantity(lowest, &unit)
        )
    })
}

#[allow(clippy::too_many_arguments)]
/// The run's summary, its lines always in one order: name, band, expected RMS, peak-to-peak
/// (here, or in `details` with bursts or tones), `details` (segment, bursts, tones,
/// channels), measured, scale, clipped, seed, notes. `figures` are the band RMS, the file RMS
/// of the noise and the expected RMS of the samples (AC + DC), in the profile unit.
pub(super) fn summary_text(
    profile: &Profile,
    out: &str,
    s: &Settings,
    scale: &Scale,
    figures: [f64; 3],
    details: &str,
    stats: &RunningStats,
    clipped: u64,
    adc: Option<&Adc>,
    notes: &[String],
) -> String {
    let u = profile.unit.symbol();
    let q = |v: f64| format_quantity(v, u);
    let settings = s;
    let mut s = String::new();
    let name = profile.name.as_deref().unwrap_or("(unnamed profile)");
    s += &format!(
        "noisewright {}: {name} -> {out}\n",
        env!("CARGO_PKG_VERSION")
    );
    s += &format!(
        "  band            {} .. {} (order {}), {} samples at {}{}\n",
        format_quantity_exact(profile.band.low_hz, "Hz"),
        format_quantity_exact(profile.band.high_hz, "Hz"),
        profile.band.order,
        stats.count() / profile.channels.max(1) as u64,
        format_quantity_exact(profile.sample_rate_hz, "Hz"),
        if settings.loop_buffer {
            ", loop buffer"
        } else {
            ""
        }
    );
    let [band_rms, file_noise_rms, expected_rms] = figures;
    s += &format!(
        "  expected RMS    band {} (the target over the band), file {} (the noise up to fs/2)\n",
        q(band_rms),
        q(file_noise_rms)
    );
    if (expected_rms - file_noise_rms).abs() > 1e-9 * expected_rms {
        s += &format!(
            "                  {} in all (AC + DC: with the offset, tones and bursts' mean)\n",
            q(expected_rms)
        );
    }
    // With bursts or tones the Gaussian convention does not hold; their summary gives the
    // figure. An offset moves the samples, not their spread: p-p is 6σ of the noise.
    if profile.bursts.is_empty() && profile.tones.is_empty() {
        s += &format!(
            "  peak-to-peak    {} (6σ), {} (6.6σ) of the file RMS expected\n",
            q(6.0 * file_noise_rms),
            q(6.6 * file_noise_rms)
        );
    }
    s += details;
    s += &format!(
        "  measured        RMS {}, std {}, mean {}, peak-to-peak {}\n",
        q(stats.rms()),
        q(stats.std()),
        q(stats.mean()),
        q(stats.peak_to_peak())
    );
    match (scale.full_scale, scale.level_dbfs) {
        _ if adc.is_some() => s += &adc_summary(adc.expect("checked"), profile),
        (Some(f), Some(l)) => {
            s += &format!(
                "  scale           digital 1.0 = {} ({l} dBFS, AES17)\n",
                q(f)
            )
        }
        (Some(f), None) => s += &format!("  scale           digital 1.0 = {}\n", q(f)),
        _ => s += &format!("  scale           physical units ({u})\n"),
    }
    s += &format!("  clipped         {clipped}\n");
    s += &format!("  seed            {}\n", settings.seed);
    for n in notes {
        s += &format!("  note: {n}\n");
    }
    s
}

/// Summary lines for more than one channel: the count, the correlation matrix and each
/// channel's measured RMS against the expected one.
pub(super) fn channel_summary(
    profile: &Profile,
    expected_rms: f64,
    channel_stats: &[RunningStats],
) -> String {
    let u = profile.unit.symbol();
    let mut s = format!(
        "  channels        {} (every one with the profile's density; clipped counts all)\n",
        profile.channels
    );
    s += "  correlation     ";
    for (i, row) in profile.correlation.iter().enumerate() {
        if i > 0 {
            s += "                  ";
        }
        s += &row
            .iter()
            .map(|x| format!("{x:>6.3}"))
            .collect::<Vec<_>>()
            .join(" ");
        s += "\n";
    }
    for (k, st) in channel_stats.iter().enumerate() {
        s += &format!(
            "  channel {k:<7} RMS {} measured, {} expected\n",
            format_quantity(st.rms(), u),
            format_quantity(expected_rms, u)
        );
    }
    s
}

/// Each tone's expected SNR (dB) and ENOB (bits) against the band RMS
/// ([`crate::model::budget::band_rms`], the same figure `budget` quotes), and the band RMS
/// (unit); with ADC codes also the same figures with the converter's added noise in the band
/// (its white density [`Adc::added_noise_psd`] times the band width).
pub(super) struct ToneFigures {
    pub(super) noise: Vec<(f64, f64)>,
    pub(super) with_adc: Option<Vec<(f64, f64)>>,
    pub(super) noise_rms: f64,
}

/// The tones' figures of `profile` against `band_variance` (unit², the band RMS squared).
pub(super) fn tone_figures(
    profile: &Profile,
    band_variance: f64,
    adc: Option<&Adc>,
) -> ToneFigures {
    let (lo, hi) = (profile.band.low_hz, profile.band.high_hz);
    let against = |extra: f64| -> Vec<(f64, f64)> {
        profile
            .tones
            .iter()
            .map(|t| {
                let snr = crate::model::tone::snr_db(t.power(), band_variance, extra);
                (snr, crate::model::tone::enob(snr))
            })
            .collect()
    };
    ToneFigures {
        noise: against(0.0),
        with_adc: adc.map(|a| against(a.added_noise_psd(profile.sample_rate_hz) * (hi - lo))),
        noise_rms: band_variance.sqrt(),
    }
}

/// Summary lines for the tones and offset (empty without either): per tone its frequency,
/// peak and RMS amplitude, SNR against the in-band noise and ENOB (SINAD = SNR: no
/// distortion is modelled), and the peak-to-peak with the tones (noise 6σ + Σ 2A).
pub(super) fn tone_summary(
    profile: &Profile,
    g: &Generator,
    band_variance: f64,
    adc: Option<&Adc>,
) -> String {
    let u = profile.unit.symbol();
    let q = |v: f64| format_quantity(v, u);
    let f = tone_figures(profile, band_variance, adc);
    let (snr, noise_rms) = (&f.noise, f.noise_rms);
    let mut s = String::new();
    if profile.offset != 0.0 {
        s += &format!(
            "  offset          {} added to every sample (in the mean and RMS above)\n",
            format_quantity_exact(profile.offset, u)
        );
    }
    for (i, (t, (snr_db, enob))) in profile.tones.iter().zip(snr).enumerate() {
        s += &format!(
            "  tone            {}: {}, {} peak ({} RMS), phase {:.3} deg\n",
            t.name,
            format_quantity_exact(t.frequency_hz, "Hz"),
            q(t.peak),
            q(t.rms()),
            t.phase_rad.to_degrees()
        );
        s += &format!(
            "                  SNR {snr_db:.2} dB against the band RMS {}, ENOB {enob:.2} bits \
             (IEEE 1241, SINAD = SNR: no distortion modelled)\n",
            q(noise_rms)
        );
        if let Some(w) = &f.with_adc {
            s += &format!(
                "                  with the converter's added noise: SNR {:.2} dB, ENOB {:.2} bits\n",
                w[i].0, w[i].1
            );
        }
    }
    if !profile.tones.is_empty() {
        let spans: f64 = g
            .bursts()
            .iter()
            .map(|m| {
                let l = &m.burst().levels;
                l.iter().copied().fold(f64::MIN, f64::max)
                    - l.iter().copied().fold(f64::MAX, f64::min)
            })
            .sum();
        let sigma = g.design().variance().sqrt();
        let tones: f64 = profile.tones.iter().map(|t| 2.0 * t.peak).sum();
        s += &format!(
            "  peak-to-peak    {} (Gaussian 6σ + burst spans + Σ 2·peak of the tones), {} \
             (6.6σ + …) expected at most\n",
            q(6.0 * sigma + spans + tones),
            q(6.6 * sigma + spans + tones)
        );
    }
    s
}

/// Summary lines for the bursts (empty without any): the expected std and mean behind the
/// AC + DC RMS, and per burst its levels, occupancy (designed and measured), mean, std and
/// corner frequencies.
pub(super) fn burst_summary(g: &Generator, profile: &Profile, variance: f64, mean: f64) -> String {
    if g.bursts().is_empty() {
        return String::new();
    }
    let u = profile.unit.symbol();
    let q = |v: f64| format_quantity(v, u);
    let fractions = |p: &[f64]| {
        p.iter()
            .map(|x| format!("{x:.4}"))
            .collect::<Vec<_>>()
            .join(" / ")
    };
    let mut s = format!(
        "  bursts          expected RMS above is AC+DC: std {}, mean {} (Gaussian part {} RMS)\n",
        q(variance.sqrt()),
        q(mean),
        q(g.design().variance().sqrt())
    );
    let gauss_std = g.design().variance().sqrt();
    let spans: f64 = g
        .bursts()
        .iter()
        .map(|m| {
            let l = &m.burst().levels;
            l.iter().copied().fold(f64::MIN, f64::max) - l.iter().copied().fold(f64::MAX, f64::min)
        })
        .sum();
    s += &format!(
        "  peak-to-peak    {} (Gaussian 6σ + burst level spans), {} (6.6σ + spans) expected\n",
        q(6.0 * gauss_std + spans),
        q(6.6 * gauss_std + spans)
    );
    for (m, c) in g.bursts().iter().zip(g.chains()) {
        let b = m.burst();
        let corners: Vec<String> = m
            .modes()
            .iter()
            .map(|x| {
                if x.oscillation_hz > 0.0 {
                    format!(
                        "{} (oscillating at {})",
                        format_quantity(x.corner_hz, "Hz"),
                        format_quantity(x.oscillation_hz, "Hz")
                    )
                } else {
                    format_quantity(x.corner_hz, "Hz")
                }
            })
            .collect();
        s += &format!(
            "  burst           {} ({} sampling): levels {}\n",
            b.name,
            b.sampling.name(),
            crate::profile::describe_levels(b, profile.unit)
        );
        s += &format!(
            "                  occupancy {} (measured {}), mean {}, std {}, corner {}\n",
            fractions(m.occupancy()),
            fractions(&c.tally().occupancy()),
            q(m.mean()),
            q(m.variance().sqrt()),
            corners.join(", ")
        );
    }
    s
}
