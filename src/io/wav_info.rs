//! The scale a WAV file carries in itself: a RIFF `LIST` chunk of list type `INFO` whose
//! `ICMT` (comment) subchunk holds one machine-readable line, so a WAV copied away from its
//! manifest still says what digital 1.0 is.
//!
//! # Layout
//!
//! RIFF's `LIST`/`INFO` list (Multimedia Programming Interface and Data Specifications 1.0,
//! IBM/Microsoft 1991, "INFO List Chunk"; from memory): `"LIST"`, its size (u32), `"INFO"`,
//! then subchunks, each an id, a u32 size and a NUL-terminated string (ZSTR) whose size counts
//! the NUL; a subchunk of odd size is followed by one pad byte not counted in its size, so
//! every chunk starts on an even offset. A reader skips chunks it does not know (same
//! specification), so every WAV reader still opens the file. noisewright writes two:
//!
//! | id | text |
//! |---|---|
//! | `ISFT` (software) | `noisewright` (no version: the bytes of a run do not depend on it) |
//! | `ICMT` (comment) | `noisewright unit=V full_scale=0.001 seed=7 profile=NAME` |
//!
//! The comment: the word `noisewright`, then `key=value` words separated by one space:
//! `unit` (the unit's ASCII spelling, e.g. `m/s^2`, `deg/s`), `full_scale` (the physical value
//! of digital 1.0 in that unit, Rust's shortest digits that read back to the same `f64`, in
//! exponent form outside 1e−4 ≤ v < 1e16), `seed` (when known) and last `profile` (the profile's name, when it has one),
//! which runs to the end of the text; in it `%` and any byte outside printable ASCII are
//! written `%XX` (hex, as URI percent-encoding, RFC 3986 §2.1), so the comment is ASCII.
//! A reader takes unknown keys as they come and ignores them.

use crate::profile::Unit;

/// The word a noisewright comment starts with.
const SIGNATURE: &str = "noisewright";
/// The software name written in `ISFT`.
const SOFTWARE: &str = "noisewright";
/// The largest `LIST` chunk a reader looks into (64 KiB); a larger one is not ours and is
/// skipped unread.
pub const MAX_LIST_BYTES: u32 = 64 << 10;

/// What a WAV's INFO comment says about its samples.
#[derive(Debug, Clone, PartialEq)]
pub struct WavInfo {
    /// The physical unit of the samples.
    pub unit: Unit,
    /// Physical value (in `unit`) of digital 1.0: the value of full-scale code or float 1.0.
    pub full_scale: f64,
    /// The name of the profile the file was generated from, if it has one.
    pub profile: Option<String>,
    /// The random seed of the run, if known.
    pub seed: Option<u64>,
}

impl WavInfo {
    /// The comment line (see the module docs), ASCII only.
    pub fn comment(&self) -> String {
        let mut s = format!(
            "{SIGNATURE} unit={} full_scale={}",
            ascii_unit(self.unit),
            crate::io::quote::short(self.full_scale)
        );
        if let Some(seed) = self.seed {
            s += &format!(" seed={seed}");
        }
        if let Some(p) = &self.profile {
            s += " profile=";
            for b in p.bytes() {
                if (0x20..0x7F).contains(&b) && b != b'%' {
                    s.push(char::from(b));
                } else {
                    s += &format!("%{b:02X}");
                }
            }
        }
        s
    }

