//! vetscore: checks whether a model's stated score is supported by its own evaluation evidence.
#![cfg_attr(test, allow(clippy::unwrap_used))]

pub mod app;
pub mod atomic;
pub mod cli;
pub mod console;
pub mod diag;
pub mod estimate;
pub mod evaluate;
pub mod evidence;
pub mod finding;
pub mod input;
pub mod ledger;
pub mod manifest;
pub mod opener;
pub mod parallel;
pub mod plan;
pub mod policy;
pub mod report;
pub mod rules;
pub mod stats;
