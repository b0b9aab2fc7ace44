//! The keys `generate` adds to the manifest under `extra`: several channels (count,
//! correlation, RMS per channel), bursts (expected std and mean, each burst's model and
//! measured occupancy, the `--columns sources` names) and tones and offset (SNR, ENOB).

use super::pump::source_names;
use super::summary::tone_figures;
use crate::analysis::stats::RunningStats;
use crate::io::adc::Adc;
use crate::io::manifest::Manifest;
use crate::io::sink::SinkSpec;
use crate::profile::Profile;
use crate::synth::Generator;

/// The manifest's channel keys, under `extra`: `channels`, `correlation` (the N×N matrix),
/// `expected_rms_per_channel` and `measured_rms_per_channel` (unit, AC + DC). The top-level
/// `measured_*` keys and `clipped` count every channel.
pub(super) fn channel_manifest(
    manifest: &mut Manifest,
    profile: &Profile,
    expected_rms: f64,
    channel_stats: &[RunningStats],
) {
    use serde_json::json;
    let extra = &mut manifest.extra;
    extra.insert("channels".into(), json!(profile.channels));
    extra.insert("correlation".into(), json!(profile.correlation));
    extra.insert(
        "expected_rms_per_channel".into(),
        json!(vec![expected_rms; profile.channels]),
    );
    extra.insert(
        "measured_rms_per_channel".into(),
        json!(channel_stats.iter().map(|s| s.rms()).collect::<Vec<_>>()),
    );
}

/// The manifest's burst keys, under `extra`: `expected_std`, `expected_mean`,
/// `expected_gaussian_rms` (unit), `bursts` (per burst: its occupancy, mean, variance, corner
/// frequencies, and the occupancy this run measured) and, with `--columns sources`,
/// `source_columns`.
pub(super) fn burst_manifest(
    manifest: &mut Manifest,
    g: &Generator,
    profile: &Profile,
    per_source: bool,
    spec: &SinkSpec,
) {
    use serde_json::json;
    let extra = &mut manifest.extra;
    extra.insert("expected_std".into(), json!(g.variance().sqrt()));
    extra.insert("expected_mean".into(), json!(g.mean()));
    extra.insert(
        "expected_gaussian_rms".into(),
        json!(g.design().variance().sqrt()),
    );
    let bursts: Vec<serde_json::Value> = g
        .bursts()
        .iter()
        .zip(g.chains())
        .map(|(m, c)| {
            let b = m.burst();
            json!({
                "name": b.name,
                "sampling": b.sampling.name(),
                "levels": b.levels,
                "dwell_s": b.dwell_s,
                "occupancy": m.occupancy(),
                "mean": m.mean(),
                "variance": m.variance(),
                "std": m.variance().sqrt(),
                "corner_hz": m.modes().iter().map(|x| x.corner_hz).collect::<Vec<_>>(),
                "oscillation_hz": m.modes().iter().map(|x| x.oscillation_hz).collect::<Vec<_>>(),
                "jump_rate_hz": m.jump_rate_hz(),
                "measured_occupancy": c.tally().occupancy(),
            })
        })
        .collect();
    extra.insert("bursts".into(), json!(bursts));
    if per_source {
        let names = source_names(profile);
        extra.insert(
            "source_columns".into(),
            json!(crate::io::sink::source_column_names(&names, spec.unit)),
        );
    }
}

/// The manifest's deterministic keys, under `extra` (only when the profile has tones or an
/// offset): `offset` (unit), `noise_band_rms` (unit) and `tones` (per tone: `name`,
/// `frequency_hz`, `peak`, `rms` (unit), `phase_deg`, `snr_db`, `enob_bits`, and with ADC
/// codes `snr_with_adc_db`, `enob_with_adc_bits`, else null).
pub(super) fn tone_manifest(
    manifest: &mut Manifest,
    profile: &Profile,
    band_variance: f64,
    adc: Option<&Adc>,
) {
    use serde_json::json;
    let f = tone_figures(profile, band_variance, adc);
    let (snr, noise_rms) = (&f.noise, f.noise_rms);
    let extra = &mut manifest.extra;
    extra.insert("offset".into(), json!(profile.offset));
    extra.insert("noise_band_rms".into(), json!(noise_rms));
    let tones: Vec<serde_json::Value> = profile
        .tones
        .iter()
        .zip(snr)
        .enumerate()
        .map(|(i, (t, (snr_db, enob)))| {
            let with = f.with_adc.as_ref().map(|w| w[i]);
            json!({
                "name": t.name,
                "frequency_hz": t.frequency_hz,
                "peak": t.peak,
                "rms": t.rms(),
                "phase_deg": t.phase_rad.to_degrees(),
                "snr_db": snr_db,
                "enob_bits": enob,
                "snr_with_adc_db": with.map(|w| w.0),
                "enob_with_adc_bits": with.map(|w| w.1),
            })
        })
        .collect();
    extra.insert("tones".into(), json!(tones));
}
