//! Readers of captured samples: WAV, CSV, raw and `.npy` files on any [`std::io::Read`], streamed in
//! blocks with bounded memory.
//!
//! A reader yields **stored values** as `f64`, with one rule for every format:
//!
//! * integer codes become digital values `code / (2^(b−1) − 1)`, the inverse of the writers'
//!   rule in [`crate::io::sink`] (so ±32767 ↔ ±1.0 for 16 bits; the code −2^(b−1), which
//!   noisewright never writes, reads as slightly below −1.0);
//! * floats are returned as stored.
//!
//! [`StreamInfo::values`] says what the values mean: [`Values::Digital`] (relative to digital
//! full scale 1.0: WAV, integer raw, CSV `value_fs`/`code_*` columns), [`Values::Physical`]
//! (a unit is known: CSV `value_V`/`value_A` columns) or [`Values::Unknown`] (float raw, CSV
//! columns with other names). [`Scale`] turns them into physical values with a full scale from
//! the command line or from a manifest ([`SideManifest`], the JSON `generate` writes beside its
//! output).
//!
//! Malformed or truncated input is an [`Error::Input`] naming the file and what is wrong.

mod csv;
mod npy;
mod raw;
mod wav;

pub use csv::CsvSource;
pub use npy::NpySource;
pub use raw::RawSource;
pub use wav::WavSource;

use std::io::Read;

use crate::error::{Error, Result, Setting};
use crate::io::manifest::SideManifest;
use crate::io::sink::{Format, SampleFormat};
use crate::profile::Unit;

/// What the values a reader yields mean.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Values {
    /// Digital values: 1.0 is digital full scale.
    Digital,
    /// Physical values in a known unit.
    Physical(Unit),
    /// Not stated by the file: digital with a full scale, physical otherwise.
    Unknown,
}

/// Facts about a stream, known once its header (if any) has been read.
#[derive(Debug, Clone, PartialEq)]
pub struct StreamInfo {
    /// The container.
    pub format: Format,
    /// How the samples are stored; `None` for CSV text.
    pub sample_format: Option<SampleFormat>,
    /// Sample rate in samples per second (Hz).
    pub sample_rate_hz: f64,
    /// Samples (per channel) the header announces; `None` when unknown (raw, CSV, streamed WAV).
    pub frames: Option<u64>,
    /// Channels stored; a reader yields every channel, frame by frame (interleaved).
    pub channels: u16,
    /// What the values mean.
    pub values: Values,
    /// Remarks for the user (a streaming WAV size placeholder, extra channels, ...).
    pub notes: Vec<String>,
    /// A WAV's INFO comment ([`crate::io::wav_info`]): `None` when the file has none (or is
    /// not a WAV), `Some(Err(why))` when its comment is another program's or malformed.
    pub wav_info: Option<std::result::Result<crate::io::wav_info::WavInfo, String>>,
}

/// A stream of samples from a capture.
pub trait SampleSource {
    /// What the header said.
    fn info(&self) -> &StreamInfo;
    /// Replaces the contents of `out` with up to `max` next frames (at least one), each frame
    /// the values of every channel in order (see the module docs for their scale), and returns
    /// how many values; 0 at the end of the stream.
    fn read_block(&mut self, out: &mut Vec<f64>, max: usize) -> Result<usize>;
}

/// How to open a capture.
#[derive(Debug, Clone, PartialEq)]
pub struct SourceOptions {
    /// The container.
    pub format: Format,
    /// Sample format of a raw file (required for raw; ignored by WAV and CSV).
    pub sample_format: Option<SampleFormat>,
    /// Sample rate in Hz from the user: for raw it is required (unless `fallback_rate_hz` is
    /// given); for CSV it replaces the time column's rate; for WAV the header's (with a note).
    pub rate_hz: Option<f64>,
    /// Sample rate in Hz used only when neither `rate_hz` nor the file gives one (e.g. from a
    /// manifest beside the file).
    pub fallback_rate_hz: Option<f64>,
    /// The file's name for messages.
    pub name: String,
    /// The input's length in bytes when known (a regular file), so a WAV reader can tell a
    /// size past the end of the file, and bytes after its samples, before reading them.
    pub length_bytes: Option<u64>,
    /// Channels interleaved in a raw file (from a manifest or a profile); `None` for one.
    /// WAV and CSV files say how many they hold.
    pub channels: Option<u16>,
}

