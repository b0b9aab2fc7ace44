//! How messages quote what came from a file or an option: text cut to a readable length,
//! numbers in their shortest round-trip digits. A leaf: the readers, the WAV comment and the
//! manifest all quote through it.

/// Longest text from a file echoed in a message, in characters.
const ECHO_CHARS: usize = 60;

/// `text` from a file as a message quotes it: its first [`ECHO_CHARS`] characters, and "…"
/// when there were more (a field of megabytes is not worth printing whole).
pub(crate) fn echo(text: &str) -> String {
    match text.char_indices().nth(ECHO_CHARS) {
        Some((at, _)) => format!("{}…", &text[..at]),
        None => text.to_string(),
    }
}

/// A number from a file or an option as a message shows it: Rust's shortest round-trip digits,
/// in exponent form outside 1e−4 ≤ |v| < 1e16 so a value such as 1e−300 does not print as
/// 300 digits (the same text as `{}` inside that range).
pub(crate) fn short(v: f64) -> String {
    let a = v.abs();
    if v == 0.0 || !v.is_finite() || (1e-4..1e16).contains(&a) {
        format!("{v}")
    } else {
        format!("{v:e}")
    }
}
