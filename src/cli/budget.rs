//! `noisewright budget`: what each source of a profile contributes in a band, as text, JSON
//! or an SVG chart.

use std::fs;
use std::path::PathBuf;

use crate::error::{Error, Result, Setting};
use crate::model::budget::{BandSpec, budget, parse_band, to_json, write_text};
use crate::profile::{MAX_ORDER, parse_profile};
use crate::report::chart::{budget_chart, write_density_svg};
use crate::run::PendingFile;

/// Options of `noisewright budget`.
#[derive(Debug, Clone, clap::Args)]
pub struct BudgetArgs {
    /// The profile (TOML) to budget.
    pub profile: PathBuf,
    /// A band to budget, e.g. `0.1Hz..10Hz` (repeatable). Default: the profile's band. Each
    /// band has a brick-wall lower edge and, at its upper edge, the profile's roll-off order
    /// (or --order).
    #[arg(long = "band", value_name = "LOW..HIGH")]
    pub bands: Vec<String>,
    /// Butterworth order at the upper edge of every budget band (0 = brick wall). Default:
    /// the profile's band.order.
    #[arg(long, value_name = "N")]
    pub order: Option<u32>,
    /// Print one JSON object instead of text.
    #[arg(long)]
    pub json: bool,
    /// Also draw every source's density and the total, with the band edges, as an SVG file.
    #[arg(long, value_name = "OUT.svg")]
    pub plot: Option<PathBuf>,
}

/// Run `budget`; returns the text (or JSON) to print.
pub fn run(args: &BudgetArgs) -> Result<String> {
    let file = args.profile.display().to_string();
    let text = fs::read_to_string(&args.profile)
        .map_err(|e| Error::setting(Setting::Profile, format!("cannot read {file}: {e}")))?;
    let profile = parse_profile(&text, &file)?;
    let order = match args.order {
        Some(n) if n > MAX_ORDER => {
            return Err(Error::setting(
                Setting::Order,
                format!("expected 0 (brick wall) to {MAX_ORDER}, got {n}"),
            ));
        }
        Some(n) => n,
        None => profile.band.order,
    };
    let mut bands = args
        .bands
        .iter()
        .map(|b| {
            let (low_hz, high_hz) = parse_band(b).map_err(|m| Error::setting(Setting::Band, m))?;
            Ok(BandSpec {
                low_hz,
                high_hz,
                order,
            })
        })
        .collect::<Result<Vec<_>>>()?;
    if bands.is_empty() && args.order.is_some() {
        bands.push(BandSpec {
            order,
            ..BandSpec::of_profile(&profile)
        });
    }
    let b = budget(&profile, &bands);
    if let Some(path) = &args.plot {
        let mut svg = Vec::new();
        write_density_svg(&budget_chart(&profile, &b), 1000, 640, &mut svg)?;
        // Written beside the target and renamed, so a failure leaves no half-written chart.
        let out = PendingFile::create(path)?;
        out.write_all(&svg)?;
        out.commit()?;
    }
    if args.json {
        Ok(format!("{:#}\n", to_json(&b)))
    } else {
        let mut out = Vec::new();
        write_text(&b, &mut out).map_err(|e| Error::io("formatting the budget", e))?;
        Ok(String::from_utf8(out).expect("the budget text is UTF-8"))
    }
}