    /// Reads a comment line back. `Err` says why it is not one noisewright wrote (another
    /// program's comment) or what is wrong with it.
    pub fn parse(text: &str) -> Result<WavInfo, String> {
        let shown = crate::io::quote::echo(text);
        let Some(rest) = text
            .strip_prefix(SIGNATURE)
            .and_then(|r| r.strip_prefix(' '))
        else {
            return Err(format!(
                "its comment {shown:?} is not one noisewright writes (it does not start with \
                 \"{SIGNATURE} \")"
            ));
        };
        let (words, profile) = match rest.split_once("profile=") {
            Some((w, p)) if w.is_empty() || w.ends_with(' ') => (w, Some(p)),
            _ => (rest, None),
        };
        let (mut unit, mut full_scale, mut seed) = (None, None, None);
        for word in words.split(' ').filter(|w| !w.is_empty()) {
            let bad = || format!("its comment {shown:?} has a malformed word {word:?}");
            let (key, value) = word.split_once('=').ok_or_else(bad)?;
            match key {
                "unit" => unit = Some(Unit::from_text(value).ok_or_else(bad)?),
                "full_scale" => {
                    let v = value
                        .parse::<f64>()
                        .ok()
                        .filter(|v| v.is_finite() && *v > 0.0);
                    full_scale = Some(v.ok_or_else(bad)?);
                }
                "seed" => seed = Some(value.parse::<u64>().map_err(|_| bad())?),
                _ => {}
            }
        }
        let missing = |key: &str| format!("its comment {shown:?} has no {key}=");
        Ok(WavInfo {
            unit: unit.ok_or_else(|| missing("unit"))?,
            full_scale: full_scale.ok_or_else(|| missing("full_scale"))?,
            profile: profile
                .map(|p| {
                    unescape(p).ok_or_else(|| {
                        format!("its comment {shown:?} has a malformed profile name")
                    })
                })
                .transpose()?,
            seed,
        })
    }

    /// The whole `LIST` chunk (header included, even length) holding the `ISFT` and `ICMT`
    /// subchunks.
    pub fn list_chunk(&self) -> Vec<u8> {
        let mut body = b"INFO".to_vec();
        for (id, text) in [(b"ISFT", SOFTWARE.to_string()), (b"ICMT", self.comment())] {
            let n = text.len() + 1; // ZSTR: the NUL counts
            body.extend_from_slice(id);
            body.extend_from_slice(&(n as u32).to_le_bytes());
            body.extend_from_slice(text.as_bytes());
            body.push(0);
            if n % 2 == 1 {
                body.push(0); // pad byte, not counted
            }
        }
        let mut chunk = b"LIST".to_vec();
        chunk.extend_from_slice(&(body.len() as u32).to_le_bytes());
        chunk.extend_from_slice(&body);
        chunk
    }

    /// What the body of a `LIST` chunk (after its size) says: `None` when it is not an
    /// `INFO` list or holds no `ICMT`; otherwise the comment read by [`WavInfo::parse`].
    /// A subchunk whose size runs past the body ends the walk.
    pub fn from_list(body: &[u8]) -> Option<Result<WavInfo, String>> {
        let mut rest = body.strip_prefix(b"INFO")?;
        while rest.len() >= 8 {
            let n = u32::from_le_bytes(rest[4..8].try_into().expect("4 bytes")) as usize;
            let text = rest.get(8..8 + n)?;
            if &rest[..4] == b"ICMT" {
                // A ZSTR ends at its first NUL; a missing NUL is tolerated.
                let text = text.split(|&b| b == 0).next().unwrap_or_default();
                return Some(match std::str::from_utf8(text) {
                    Ok(t) => WavInfo::parse(t),
                    Err(_) => Err("its comment is not text (not UTF-8)".to_string()),
                });
            }
            rest = rest.get(8 + n + n % 2..).unwrap_or_default();
        }
        None
    }
}

/// The unit's first ASCII spelling (`m/s^2`, `deg/s`; the symbol itself for V, A, …).
fn ascii_unit(unit: Unit) -> &'static str {
    let spec = unit.spec();
    std::iter::once(&spec.symbol)
        .chain(spec.spellings)
        .find(|s| s.is_ascii())
        .copied()
        .unwrap_or(spec.symbol)
}

