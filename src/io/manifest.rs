//! The run manifest: a JSON record of what was generated, with which settings and seed, and
//! what was measured ([`Manifest`], written by [`write_manifest`]), and the facts `analyze`
//! reads back from one beside a capture ([`SideManifest`]). Both sides live here so the keys
//! written and the keys read stay one list.

use std::io::Write;
use std::path::Path;

use serde::{Deserialize, Serialize};

use super::sink::{Format, SampleFormat, SinkReport, SinkSpec};
use crate::analysis::stats::RunningStats;
use crate::error::{Error, Result};
use crate::profile::{Band, Unit, read_limited};
use crate::units::DBFS_CONVENTION;

/// What one run produced, written next to the output as JSON by [`write_manifest`].
///
/// Physical quantities are in `unit` (volts or amperes); measured values are of the physical
/// samples handed to the sink, before scaling, clipping and quantisation.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Manifest {
    /// noisewright's version that wrote the file.
    pub version: String,
    /// The sample engine's version ([`crate::synth::ENGINE_VERSION`]): the same profile, seed
    /// and engine version give the same noise bytes.
    pub engine_version: u32,
    /// The resolved profile (filled by the caller; `null` until then).
    pub profile: serde_json::Value,
    /// The random seed; the same seed and version give byte-identical output.
    pub seed: u64,
    /// Sample rate in samples per second (Hz).
    pub sample_rate_hz: f64,
    /// Samples written per channel (frames).
    pub samples: u64,
    /// Duration in seconds: `samples / sample_rate_hz`.
    pub duration_s: f64,
    /// Output container.
    pub format: Format,
    /// Stored sample format: a [`SampleFormat`] name (`f32`, `i16`, …) or, for ADC codes, the
    /// code container (`u8`, `u16`, `u32`, `i8`, `i16`, `i32`; see `extra.adc`).
    pub sample_format: String,
    /// Physical unit of the samples.
    pub unit: Unit,
    /// Physical value (in `unit`) of digital 1.0; `None` when physical values or ADC codes
    /// (`extra.adc`) were written.
    pub full_scale: Option<f64>,
    /// Requested RMS level in dBFS, if the level was set that way; see `dbfs_convention`.
    pub level_dbfs: Option<f64>,
    /// How dBFS is defined here: [`DBFS_CONVENTION`].
    pub dbfs_convention: String,
    /// RMS the density model predicts, in `unit`.
    pub expected_rms: f64,
    /// Measured RMS (AC + DC) in `unit`.
    pub measured_rms: f64,
    /// Measured standard deviation (population, divide by n) in `unit`.
    pub measured_std: f64,
    /// Measured mean in `unit`.
    pub measured_mean: f64,
    /// Samples clipped at digital full scale, over every channel.
    pub clipped: u64,
    /// True if the output is a seamless loop (periodic block).
    #[serde(rename = "loop")]
    pub looped: bool,
    /// Index of the first sample in the run from 0 (0 unless the file is a segment).
    pub start_sample: u64,
    /// Time of the first sample in the run from 0, in seconds: `start_sample / sample_rate_hz`.
    pub start_s: f64,
    /// Free-text remarks for the reader (warnings, caveats).
    pub notes: Vec<String>,
    /// Further keys added by later features, kept under `extra`.
    pub extra: serde_json::Map<String, serde_json::Value>,
}

impl Manifest {
    /// A manifest from the sink's spec and report and the statistics of the samples written.
    /// `profile` is `null`, `level_dbfs` `None`, `loop` false and `notes`/`extra` empty: the
    /// caller fills them.
    pub fn new(
        spec: &SinkSpec,
        seed: u64,
        report: &SinkReport,
        stats: &RunningStats,
        expected_rms: f64,
    ) -> Manifest {
        Manifest {
            version: env!("CARGO_PKG_VERSION").to_string(),
            engine_version: crate::synth::ENGINE_VERSION,
            profile: serde_json::Value::Null,
            seed,
            sample_rate_hz: spec.sample_rate_hz,
            samples: report.samples / u64::from(spec.channels.max(1)),
            duration_s: (report.samples / u64::from(spec.channels.max(1))) as f64
                / spec.sample_rate_hz,
            format: spec.format,
            sample_format: match &spec.adc {
                Some(adc) => adc.container().name().to_string(),
                None => spec.sample_format.name().to_string(),
            },
            unit: spec.unit,
            full_scale: spec.full_scale,
            level_dbfs: None,
            dbfs_convention: DBFS_CONVENTION.to_string(),
            expected_rms,
            measured_rms: stats.rms(),
            measured_std: stats.std(),
            measured_mean: stats.mean(),
            clipped: report.clipped,
            looped: false,
            start_sample: 0,
            start_s: 0.0,
            notes: Vec::new(),
            extra: serde_json::Map::new(),
        }
    }
}

