//! The library's one error type.
//!
//! Every variant carries the facts a user needs to fix the problem: the file, the key or
//! setting, the value given and what was expected. [`Error::exit_code`] maps each variant to
//! the command-line convention: 2 for bad input, 1 for a job that ran and failed.
//!
//! A message that names a setting of a run (the length, the rate, the ADC's range …) does not
//! spell it: it holds a [`Setting`] mark, which [`Error::describe`] writes as the caller
//! wants (the `Display` text writes the library's name, e.g. `full_scale`; a command line
//! writes its own flag).

use std::fmt;

/// Result alias used throughout the library.
pub type Result<T> = std::result::Result<T, Error>;

/// Everything that can go wrong in noisewright.
#[derive(Debug)]
pub enum Error {
    /// A profile file is malformed or holds a value outside what is allowed.
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
    /// A setting of a run has a value that cannot be used, alone or with the others.
    Setting {
        /// The setting whose value is refused.
        setting: Setting,
        /// What was wrong and what is expected (may hold marks of other settings).
        message: String,
    },
    /// Reading or writing failed; `context` says what was being done (e.g. the file name).
    Io {
        /// What was being read or written.
        context: String,
        /// The underlying error.
        source: std::io::Error,
    },
    /// Samples exceeded digital full scale and clipping was not allowed.
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
    /// Samples fell outside an ADC's input range (its bits and range) and clipping was not
    /// allowed.
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
    Interrupted,
    /// The requested output cannot be produced in the chosen format (e.g. a WAV past 4 GiB).
    Unsupported(String),
    /// An input file (a capture to analyse) is malformed, truncated or cannot be interpreted.
    Input {
        /// The file's name as the user gave it (or `<input>`).
        file: String,
        /// What is wrong and what was expected, e.g. "the data chunk announces 4000 bytes but
        /// the file ends after 1200".
        message: String,
    },
    /// A measurement ran and does not meet what was asked of it (e.g. a capture outside its
    /// profile's limits).
    Mismatch(String),
}

/// A setting of a run, named in errors about its value or about how it combines with others.
///
/// [`Setting::name`] is the library's name (the builder method that sets it); a command line
/// maps each to its own flag.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
#[non_exhaustive]
pub enum Setting {
    /// The profile file.
    Profile,
    /// Where the output goes.
    Output,
    /// The length of a run as a time.
    Duration,
    /// The length of a run in samples.
    Samples,
    /// The start of a segment as a time.
    Start,
    /// The start of a segment as a sample index.
    StartSample,
    /// One of several consecutive parts of a run (`K/N`).
    Shard,
    /// The sample rate.
    Rate,
    /// One periodic buffer instead of a stream.
    Loop,
    /// The file format.
    Format,
    /// The name of a C array.
    Name,
    /// The sample format (f32, i24 …).
    SampleFormat,
    /// The physical value of digital 1.0.
    FullScale,
    /// The expected RMS relative to full scale, dBFS.
    Level,
    /// Writing although samples clip.
    AllowClipping,
    /// Which CSV columns are written.
    Columns,
    /// The number of worker threads.
    Threads,
    /// The resolution of ADC codes, bits.
    Bits,
    /// The input range of ADC codes.
    Range,
    /// The numbering of ADC codes.
    Code,
    /// The dither added before rounding.
    Dither,
    /// The bin width of a density estimate.
    Resolution,
    /// The engineering tolerance of a verdict, dB.
    Tolerance,
    /// A fitted profile's output file.
    Fit,
    /// A picture's output file.
    Plot,
    /// An HTML report's output file.
    Report,
    /// A band of a budget.
    Band,
    /// The filter order of a budget's band edges.
    Order,
    /// The physical unit of samples given in memory.
    Unit,
    /// Keeping a capture's offset and drift in its density estimate.
    KeepDrift,
    /// Frequencies left out of a verdict and a fit.
    Exclude,
    /// The band of a low-frequency peak-to-peak measurement.
    PpBand,
    /// The window of a low-frequency peak-to-peak measurement.
    PpWindow,
    /// An Allan deviation picture's output file.
    AllanPlot,
    /// The channels of a capture to analyse.
    Channel,
}

/// Every setting, for mapping names back.
const SETTINGS: [Setting; 35] = [
    Setting::Profile,
    Setting::Output,
    Setting::Duration,
    Setting::Samples,
    Setting::Start,
    Setting::StartSample,
    Setting::Shard,
    Setting::Rate,
    Setting::Loop,
    Setting::Format,
    Setting::Name,
    Setting::SampleFormat,
    Setting::FullScale,
    Setting::Level,
    Setting::AllowClipping,
    Setting::Columns,
    Setting::Threads,
    Setting::Bits,
    Setting::Range,
    Setting::Code,
    Setting::Dither,
    Setting::Resolution,
    Setting::Tolerance,
    Setting::Fit,
    Setting::Plot,
    Setting::Report,
    Setting::Band,
    Setting::Order,
    Setting::Unit,
    Setting::KeepDrift,
    Setting::Exclude,
    Setting::PpBand,
    Setting::PpWindow,
    Setting::AllanPlot,
    Setting::Channel,
];

/// Opens and closes a setting's mark inside a message: a mark is the setting's name between two
/// U+0001 characters, written `\\u{1}name\\u{1}` inside a string literal.
const MARK: char = '\u{1}';

