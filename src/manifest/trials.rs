//! Every configuration the search tried ("trials"), read in one streaming pass.
//!
//! Trials come inline in the manifest (`search.trials`) or from a file beside it
//! (`search.trials_file`): CSV with a header holding an `id` column and one column per fold named
//! `fold_1` … `fold_K` (any other column is a hyperparameter and is not read), or JSON Lines with
//! one object per line, `{"id": …, "params": {…}, "fold_scores": [ … ]}`. Each trial feeds the
//! Tibshirani & Tibshirani accumulator and a histogram of mean scores, so memory grows with the
//! number of folds, not the number of trials (only an 8-byte hash per trial id is kept, to catch
//! duplicates).

use std::collections::{BTreeMap, HashSet};
use std::hash::{DefaultHasher, Hash, Hasher};
use std::io::BufRead;
use std::path::Path;

use schemars::JsonSchema;
use serde::Deserialize;

use super::Metric;
use crate::diag::{Diagnostic, Place};
use crate::opener::Kind;
use crate::stats::{BiasEstimate, Bin, Histogram, SelectionBias};

/// Display bins of the trial-score histogram.
pub const HISTOGRAM_BINS: usize = 16;

/// Most problems reported from one trials source before giving up on it.
const MAX_PROBLEMS: usize = 20;

/// One trial as written inline or in JSON Lines.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
#[schemars(rename = "Trial")]
pub struct RawTrial {
    /// Identifier of the configuration, unique within the search.
    pub id: serde_json::Value,
    /// The hyperparameters; not read by any rule.
    #[serde(default)]
    pub params: Option<BTreeMap<String, serde_json::Value>>,
    /// The metric on each validation fold, in fold order.
    pub fold_scores: Vec<f64>,
}

/// What the search's trials show.
#[derive(Debug, Clone, PartialEq)]
pub struct TrialSummary {
    pub trials: u64,
    /// Tibshirani & Tibshirani (2009), in the metric's own direction.
    pub bias: BiasEstimate,
    /// Mean fold score of each trial, grouped for display.
    pub histogram: Vec<Bin>,
}

/// Streams trials into a summary, collecting problems.
pub struct TrialReader<'a> {
    file: &'a str,
    metric: Metric,
    folds: usize,
    bias: SelectionBias,
    histogram: Histogram,
    ids: HashSet<u64>,
    problems: Vec<Diagnostic>,
}

impl<'a> TrialReader<'a> {
    /// A reader for trials scored on `folds` folds; `file` names the source in diagnostics.
    pub fn new(file: &'a str, metric: Metric, folds: usize) -> Self {
        TrialReader {
            file,
            metric,
            folds,
            bias: SelectionBias::new(folds),
            histogram: Histogram::default(),
            ids: HashSet::new(),
            problems: Vec::new(),
        }
    }

    fn full(&self) -> bool {
        self.problems.len() >= MAX_PROBLEMS
    }

    fn problem(&mut self, place: Place, path: String, message: String) {
        if !self.full() {
            self.problems
                .push(Diagnostic::at(self.file, place, path, message));
        }
    }

    /// Adds one trial; `path` names it in diagnostics (`models[0].search.trials[3]` inline, empty
    /// in a file, where the line says which trial).
    pub fn push(&mut self, place: Place, path: &str, id: &str, scores: &[f64]) {
        let key = |field: &str| {
            if path.is_empty() {
                field.to_owned()
            } else {
                format!("{path}.{field}")
            }
        };
        let mut hasher = DefaultHasher::new();
        id.hash(&mut hasher);
        if !self.ids.insert(hasher.finish()) {
            self.problem(place, key("id"), format!("trial id {id:?} appears twice"));
            return;
        }
        if scores.len() != self.folds {
            self.problem(
                place,
                key("fold_scores"),
                format!(
                    "expected {} fold scores (one per fold of the selected configuration), found {}",
                    self.folds,
                    scores.len()
                ),
            );
            return;
        }
        let (lo, hi) = self.metric.range();
        if let Some((k, bad)) = scores
            .iter()
            .enumerate()
            .find(|(_, s)| !s.is_finite() || **s < lo || **s > hi)
        {
            self.problem(
                place,
                key(&format!("fold_scores[{k}]")),
                format!(
                    "{} must be finite and lie in [{lo}, {hi}], found {bad}",
                    self.metric.name()
                ),
            );
            return;
        }
        // The accumulator maximises; lower-is-better metrics are negated in and out.
        let sign = if self.metric.higher_is_better() {
            1.0
        } else {
            -1.0
        };
        let signed: Vec<f64> = scores.iter().map(|s| sign * s).collect();
        if let Err(e) = self.bias.push(&signed) {
            self.problem(place, key("fold_scores"), e.to_string());
            return;
        }
        self.histogram
            .push(scores.iter().sum::<f64>() / scores.len() as f64);
    }