/// The keys of a manifest (top level, then under `extra`) whose values decide the bytes of
/// the noise, apart from where a file starts and how long it is: the version and engine
/// version, the canonical
/// profile (its sample rate replaced by a rate setting), the seed, the container and sample
/// format, the unit and full scale, the loop, the channels, the ADC (without its
/// `first_sample`, which is where a file starts), CSV source columns, the C array's name and
/// the npy dtype. [`fingerprint`] hashes them.
pub const FINGERPRINT_KEYS: [&str; 10] = [
    "version",
    "engine_version",
    "profile",
    "seed",
    "sample_rate_hz",
    "format",
    "sample_format",
    "unit",
    "full_scale",
    "loop",
];
/// The keys under `extra` that [`fingerprint`] hashes (see [`FINGERPRINT_KEYS`]).
pub const FINGERPRINT_EXTRA_KEYS: [&str; 5] =
    ["channels", "adc", "source_columns", "c_name", "npy_dtype"];

/// The fingerprint of a manifest (as JSON): 32 hex digits of the 128-bit FNV-1a hash of the
/// compact JSON of its [`FINGERPRINT_KEYS`] and [`FINGERPRINT_EXTRA_KEYS`] (object keys in
/// sorted order, numbers in their shortest round-trip form), so two files with the same
/// fingerprint are parts of the same run. FNV-1a (Fowler, Noll and Vo; IETF draft
/// draft-eastlake-fnv, offset basis and prime quoted from memory and checked against its
/// published empty-string value in the tests) detects mix-ups, not deliberate forgery.
pub fn fingerprint(doc: &serde_json::Value) -> String {
    let mut picked = serde_json::Map::new();
    for key in FINGERPRINT_KEYS {
        picked.insert(key.into(), doc[key].clone());
    }
    let mut extra = serde_json::Map::new();
    for key in FINGERPRINT_EXTRA_KEYS {
        let mut v = doc["extra"][key].clone();
        if let Some(adc) = v.as_object_mut() {
            adc.remove("first_sample");
        }
        extra.insert(key.into(), v);
    }
    picked.insert("extra".into(), extra.into());
    let text = serde_json::Value::Object(picked).to_string();
    format!("{:032x}", fnv1a_128(text.as_bytes()))
}

/// FNV-1a, 128 bits (draft-eastlake-fnv: offset basis 0x6c62272e07bb014262b821756295c58d,
/// prime 2^88 + 2^8 + 0x3b; from memory).
fn fnv1a_128(bytes: &[u8]) -> u128 {
    const OFFSET: u128 = 0x6c62_272e_07bb_0142_62b8_2175_6295_c58d;
    const PRIME: u128 = (1 << 88) + (1 << 8) + 0x3b;
    bytes
        .iter()
        .fold(OFFSET, |h, &b| (h ^ u128::from(b)).wrapping_mul(PRIME))
}

impl Manifest {
    /// Records [`fingerprint`] of this manifest under `extra.fingerprint`; call it last,
    /// once every key it hashes is set.
    pub fn set_fingerprint(&mut self) {
        let doc = serde_json::to_value(&*self).expect("a manifest is plain JSON");
        self.extra
            .insert("fingerprint".into(), fingerprint(&doc).into());
    }
}

/// Writes `m` as pretty-printed JSON followed by a newline. Non-finite numbers (e.g. the
/// mean of zero samples) are written as `null`.
pub fn write_manifest<W: Write>(m: &Manifest, mut out: W) -> Result<()> {
    let ctx = "writing the manifest";
    serde_json::to_writer_pretty(&mut out, m).map_err(|e| Error::io(ctx, e.into()))?;
    out.write_all(b"\n").map_err(|e| Error::io(ctx, e))?;
    out.flush().map_err(|e| Error::io(ctx, e))
}

