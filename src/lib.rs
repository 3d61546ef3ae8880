//! vetscore: checks whether a model's stated score is supported by its own evaluation evidence.
#![cfg_attr(test, allow(clippy::unwrap_used))]

pub mod stats;
