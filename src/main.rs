//! The noisewright command: parse, run, map errors to exit codes (0 done, 1 the job failed,
//! 2 bad input, 130 interrupted).

use std::process::ExitCode;
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, Ordering};

use clap::Parser;
use noisewright::cmd::{Cli, run};

fn main() -> ExitCode {
    let cli = Cli::parse();
    let interrupted = Arc::new(AtomicBool::new(false));
    let flag = interrupted.clone();
    // SIGINT and SIGTERM only raise a flag; the run then stops between chunks and removes
    // its partial file.
    if let Err(e) = ctrlc::set_handler(move || flag.store(true, Ordering::Relaxed)) {
        eprintln!("noisewright: warning: cannot install the interrupt handler: {e}");
    }
    match run(&cli, &interrupted) {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("noisewright: error: {e}");
            ExitCode::from(e.exit_code() as u8)
        }
    }
}