/// Opens a stream of samples over `input`, reading the header now.
pub fn open_source<'a, R: Read + 'a>(
    input: R,
    options: &SourceOptions,
) -> Result<Box<dyn SampleSource + 'a>> {
    Ok(match options.format {
        Format::Wav => Box::new(WavSource::new(input, options)?),
        Format::Csv => Box::new(CsvSource::new(input, options)?),
        Format::Raw => Box::new(RawSource::new(input, options)?),
        Format::Npy => Box::new(NpySource::new(input, options)?),
        Format::C => {
            return Err(Error::input(
                &options.name,
                format!(
                    "{} files are not read by analyze; analyse the raw, .npy or WAV output of \
                     the same run instead",
                    options.format
                ),
            ));
        }
    })
}

/// How stored values become physical ones: `physical = value · gain`, in `unit`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Scale {
    /// Physical value of one stored unit: the full scale for digital values, 1 for physical.
    pub gain: f64,
    /// The physical unit; `None` when the values stay digital (reported as "FS", digital
    /// full-scale units) or their unit is not known.
    pub unit: Option<Unit>,
    /// The full scale that was applied (physical value of digital 1.0), if any.
    pub full_scale: Option<f64>,
    /// Where the scale came from, for the report: "--full-scale", "manifest", "info_comment"
    /// (a WAV's INFO comment, used when no manifest is beside it), "file", "none".
    pub origin: &'static str,
}

impl Scale {
    /// Decides the scale from what the file says (`values`), the manifest beside it, a
    /// full scale given by the user and the unit a profile expects (with what to call it in
    /// messages: the profile's file name, or [`Setting::FullScale`]'s mark when that unit is
    /// the full scale's, without a profile). `capture` is the capture's file name, for
    /// messages.
    ///
    /// * A full scale given wins: the values are taken as digital and multiplied by it.
    /// * Otherwise a manifest's `full_scale` number applies to digital or unknown values; its
    ///   `null` marks unknown values as physical. A WAV's INFO comment in the manifest's
    ///   place ([`SideManifest::wav_comment`]) applies the same way, origin `info_comment`.
    /// * Physical values keep gain 1; their unit comes from the file, the manifest or the
    ///   profile, in that order. Units that disagree are an error.
    /// * Digital values with no full scale stay digital (unit `None`).
    pub fn resolve(
        values: Values,
        manifest: Option<&SideManifest>,
        full_scale: Option<f64>,
        profile: Option<(Unit, &str)>,
        capture: &str,
    ) -> Result<Scale> {
        let file_unit = match values {
            Values::Physical(u) => {
                Some((u, format!("{capture} (its value_{} column)", u.symbol())))
            }
            _ => None,
        };
        let manifest_unit = manifest.and_then(|m| Some((m.unit?, m.file.clone())));
        let profile_unit = profile.map(|(u, name)| (u, name.to_string()));
        let mut unit: Option<(Unit, String)> = None;
        for (i, (u, said_by)) in [file_unit, manifest_unit, profile_unit.clone()]
            .into_iter()
            .enumerate()
            .filter_map(|(i, s)| Some((i, s?)))
        {
            match &unit {
                None => unit = Some((u, said_by)),
                Some((prev, prev_by)) if *prev != u => {
                    let message = format!(
                        "{prev_by} is in {} but {said_by} is in {}: they must describe the same \
                         quantity",
                        prev.symbol(),
                        u.symbol()
                    );
                    // The third side is the profile (or, without one, the full scale's
                    // unit, named by its mark); otherwise the manifest disagrees with the
                    // capture.
                    return Err(if i == 2 {
                        let setting = if said_by == Setting::FullScale.mark().to_string() {
                            Setting::FullScale
                        } else {
                            Setting::Profile
                        };
                        Error::setting(setting, message)
                    } else {
                        Error::input(&said_by, message)
                    });
                }
                Some(_) => {}
            }
        }
        let unit = unit.map(|(u, _)| u);
        if let Some(fs) = full_scale {
            return Ok(Scale {
                gain: fs,
                unit,
                full_scale: Some(fs),
                origin: "--full-scale",
            });
        }
        let manifest_fs = manifest.and_then(|m| m.full_scale);
        let manifest_says_physical =
            manifest.is_some_and(|m| m.states_scale && m.full_scale.is_none());
        let manifest_origin = match manifest {
            Some(m) if m.wav_comment => "info_comment",
            _ => "manifest",
        };
        match values {
            Values::Digital | Values::Unknown if manifest_fs.is_some() => {
                let fs = manifest_fs.expect("checked");
                Ok(Scale {
                    gain: fs,
                    unit,
                    full_scale: Some(fs),
                    origin: manifest_origin,
                })
            }
            Values::Physical(_) => Ok(Scale {
                gain: 1.0,
                unit,
                full_scale: None,
                origin: "file",
            }),
            Values::Unknown if manifest_says_physical || unit.is_some() => Ok(Scale {
                gain: 1.0,
                unit,
                full_scale: None,
                origin: if manifest_says_physical {
                    "manifest"
                } else {
                    "none"
                },
            }),
            Values::Digital | Values::Unknown => Ok(Scale {
                gain: 1.0,
                unit: None,
                full_scale: None,
                origin: "none",
            }),
        }
    }

