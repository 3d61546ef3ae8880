//! The results manifest: its vocabulary, the validated [`Model`] the rules read, and loading.
//!
//! Loading parses each file into the raw types of [`raw`], then [`validate`] turns them into
//! [`Model`]s, collecting every problem (with file, key path and line) before giving up. Nothing
//! here evaluates a rule.

pub mod raw;
pub mod sklearn;
pub mod trials;
mod validate;

use std::collections::BTreeMap;
use std::path::Path;

use schemars::JsonSchema;
use serde::{Deserialize, Serialize};

use crate::diag::Diagnostic;
use crate::input::{self, Syntax};

pub use validate::{MAX_ROWS, Readers, validate};

/// The manifest format version this build reads.
pub const FORMAT_VERSION: u32 = 1;

/// Kind of prediction task.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum Task {
    Binary,
    Multiclass,
    Regression,
}

/// The primary metric of a model.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum Metric {
    Accuracy,
    BalancedAccuracy,
    F1,
    RocAuc,
    LogLoss,
    Rmse,
    Mae,
    R2,
}

impl Metric {
    /// Whether a larger value is better.
    pub fn higher_is_better(self) -> bool {
        !matches!(self, Metric::LogLoss | Metric::Rmse | Metric::Mae)
    }

    /// Whether the metric is a proportion of rows (so binomial intervals apply to it).
    pub fn is_proportion(self) -> bool {
        matches!(self, Metric::Accuracy)
    }

    /// The closed range of valid values.
    pub fn range(self) -> (f64, f64) {
        match self {
            Metric::Accuracy | Metric::BalancedAccuracy | Metric::F1 | Metric::RocAuc => (0.0, 1.0),
            Metric::LogLoss | Metric::Rmse | Metric::Mae => (0.0, f64::INFINITY),
            Metric::R2 => (f64::NEG_INFINITY, 1.0),
        }
    }

    /// Whether the metric applies to the task.
    pub fn fits(self, task: Task) -> bool {
        match self {
            Metric::Rmse | Metric::Mae | Metric::R2 => task == Task::Regression,
            _ => task != Task::Regression,
        }
    }

    /// The snake_case name used in files.
    pub fn name(self) -> &'static str {
        match self {
            Metric::Accuracy => "accuracy",
            Metric::BalancedAccuracy => "balanced_accuracy",
            Metric::F1 => "f1",
            Metric::RocAuc => "roc_auc",
            Metric::LogLoss => "log_loss",
            Metric::Rmse => "rmse",
            Metric::Mae => "mae",
            Metric::R2 => "r2",
        }
    }
}

/// How hyperparameter configurations were chosen.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum SearchMethod {
    Grid,
    Random,
    Sequential,
    Manual,
}

/// How training rows were split for cross-validation.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum CvScheme {
    KFold,
    StratifiedKFold,
    GroupKFold,
    RepeatedKFold,
    TimeOrdered,
    Nested,
    /// One validation split held out of the training rows (train / validation / test): every
    /// configuration, and every early-stopping checkpoint, is scored on the same rows.
    ValidationSplit,
}

/// What evidence a claim rests on.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum Basis {
    /// The cross-validation estimate of the selected configuration.
    Cv,
    /// The held-out test split.
    Test,
}

/// Where a model came from, for messages.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct Origin {
    pub file: String,
    pub line: Option<u64>,
}

/// A validated model: every number finite and in range, every count consistent.
#[derive(Debug, Clone, PartialEq)]
pub struct Model {
    pub name: String,
    /// The predictions on the test split, when the manifest points at them.
    pub predictions: Option<Predictions>,
    /// What comparing the train and test id lists found, when both are given.
    pub leakage: Option<crate::evidence::ids::Overlap>,
    /// The model a "better than" claim is compared with.
    pub baseline: Option<Baseline>,
    pub origin: Origin,
    pub task: Task,
    pub metric: Metric,
    pub run_id: Option<String>,
    pub commit: Option<String>,
    pub trained_at: Option<jiff::Timestamp>,
    pub seed: Option<u64>,
    pub data: Data,
    pub search: Option<Search>,
    pub holdout: Vec<Evaluation>,
    pub claim: Claim,
}

impl Model {
    /// The reported test score: the last scoring of the test split.
    pub fn test_evaluation(&self) -> Option<&Evaluation> {
        self.holdout.last()
    }
}

#[derive(Debug, Clone, PartialEq)]
pub struct Data {
    pub train_rows: u64,
    pub test_rows: u64,
    pub test_fingerprint: String,
    pub class_counts: Option<ClassCounts>,
}

