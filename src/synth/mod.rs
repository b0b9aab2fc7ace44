//! Engines that turn a target density into samples.