    /// True when the scaled values are physical (a full scale was applied, or the values were
    /// physical already with a known unit).
    pub fn is_physical(&self) -> bool {
        self.unit.is_some()
    }

    /// The unit's symbol for display: `V`, `A`, `FS` for digital values, or `units` for
    /// scaled values of an unknown unit.
    pub fn symbol(&self) -> &'static str {
        match self.unit {
            Some(u) => u.symbol(),
            None if self.full_scale.is_some() => "units",
            None => "FS",
        }
    }
}

/// Reads exactly `buf.len()` bytes or up to the end of the stream; returns the count read.
/// Interrupted reads are retried.
pub(crate) fn read_full<R: Read>(r: &mut R, buf: &mut [u8], name: &str) -> Result<usize> {
    let mut done = 0;
    while done < buf.len() {
        match r.read(&mut buf[done..]) {
            Ok(0) => break,
            Ok(n) => done += n,
            Err(e) if e.kind() == std::io::ErrorKind::Interrupted => {}
            Err(e) => return Err(Error::io(format!("reading {name}"), e)),
        }
    }
    Ok(done)
}

/// Decodes little-endian stored samples of `sf` from `bytes` (a whole number of samples,
/// `stride` bytes apart) into values per the module rule.
pub(crate) fn decode_le(bytes: &[u8], sf: SampleFormat, stride: usize, out: &mut Vec<f64>) {
    // Division (correctly rounded) rather than a reciprocal, so code/max is exact to the ulp.
    let code_max = sf.full_scale_code().map_or(1.0, f64::from);
    let s = bytes.chunks_exact(stride);
    // One loop per format (the match outside), each extending by an exact-size iterator.
    match sf {
        SampleFormat::F32 => {
            out.extend(s.map(|s| f64::from(f32::from_le_bytes([s[0], s[1], s[2], s[3]]))))
        }
        SampleFormat::F64 => out.extend(
            s.map(|s| f64::from_le_bytes([s[0], s[1], s[2], s[3], s[4], s[5], s[6], s[7]])),
        ),
        SampleFormat::I16 => {
            out.extend(s.map(|s| f64::from(i16::from_le_bytes([s[0], s[1]])) / code_max))
        }
        // Sign-extend the 3-byte value through the top byte of an i32.
        SampleFormat::I24 => out.extend(
            s.map(|s| f64::from(i32::from_le_bytes([0, s[0], s[1], s[2]]) >> 8) / code_max),
        ),
        SampleFormat::I32 => out
            .extend(s.map(|s| f64::from(i32::from_le_bytes([s[0], s[1], s[2], s[3]])) / code_max)),
    }
}

