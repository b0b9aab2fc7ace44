//! Measuring samples: Welch density estimates, running statistics, moments, comparison with
//! a designed density, burst levels, and the two-pass analysis of a capture.

pub mod capture;
pub mod compare;
pub mod fit;
pub mod levels;
pub mod moments;
pub mod stats;
pub mod tones;
pub mod welch;