/// The note of a WAV written as RF64.
pub const RF64_NOTE: &str = "the WAV passes 4 GiB, so it is RF64 (EBU Tech 3306): readers \
                             without RF64 support cannot open it";

/// What the manifest says about the container beyond `format`, as keys for its `extra` map
/// and notes for its `notes` (both empty for CSV and raw):
///
/// * WAV: `container` — `"RIFF"`, or `"RF64"` past 4 GiB (EBU Tech 3306).
/// * npy: `npy_dtype` (e.g. `"<f4"`) and `npy_shape` (`[frames]` or `[frames, channels]`);
///   for i24 a note that the codes are stored as `'<i4'`.
/// * C: `c_name` (the array), `c_type` (its element type) and `c_macros` (the macro names).
///
/// Errors only where the spec itself cannot be written (see [`SinkSpec::validate`]).
pub fn container_facts(
    spec: &SinkSpec,
) -> Result<(serde_json::Map<String, serde_json::Value>, Vec<String>)> {
    use serde_json::json;
    let mut keys = serde_json::Map::new();
    let mut notes = Vec::new();
    let frames = spec.frames.unwrap_or(0);
    match spec.format {
        Format::Wav => {
            let info = super::sink::wav_info_of(spec);
            let plan =
                super::sink::wav_plan(frames, spec.channels, spec.sample_format, info.as_ref())?;
            keys.insert("container".into(), json!(plan.container.name()));
            if plan.container == super::sink::WavContainer::Rf64 {
                notes.push(RF64_NOTE.to_string());
            }
        }
        Format::Npy => {
            keys.insert("npy_dtype".into(), json!(super::sink::npy_spec_descr(spec)));
            keys.insert(
                "npy_shape".into(),
                json!(super::sink::npy_shape(frames, spec.channels)),
            );
            if spec.sample_format == SampleFormat::I24 && spec.adc.is_none() {
                notes.push(
                    "i24 codes are stored as '<i4' (int32) in the .npy file, with the values \
                     of 24-bit codes (-8388607..8388607)"
                        .to_string(),
                );
            }
        }
        Format::C => {
            let name = spec.name.clone().unwrap_or_else(|| "noise".to_string());
            let upper = name.to_ascii_uppercase();
            keys.insert("c_type".into(), json!(super::sink::c_spec_type(spec)));
            let macros: &[&str] = if spec.adc.is_some() {
                &[
                    "LENGTH",
                    "CHANNELS",
                    "SAMPLE_RATE_HZ",
                    "BITS",
                    "LSB",
                    "CODE_ZERO_LEVEL",
                ]
            } else {
                &["LENGTH", "CHANNELS", "SAMPLE_RATE_HZ", "FULL_SCALE"]
            };
            let macros: Vec<String> = macros.iter().map(|m| format!("{upper}_{m}")).collect();
            keys.insert("c_macros".into(), json!(macros));
            keys.insert("c_name".into(), json!(name));
        }
        Format::Csv | Format::Raw => {}
    }
    Ok((keys, notes))
}

/// The facts a manifest beside a capture (`FILE.json`, as `generate` writes) supplies. Every
/// field is optional: a manifest written by hand may carry only some of them.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct SideManifest {
    /// Physical value of digital 1.0 in `unit`; `None` when the file holds physical values or
    /// the key is absent or `null`.
    pub full_scale: Option<f64>,
    /// Physical unit of the samples.
    pub unit: Option<Unit>,
    /// Sample rate in Hz.
    pub sample_rate_hz: Option<f64>,
    /// Stored sample format.
    pub sample_format: Option<SampleFormat>,
    /// True when the manifest has a `full_scale` key (even `null`): it then says whether the
    /// values are digital (a number) or physical (`null`).
    pub states_scale: bool,
    /// The band of the profile the file was generated from (`profile.band`: `low_hz`,
    /// `high_hz`, `order`), when the manifest records one.
    pub band: Option<Band>,
    /// Channels interleaved in the file (`extra.channels`, else `profile.channels`), when the
    /// manifest records more than one.
    pub channels: Option<u16>,
    /// The manifest's file name, for messages.
    pub file: String,
    /// True when these facts are a WAV's INFO comment standing in for a missing manifest
    /// ([`SideManifest::of_wav_info`]), not a manifest file.
    pub wav_comment: bool,
}