/// Undoes the `%XX` escapes of a profile name; `None` for a malformed escape or bytes that
/// are not UTF-8.
fn unescape(text: &str) -> Option<String> {
    let b = text.as_bytes();
    let mut out = Vec::with_capacity(b.len());
    let mut i = 0;
    while i < b.len() {
        if b[i] == b'%' {
            let hex = std::str::from_utf8(b.get(i + 1..i + 3)?).ok()?;
            out.push(u8::from_str_radix(hex, 16).ok()?);
            i += 3;
        } else {
            out.push(b[i]);
            i += 1;
        }
    }
    String::from_utf8(out).ok()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn info(profile: Option<&str>) -> WavInfo {
        WavInfo {
            unit: Unit::Volt,
            full_scale: 1e-3,
            profile: profile.map(str::to_string),
            seed: Some(7),
        }
    }

    #[test]
    fn the_comment_reads_back_exactly() {
        let i = info(Some("mic preamp 100% (invented) µV"));
        let c = i.comment();
        assert!(c.is_ascii(), "{c}");
        assert_eq!(
            c,
            "noisewright unit=V full_scale=0.001 seed=7 profile=mic preamp 100%25 (invented) \
             %C2%B5V"
        );
        assert_eq!(WavInfo::parse(&c).unwrap(), i);
        // Every unit round-trips through its ASCII spelling; an awkward full scale to the bit.
        for u in Unit::ALL {
            let w = WavInfo {
                unit: u,
                full_scale: 0.1 + 0.2,
                profile: None,
                seed: None,
            };
            assert!(w.comment().is_ascii());
            assert_eq!(WavInfo::parse(&w.comment()).unwrap(), w, "{u:?}");
        }
    }

    /// The chunk, byte by byte, as the INFO list layout gives it (module docs): ZSTR sizes
    /// count the NUL, odd sizes get a pad byte outside the size.
    #[test]
    fn the_list_chunk_has_even_sizes_and_pads() {
        let i = info(None);
        let c = i.comment(); // "noisewright unit=V full_scale=0.001 seed=7": 42 bytes
        assert_eq!(c.len(), 42);
        let b = i.list_chunk();
        assert_eq!(&b[..4], b"LIST");
        let size = u32::from_le_bytes(b[4..8].try_into().unwrap()) as usize;
        assert_eq!(size, b.len() - 8);
        assert_eq!(size % 2, 0);
        assert_eq!(&b[8..12], b"INFO");
        assert_eq!(&b[12..16], b"ISFT");
        assert_eq!(u32::from_le_bytes(b[16..20].try_into().unwrap()), 12); // 11 + NUL
        assert_eq!(&b[20..32], b"noisewright\0");
        assert_eq!(&b[32..36], b"ICMT");
        assert_eq!(u32::from_le_bytes(b[36..40].try_into().unwrap()), 43); // 42 + NUL
        assert_eq!(&b[40..82], c.as_bytes());
        assert_eq!(&b[82..84], &[0, 0]); // NUL, then the pad byte of an odd size
        assert_eq!(b.len(), 84);
        assert_eq!(WavInfo::from_list(&b[8..]), Some(Ok(i)));
    }

    #[test]
    fn foreign_and_malformed_comments_are_reasons_not_panics() {
        for (text, why) in [
            ("recorded on a Tuesday", "not one noisewright writes"),
            ("noisewright unit=V", "no full_scale="),
            ("noisewright full_scale=1", "no unit="),
            ("noisewright unit=parsec full_scale=1", "malformed word"),
            ("noisewright unit=V full_scale=-1", "malformed word"),
            ("noisewright unit=V full_scale=inf", "malformed word"),
            ("noisewright unit=V full_scale=1 seed=x", "malformed word"),
            ("noisewright unit=V full_scale=1 garbage", "malformed word"),
            (
                "noisewright unit=V full_scale=1 profile=a%2",
                "malformed profile",
            ),
            (
                "noisewright unit=V full_scale=1 profile=%FF",
                "malformed profile",
            ),
        ] {
            let e = WavInfo::parse(text).unwrap_err();
            assert!(e.contains(why), "{text}: {e}");
        }
        // Unknown keys are skipped; a later version may add some.
        let w = WavInfo::parse("noisewright unit=A full_scale=2 channels=3").unwrap();
        assert_eq!((w.unit, w.full_scale, w.seed), (Unit::Ampere, 2.0, None));
        // Lists that are not INFO, INFO without ICMT, truncated subchunks: nothing to say.
        assert_eq!(WavInfo::from_list(b"adtlxxxx"), None);
        assert_eq!(WavInfo::from_list(b"INFOINAM\x02\0\0\0a\0"), None);
        assert_eq!(WavInfo::from_list(b"INFOICMT\xff\0\0\0ab"), None);
        let bad = WavInfo::from_list(b"INFOICMT\x02\0\0\0\xff\0").unwrap();
        assert!(bad.unwrap_err().contains("UTF-8"));
    }
}
