//! What `budget` does, as library calls: the bands asked for (text, with one upper-edge
//! order), the budget itself ([`crate::model::budget::budget`]), its text (its JSON is
//! [`crate::model::budget::to_json`]), and its chart written as SVG.

use std::path::Path;
use std::sync::atomic::AtomicBool;
use std::sync::{Arc, mpsc};
use std::time::Duration;

use super::PendingFile;
use super::guard::{Read, Written, check_outputs};
use crate::error::{Error, Result, Setting};
use crate::model::budget::{BandSpec, Budget, parse_band, write_text};
use crate::profile::{MAX_ORDER, Profile};
use crate::report::chart::budget_figures;
use crate::report::figure::page;
use crate::stop::Stop;
use crate::synth::{Generator, design_profile_until};

/// The bands to budget, from texts such as `0.1Hz..10Hz` (Hz, brick-wall lower edge) and one
/// Butterworth `order` for every upper edge (0 = brick wall; `None`: the profile's
/// `band.order`). No texts and no order give no bands, which [`budget`](crate::budget)
/// reads as the profile's own band; no texts with an order give the profile's band with that
/// order. The order is checked first (0 to [`MAX_ORDER`]), then each band in turn.
pub fn budget_bands<S: AsRef<str>>(
    profile: &Profile,
    texts: &[S],
    order: Option<u32>,
) -> Result<Vec<BandSpec>> {
    let upper = match order {
        Some(n) if n > MAX_ORDER => {
            return Err(Error::setting(
                Setting::Order,
                format!("expected 0 (brick wall) to {MAX_ORDER}, got {n}"),
            ));
        }
        Some(n) => n,
        None => profile.band.order,
    };
    let mut bands = texts
        .iter()
        .map(|t| {
            let (low_hz, high_hz) =
                parse_band(t.as_ref()).map_err(|m| Error::setting(Setting::Band, m))?;
            Ok(BandSpec {
                low_hz,
                high_hz,
                order: upper,
            })
        })
        .collect::<Result<Vec<_>>>()?;
    if bands.is_empty() && order.is_some() {
        bands.push(BandSpec {
            order: upper,
            ..BandSpec::of_profile(profile)
        });
    }
    Ok(bands)
}

/// The budget of `profile` in `bands` as `budget` prints it: [`crate::budget`] with the file
/// RMS of the noise ([`file_noise_rms`]) filled in.
pub fn budget_of(profile: &Profile, bands: &[BandSpec]) -> Result<Budget> {
    budget_until(profile, bands, &AtomicBool::new(false))
}

/// [`budget_of`], ending with [`Error::Interrupted`] within about 50 ms of `flag` becoming
/// true: the design polls it, and the budget's integrals run on a thread of their own that
/// is left to finish unseen (they write nothing).
pub fn budget_until(profile: &Profile, bands: &[BandSpec], flag: &AtomicBool) -> Result<Budget> {
    let stop = Stop::on(flag);
    let file = file_noise_rms_until(profile, stop)?;
    let (tx, rx) = mpsc::channel();
    let (p, b) = (profile.clone(), bands.to_vec());
    std::thread::spawn(move || {
        // The receiver is gone only after an interruption: nothing to tell then.
        let _ = tx.send(crate::model::budget::budget(&p, &b));
    });
    loop {
        match rx.recv_timeout(Duration::from_millis(50)) {
            Ok(mut budget) => {
                budget.file_noise_rms = Some(file);
                return Ok(budget);
            }
            Err(mpsc::RecvTimeoutError::Timeout) => stop.check()?,
            Err(mpsc::RecvTimeoutError::Disconnected) => {
                return Err(Error::Unsupported(
                    "the budget's computation ended without a result".into(),
                ));
            }
        }
    }
}

/// The file RMS of the noise of `profile`, in its unit: the expected RMS (AC) of the noise a
/// streamed file holds, i.e. the designed density up to fs/2 plus every burst's variance
/// ([`crate::synth::Generator::noise_variance`]); the same number `generate` prints.
pub fn file_noise_rms(profile: &Profile) -> Result<f64> {
    file_noise_rms_until(profile, Stop::default())
}