impl Setting {
    /// The library's name of the setting, e.g. `full_scale`.
    pub fn name(self) -> &'static str {
        match self {
            Setting::Profile => "profile",
            Setting::Output => "output",
            Setting::Duration => "duration",
            Setting::Samples => "samples",
            Setting::Start => "start",
            Setting::StartSample => "start_sample",
            Setting::Shard => "shard",
            Setting::Rate => "rate",
            Setting::Loop => "loop",
            Setting::Format => "format",
            Setting::Name => "name",
            Setting::SampleFormat => "sample_format",
            Setting::FullScale => "full_scale",
            Setting::Level => "level",
            Setting::AllowClipping => "allow_clipping",
            Setting::Columns => "columns",
            Setting::Threads => "threads",
            Setting::Bits => "bits",
            Setting::Range => "range",
            Setting::Code => "code",
            Setting::Dither => "dither",
            Setting::Resolution => "resolution",
            Setting::Tolerance => "tolerance",
            Setting::Fit => "fit",
            Setting::Plot => "plot",
            Setting::Report => "report",
            Setting::Band => "band",
            Setting::Order => "order",
            Setting::Unit => "unit",
            Setting::KeepDrift => "keep_drift",
            Setting::Exclude => "exclude",
            Setting::PpBand => "pp_band",
            Setting::PpWindow => "pp_window",
            Setting::AllanPlot => "allan_plot",
            Setting::Channel => "channel",
        }
    }

    /// The setting's mark, to write inside an error message where the setting is named:
    /// [`Error::describe`] replaces it by the name its caller gives the setting.
    pub fn mark(self) -> impl fmt::Display {
        Mark(self)
    }
}

impl fmt::Display for Setting {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

struct Mark(Setting);

impl fmt::Display for Mark {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{MARK}{}{MARK}", self.0.name())
    }
}

/// `text` with each mark replaced by `name` of its setting (an unknown mark keeps its text).
fn unmark(text: &str, name: &dyn Fn(Setting) -> String) -> String {
    let mut out = String::with_capacity(text.len());
    for (i, part) in text.split(MARK).enumerate() {
        match SETTINGS.iter().find(|s| s.name() == part) {
            Some(s) if i % 2 == 1 => out.push_str(&name(*s)),
            _ => out.push_str(part),
        }
    }
    out
}

impl fmt::Display for Error {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.describe("setting", &|s| s.name().to_string()))
    }
}

impl std::error::Error for Error {
    fn source(&self) -> Option<&(dyn std::error::Error + 'static)> {
        match self {
            Error::Io { source, .. } => Some(source),
            _ => None,
        }
    }
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
            | Error::Setting { .. }
            | Error::Unsupported(_)
            | Error::Input { .. } => 2,
            Error::Io { .. }
            | Error::Clipped { .. }
            | Error::ClippedRange { .. }
            | Error::Mismatch(_) => 1,
            Error::Interrupted => 130,
        }
    }

    /// The message, its marks still in (see [`Setting::mark`]); a [`Error::Setting`] starts
    /// with `prefix` and its setting's mark.
    fn marked(&self, prefix: &str) -> String {
        match self {
            Error::Profile {
                file,
                line,
                key,
                message,
            } => format!("{file}{}: {key}: {message}", line_suffix(*line)),
            Error::Setting { setting, message } => {
                format!("{prefix} {}: {message}", setting.mark())
            }
            Error::Io { context, source } => format!("{context}: {source}"),
            Error::Clipped {
                count,
                total,
                full_scale,
                suggested,
            } => format!(
                "{count} of {total} samples exceeded digital full scale ({full_scale}); a full \
                 scale of at least {suggested} would hold this noise (use {}, a lower {}, or {})",
                Setting::FullScale.mark(),
                Setting::Level.mark(),
                Setting::AllowClipping.mark()
            ),
            Error::ClippedRange {
                count,
                total,
                range,
                suggested,
            } => format!(
                "{count} of {total} samples fell outside the ADC range {range} and would be \
                 clamped to the end codes; a range of {suggested} would hold this noise (use a \
                 wider {}, or {})",
                Setting::Range.mark(),
                Setting::AllowClipping.mark()
            ),
            Error::Interrupted => {
                "interrupted: no output was written under the target name".to_string()
            }
            Error::Unsupported(m) | Error::Mismatch(m) => m.clone(),
            Error::Input { file, message } => format!("{file}: {message}"),
        }
    }

    /// The message as the command line words it (flags for settings), for unit tests.
    #[cfg(test)]
    pub(crate) fn cli_text(&self) -> String {
        self.describe("option", &|s| format!("--{}", s.name().replace('_', "-")))
    }

    /// Shorthand for an [`Error::Setting`].
    pub fn setting(setting: Setting, message: impl fmt::Display) -> Error {
        Error::Setting {
            setting,
            message: message.to_string(),
        }
    }

    /// The message with every setting named by `name` (the `Display` text names them as the
    /// library does; a command line passes its flags). A [`Error::Setting`] starts with
    /// `prefix` and the setting's name instead of `setting NAME`.
    pub fn describe(&self, prefix: &str, name: &dyn Fn(Setting) -> String) -> String {
        unmark(&self.marked(prefix), name)
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
