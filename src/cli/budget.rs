//! `noisewright budget`: what each source of a profile contributes in a band, as text, JSON
//! or an SVG chart.

use std::path::PathBuf;
use std::sync::atomic::AtomicBool;

use noisewright::model::budget::to_json;
use noisewright::run::budget::{budget_bands, budget_text, budget_until, write_budget_chart};
use noisewright::{Profile, Result};

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
pub fn run(args: &BudgetArgs, interrupted: &AtomicBool) -> Result<String> {
    let profile = Profile::from_path(&args.profile)?;
    let bands = budget_bands(&profile, &args.bands, args.order)?;
    let b = budget_until(&profile, &bands, interrupted)?;
    if let Some(path) = &args.plot {
        write_budget_chart(&profile, &b, path)?;
    }
    Ok(if args.json {
        format!("{:#}\n", to_json(&b))
    } else {
        budget_text(&b)
    })
}
