//! Every configuration the search tried ("trials"), read in one streaming pass.
//!
//! Trials come inline in the manifest (`search.trials`) or from a file beside it
//! (`search.trials_file`): CSV with a header holding an `id` column and one column per fold named
//! `fold_1` … `fold_K` (any other column is a hyperparameter and is not read), or JSON Lines with
//! one object per line, `{"id": …, "params": {…}, "fold_scores": [ … ]}`. Each trial feeds the
//! Tibshirani & Tibshirani accumulator and a histogram of mean scores, whose sizes depend on the
//! number of folds only; the one thing kept per trial is its id ([`TrialIds`]: the id's bytes and
//! 9 to 15 bytes of index), so that a duplicate is caught exactly. scikit-learn's `cv_results_` as
//! pandas writes it is read too ([`super::sklearn`]); its JSON form is parsed whole, so it has a
//! smaller size limit.
//!
//! The bias is computed for the configuration the manifest reports, never for whichever trial
//! has the best mean: the manifest may name it (`search.selected_trial`), and its fold scores
//! must then equal the manifest's folds; unnamed, it is the first trial whose fold scores equal
//! them (within [`SCORE_MATCH`]), and a search where none does is an input error.

use std::collections::BTreeMap;
use std::hash::BuildHasher;
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

/// Two fold scores are the same score when they differ by at most half a unit of the fourth
/// decimal: the manifest may round what the trials file holds in full (or the other way round).
pub const SCORE_MATCH: f64 = 5e-5;

/// The configuration the manifest reports, against which the trials are matched.
#[derive(Debug, Clone)]
pub struct Selected {
    /// The manifest's fold scores of the selected configuration, in fold order.
    pub folds: Vec<f64>,
    /// The trial id the manifest names (`search.selected_trial`), with where it is written.
    pub named: Option<Named>,
}

/// A trial id named in the manifest, and where.
#[derive(Debug, Clone)]
pub struct Named {
    pub id: String,
    pub file: String,
    pub place: Place,
    pub path: String,
}

/// The trial found to be the selected one while streaming.
#[derive(Debug, Clone)]
struct Candidate {
    index: usize,
    id: String,
    place: Place,
    /// Key path of its fold scores in diagnostics.
    key: String,
    scores: Vec<f64>,
}

/// Whether two lists of fold scores are the same within [`SCORE_MATCH`].
fn same_scores(a: &[f64], b: &[f64]) -> bool {
    a.len() == b.len() && a.iter().zip(b).all(|(x, y)| (x - y).abs() <= SCORE_MATCH)
}

fn show_scores(scores: &[f64]) -> String {
    let shown: Vec<String> = scores.iter().map(|s| format!("{s}")).collect();
    format!("[{}]", shown.join(", "))
}

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
    /// Id of the trial the bias describes (the reported configuration), when the reader was
    /// told which one it is.
    pub selected_id: Option<String>,
    /// How that trial was found, for the report.
    pub selected_by: Option<&'static str>,
}

