//! The results manifest exactly as written by a training job (format version 1).
//!
//! These types mirror the file one to one; nothing here checks meaning. Every struct denies
//! unknown keys, because a misspelled key that silently vanished would drop evidence. Free-form
//! information goes in `metadata`. The JSON Schema printed by `vetscore schema manifest` is
//! derived from these types, so the schema and the parser cannot drift apart.

use std::collections::BTreeMap;

use schemars::JsonSchema;
use serde::Deserialize;
use serde_saphyr::Spanned;

use super::trials::RawTrial;
use super::{Basis, CvScheme, Metric, SearchMethod, Task};

/// A results manifest: one training run, one or more models.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
#[schemars(title = "vetscore results manifest", rename = "Manifest")]
pub struct RawManifest {
    /// Manifest format version; this build reads version 1.
    #[schemars(with = "u32")]
    pub format_version: Spanned<u32>,
    /// The models this run trained and makes claims about.
    #[schemars(with = "Vec<RawModel>")]
    pub models: Spanned<Vec<Spanned<RawModel>>>,
    /// Free-form information about the run; not read by any rule.
    #[serde(default)]
    pub metadata: Option<BTreeMap<String, serde_json::Value>>,
}

/// One trained model and the evidence for its claimed score.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
#[schemars(rename = "Model")]
pub struct RawModel {
    /// Unique name of the model within the check.
    pub name: String,
    /// Kind of prediction task.
    pub task: Task,
    /// The primary metric; the claim and all scores are in this metric.
    pub metric: Metric,
    /// Identifier of the training run.
    #[serde(default)]
    pub run_id: Option<String>,
    /// Source revision the model was trained from.
    #[serde(default)]
    pub commit: Option<String>,
    /// When training finished (RFC 3339, e.g. `2026-11-30T17:05:00Z`).
    #[serde(default)]
    pub trained_at: Option<String>,
    /// Random seed of the training run.
    #[serde(default)]
    pub seed: Option<u64>,
    /// Row counts and the identity of the test split.
    #[schemars(with = "RawData")]
    pub data: Spanned<RawData>,
    /// The hyperparameter search and its cross-validation.
    #[serde(default)]
    #[schemars(with = "Option<RawSearch>")]
    pub search: Option<Spanned<RawSearch>>,
    /// Every time the test split was scored, oldest first; the last one is the reported test score.
    #[serde(default)]
    #[schemars(with = "Vec<RawEvaluation>")]
    pub holdout: Vec<Spanned<RawEvaluation>>,
    /// The score the team states for this model.
    #[schemars(with = "RawClaim")]
    pub claim: Spanned<RawClaim>,
    /// Per-example predictions on the test split, to recompute the metric and its interval.
    #[serde(default)]
    #[schemars(with = "Option<RawPredictions>")]
    pub predictions: Option<Spanned<RawPredictions>>,
    /// The model the claim is compared with (e.g. the one in production), on the same rows.
    #[serde(default)]
    #[schemars(with = "Option<RawBaseline>")]
    pub baseline: Option<Spanned<RawBaseline>>,
    /// Free-form information about the model; not read by any rule.
    #[serde(default)]
    pub metadata: Option<BTreeMap<String, serde_json::Value>>,
}

/// Row counts and the identity of the test split.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
#[schemars(rename = "Data")]
pub struct RawData {
    /// Rows available to training and cross-validation.
    pub train_rows: u64,
    /// Rows in the held-out test split.
    pub test_rows: u64,
    /// Identity of the test split: a hash of its sorted row ids. Holdout use is counted per
    /// fingerprint, across every manifest in the check.
    pub test_fingerprint: String,
    /// Rows per class label, when known.
    #[serde(default)]
    pub class_counts: Option<RawClassCounts>,
    /// A file of training row ids, one per line, for the leakage check (relative to the manifest).
    #[serde(default)]
    pub train_ids_file: Option<String>,
    /// A file of test row ids, one per line, for the leakage check (relative to the manifest).
    #[serde(default)]
    pub test_ids_file: Option<String>,
}

/// The model's predictions on the test split.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
#[schemars(rename = "Predictions")]
pub struct RawPredictions {
    /// CSV file, relative to this manifest (columns: docs/manifest.md).
    pub file: String,
    /// The class names; when given, a label outside this list is an error.
    #[serde(default)]
    pub classes: Option<Vec<String>>,
    /// The positive class, for binary F1 and ROC AUC (default: `1` or `true` when the classes
    /// are 0/1 or false/true).
    #[serde(default)]
    pub positive_class: Option<String>,
    /// How F1 averages over classes (default: binary for two classes, macro otherwise).
    #[serde(default)]
    pub f1_average: Option<F1Mode>,
}

/// How F1 averages over classes.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum F1Mode {
    Binary,
    Macro,
    Micro,
}

