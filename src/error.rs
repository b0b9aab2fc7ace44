//! The library's one error type.
//!
//! Every variant carries the facts a user needs to fix the problem: the file, the key or
//! option, the value given and what was expected. [`Error::exit_code`] maps each variant to
//! the command-line convention: 2 for bad input, 1 for a job that ran and failed.

use std::fmt;

/// Result alias used throughout the library.
pub type Result<T> = std::result::Result<T, Error>;

/// Everything that can go wrong in noisewright.
#[derive(Debug, thiserror::Error)]
pub enum Error {
    /// A profile file is malformed or holds a value outside what is allowed.
    #[error("{file}{}: {key}: {message}", line_suffix(*line))]
    Profile {
        /// The profile's file name as the user gave it (or `<string>`).
        file: String,
        /// 1-based line number, where known.
        line: Option<usize>,
        /// Dotted key path, e.g. `floor[0].density` or `band.high`.
        key: String,
        /// What was wrong and what is expected, e.g. "expected a density such as \"4 nV/rtHz\"".
        message: String,
    },
    /// A command-line option has a value that cannot be used.
    #[error("option {option}: {message}")]
    Option {
        /// The option as spelled on the command line, e.g. `--duration`.
        option: String,
        /// What was wrong and what is expected.
        message: String,
    },
    /// Reading or writing failed; `context` says what was being done (e.g. the file name).
    #[error("{context}: {source}")]
    Io {
        /// What was being read or written.
        context: String,
        /// The underlying error.
        #[source]
        source: std::io::Error,
    },
    /// Samples exceeded digital full scale and clipping was not allowed.
    #[error(
        "{count} of {total} samples exceeded digital full scale ({full_scale}); \
         a full scale of at least {suggested} would hold this noise \
         (use --full-scale, a lower --level, or --allow-clipping)"
    )]
    Clipped {
        /// Number of samples that were clipped.
        count: u64,
        /// Number of samples written in all.
        total: u64,
        /// The full scale that was used, formatted with its unit.
        full_scale: String,
        /// A full scale that would have held every sample, formatted with its unit.
        suggested: String,
    },
    /// Samples fell outside an ADC's input range (`--bits`/`--range`) and clipping was not
    /// allowed.
    #[error(
        "{count} of {total} samples fell outside the ADC range {range} and would be clamped to \
         the end codes; a range of {suggested} would hold this noise \
         (use a wider --range, or --allow-clipping)"
    )]
    ClippedRange {
        /// Number of samples outside the range.
        count: u64,
        /// Number of samples written in all.
        total: u64,
        /// The range that was used, e.g. `-1.65 V..1.65 V`.
        range: String,
        /// A range that would have held every sample, in the same form.
        suggested: String,
    },
    /// The run was stopped by SIGINT, SIGTERM or SIGHUP; nothing was left under the target
    /// name. Its exit code is 130 (128 + SIGINT); the binary instead ends by the signal that
    /// came, once its partial files are gone.
    #[error("interrupted: no output was written under the target name")]
    Interrupted,
    /// The requested output cannot be produced in the chosen format (e.g. a WAV past 4 GiB).
    #[error("{0}")]
    Unsupported(String),
    /// An input file (a capture to analyse) is malformed, truncated or cannot be interpreted.
    #[error("{file}: {message}")]
    Input {
        /// The file's name as the user gave it (or `<input>`).
        file: String,
        /// What is wrong and what was expected, e.g. "the data chunk announces 4000 bytes but
        /// the file ends after 1200".
        message: String,
    },
    /// A measurement ran and does not meet what was asked of it (e.g. a capture outside its
    /// profile's limits).
    #[error("{0}")]
    Mismatch(String),
}

fn line_suffix(line: Option<usize>) -> String {
    match line {
        Some(l) => format!(":{l}"),
        None => String::new(),
    }
}

impl Error {
    /// Process exit code for this error: 2 for bad input (profile, option, unsupported
    /// request, malformed input file), 1 for a job that ran and failed (I/O, clipping, a
    /// measurement outside its limits).
    pub fn exit_code(&self) -> i32 {
        match self {
            Error::Profile { .. }
            | Error::Option { .. }
            | Error::Unsupported(_)
            | Error::Input { .. } => 2,
            Error::Io { .. }
            | Error::Clipped { .. }
            | Error::ClippedRange { .. }
            | Error::Mismatch(_) => 1,
            Error::Interrupted => 130,
        }
    }

    /// Shorthand for an [`Error::Option`].
    pub fn option(option: impl Into<String>, message: impl fmt::Display) -> Error {
        Error::Option {
            option: option.into(),
            message: message.to_string(),
        }
    }

    /// Shorthand for an [`Error::Input`].
    pub fn input(file: impl Into<String>, message: impl fmt::Display) -> Error {
        Error::Input {
            file: file.into(),
            message: message.to_string(),
        }
    }

    /// Shorthand for an [`Error::Io`] with a context.
    pub fn io(context: impl Into<String>, source: std::io::Error) -> Error {
        Error::Io {
            context: context.into(),
            source,
        }
    }
}