/// Streams trials into a summary, collecting problems.
pub struct TrialReader<'a> {
    file: &'a str,
    metric: Metric,
    folds: usize,
    bias: SelectionBias,
    histogram: Histogram,
    ids: TrialIds,
    /// The scores of the trial being pushed, signed for the accumulator (reused, not reallocated).
    signed: Vec<f64>,
    problems: Vec<Diagnostic>,
    selected: Option<Selected>,
    /// The trial the file itself marks as chosen (scikit-learn's first `rank_test_score == 1`).
    ranked_first: Option<Candidate>,
    candidate: Option<Candidate>,
    /// Trials whose fold scores equal the selected configuration's.
    matching: u64,
    /// Trials accepted so far (the push index of the next one).
    pushed: usize,
    /// Rows the file ranks first (several on ties).
    ranked_ones: u64,
    scorer: Option<super::sklearn::ScorerName>,
    /// Whether the trials came from scikit-learn's results (where `scorer` applies).
    cv_results: bool,
    /// The size of the source in bytes, when known: the id table is sized from it and the first
    /// record, so that it is not rebuilt again and again as it grows.
    source_bytes: Option<u64>,
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
            ids: TrialIds::default(),
            signed: Vec::with_capacity(folds),
            problems: Vec::new(),
            selected: None,
            ranked_first: None,
            candidate: None,
            matching: 0,
            pushed: 0,
            ranked_ones: 0,
            scorer: None,
            cv_results: false,
            source_bytes: None,
        }
    }

    /// Matches the trials against the configuration the manifest reports: the bias is then
    /// computed for that trial, and a named trial whose folds differ is an input error.
    pub fn select(mut self, selected: Selected) -> Self {
        self.selected = Some(selected);
        self
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
        match self.ids.insert(id.as_bytes()) {
            Some(true) => {}
            Some(false) => {
                self.problem(place, key("id"), format!("trial id {id:?} appears twice"));
                return;
            }
            None => {
                self.problem(
                    place,
                    key("id"),
                    format!("the trial ids pass {} bytes in all", u32::MAX),
                );
                return;
            }
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
        self.signed.clear();
        self.signed.extend(scores.iter().map(|s| sign * s));
        let index = self.pushed;
        if let Err(e) = self.bias.push(&self.signed) {
            self.problem(place, key("fold_scores"), e.to_string());
            return;
        }
        self.pushed += 1;
        if self.keeps(id, scores) {
            self.candidate = Some(Candidate {
                index,
                id: id.to_owned(),
                place,
                key: key("fold_scores"),
                scores: scores.to_vec(),
            });
        }
        self.histogram
            .push(scores.iter().sum::<f64>() / scores.len() as f64);
    }

    /// Whether the trial is to be kept as the candidate: the named one, or (unnamed) the first
    /// whose folds match. Counts the trials whose folds match.
    fn keeps(&mut self, id: &str, scores: &[f64]) -> bool {
        let Some(selected) = &self.selected else {
            return false;
        };
        let matches = same_scores(scores, &selected.folds);
        self.matching += u64::from(matches);
        match &selected.named {
            Some(named) => named.id == id,
            None => matches && self.candidate.is_none(),
        }
    }

    /// Marks the trial just pushed as the one the file itself ranks first (the first is kept).
    pub(super) fn mark_ranked_first(&mut self, id: &str, place: Place, scores: &[f64]) {
        self.ranked_ones += 1;
        if self.ranked_first.is_none() {
            self.ranked_first = Some(Candidate {
                index: self.pushed.saturating_sub(1),
                id: id.to_owned(),
                place,
                key: "fold_scores".to_owned(),
                scores: scores.to_vec(),
            });
        }
    }

    /// Trials accepted so far.
    pub(super) fn accepted(&self) -> usize {
        self.pushed
    }

    pub(super) fn cv_problem(&mut self, place: Place, column: &str, message: String) {
        self.problem(place, column.to_owned(), message);
    }

    /// Reads scikit-learn's results through the scorer the manifest names (if any).
    pub fn scorer(mut self, scorer: Option<super::sklearn::ScorerName>) -> Self {
        self.scorer = scorer;
        self
    }

    /// The selected trial's bias, or why the trials do not contain the reported configuration.
    fn selected_bias(
        &mut self,
    ) -> Result<Option<(BiasEstimate, String, &'static str)>, Vec<Diagnostic>> {
        let Some(selected) = self.selected.take() else {
            return Ok(None);
        };
        let (found, by) = match (&selected.named, self.ranked_first.take()) {
            (Some(named), _) => {
                let Some(found) = self.candidate.take() else {
                    return Err(vec![
                        Diagnostic::at(
                            &named.file,
                            named.place,
                            named.path.clone(),
                            format!(
                                "selected_trial {:?} is not among the trials in {}",
                                named.id, self.file
                            ),
                        )
                        .with_help(
                            "name the id of the chosen configuration exactly as the trials list it",
                        ),
                    ]);
                };
                (found, "named by the manifest")
            }
            (None, Some(ranked)) => (
                ranked,
                if self.ranked_ones > 1 {
                    "ranked first by the search; the first of the rows tied at rank 1"
                } else {
                    "ranked first by the search"
                },
            ),
            (None, None) => {
                let Some(found) = self.candidate.take() else {
                    return Err(vec![
                        Diagnostic::file(
                            self.file,
                            format!(
                                "no trial has the selected configuration's fold scores {}",
                                show_scores(&selected.folds)
                            ),
                        )
                        .with_help(
                            "list the chosen configuration among the trials, or name it with search.selected_trial",
                        ),
                    ]);
                };
                (
                    found,
                    if self.matching > 1 {
                        "the first of several trials with the selected folds"
                    } else {
                        "the trial with the selected folds"
                    },
                )
            }
        };
        if !same_scores(&found.scores, &selected.folds) {
            let whose = if by.starts_with("ranked first") {
                "ranked first by the search"
            } else {
                "the manifest's selected_trial"
            };
            return Err(vec![
                Diagnostic::at(
                    self.file,
                    found.place,
                    found.key.clone(),
                    format!(
                        "trial {:?} ({whose}) has fold scores {}, but the manifest's selected configuration has {}",
                        found.id,
                        show_scores(&found.scores),
                        show_scores(&selected.folds)
                    ),
                )
                .with_help(
                    "the folds under search.cv must be the chosen configuration's; name the chosen trial with search.selected_trial",
                ),
            ]);
        }
        let sign = if self.metric.higher_is_better() {
            1.0
        } else {
            -1.0
        };
        let signed: Vec<f64> = found.scores.iter().map(|s| sign * s).collect();
        let bias = self.bias.finish_for(found.index, &signed).map_err(|e| {
            vec![Diagnostic::file(
                self.file,
                format!("no usable trials: {e}"),
            )]
        })?;
        Ok(Some((bias, found.id, by)))
    }

    /// Tells the reader how many bytes its source holds (a hint for sizing, never a limit).
    pub fn source_bytes(mut self, bytes: Option<u64>) -> Self {
        self.source_bytes = bytes;
        self
    }

    /// Sizes the id table for the records a source of [`TrialReader::source_bytes`] holds if
    /// every record is as long as `record` (the first). A record takes at least one byte per
    /// field (its comma or line break), so this is never more than the most records a file of
    /// that size could hold.
    fn expect_records_like(&mut self, record: &csv::StringRecord) {
        let Some(bytes) = self.source_bytes.take() else {
            return;
        };
        let per_record = (record.as_byte_record().as_slice().len() + record.len()).max(1);
        let records = usize::try_from(bytes / per_record as u64).unwrap_or(usize::MAX);
        self.ids.reserve(records);
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
        if id_column.is_none() && super::sklearn::is_cv_results(header.iter()) {
            self.read_cv_results_csv(&header, csv);
            return;
        }
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
            if !self.full() {
                self.problems.push(
                    Diagnostic::at(
                        self.file,
                        Place::new(1, 1),
                        "(header)",
                        format!(
                            "missing column{} {}",
                            if missing.len() == 1 { "" } else { "s" },
                            missing.join(", ")
                        ),
                    )
                    .with_help(
                        "a trials CSV has vetscore's columns (id, fold_1 … fold_K) or is scikit-learn's cv_results_ as pandas writes it (split0_test_score …)",
                    ),
                );
            }
            return;
        };
        let fold_columns: Vec<usize> = fold_columns.into_iter().flatten().collect();
        let mut record = csv::StringRecord::new();
        let mut scores = Vec::with_capacity(self.folds);
        loop {
            if !self.next_record(&mut csv, &mut record) {
                return;
            }
            self.expect_records_like(&record);
            let line = record.position().map(|p| p.line()).unwrap_or(0);
            let place = Place {
                line: Some(line),
                column: None,
            };
            scores.clear();
            let mut ok = true;
            for (k, &c) in fold_columns.iter().enumerate() {
                let cell = record.get(c).unwrap_or("");
                match parse_score(cell) {
                    Some(v) => scores.push(v),
                    None => {
                        let cell = cell.trim();
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
                self.push(place, "", record.get(id_column).unwrap_or(""), &scores);
            }
        }
    }

    /// Reads the next CSV record; false at the end, when full, or after a read error (reported).
    fn next_record<R: std::io::Read>(
        &mut self,
        csv: &mut csv::Reader<R>,
        record: &mut csv::StringRecord,
    ) -> bool {
        if self.full() {
            return false;
        }
        match csv.read_record(record) {
            Ok(more) => more,
            Err(e) => {
                let (line, reason) = crate::opener::csv_failure(&e);
                self.problem(
                    Place { line, column: None },
                    "(row)".into(),
                    format!("cannot read the row: {reason}"),
                );
                false
            }
        }
    }

    /// The columns of the scorer to read from scikit-learn's results (a problem when none).
    fn cv_results_layout(&mut self, columns: &[String]) -> Option<super::sklearn::Layout> {
        self.cv_results = true;
        let layout = super::sklearn::layout(
            self.file,
            columns,
            self.metric,
            self.folds,
            self.scorer.as_ref(),
        );
        layout.map_err(|d| self.problems.push(d)).ok()
    }

    /// Reads `pandas.DataFrame(search.cv_results_).to_csv()`, header already read.
    fn read_cv_results_csv<R: std::io::Read>(
        &mut self,
        header: &csv::StringRecord,
        mut csv: csv::Reader<R>,
    ) {
        let columns: Vec<String> = header.iter().map(|h| h.trim().to_owned()).collect();
        let Some(layout) = self.cv_results_layout(&columns) else {
            return;
        };
        let mut record = csv::StringRecord::new();
        for row in 0u64.. {
            if !self.next_record(&mut csv, &mut record) {
                return;
            }
            let line = record.position().map(|p| p.line()).unwrap_or(0);
            let id = layout.id.and_then(|c| record.get(c)).map(str::to_owned);
            let cell = |c: usize| {
                let text = record.get(c).unwrap_or("").trim();
                match text {
                    "" | "nan" | "NaN" => super::sklearn::Cell::Missing,
                    t => t
                        .parse::<f64>()
                        .map_or(super::sklearn::Cell::Text(t), super::sklearn::Cell::Number),
                }
            };
            let place = |c: Option<usize>| Place {
                line: Some(line),
                column: c.map(|c| c as u64 + 1),
            };
            let record_cell = cell;
            self.push_cv_results_row(&layout, row, id, record_cell, place);
        }
    }

    /// Reads `pandas.DataFrame(search.cv_results_).to_json()`: the default orientation (an
    /// object of columns, each an object keyed by the row index), `orient="index"` (an object of
    /// rows) or `orient="records"` (an array of rows). The whole document is parsed at once,
    /// since none of these can be read row by row.
    pub fn read_cv_results_json(&mut self, reader: impl std::io::Read) {
        use serde_json::Value;
        let whole = |me: &mut Self, message: String| {
            me.problems.push(
                Diagnostic::file(me.file, message).with_help(
                    "write the results with pandas.DataFrame(search.cv_results_).to_json() (or orient=\"records\")",
                ),
            );
        };
        let value: Value = match serde_json::from_reader(reader) {
            Ok(v) => v,
            Err(e) => {
                let at = Place::new(e.line() as u64, e.column() as u64);
                self.problem(at, "(document)".into(), format!("invalid JSON: {e}"));
                return;
            }
        };
        // Rows as (id, object of columns).
        let rows: Vec<(Option<String>, serde_json::Map<String, Value>)> = match value {
            Value::Array(records) => records
                .into_iter()
                .map(|r| match r {
                    Value::Object(o) => (None, o),
                    _ => (None, serde_json::Map::new()),
                })
                .collect(),
            Value::Object(top) if super::sklearn::is_cv_results(top.keys().map(String::as_str)) => {
                // Columns orientation: transpose, keeping the index order of the first column.
                let mut order: Vec<String> = Vec::new();
                let mut by_id: std::collections::HashMap<String, serde_json::Map<String, Value>> =
                    std::collections::HashMap::new();
                for (column, cells) in top {
                    let Value::Object(cells) = cells else {
                        whole(self, format!("column {column:?} is not an object of rows"));
                        return;
                    };
                    for (id, v) in cells {
                        by_id
                            .entry(id.clone())
                            .or_insert_with(|| {
                                order.push(id.clone());
                                serde_json::Map::new()
                            })
                            .insert(column.clone(), v);
                    }
                }
                order
                    .into_iter()
                    .map(|id| {
                        let row = by_id.remove(&id).unwrap_or_default();
                        (Some(id), row)
                    })
                    .collect()
            }
            Value::Object(top) => top
                .into_iter()
                .map(|(id, r)| match r {
                    Value::Object(o) => (Some(id), o),
                    _ => (Some(id), serde_json::Map::new()),
                })
                .collect(),
            _ => {
                whole(
                    self,
                    "expected an object or an array of search results".into(),
                );
                return;
            }
        };
        let Some((_, first)) = rows.first() else {
            whole(self, "the results hold no rows".into());
            return;
        };
        let columns: Vec<String> = first.keys().cloned().collect();
        if !super::sklearn::is_cv_results(columns.iter().map(String::as_str)) {
            whole(
                self,
                "no split0_test_… column: this is not scikit-learn's cv_results_".into(),
            );
            return;
        }
        let Some(layout) = self.cv_results_layout(&columns) else {
            return;
        };
        for (row, (id, cells)) in rows.iter().enumerate() {
            if self.full() {
                return;
            }
            let cell = |c: usize| match cells.get(&layout.names[c]) {
                None | Some(Value::Null) => super::sklearn::Cell::Missing,
                Some(Value::Number(n)) => n
                    .as_f64()
                    .map_or(super::sklearn::Cell::Missing, super::sklearn::Cell::Number),
                Some(_) => super::sklearn::Cell::Text("(not a number)"),
            };
            let place = |_: Option<usize>| Place {
                line: None,
                column: None,
            };
            self.push_cv_results_row(&layout, row as u64, id.clone(), cell, place);
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
    pub fn finish(mut self) -> Result<TrialSummary, Vec<Diagnostic>> {
        if let (Some(s), false) = (&self.scorer, self.cv_results) {
            self.problems.push(Diagnostic::at(
                &s.file,
                s.place,
                s.path.clone(),
                "scorer names a column set of scikit-learn's cv_results_, but the trials are not a scikit-learn results file",
            ));
        }
        if !self.problems.is_empty() {
            return Err(self.problems);
        }
        let argmax = self.bias.finish().map_err(|e| {
            vec![Diagnostic::file(
                self.file,
                format!("no usable trials: {e}"),
            )]
        })?;
        let (mut bias, selected_id, selected_by) = match self.selected_bias()? {
            Some((bias, id, by)) => (bias, Some(id), Some(by)),
            None => (argmax, None, None),
        };
        if !self.metric.higher_is_better() {
            bias.naive_best = -bias.naive_best;
            bias.corrected = -bias.corrected;
        }
        Ok(TrialSummary {
            trials: bias.trials,
            bias,
            histogram: self.histogram.bins(HISTOGRAM_BINS),
            selected_id,
            selected_by,
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
    selected: Selected,
    scorer: Option<super::sklearn::ScorerName>,
) -> Result<TrialSummary, Vec<Diagnostic>> {
    let folds = selected.folds.len();
    let shown = path.display().to_string();
    let refuse = |reason: String| {
        vec![Diagnostic::file(
            &shown,
            format!("cannot read the trials file named by {named_by}: {reason}"),
        )]
    };
    let kind = match path.extension().and_then(|e| e.to_str()) {
        Some("json") => Kind::TrialsResultsJson,
        Some("jsonl" | "ndjson") => Kind::TrialsJsonl,
        _ => Kind::TrialsCsv,
    };
    let file = crate::opener::open(path, kind).map_err(refuse)?;
    let mut reader = TrialReader::new(&shown, metric, folds)
        .select(selected)
        .scorer(scorer)
        .source_bytes(file.source_len());
    let buffered = std::io::BufReader::with_capacity(1 << 16, file);
    match kind {
        Kind::TrialsResultsJson => reader.read_cv_results_json(buffered),
        Kind::TrialsJsonl => reader.read_jsonl(buffered),
        _ => reader.read_csv(buffered),
    }
    reader.finish()
}

/// A fold score read from a CSV cell: plain decimal digits through [`decimal`], anything else as
/// before, trimmed and through `str::parse`. `None` when it is not a number.
fn parse_score(cell: &str) -> Option<f64> {
    decimal(cell.as_bytes()).or_else(|| cell.trim().parse::<f64>().ok())
}

/// The powers of ten that an f64 holds exactly (5^22 < 2^53, so 10^22 is the last).
const EXACT_POWERS_OF_TEN: [f64; 23] = [
    1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16,
    1e17, 1e18, 1e19, 1e20, 1e21, 1e22,
];

/// A number written as plain decimal digits with an optional fraction (`0.8123`, `1`, `12.50`),
/// parsed without the general parser. Its digits, read as one integer m, are at most 2^53 and the
/// k digits after the point at most 22, so m and 10^k are both exact in an f64 and m / 10^k is
/// one correctly rounded division: the correctly rounded value of the decimal, which is what
/// `str::parse::<f64>` returns (the exact case of Clinger 1990, "How to read floating point
/// numbers accurately"). `None` for anything else (a sign, an exponent, white space, `.5`, `5.`,
/// more digits), which the caller hands to `str::parse`.
fn decimal(text: &[u8]) -> Option<f64> {
    let (whole, fraction) = match text.iter().position(|&b| b == b'.') {
        Some(point) => (&text[..point], &text[point + 1..]),
        None => (text, &text[text.len()..]),
    };
    let pointed = whole.len() < text.len();
    if whole.is_empty() || (pointed && fraction.is_empty()) {
        return None;
    }
    let power = EXACT_POWERS_OF_TEN.get(fraction.len())?;
    let mut digits: u64 = 0;
    for &b in whole.iter().chain(fraction) {
        let digit = b.wrapping_sub(b'0');
        if digit > 9 {
            return None;
        }
        digits = digits.checked_mul(10)?.checked_add(u64::from(digit))?;
    }
    if digits > 1 << 53 {
        return None;
    }
    Some(digits as f64 / power)
}

/// The trial ids seen so far, to refuse a duplicate exactly. Every id's bytes are kept once, end
/// to end in one buffer, and a hash table holds each id's index, probed by a hash of the bytes
/// (foldhash, seeded at random per process so that colliding ids cannot be planned; no result
/// depends on the seed). Ids whose hashes meet are compared byte for byte, so a collision never
/// passes for a duplicate, and equal ids always hash alike, so no duplicate is missed.
struct TrialIds<S = foldhash::fast::RandomState> {
    bytes: Vec<u8>,
    /// Where each id ends in `bytes` (it starts where the one before ends).
    ends: Vec<u32>,
    table: hashbrown::HashTable<u32>,
    hasher: S,
}

impl<S: Default> Default for TrialIds<S> {
    fn default() -> Self {
        TrialIds {
            bytes: Vec::new(),
            ends: Vec::new(),
            table: hashbrown::HashTable::new(),
            hasher: S::default(),
        }
    }
}

impl<S: BuildHasher> TrialIds<S> {
    /// Makes room for `more` ids without growing the table.
    fn reserve(&mut self, more: usize) {
        // Closures capture the fields they use, so the table can grow while they read the ids.
        self.table.reserve(more, |&i| {
            self.hasher.hash_one(stored(&self.bytes, &self.ends, i))
        });
        self.ends.reserve(more);
    }

    /// Adds `id`: `Some(true)` when it is new, `Some(false)` when it was seen before, `None` when
    /// the ids would pass 4 GiB in all (more than any trials source within its size limit holds).
    fn insert(&mut self, id: &[u8]) -> Option<bool> {
        let TrialIds {
            bytes,
            ends,
            table,
            hasher,
        } = self;
        let entry = table.entry(
            hasher.hash_one(id),
            |&i| stored(bytes, ends, i) == id,
            |&i| hasher.hash_one(stored(bytes, ends, i)),
        );
        let hashbrown::hash_table::Entry::Vacant(vacant) = entry else {
            return Some(false);
        };
        let index = u32::try_from(ends.len()).ok()?;
        let end = u32::try_from(bytes.len() + id.len()).ok()?;
        bytes.extend_from_slice(id);
        ends.push(end);
        vacant.insert(index);
        Some(true)
    }
}

/// The id at `index` in [`TrialIds`]' buffer.
fn stored<'a>(bytes: &'a [u8], ends: &[u32], index: u32) -> &'a [u8] {
    let i = index as usize;
    let start = i.checked_sub(1).map_or(0, |before| ends[before] as usize);
    &bytes[start..ends[i] as usize]
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    /// Every id hashes alike: each lookup must fall back to comparing bytes.
    #[derive(Default)]
    struct Colliding;

    impl BuildHasher for Colliding {
        type Hasher = Colliding;
        fn build_hasher(&self) -> Colliding {
            Colliding
        }
    }

    impl std::hash::Hasher for Colliding {
        fn finish(&self) -> u64 {
            7
        }
        fn write(&mut self, _: &[u8]) {}
    }

    /// The obvious way: a set of owned ids.
    fn oracle(ids: &[Vec<u8>]) -> Vec<bool> {
        let mut seen = std::collections::HashSet::new();
        ids.iter().map(|id| seen.insert(id.clone())).collect()
    }

    fn ids() -> impl Strategy<Value = Vec<Vec<u8>>> {
        // A small alphabet and short ids, so duplicates (and ids that are prefixes of others,
        // and the empty id) are common.
        proptest::collection::vec(proptest::collection::vec(b'a'..=b'c', 0..4), 0..200)
    }

    proptest! {
        #[test]
        fn trial_ids_find_exactly_the_duplicates(ids in ids(), room in 0usize..300) {
            let mut set = TrialIds::<foldhash::fast::RandomState>::default();
            // Sized ahead (as from a file's size) or not, the answers are the same.
            set.reserve(room);
            let found: Vec<bool> = ids.iter().map(|id| set.insert(id).unwrap_or(false)).collect();
            prop_assert_eq!(found, oracle(&ids));
        }

        #[test]
        fn colliding_hashes_are_never_taken_for_duplicates(ids in ids()) {
            let mut set = TrialIds::<Colliding>::default();
            let found: Vec<bool> = ids.iter().map(|id| set.insert(id).unwrap_or(false)).collect();
            prop_assert_eq!(found, oracle(&ids));
        }

        #[test]
        fn decimal_equals_str_parse(
            whole in "[0-9]{0,24}",
            point in any::<bool>(),
            fraction in "[0-9]{0,26}",
        ) {
            let text = if point { format!("{whole}.{fraction}") } else { whole.clone() };
            let parsed = text.parse::<f64>().ok();
            match decimal(text.as_bytes()) {
                Some(fast) => prop_assert_eq!(Some(fast.to_bits()), parsed.map(f64::to_bits)),
                None => {
                    // Only what the fast path does not claim: a form it leaves out, or more
                    // digits than fit exactly.
                    let digits = whole.len() + if point { fraction.len() } else { 0 };
                    let short = whole.trim_start_matches('0').len()
                        + if point { fraction.len() } else { 0 };
                    prop_assert!(
                        whole.is_empty()
                            || (point && fraction.is_empty())
                            || fraction.len() > 22
                            || short > 15
                            || digits > 19,
                        "{text:?} was refused"
                    );
                }
            }
        }

        #[test]
        fn anything_else_goes_to_str_parse(text in "[-+ .0-9eEinfatyINFATY_]{0,12}") {
            let expected = text.trim().parse::<f64>().ok().map(f64::to_bits);
            prop_assert_eq!(parse_score(&text).map(f64::to_bits), expected);
        }
    }
}
