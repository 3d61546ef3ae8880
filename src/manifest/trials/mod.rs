//! Every configuration the search tried ("trials"), read in one streaming pass.
//!
//! Trials come inline in the manifest (`search.trials`) or from a file beside it
//! (`search.trials_file`): CSV with a header holding an `id` column and one column per fold named
//! `fold_1` … `fold_K` (any other column is a hyperparameter and is not read), or JSON Lines with
//! one object per line, `{"id": …, "params": {…}, "fold_scores": [ … ]}`. Each trial feeds the
//! Tibshirani & Tibshirani accumulator and a histogram of mean scores, whose sizes depend on the
//! number of folds only; the one thing kept per trial is its id ([`TrialIds`]: the id's bytes, 4
//! bytes of index and 4 of line number), so that a duplicate is caught exactly and named with its
//! line. CSV is read by [`rows`], whose parsing threads also add up each run of trials for the
//! reader to join in one step ([`sums`]). scikit-learn's `cv_results_` as pandas writes it is read too
//! ([`super::sklearn`]); its JSON form is parsed whole, so it has a smaller size limit.
//!
//! The bias is computed for the configuration the manifest reports, never for whichever trial
//! has the best mean: the manifest may name it (`search.selected_trial`), and its fold scores
//! must then equal the manifest's folds; unnamed, it is the first trial whose fold scores equal
//! them (within [`SCORE_MATCH`]), and a search where none does is an input error.

mod ids;
mod number;
mod rows;
mod sums;

use std::collections::BTreeMap;
use std::io::BufRead;
use std::path::Path;

use schemars::JsonSchema;
use serde::Deserialize;