/// The model a "better than" claim is compared with.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
#[schemars(rename = "Baseline")]
pub struct RawBaseline {
    /// Name of the baseline model, for the report.
    pub name: String,
    /// Its predictions on the same test rows (same columns as the model's), relative to this
    /// manifest: the improvement is then judged by a paired test on those rows.
    #[serde(default)]
    pub predictions_file: Option<String>,
    /// Its score on each cross-validation fold of the model's search, on the same folds, when
    /// there are no test predictions: the improvement is then judged on the fold differences.
    #[serde(default)]
    pub cv_fold_scores: Option<Vec<f64>>,
}

/// Rows per class label in each split.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
#[schemars(rename = "ClassCounts")]
pub struct RawClassCounts {
    pub train: BTreeMap<String, u64>,
    pub test: BTreeMap<String, u64>,
}

/// The hyperparameter search.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
#[schemars(rename = "Search")]
pub struct RawSearch {
    /// How configurations were chosen.
    pub method: SearchMethod,
    /// Number of configurations evaluated with cross-validation.
    #[serde(default)]
    pub configurations: Option<u64>,
    /// How many independent configurations the search amounts to. Configurations that differ
    /// little are correlated and count less; defaults to `configurations`.
    #[serde(default)]
    pub effective_configurations: Option<f64>,
    /// Every configuration tried, with its per-fold scores (or use `trials_file`).
    #[serde(default)]
    #[schemars(with = "Option<Vec<RawTrial>>")]
    pub trials: Option<Vec<Spanned<RawTrial>>>,
    /// A CSV or JSON Lines file of trials, relative to this manifest.
    #[serde(default)]
    pub trials_file: Option<String>,
    /// A CSV file of every configuration's out-of-fold predictions on the training rows
    /// (columns configuration, row, fold, label, prediction and/or score), relative to this
    /// manifest.
    #[serde(default)]
    pub out_of_fold: Option<String>,
    /// The id of the trial that was chosen (its fold scores must equal `cv.folds`); the
    /// selection-optimism bias is computed for it. Unnamed, it is the trial whose fold scores
    /// equal `cv.folds` (or, in a scikit-learn results file, the first ranked 1).
    #[serde(default)]
    #[schemars(with = "Option<TrialId>")]
    pub selected_trial: Option<Spanned<serde_json::Value>>,
    /// For a trials file that is scikit-learn's `cv_results_`: the scorer its scores are, as
    /// passed to `scoring` (e.g. `neg_log_loss`; losses are stored negated), and for a search
    /// with several scorers the one to read. Default: the estimator's own score (accuracy or r2).
    #[serde(default)]
    #[schemars(with = "Option<String>")]
    pub scorer: Option<Spanned<String>>,
    /// The cross-validation of the selected configuration.
    #[schemars(with = "RawCv")]
    pub cv: Spanned<RawCv>,
}

/// A trial id, written as a string or a whole number.
#[derive(JsonSchema)]
#[serde(untagged)]
#[allow(dead_code)]
enum TrialId {
    Text(String),
    Number(i64),
}

/// Cross-validation of the selected configuration.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
#[schemars(rename = "CrossValidation")]
pub struct RawCv {
    /// How the training rows were split into folds.
    pub scheme: CvScheme,
    /// How many times the k-fold split was repeated (`repeated_k_fold` only; default 1).
    #[serde(default)]
    pub repeats: Option<u32>,
    /// One entry per validation fold, in order (exactly one for `validation_split`).
    #[schemars(with = "Vec<RawFold>")]
    pub folds: Vec<Spanned<RawFold>>,
}

/// One validation fold of the selected configuration.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
#[schemars(rename = "Fold")]
pub struct RawFold {
    /// Rows in this validation fold.
    pub rows: u64,
    /// The metric on this fold.
    pub score: f64,
    /// Rows predicted correctly (accuracy only); derived from the score when absent.
    #[serde(default)]
    pub correct: Option<u64>,
    /// Rows per class label in this validation fold, when known.
    #[serde(default)]
    pub class_rows: Option<BTreeMap<String, u64>>,
}

/// One scoring of the test split.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
#[schemars(rename = "Evaluation")]
pub struct RawEvaluation {
    /// When the test split was scored (RFC 3339).
    #[serde(default)]
    pub time: Option<String>,
    /// The metric on the test split.
    pub score: f64,
    /// Rows predicted correctly (accuracy only); derived from the score when absent.
    #[serde(default)]
    pub correct: Option<u64>,
    /// Rows scored; defaults to the test split's row count.
    #[serde(default)]
    pub rows: Option<u64>,
    /// Why the test split was scored this time.
    #[serde(default)]
    pub note: Option<String>,
}

/// The score the team states.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
#[schemars(rename = "Claim")]
pub struct RawClaim {
    /// The stated value of the metric.
    pub value: f64,
    /// The metric of the claim; must equal the model's metric when given.
    #[serde(default)]
    pub metric: Option<Metric>,
    /// Which evidence the claim rests on.
    pub basis: Basis,
    /// The claim as written in the merge request.
    #[serde(default)]
    pub text: Option<String>,
    /// The claim says the model beats its baseline (needs `baseline`).
    #[serde(default)]
    pub beats_baseline: bool,
}
