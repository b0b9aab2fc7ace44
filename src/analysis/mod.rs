//! Measuring samples: Welch density estimates, running statistics, moments, comparison with
//! a designed density, several channels measured together (correlation and coherence),
//! burst levels, the two-pass analysis of a capture, and what a bench adds
//! to a capture (offset and drift, spurs, low-frequency peak-to-peak).

pub mod allan;
pub mod capture;
pub mod coherence;
pub mod compare;
pub mod fit;
pub mod integrated;
pub mod levels;
pub mod moments;
pub mod spurs;
pub mod stats;
pub mod tones;
pub mod trend;
pub mod welch;
pub mod window_pp;
