//! One module per subcommand, and the command line that selects them.

pub mod analyze;
pub mod budget;
pub mod generate;
pub mod join;
mod stdout;

use std::io::{self, Write};
use std::sync::atomic::AtomicBool;

use noisewright::{Error, Result};

/// noisewright turns a noise density profile into real, reproducible noise.
#[derive(Debug, clap::Parser)]
#[command(name = "noisewright", version, about, long_about = None)]
pub struct Cli {
    /// The subcommand.
    #[command(subcommand)]
    pub command: Command,
}

/// The subcommands.
#[derive(Debug, clap::Subcommand)]
pub enum Command {
    /// Synthesise noise with a profile's density and write it with a manifest and a summary.
    Generate(generate::GenerateArgs),
    /// Show what each source contributes in a band: RMS, share, peak-to-peak, densities.
    Budget(budget::BudgetArgs),
    /// Measure a capture (WAV, CSV, raw): density, statistics, burst levels; judge it against
    /// a profile (exit 1 when it fails), fit a profile to it, draw pictures.
    Analyze(analyze::AnalyzeArgs),
    /// Put the shards of one run (generate --shard K/N) back into one file and its manifest,
    /// byte for byte the single run, after checking they are every part of it once.
    Join(join::JoinArgs),
}

/// Run the selected subcommand. Summaries go to standard output, or to standard error when
/// the samples themselves go to standard output.
pub fn run(cli: &Cli, interrupted: &AtomicBool) -> Result<()> {
    let prints = match &cli.command {
        Command::Generate(args) => !args.quiet || args.output.as_deref() == Some("-"),
        Command::Join(args) => !args.quiet,
        Command::Budget(_) | Command::Analyze(_) => true,
    };
    if prints {
        stdout::refuse_if_closed_at_start()?;
    }
    match &cli.command {
        Command::Generate(args) => {
            let report = generate::run(args, interrupted)?;
            let summary = &report.summary;
            if !args.quiet && !summary.is_empty() {
                if args.output.as_deref() == Some("-") {
                    eprint!("{summary}");
                } else {
                    print_out(summary)?;
                }
            }
            Ok(())
        }
        Command::Budget(args) => print_out(&budget::run(args, interrupted)?),
        Command::Join(args) => {
            let report = join::run(args, interrupted)?;
            if args.quiet {
                return Ok(());
            }
            print_out(&report.summary)
        }
        Command::Analyze(args) => {
            let report = analyze::run(args, interrupted)?;
            print_out(&analyze::output(args, &report))?;
            report.verdict.into_result()
        }
    }
}

/// Writes `text` to standard output. A reader that closed the pipe (`| head`) ends the
/// command quietly; any other failure (a full disk behind `> file`, `/dev/full`) is an
/// I/O error naming standard output (exit 1) instead of a panic.
fn print_out(text: &str) -> Result<()> {
    let mut out = io::stdout().lock();
    match out.write_all(text.as_bytes()).and_then(|()| out.flush()) {
        Err(e) if e.kind() == io::ErrorKind::BrokenPipe => Ok(()),
        r => r.map_err(|e| Error::io("writing to standard output", e)),
    }
}
