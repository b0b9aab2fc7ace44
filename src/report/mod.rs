//! Pictures and reports: every SVG picture ([`chart`]: density charts for `budget`, the
//! density, histogram and trace of an analysis) and the HTML report that holds an analysis's
//! pictures inline ([`html`]); the coherence figure of a capture of several channels
//! ([`coherence`]).

pub mod allan;
pub mod chart;
pub mod coherence;
pub mod figure;
pub mod html;

/// Escapes `& < > "` for HTML and SVG text and attributes.
pub fn html_escape(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}
