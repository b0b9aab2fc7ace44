//! Measuring samples: Welch density estimates and running statistics.
