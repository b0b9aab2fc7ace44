//! The text `generate` prints when a run ends: the summary's lines (band, expected and
//! measured levels, scale, seed, notes), the converter's lines with `--bits`, and the wording
//! of the quantisation note.

use super::{GenerateArgs, Scale, Target};
use crate::adc::{Adc, Coding, Dither};
use crate::analysis::stats::RunningStats;
use crate::density;
use crate::profile::{Profile, format_quantity, format_quantity_exact};

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
        format!(
            "the {what} ({}) is only {:.1} dB below the lowest density in \
             the band ({}): use {advice}",
            format_quantity(q_density, &unit),
            margin_db,
            format_quantity(lowest, &unit)
        )
    })
}

#[allow(clippy::too_many_arguments)]
pub(super) fn summary_text(
    profile: &Profile,
    target: &Target,
    args: &GenerateArgs,
    scale: &Scale,
    band_rms: f64,
    expected_rms: f64,
    stats: &RunningStats,
    clipped: u64,
    adc: Option<&Adc>,
    notes: &[String],
) -> String {
    let u = profile.unit.symbol();
    let q = |v: f64| format_quantity(v, u);
    let mut s = String::new();
    let name = profile.name.as_deref().unwrap_or("(unnamed profile)");
    let out = match target {
        Target::Stdout => "standard output".to_string(),
        Target::File(p) => p.display().to_string(),
    };
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
        if args.loop_buffer {
            ", loop buffer"
        } else {
            ""
        }
    );
    s += &format!(
        "  expected RMS    {} in the band, {} in the output\n",
        q(band_rms),
        q(expected_rms)
    );
    // With bursts or tones the Gaussian convention does not hold; their summary gives the
    // figure. An offset moves the samples, not their spread: p-p is 6σ of the AC part.
    if profile.bursts.is_empty() && profile.tones.is_empty() {
        let sigma = (expected_rms * expected_rms - profile.offset * profile.offset)
            .max(0.0)
            .sqrt();
        s += &format!(
            "  peak-to-peak    {} (6σ), {} (6.6σ) expected\n",
            q(6.0 * sigma),
            q(6.6 * sigma)
        );
    }
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
    s += &format!("  seed            {}\n", args.seed);
    for n in notes {
        s += &format!("  note: {n}\n");
    }
    s
}
