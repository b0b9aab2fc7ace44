//! The noisewright command: parse, run, map errors to exit codes (0 done, 1 the job failed,
//! 2 bad input). Interrupted by SIGINT, SIGTERM or SIGHUP, it removes its partial files and
//! then ends by that same signal, so a shell reports 128 + its number (130, 143, 129).

use std::process::ExitCode;
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, AtomicUsize, Ordering};

mod cli;

use clap::Parser;
use cli::{Cli, run};
use noisewright::{Error, Setting};
use signal_hook::consts::{SIGINT, SIGTERM};

#[cfg(unix)]
const STOP_SIGNALS: [i32; 3] = [SIGINT, SIGTERM, signal_hook::consts::SIGHUP];
#[cfg(not(unix))]
const STOP_SIGNALS: [i32; 2] = [SIGINT, SIGTERM];

fn main() -> ExitCode {
    let cli = Cli::parse();
    let interrupted = Arc::new(AtomicBool::new(false));
    let signal = Arc::new(AtomicUsize::new(0));
    // The signals only raise flags; the run stops between chunks and removes its partial
    // files, then `main` ends by the signal that came.
    for s in STOP_SIGNALS {
        let installed = signal_hook::flag::register(s, interrupted.clone())
            .and_then(|_| signal_hook::flag::register_usize(s, signal.clone(), s as usize));
        if let Err(e) = installed {
            eprintln!("noisewright: warning: cannot install the handler of signal {s}: {e}");
        }
    }
    match run(&cli, &interrupted) {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            // The profile of generate and budget is a positional argument, not an option.
            let prefix = match (&e, &cli.command) {
                (_, cli::Command::Analyze(_)) => "option",
                (Error::Setting { setting, .. }, _) if *setting == Setting::Profile => "argument",
                _ => "option",
            };
            eprintln!(
                "noisewright: error: {}",
                e.describe(prefix, &|s| flag(&cli, s))
            );
            if let (Error::Interrupted, s @ 1..) = (&e, signal.load(Ordering::SeqCst)) {
                // Ending by the signal (its default action) rather than by exit lets a
                // shell loop or a make stop as it does for any program killed by it.
                let _ = signal_hook::low_level::emulate_default_handler(s as i32);
            }
            ExitCode::from(e.exit_code() as u8)
        }
    }
}

/// The command line's name of a setting: its flag, or `PROFILE`, the positional argument of
/// `generate` and `budget`.
fn flag(cli: &Cli, setting: Setting) -> String {
    match setting {
        Setting::Profile if !matches!(cli.command, cli::Command::Analyze(_)) => "PROFILE".into(),
        s => format!("--{}", s.name().replace('_', "-")),
    }
}