/// [`file_noise_rms`], its design polling `stop`.
fn file_noise_rms_until(profile: &Profile, stop: Stop<'_>) -> Result<f64> {
    let design = Arc::new(design_profile_until(profile, stop)?);
    let g = Generator::from_design_until(profile, design, 0, 0, stop)?;
    Ok(g.noise_variance().sqrt())
}

/// The budget as the text `budget` prints (RMS in the profile's unit, densities per √Hz).
pub fn budget_text(budget: &Budget) -> String {
    let mut out = Vec::new();
    write_text(budget, &mut out).expect("writing to a Vec cannot fail");
    String::from_utf8(out).expect("the budget text is UTF-8")
}

/// Draws `budget`'s pictures (made from `profile`): every source's density, the total, the
/// band edges and tones, and each band's integrated noise, as one SVG file at `path`. It is written beside the target and
/// renamed, so a failure leaves no half-written chart. A path that is the profile's own file
/// (by any name or link) is refused, as is one that names a folder.
pub fn write_budget_chart(profile: &Profile, budget: &Budget, path: &Path) -> Result<()> {
    let profile_file = profile.source_file().map(|path| Read {
        what: "the profile",
        path,
        shown: profile.label().to_string(),
    });
    check_outputs(
        &[Written {
            setting: Setting::Plot,
            path,
            beside: None,
        }],
        profile_file.as_slice(),
    )?;
    let svg = page(&budget_figures(profile, budget));
    let out = PendingFile::create(path)?;
    out.write_all(svg.as_bytes())?;
    out.commit()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::budget::budget;

    const PROFILE: &str = "sample_rate = \"48 kHz\"\n[band]\nlow = \"10 Hz\"\nhigh = \"20 kHz\"\n\
                           order = 2\n[[floor]]\ndensity = \"4 nV/rtHz\"\n";

    #[test]
    fn bands_take_one_order_and_default_to_the_profile() {
        let p = Profile::from_toml_str(PROFILE, "t").unwrap();
        let none: [&str; 0] = [];
        assert!(budget_bands(&p, &none, None).unwrap().is_empty());
        let own = budget_bands(&p, &none, Some(0)).unwrap();
        assert_eq!(
            (own[0].low_hz, own[0].high_hz, own[0].order),
            (10.0, 20e3, 0)
        );
        let two = budget_bands(&p, &["1Hz..100Hz", "100 Hz .. 1 kHz"], None).unwrap();
        assert_eq!(two.len(), 2);
        assert_eq!(
            (two[1].low_hz, two[1].high_hz, two[1].order),
            (100.0, 1e3, 2)
        );
        // The order is judged before the bands, as the command always has.
        let e = budget_bands(&p, &["junk"], Some(MAX_ORDER + 1)).unwrap_err();
        assert!(
            matches!(
                e,
                Error::Setting {
                    setting: Setting::Order,
                    ..
                }
            ),
            "{e}"
        );
        let e = budget_bands(&p, &["100Hz..1Hz"], None).unwrap_err();
        assert!(
            matches!(
                e,
                Error::Setting {
                    setting: Setting::Band,
                    ..
                }
            ),
            "{e}"
        );
    }

    #[test]
    fn floor_density_budget_is_its_closed_form() {
        // A brick-wall band of white noise holds e·√(high − low) (closed form).
        let p = Profile::from_toml_str(PROFILE, "t").unwrap();
        let bands = budget_bands(&p, &["100Hz..10100Hz"], Some(0)).unwrap();
        let b = budget(&p, &bands);
        let want = 4e-9 * 10_000f64.sqrt();
        let got = crate::model::budget::to_json(&b)["bands"][0]["rms"]
            .as_f64()
            .unwrap();
        assert!((got / want - 1.0).abs() < 1e-6, "{got} vs {want}");
        assert!(budget_text(&b).contains("400 nV"), "{}", budget_text(&b));
    }
}