/// The largest manifest read, in bytes: 16 MiB. A manifest is a few KiB (64 channels with
/// their correlation matrix stay far below 1 MiB), so a larger file is refused, not read whole.
pub const MAX_MANIFEST_BYTES: u64 = 16 << 20;

impl SideManifest {
    /// How messages name the source of these facts: "the capture's manifest", or "the WAV's
    /// INFO comment" when [`SideManifest::wav_comment`].
    pub fn said_by(&self) -> &'static str {
        if self.wav_comment {
            "the WAV's INFO comment"
        } else {
            "the capture's manifest"
        }
    }

    /// The facts of a WAV's INFO comment ([`crate::io::wav_info`]), which stand in for the
    /// manifest when none is beside the WAV `capture` (its name, for messages): the unit and
    /// full scale.
    pub fn of_wav_info(info: &crate::io::wav_info::WavInfo, capture: &str) -> SideManifest {
        SideManifest {
            full_scale: Some(info.full_scale),
            unit: Some(info.unit),
            states_scale: true,
            file: format!("{capture} (its INFO comment)"),
            wav_comment: true,
            ..SideManifest::default()
        }
    }

    /// The manifest at `path` (`FILE.json` beside a capture), if there is one; one larger than
    /// [`MAX_MANIFEST_BYTES`] is refused.
    pub fn read(path: &Path) -> Result<Option<SideManifest>> {
        if !path.is_file() {
            return Ok(None);
        }
        let why = "a manifest is a short JSON text; remove or rename it";
        let text = read_limited(path, MAX_MANIFEST_BYTES, why).map_err(|e| {
            if e.kind() == std::io::ErrorKind::FileTooLarge {
                Error::input(path.display().to_string(), e.to_string())
            } else if e.kind() == std::io::ErrorKind::InvalidData {
                Error::input(
                    path.display().to_string(),
                    "not valid UTF-8 text; expected the JSON manifest that generate writes beside \
                     its output (or remove it)",
                )
            } else {
                Error::io(format!("reading {}", path.display()), e)
            }
        })?;
        Ok(Some(SideManifest::parse(
            &text,
            &path.display().to_string(),
        )?))
    }

    /// Parses the manifest's JSON text. `name` is the manifest's file name for messages.
    /// Unknown keys are ignored; a known key with a value of the wrong kind is an error.
    pub fn parse(text: &str, name: &str) -> Result<SideManifest> {
        let v: serde_json::Value = serde_json::from_str(text)
            .map_err(|e| Error::input(name, format!("not valid JSON: {e}")))?;
        let obj = v
            .as_object()
            .ok_or_else(|| Error::input(name, "expected a JSON object"))?;
        if obj
            .get("extra")
            .and_then(|e| e.get("adc"))
            .is_some_and(|a| a.is_object())
        {
            // Codes of `generate --bits` stand for lo + (code − code_min)·LSB; no reader maps
            // them back yet, and reading them as digital or physical values would be wrong.
            return Err(Error::input(
                name,
                "the file holds ADC codes (generate \u{1}bits\u{1}, see extra.adc); analyze does not \
                 read ADC code files yet: generate the same profile and seed without \u{1}bits\u{1} \
                 to analyse the noise",
            ));
        }
        let mut m = SideManifest {
            file: name.to_string(),
            ..SideManifest::default()
        };
        let bad = |key: &str, expected: &str, got: &serde_json::Value| {
            Error::input(name, format!("{key}: expected {expected}, got {got}"))
        };
        if let Some(fs) = obj.get("full_scale") {
            m.states_scale = true;
            if !fs.is_null() {
                let x = fs.as_f64().filter(|x| x.is_finite() && *x > 0.0);
                m.full_scale =
                    Some(x.ok_or_else(|| bad("full_scale", "a positive number or null", fs))?);
            }
        }
        if let Some(u) = obj.get("unit").filter(|u| !u.is_null()) {
            m.unit = Some(match u.as_str().and_then(Unit::from_text) {
                Some(unit) => unit,
                None => {
                    return Err(bad(
                        "unit",
                        "\"V\" or \"A\", or a sensor's unit such as \"g\"",
                        u,
                    ));
                }
            });
        }
        if let Some(r) = obj.get("sample_rate_hz").filter(|r| !r.is_null()) {
            let x = r.as_f64().filter(|x| x.is_finite() && *x > 0.0);
            m.sample_rate_hz =
                Some(x.ok_or_else(|| bad("sample_rate_hz", "a positive number of Hz", r))?);
        }
        if let Some(s) = obj.get("sample_format").filter(|s| !s.is_null()) {
            let f = s.as_str().and_then(|s| s.parse::<SampleFormat>().ok());
            m.sample_format =
                Some(f.ok_or_else(|| bad("sample_format", "f32, f64, i16, i24 or i32", s))?);
        }
        let b = &v["profile"]["band"];
        if let (Some(lo), Some(hi)) = (b["low_hz"].as_f64(), b["high_hz"].as_f64()) {
            if lo > 0.0 && hi > lo {
                m.band = Some(Band {
                    low_hz: lo,
                    high_hz: hi,
                    order: b["order"].as_u64().unwrap_or(0) as u32,
                    low_order: b["low_order"].as_u64().unwrap_or(0) as u32,
                });
            }
        }
        let channels = v["extra"]["channels"]
            .as_u64()
            .or(v["profile"]["channels"].as_u64());
        if let Some(c) = channels.filter(|&c| c > 1) {
            let max = crate::profile::MAX_CHANNELS as u64;
            let c = u16::try_from(c).ok().filter(|&c| u64::from(c) <= max);
            m.channels = Some(c.ok_or_else(|| {
                bad(
                    "extra.channels",
                    "a channel count from 1 to 64",
                    &v["extra"]["channels"],
                )
            })?);
        }
        Ok(m)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::io::sink::test_util::*;
    use crate::units::{dbfs_from_rms_digital, rms_digital_from_dbfs};

    #[test]
    fn a_manifest_past_the_limit_is_refused_unread() {
        // A sparse file one byte past the limit: refused with its name and the limit, exit 2.
        let d = std::env::temp_dir().join(format!("nw-manifest-limit-{}", std::process::id()));
        std::fs::create_dir_all(&d).unwrap();
        let path = d.join("cap.wav.json");
        let f = std::fs::File::create(&path).unwrap();
        f.set_len(MAX_MANIFEST_BYTES + 1).unwrap();
        let e = SideManifest::read(&path).unwrap_err();
        let text = e.to_string();
        assert!(
            text.contains("cap.wav.json") && text.contains("larger than 16 MiB"),
            "{text}"
        );
        assert_eq!(e.exit_code(), 2, "{text}");
        f.set_len(2).unwrap();
        std::fs::write(&path, "{}").unwrap();
        assert_eq!(SideManifest::read(&path).unwrap().unwrap().full_scale, None);
        std::fs::remove_dir_all(&d).unwrap();
    }

    #[test]
    fn manifest_fields_parse_and_bad_ones_are_named() {
        let m = SideManifest::parse(
            r#"{"full_scale": 2e-6, "unit": "A", "sample_rate_hz": 1000, "sample_format": "i24", "x": 1}"#,
            "m.json",
        )
        .unwrap();
        assert_eq!(m.full_scale, Some(2e-6));
        assert_eq!(m.unit, Some(Unit::Ampere));
        assert_eq!(m.sample_rate_hz, Some(1000.0));
        assert_eq!(m.sample_format, Some(SampleFormat::I24));
        assert!(m.states_scale);
        assert_eq!(m.band, None);
        let m = SideManifest::parse(
            r#"{"profile": {"band": {"low_hz": 2.0, "high_hz": 300.0, "order": 4}}}"#,
            "m.json",
        )
        .unwrap();
        assert_eq!(
            m.band,
            Some(Band {
                low_hz: 2.0,
                high_hz: 300.0,
                order: 4,
                low_order: 0,
            })
        );
        let m = SideManifest::parse(r#"{"full_scale": null}"#, "m.json").unwrap();
        assert!(m.states_scale && m.full_scale.is_none());
        let e = SideManifest::parse(r#"{"full_scale": -1}"#, "m.json").unwrap_err();
        assert!(e.to_string().contains("m.json: full_scale"), "{e}");
        assert_eq!(e.exit_code(), 2);
        assert!(SideManifest::parse("[1]", "m").is_err());
        assert!(SideManifest::parse("{", "m").is_err());
    }

    #[test]
    fn manifest_has_every_key_and_ends_with_a_newline() {
        let x = gaussian(1_000, 0.1, SEED);
        let s = spec(Format::Wav, SampleFormat::I24, Some(1.0), Some(1_000));
        let (_, report) = render(&s, &x).unwrap();
        let mut stats = RunningStats::new();
        stats.push(&x);
        let mut m = Manifest::new(&s, 42, &report, &stats, 0.1);
        m.profile = serde_json::json!({"name": "demo"});
        m.level_dbfs = Some(-20.0);
        m.notes.push("a note".into());
        m.extra.insert("later".into(), serde_json::json!(1));
        let mut out = Vec::new();
        write_manifest(&m, &mut out).unwrap();
        assert!(out.ends_with(b"}\n"));
        let v: serde_json::Value = serde_json::from_slice(&out).unwrap();
        let keys: Vec<&str> = v.as_object().unwrap().keys().map(|k| k.as_str()).collect();
        for k in [
            "version",
            "engine_version",
            "profile",
            "seed",
            "sample_rate_hz",
            "samples",
            "duration_s",
            "format",
            "sample_format",
            "unit",
            "full_scale",
            "level_dbfs",
            "dbfs_convention",
            "expected_rms",
            "measured_rms",
            "measured_std",
            "measured_mean",
            "clipped",
            "loop",
            "start_sample",
            "start_s",
            "notes",
            "extra",
        ] {
            assert!(keys.contains(&k), "missing {k}");
        }
        assert_eq!(keys.len(), 23);
        assert_eq!(v["version"], env!("CARGO_PKG_VERSION"));
        assert_eq!(v["format"], "wav");
        assert_eq!(v["sample_format"], "i24");
        assert_eq!(v["unit"], "V");
        assert_eq!(v["loop"], false);
        assert_eq!(v["samples"], 1_000);
        let d = 1_000.0 / 48_000.0;
        assert!((v["duration_s"].as_f64().unwrap() - d).abs() <= 2.0 * f64::EPSILON * d);
        // Floats are written shortest-round-trip; read the text with std's exact parser
        // (serde_json's default parser may be off by an ulp).
        let text = String::from_utf8(out.clone()).unwrap();
        let rms_text = text
            .lines()
            .find_map(|l| l.trim().strip_prefix("\"measured_rms\": "))
            .unwrap()
            .trim_end_matches(',');
        assert_eq!(rms_text.parse::<f64>().unwrap(), stats.rms());
        assert_eq!(v["profile"]["name"], "demo");
        assert_eq!(v["extra"]["later"], 1);
        // Physical output: no full scale.
        let s = spec(Format::Raw, SampleFormat::F64, None, None);
        let m = Manifest::new(&s, 1, &report, &stats, 0.1);
        let v = serde_json::to_value(&m).unwrap();
        assert!(v["full_scale"].is_null() && v["level_dbfs"].is_null());
    }

    /// FNV-1a 128: the empty input hashes to the offset basis, and "a" to the value the FNV
    /// authors publish in their test table (draft-eastlake-fnv, from memory:
    /// d228cb696f1a8caf78912b704e4a8964).
    #[test]
    fn fingerprints_hash_only_what_decides_the_bytes() {
        assert_eq!(fnv1a_128(b""), 0x6c62_272e_07bb_0142_62b8_2175_6295_c58d);
        assert_eq!(fnv1a_128(b"a"), 0xd228_cb69_6f1a_8caf_7891_2b70_4e4a_8964);
        let doc = serde_json::json!({
            "version": "0.1.0", "profile": {"sample_rate_hz": 48000.0}, "seed": 7,
            "sample_rate_hz": 48000.0, "format": "wav", "sample_format": "i16", "unit": "V",
            "full_scale": 1e-5, "loop": false, "samples": 10, "start_sample": 0,
            "measured_rms": 1.0,
            "extra": {"adc": {"bits": 12, "first_sample": 0}, "band_rms": 2.0}
        });
        let f = fingerprint(&doc);
        assert_eq!(f.len(), 32);
        // Where a file starts, its length and what was measured leave it as it is …
        let mut same = doc.clone();
        same["samples"] = 5.into();
        same["start_sample"] = 5.into();
        same["measured_rms"] = 0.5.into();
        same["extra"]["adc"]["first_sample"] = 5.into();
        same["extra"]["band_rms"] = 3.into();
        assert_eq!(fingerprint(&same), f);
        // … the seed, the profile, the scale or the ADC change it.
        for (key, value) in [
            ("seed", serde_json::json!(8)),
            ("profile", serde_json::json!({"sample_rate_hz": 96000.0})),
            ("full_scale", serde_json::json!(2e-5)),
        ] {
            let mut other = doc.clone();
            other[key] = value;
            assert_ne!(fingerprint(&other), f, "{key}");
        }
        let mut other = doc.clone();
        other["extra"]["adc"]["bits"] = 16.into();
        assert_ne!(fingerprint(&other), f);
    }

    /// AES17 (REFERENCES §9): a full-scale sine is 0 dBFS and a full-scale square +3.01 dBFS.
    #[test]
    fn dbfs_matches_the_aes17_definition() {
        let n = 48 * 1000; // 1000 whole periods of 48 samples
        let sine: Vec<f64> = (0..n)
            .map(|k| (2.0 * std::f64::consts::PI * k as f64 / 48.0).sin())
            .collect();
        let mut st = RunningStats::new();
        st.push(&sine);
        assert!(dbfs_from_rms_digital(st.rms()).abs() < 1e-12);
        let square: Vec<f64> = (0..n)
            .map(|k| if k % 48 < 24 { 1.0 } else { -1.0 })
            .collect();
        let mut st = RunningStats::new();
        st.push(&square);
        // 20·log10(√2) = 10·log10(2) = 3.0103 dB (exact math).
        assert!((dbfs_from_rms_digital(st.rms()) - 10.0 * 2f64.log10()).abs() < 1e-12);
        for l in [-40.0, -20.0, -3.0, 0.0, 6.0] {
            assert!((dbfs_from_rms_digital(rms_digital_from_dbfs(l)) - l).abs() < 1e-12);
        }
    }

    /// Gaussian noise at L dBFS clips with probability erfc(1/(σ√2)), σ = 10^(L/20)/√2;
    /// check values from REFERENCES §9 [V], to their printed two figures.
    #[test]
    fn clip_probabilities_match_the_reference_table() {
        use statrs::function::erf::erfc;
        // (level, printed value, half a unit of its last printed digit)
        for (l, p, tol) in [
            (-6.0, 4.8e-3, 0.05e-3),
            (-10.0, 7.7e-6, 0.05e-6),
            (-12.0, 1.8e-8, 0.05e-8),
        ] {
            let sigma = rms_digital_from_dbfs(l);
            let got = erfc(1.0 / (sigma * std::f64::consts::SQRT_2));
            assert!((got - p).abs() <= tol, "{l} dBFS: {got:e} vs {p:e}");
        }
    }

    /// The manifest names the container; the switch to RF64 is the WAV writer's (one frame
    /// past the plain RIFF limit, which the INFO comment's `LIST` chunk moves down by its
    /// length in 2-byte frames), so nothing needs writing to see it.
    #[test]
    fn container_facts_follow_the_format() {
        let one = spec(Format::Wav, SampleFormat::I16, Some(1.0), Some(1));
        let list = crate::io::sink::wav_info_of(&one)
            .unwrap()
            .list_chunk()
            .len() as u64;
        let max = crate::io::sink::wav_max_frames(SampleFormat::I16).unwrap() - list / 2;
        for (frames, want) in [(max, "RIFF"), (max + 1, "RF64")] {
            let s = spec(Format::Wav, SampleFormat::I16, Some(1.0), Some(frames));
            let (keys, notes) = container_facts(&s).unwrap();
            assert_eq!(keys["container"], want);
            assert_eq!(notes.len(), usize::from(want == "RF64"));
        }
        let s = spec(Format::Npy, SampleFormat::I24, Some(1.0), Some(9));
        let (keys, notes) = container_facts(&s).unwrap();
        assert_eq!(keys["npy_dtype"], "<i4");
        assert_eq!(keys["npy_shape"], serde_json::json!([9]));
        assert!(notes[0].contains("'<i4'"));
        let mut s = spec(Format::C, SampleFormat::I16, Some(1.0), Some(9));
        s.name = Some("trace".into());
        let (keys, _) = container_facts(&s).unwrap();
        assert_eq!(keys["c_type"], "int16_t");
        assert_eq!(keys["c_macros"][0], "TRACE_LENGTH");
        let s = spec(Format::Raw, SampleFormat::I16, Some(1.0), None);
        assert!(container_facts(&s).unwrap().0.is_empty());
    }
}
