//! `noisewright join`: the flags become a [`Join`]; its summary is printed.

use std::path::PathBuf;
use std::sync::atomic::AtomicBool;

use noisewright::{Join, JoinReport, Result};

/// Options of `noisewright join`.
#[derive(Debug, Clone, clap::Args)]
pub struct JoinArgs {
    /// The shard files of one run (`generate --shard K/N`), each with its manifest beside it;
    /// in any order.
    #[arg(value_name = "SHARD", required = true)]
    pub shards: Vec<PathBuf>,
    /// The joined file, in the shards' format; its manifest goes beside it (OUT.json).
    #[arg(short = 'o', long = "output", value_name = "OUT")]
    pub output: PathBuf,
    /// Print no summary.
    #[arg(short, long)]
    pub quiet: bool,
}

/// Runs `join`; `interrupted` is polled between blocks, and no file is left under the
/// target name when it stops the join.
pub fn run(args: &JoinArgs, interrupted: &AtomicBool) -> Result<JoinReport> {
    Join::new(&args.shards)
        .interrupt_on(interrupted)
        .to_path(&args.output)
}