pub(crate) use super::quote::{echo, short};

/// A sample rate given by the user or a file, checked to be finite and positive (Hz).
pub(crate) fn check_rate(rate: f64, what: &str, name: &str) -> Result<f64> {
    if rate.is_finite() && rate > 0.0 {
        Ok(rate)
    } else {
        Err(Error::input(
            name,
            format!("{what}: sample rate {} Hz must be positive", short(rate)),
        ))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn scale_follows_the_documented_order() {
        let digital_manifest = SideManifest {
            full_scale: Some(3.0),
            unit: Some(Unit::Volt),
            states_scale: true,
            ..Default::default()
        };
        let s = Scale::resolve(Values::Digital, Some(&digital_manifest), None, None, "c").unwrap();
        assert_eq!(
            (s.gain, s.unit, s.origin),
            (3.0, Some(Unit::Volt), "manifest")
        );
        let s = Scale::resolve(
            Values::Digital,
            Some(&digital_manifest),
            Some(5.0),
            None,
            "c",
        )
        .unwrap();
        assert_eq!((s.gain, s.origin), (5.0, "--full-scale"));
        let s = Scale::resolve(Values::Digital, None, None, None, "c").unwrap();
        assert_eq!((s.gain, s.unit, s.symbol()), (1.0, None, "FS"));
        let physical_manifest = SideManifest {
            states_scale: true,
            unit: Some(Unit::Ampere),
            ..Default::default()
        };
        let s = Scale::resolve(Values::Unknown, Some(&physical_manifest), None, None, "c").unwrap();
        assert_eq!((s.gain, s.unit), (1.0, Some(Unit::Ampere)));
        let physical_manifest = SideManifest {
            file: "c.csv.json".into(),
            ..physical_manifest
        };
        let e = Scale::resolve(
            Values::Physical(Unit::Volt),
            Some(&physical_manifest),
            None,
            None,
            "c.csv",
        )
        .unwrap_err();
        assert!(
            e.to_string()
                .contains("c.csv (its value_V column) is in V but c.csv.json is in A"),
            "{e}"
        );
        assert_eq!(e.exit_code(), 2);
    }

    #[test]
    fn echoed_text_and_numbers_stay_short() {
        assert_eq!(echo("abc"), "abc");
        let long = "é".repeat(61);
        assert_eq!(echo(&long), format!("{}…", "é".repeat(60)));
        assert_eq!(echo(&long[..120]), "é".repeat(60));
        assert_eq!(short(0.001), "0.001");
        assert_eq!(short(48000.0), "48000");
        assert_eq!(short(1e-300), "1e-300");
        assert_eq!(short(-2.5e-7), "-2.5e-7");
        assert_eq!(short(3e20), "3e20");
        assert_eq!(short(0.0), "0");
    }

    #[test]
    fn codes_decode_to_the_writers_digital_values() {
        let mut out = Vec::new();
        let bytes: Vec<u8> = [32767i16, -32767, 0, 16384]
            .iter()
            .flat_map(|c| c.to_le_bytes())
            .collect();
        decode_le(&bytes, SampleFormat::I16, 2, &mut out);
        assert_eq!(out, [1.0, -1.0, 0.0, 16384.0 / 32767.0]);
        out.clear();
        // −2097152 = 0xE00000 and 8388607 = 0x7FFFFF, 3 bytes little-endian.
        decode_le(
            &[0x00, 0x00, 0xE0, 0xFF, 0xFF, 0x7F],
            SampleFormat::I24,
            3,
            &mut out,
        );
        assert_eq!(out, [-2097152.0 / 8388607.0, 1.0]);
    }
}