    /// Reads a CSV trials file with an `id` column and `fold_1` … `fold_K` columns.
    pub fn read_csv(&mut self, reader: impl std::io::Read) {
        let mut csv = csv::ReaderBuilder::new()
            .has_headers(true)
            .from_reader(reader);
        let header = match csv.headers() {
            Ok(h) => h.clone(),
            Err(e) => {
                let (line, reason) = crate::opener::csv_failure(&e);
                self.problem(
                    Place::new(line.unwrap_or(1), 1),
                    "(header)".into(),
                    format!("cannot read the CSV header: {reason}"),
                );
                return;
            }
        };
        let column = |name: &str| header.iter().position(|h| h.trim() == name);
        let id_column = column("id");
        let fold_columns: Vec<Option<usize>> = (1..=self.folds)
            .map(|k| column(&format!("fold_{k}")))
            .collect();
        let missing: Vec<String> = std::iter::once(("id".to_owned(), id_column))
            .chain(
                fold_columns
                    .iter()
                    .enumerate()
                    .map(|(k, c)| (format!("fold_{}", k + 1), *c)),
            )
            .filter(|(_, c)| c.is_none())
            .map(|(name, _)| name)
            .collect();
        let (Some(id_column), true) = (id_column, missing.is_empty()) else {
            self.problem(
                Place::new(1, 1),
                "(header)".into(),
                format!(
                    "missing column{} {}",
                    if missing.len() == 1 { "" } else { "s" },
                    missing.join(", ")
                ),
            );
            return;
        };
        let fold_columns: Vec<usize> = fold_columns.into_iter().flatten().collect();
        let mut record = csv::StringRecord::new();
        let mut scores = Vec::with_capacity(self.folds);
        loop {
            if self.full() {
                return;
            }
            match csv.read_record(&mut record) {
                Ok(false) => return,
                Ok(true) => {}
                Err(e) => {
                    let (line, reason) = crate::opener::csv_failure(&e);
                    self.problem(
                        Place { line, column: None },
                        "(row)".into(),
                        format!("cannot read the row: {reason}"),
                    );
                    return;
                }
            }
            let line = record.position().map(|p| p.line()).unwrap_or(0);
            let place = Place {
                line: Some(line),
                column: None,
            };
            scores.clear();
            let mut ok = true;
            for (k, &c) in fold_columns.iter().enumerate() {
                let cell = record.get(c).unwrap_or("").trim();
                match cell.parse::<f64>() {
                    Ok(v) => scores.push(v),
                    Err(_) => {
                        self.problem(
                            Place {
                                line: Some(line),
                                column: Some(c as u64 + 1),
                            },
                            format!("fold_{}", k + 1),
                            format!("expected a number, found {cell:?}"),
                        );
                        ok = false;
                        break;
                    }
                }
            }
            if ok {
                let id = record.get(id_column).unwrap_or("").to_owned();
                self.push(place, "", &id, &scores);
            }
        }
    }

    /// Reads JSON Lines: one trial object per non-blank line.
    pub fn read_jsonl(&mut self, reader: impl BufRead) {
        for (i, line) in reader.lines().enumerate() {
            if self.full() {
                return;
            }
            let number = i as u64 + 1;
            let line = match line {
                Ok(l) => l,
                Err(e) => {
                    self.problem(
                        Place {
                            line: Some(crate::opener::limit_line(&e).unwrap_or(number)),
                            column: None,
                        },
                        "(line)".into(),
                        format!("cannot read: {}", crate::opener::read_reason(&e)),
                    );
                    return;
                }
            };
            if line.trim().is_empty() {
                continue;
            }
            match serde_json::from_str::<RawTrial>(&line) {
                Ok(t) => self.push(
                    Place {
                        line: Some(number),
                        column: None,
                    },
                    "",
                    &id_text(&t.id),
                    &t.fold_scores,
                ),
                Err(e) => self.problem(
                    Place::new(number, e.column() as u64),
                    "(trial)".into(),
                    format!(
                        "invalid trial: {}",
                        e.to_string().split(" at line ").next().unwrap_or_default()
                    ),
                ),
            }
        }
    }

    /// The summary, or every problem found.
    pub fn finish(self) -> Result<TrialSummary, Vec<Diagnostic>> {
        if !self.problems.is_empty() {
            return Err(self.problems);
        }
        let mut bias = self.bias.finish().map_err(|e| {
            vec![Diagnostic::file(
                self.file,
                format!("no usable trials: {e}"),
            )]
        })?;
        if !self.metric.higher_is_better() {
            bias.naive_best = -bias.naive_best;
            bias.corrected = -bias.corrected;
        }
        Ok(TrialSummary {
            trials: bias.trials,
            bias,
            histogram: self.histogram.bins(HISTOGRAM_BINS),
        })
    }
}

/// A trial id as text, whether written as a string or a number.
pub fn id_text(id: &serde_json::Value) -> String {
    match id {
        serde_json::Value::String(s) => s.clone(),
        other => other.to_string(),
    }
}

/// Reads a trials file (CSV, or JSON Lines for `.jsonl`/`.ndjson`) into a summary. `named_by`
/// says where the manifest names the file, for the message when it cannot be opened.
pub fn read_file(
    path: &Path,
    named_by: &str,
    metric: Metric,
    folds: usize,
) -> Result<TrialSummary, Vec<Diagnostic>> {
    let shown = path.display().to_string();
    let refuse = |reason: String| {
        vec![Diagnostic::file(
            &shown,
            format!("cannot read the trials file named by {named_by}: {reason}"),
        )]
    };
    let jsonl = matches!(
        path.extension().and_then(|e| e.to_str()),
        Some("jsonl" | "ndjson")
    );
    let kind = if jsonl {
        Kind::TrialsJsonl
    } else {
        Kind::TrialsCsv
    };
    let file = crate::opener::open(path, kind).map_err(refuse)?;
    let mut reader = TrialReader::new(&shown, metric, folds);
    if jsonl {
        reader.read_jsonl(std::io::BufReader::with_capacity(1 << 16, file));
    } else {
        reader.read_csv(std::io::BufReader::with_capacity(1 << 16, file));
    }
    reader.finish()
}