use super::Metric;
use crate::diag::{Diagnostic, Place};
use crate::opener::Kind;
use crate::stats::{BiasEstimate, Bin, Histogram, SelectionBias};
use ids::TrialIds;

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
    /// The line of each id's trial, by ordinal; 0 when the line is unknown or the trial is in
    /// `placed`.
    lines: Vec<u32>,
    /// Where the trials are whose place is more than a line number below 2^32, or that have a key
    /// path (inline trials), by ordinal.
    placed: Vec<(u32, Place, String)>,
    /// The scores of the trial being pushed, signed for the accumulator (reused, not reallocated).
    signed: Vec<f64>,
    /// Problems in the order of the trials they concern, each with its [`TrialReader::tag`].
    problems: Vec<(u64, Diagnostic)>,
    /// Orders problems by trial: 2k between the trials of ordinals k - 1 and k, 2k + 1 while the
    /// trial of ordinal k is pushed. A repeated id found at the end replaces its trial's problems.
    tag: u64,
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
            lines: Vec::new(),
            placed: Vec::new(),
            signed: Vec::with_capacity(folds),
            problems: Vec::new(),
            tag: 0,
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
            self.note(Diagnostic::at(self.file, place, path, message));
        }
    }

    /// Records a problem, however many there are.
    fn note(&mut self, problem: Diagnostic) {
        self.problems.push((self.tag, problem));
    }

    /// Adds one trial; `path` names it in diagnostics (`models[0].search.trials[3]` inline, empty
    /// in a file, where the line says which trial).
    pub fn push(&mut self, place: Place, path: &str, id: &str, scores: &[f64]) {
        let ordinal = self.ids.len() as u64;
        self.tag = 2 * ordinal + 1;
        self.push_trial(place, path, id, scores);
        self.tag = 2 * self.ids.len() as u64;
    }

    fn push_trial(&mut self, place: Place, path: &str, id: &str, scores: &[f64]) {
        let key = |field: &str| {
            if path.is_empty() {
                field.to_owned()
            } else {
                format!("{path}.{field}")
            }
        };
        // Kept for the check for repeated ids at the end, which needs to say where each is.
        let Some(ordinal) = self.ids.push(id.as_bytes()) else {
            self.problem(
                place,
                key("id"),
                format!("the trial ids pass {} bytes in all", u32::MAX),
            );
            return;
        };
        let line = match (place.line.map(u32::try_from), place.column, path) {
            (Some(Ok(line)), None, "") => line,
            (None, None, "") => 0,
            _ => {
                self.placed.push((ordinal, place, path.to_owned()));
                0
            }
        };
        self.lines.push(line);
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

    /// Sizes the id store for the records a source of [`TrialReader::source_bytes`] holds if
    /// every record takes `record_bytes` (counting each field's comma or line break, so that this
    /// is never more than the most records a file of that size could hold) and every id
    /// `id_bytes`. Only the first call sizes; later ones do nothing.
    fn expect_records_like(&mut self, record_bytes: usize, id_bytes: usize) {
        let Some(bytes) = self.source_bytes.take() else {
            return;
        };
        let records = usize::try_from(bytes / record_bytes.max(1) as u64).unwrap_or(usize::MAX);
        self.ids.reserve(records, id_bytes);
        self.lines.reserve(records);
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
                self.unreadable_row(line, &reason);
                false
            }
        }
    }

    /// Reports that the source could not be read at `line`, and why.
    fn unreadable_row(&mut self, line: Option<u64>, reason: &str) {
        self.problem(
            Place { line, column: None },
            "(row)".into(),
            format!("cannot read the row: {reason}"),
        );
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
        layout.map_err(|d| self.note(d)).ok()
    }

    /// Reads `pandas.DataFrame(search.cv_results_).to_csv()`, header already read.
    fn read_cv_results_csv<R: std::io::Read>(
        &mut self,
        header: &csv::StringRecord,
        mut csv: csv::Reader<rows::EmptyLines<R>>,
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
            let line = rows::record_line(&mut csv, record.position());
            // A line holding only the CR of a CRLF line break is an empty line.
            if record.len() == 1 && record[0].trim().is_empty() {
                continue;
            }
            if record.len() != columns.len() {
                self.ragged(line, record.len(), columns.len());
                continue;
            }
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
            me.note(
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

    /// Adds a problem for every id that repeats an earlier one, in place of the problems of its
    /// trial (a repeated trial is not checked further), keeping the first [`MAX_PROBLEMS`] in the
    /// order of the trials.
    fn note_repeats(&mut self) {
        let repeats = self.ids.repeats();
        if repeats.is_empty() {
            return;
        }
        let tags: Vec<u64> = repeats.iter().map(|&k| 2 * u64::from(k) + 1).collect();
        self.problems
            .retain(|(tag, _)| tags.binary_search(tag).is_err());
        for (&ordinal, &tag) in repeats.iter().zip(&tags) {
            let (place, path) = match self.placed.binary_search_by_key(&ordinal, |p| p.0) {
                Ok(i) => {
                    let (_, place, path) = &self.placed[i];
                    let key = if path.is_empty() {
                        "id".to_owned()
                    } else {
                        format!("{path}.id")
                    };
                    (*place, key)
                }
                Err(_) => {
                    let line = self.lines[ordinal as usize];
                    let place = Place {
                        line: (line > 0).then_some(u64::from(line)),
                        column: None,
                    };
                    (place, "id".to_owned())
                }
            };
            let id = String::from_utf8_lossy(self.ids.get(ordinal));
            let problem = Diagnostic::at(
                self.file,
                place,
                path,
                format!("trial id {id:?} appears twice"),
            );
            self.problems.push((tag, problem));
        }
        // Stable: problems of one tag stay in the order they were found.
        self.problems.sort_by_key(|(tag, _)| *tag);
        self.problems.truncate(MAX_PROBLEMS);
    }

    /// The summary, or every problem found.
    pub fn finish(mut self) -> Result<TrialSummary, Vec<Diagnostic>> {
        self.note_repeats();
        if let (Some(s), false) = (&self.scorer, self.cv_results) {
            let problem = Diagnostic::at(
                &s.file,
                s.place,
                s.path.clone(),
                "scorer names a column set of scikit-learn's cv_results_, but the trials are not a scikit-learn results file",
            );
            self.note(problem);
        }
        if !self.problems.is_empty() {
            return Err(self.problems.into_iter().map(|(_, p)| p).collect());
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
