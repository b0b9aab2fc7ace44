//! The manifest of a joined file: what a single run's manifest says, rebuilt from the
//! shards' manifests. Everything that describes how the data was made is the first shard's
//! (the fingerprint guarantees the others agree); the length, the start and the container
//! are the whole run's; what was measured is combined over the shards, exactly for counts
//! and to rounding for the moments (the RMS, mean and standard deviation of the union of
//! the shards' samples from theirs, weighted by their lengths); `extra.joined` records that
//! the file was joined and from how many shards.

use serde_json::{Value, json};

use super::check::Piece;
use super::layout::Layout;
use crate::error::Result;
use crate::io::manifest::{Manifest, RF64_NOTE};
use crate::io::sink::{WavContainer, npy_shape, wav_plan};

/// The manifest of the whole run made of `pieces` (in order, checked).
pub(super) fn whole_manifest(pieces: &[Piece], layout: &Layout) -> Result<Manifest> {
    let mut m = pieces[0].manifest.clone();
    let total = pieces[0].run_samples;
    let weights: Vec<f64> = pieces.iter().map(|p| p.span().1 as f64).collect();
    let n = total as f64;
    let mean_of = |f: &dyn Fn(&Manifest) -> f64| -> f64 {
        pieces
            .iter()
            .zip(&weights)
            .map(|(p, w)| w * f(&p.manifest))
            .sum::<f64>()
            / n
    };
    let mean = mean_of(&|m| m.measured_mean);
    // The variance of a union: the shards' variances plus the spread of their means.
    let var = mean_of(&|m| m.measured_std.powi(2) + (m.measured_mean - mean).powi(2));
    m.measured_rms = mean_of(&|m| m.measured_rms.powi(2)).sqrt();
    (m.measured_mean, m.measured_std) = (mean, var.sqrt());
    m.clipped = pieces.iter().map(|p| p.manifest.clipped).sum();
    (m.samples, m.start_sample, m.start_s) = (total, 0, 0.0);
    m.duration_s = total as f64 / m.sample_rate_hz;
    let rf64 = match layout {
        Layout::Wav {
            channels,
            sample_format,
            info,
            ..
        } => {
            wav_plan(total, *channels, *sample_format, info.as_ref())?.container
                == WavContainer::Rf64
        }
        _ => false,
    };
    m.notes = merged_notes(pieces.iter().flat_map(|p| &p.manifest.notes), rf64);
    let extra = &mut m.extra;
    extra.remove("shard");
    extra.insert("joined".into(), json!({ "shards": pieces.len() }));
    if let Layout::Wav { .. } = layout {
        let name = if rf64 { "RF64" } else { "RIFF" };
        extra.insert("container".into(), json!(name));
    }
    if let Layout::Npy { channels, .. } = layout {
        extra.insert("npy_shape".into(), json!(npy_shape(total, *channels)));
    }
    if let Some(adc) = extra.get_mut("adc").and_then(Value::as_object_mut) {
        adc.insert("first_sample".into(), json!(0));
    }
    combine_lists(pieces, &weights, extra);
    Ok(m)
}

/// The per-channel RMS and each burst's measured occupancy over the whole run.
fn combine_lists(pieces: &[Piece], weights: &[f64], extra: &mut serde_json::Map<String, Value>) {
    let n: f64 = weights.iter().sum();
    let list = |p: &Piece, key: &str| -> Vec<f64> {
        p.manifest
            .extra
            .get(key)
            .and_then(Value::as_array)
            .map_or(Vec::new(), |a| {
                a.iter().map(|x| x.as_f64().unwrap_or(f64::NAN)).collect()
            })
    };
    if extra.contains_key("measured_rms_per_channel") {
        let mut sum = vec![0.0; list(&pieces[0], "measured_rms_per_channel").len()];
        for (p, w) in pieces.iter().zip(weights) {
            for (s, r) in sum.iter_mut().zip(list(p, "measured_rms_per_channel")) {
                *s += w * r * r;
            }
        }
        let rms: Vec<f64> = sum.iter().map(|s| (s / n).sqrt()).collect();
        extra.insert("measured_rms_per_channel".into(), json!(rms));
    }
    let Some(bursts) = extra.get_mut("bursts").and_then(Value::as_array_mut) else {
        return;
    };
    for (i, burst) in bursts.iter_mut().enumerate() {
        let mut sum: Vec<f64> = Vec::new();
        for (p, w) in pieces.iter().zip(weights) {
            let occ = &p.manifest.extra["bursts"][i]["measured_occupancy"];
            let occ: Vec<f64> = occ.as_array().map_or(Vec::new(), |a| {
                a.iter().map(|x| x.as_f64().unwrap_or(f64::NAN)).collect()
            });
            sum.resize(occ.len().max(sum.len()), 0.0);
            for (s, o) in sum.iter_mut().zip(occ) {
                *s += w * o;
            }
        }
        let occ: Vec<f64> = sum.iter().map(|s| s / n).collect();
        burst["measured_occupancy"] = json!(occ);
    }
}

/// The shards' notes as a single run words them: each note once; a note that starts with a
/// count (clipped samples) with the counts summed; the RF64 note when the whole is RF64
/// (where `generate` puts it: after the notes about the settings, before the counts).
fn merged_notes<'a>(notes: impl Iterator<Item = &'a String>, rf64: bool) -> Vec<String> {
    let mut plain: Vec<String> = Vec::new();
    let mut counted: Vec<(u64, String)> = Vec::new();
    for note in notes {
        if note == RF64_NOTE {
            continue;
        }
        let count = note
            .split_once(' ')
            .and_then(|(c, rest)| c.parse::<u64>().ok().map(|c| (c, rest)));
        match count {
            Some((c, rest)) => match counted.iter_mut().find(|(_, r)| r == rest) {
                Some(entry) => entry.0 += c,
                None => counted.push((c, rest.to_string())),
            },
            None if !plain.contains(note) => plain.push(note.clone()),
            None => {}
        }
    }
    if rf64 {
        plain.push(RF64_NOTE.to_string());
    }
    plain.extend(counted.into_iter().map(|(c, rest)| format!("{c} {rest}")));
    plain
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn notes_are_worded_as_a_single_run_words_them() {
        let clip = "samples clipped at full scale (--allow-clipping)";
        let rate = "sample rate 96 kHz from --rate replaces the profile's 48 kHz".to_string();
        let shards = [
            vec![rate.clone(), format!("3 {clip}")],
            vec![rate.clone()],
            vec![rate.clone(), format!("4 {clip}"), RF64_NOTE.to_string()],
        ];
        let riff = merged_notes(shards.iter().flatten(), false);
        assert_eq!(riff, [rate.clone(), format!("7 {clip}")]);
        let rf64 = merged_notes(shards.iter().flatten(), true);
        assert_eq!(rf64, [rate, RF64_NOTE.to_string(), format!("7 {clip}")]);
    }
}
