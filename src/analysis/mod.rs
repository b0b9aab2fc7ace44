//! Measuring samples: Welch density estimates and running statistics.

pub mod stats;
pub mod welch;