#[derive(Debug, Clone, PartialEq)]
pub struct ClassCounts {
    pub train: BTreeMap<String, u64>,
    pub test: BTreeMap<String, u64>,
}

#[derive(Debug, Clone, PartialEq)]
pub struct Search {
    pub method: SearchMethod,
    /// Configurations evaluated; from the trials when they are listed.
    pub configurations: Option<u64>,
    /// Independent configurations the search amounts to, when the manifest states it.
    pub effective_configurations: Option<f64>,
    pub cv: CrossValidation,
    /// What every trial's fold scores show, when they are given.
    pub trials: Option<trials::TrialSummary>,
    /// Every configuration's out-of-fold results, when the manifest names a file of them.
    pub out_of_fold: Option<OutOfFold>,
}

/// The out-of-fold file a search names, read and checked.
#[derive(Debug, Clone, PartialEq)]
pub struct OutOfFold {
    /// The file as the manifest names it (for messages and the report).
    pub file: String,
    pub table: crate::stats::OofTable,
    /// The selected configuration's index in the table: the one `search.selected_trial` names,
    /// else the one whose out-of-fold score matches the selected folds.
    pub selected: Option<usize>,
}

impl Search {
    /// The number of configurations the selection-optimism estimates assume.
    pub fn effective(&self) -> Option<f64> {
        self.effective_configurations
            .or(self.configurations.map(|c| c as f64))
    }
}

#[derive(Debug, Clone, PartialEq)]
pub struct CrossValidation {
    pub scheme: CvScheme,
    pub repeats: u32,
    pub folds: Vec<Fold>,
}

impl CrossValidation {
    /// Distinct validation rows: every training row is validated once per repeat.
    pub fn distinct_rows(&self) -> u64 {
        self.folds.iter().map(|f| f.rows).sum::<u64>() / u64::from(self.repeats.max(1))
    }
}

#[derive(Debug, Clone, PartialEq)]
pub struct Fold {
    pub rows: u64,
    pub score: f64,
    /// Rows predicted correctly, for proportion metrics.
    pub correct: Option<u64>,
    pub class_rows: Option<BTreeMap<String, u64>>,
}

#[derive(Debug, Clone, PartialEq)]
pub struct Evaluation {
    pub time: Option<jiff::Timestamp>,
    pub score: f64,
    pub rows: u64,
    /// Rows predicted correctly, for proportion metrics.
    pub correct: Option<u64>,
    pub note: Option<String>,
}

#[derive(Debug, Clone, PartialEq)]
pub struct Claim {
    pub value: f64,
    pub basis: Basis,
    pub text: Option<String>,
    /// The claim says the model beats its baseline.
    pub beats_baseline: bool,
}

/// A model's predictions on the test split.
#[derive(Debug, Clone, PartialEq)]
pub struct Predictions {
    pub set: crate::evidence::PredictionSet,
    pub f1: raw::F1Mode,
}

/// The model a "better than" claim is compared with: its predictions on the same test rows, or
/// its scores on the same cross-validation folds (at least one of the two).
#[derive(Debug, Clone, PartialEq)]
pub struct Baseline {
    pub name: String,
    pub set: Option<crate::evidence::PredictionSet>,
    pub cv_fold_scores: Option<Vec<f64>>,
}

/// Reads and validates one manifest file (`-` is standard input, named
/// [`crate::opener::STDIN_NAME`]); the files it names must lie inside `root`. A model's
/// per-example files are read concurrently ([`load_with`]).
pub fn load(path: &Path, root: &Path) -> Result<Vec<Model>, Vec<Diagnostic>> {
    load_with(path, root, Readers::Concurrent)
}

/// [`load`], reading a model's per-example files as `readers` says; the result is the same.
pub fn load_with(
    path: &Path,
    root: &Path,
    readers: Readers,
) -> Result<Vec<Model>, Vec<Diagnostic>> {
    let stdin = path == Path::new("-");
    let (file, text) = if stdin {
        let text = crate::opener::read_text(None, crate::opener::Kind::StdinManifest)
            .map_err(|d| vec![d])?;
        (crate::opener::STDIN_NAME.to_owned(), text)
    } else {
        let text = crate::opener::read_text(Some(path), crate::opener::Kind::Manifest)
            .map_err(|d| vec![d])?;
        (path.display().to_string(), text)
    };
    let raw: raw::RawManifest = input::parse(&file, &text, Syntax::detect(path, &text))?;
    validate(&file, raw, root, readers)
}

/// The JSON Schema of the manifest format.
pub fn schema() -> schemars::Schema {
    schemars::schema_for!(raw::RawManifest)
}
