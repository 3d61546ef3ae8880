//! A search's out-of-fold predictions: every configuration's prediction on every training row,
//! made by the model fitted without that row's fold. Read and checked into a
//! [`crate::stats::OofTable`], which BBC-CV and the effective number of configurations read.
//!
//! The file (`search.out_of_fold`) is CSV with a header; columns `configuration`, `row`, `fold`,
//! `label` and `prediction` and/or `score` (docs/manifest.md, "Out-of-fold predictions"). Rows
//! may come in any order. Two layers keep the format apart from the checks:
//!
//! - [`OofBuilder`] takes one [`OofRecord`] at a time from any source and does every check that
//!   is about the data (blank cells, classes, a (configuration, row) pair twice, a row whose fold
//!   or label differs between configurations, configurations that cover different rows, the
//!   folds against the manifest's, the size bound), then lays the records out in the canonical
//!   row order (row ids sorted by their bytes);
//! - [`read_out_of_fold`] is the CSV source: it opens the file through the opener
//!   ([`crate::opener::Kind::OutOfFold`]: size limit, 1 MiB record limit), checks the header with
//!   [`Layout::from_header`] and streams byte records into the builder. A columnar source uses
//!   the same two pieces.
//!
//! Memory while reading: the row ids once (one byte arena and an 8-byte hash per row), per
//! record a row index and the prediction (4 bytes) and/or score (8 bytes), and one bit per cell
//! for duplicates; the table then takes 4 and/or 8 bytes per cell.

use std::collections::HashMap;
use std::hash::{DefaultHasher, Hash, Hasher};
use std::path::Path;

use super::IdArena;
use super::columnar::Cell;
use super::read::{Classes, csv_header, parse_f64};
use crate::diag::{Diagnostic, Place};
use crate::manifest::{Metric, Task};
use crate::stats::{OofTable, OofTruth};

/// Most cells (configurations × rows) a file may hold: 200 million, e.g. 100 configurations ×
/// 2 million rows. The table takes up to 12 bytes a cell (2.4 GB at the bound) and reading about
/// as much again; the 4 GiB file limit allows about this many records of typical length.
pub const MAX_CELLS: u64 = 200_000_000;

/// Most problems reported for one file before reading stops.
const MAX_PROBLEMS: usize = 20;

/// The columns the reader knows; any other column is ignored.
pub const COLUMNS: [&str; 6] = [
    "configuration",
    "row",
    "fold",
    "label",
    "prediction",
    "score",
];

/// What the manifest says the file must fit.
#[derive(Debug, Clone, Copy)]
pub struct OofExpect<'a> {
    pub task: Task,
    pub metric: Metric,
    /// Class names the manifest lists (`predictions.classes`, else `data.class_counts.train`);
    /// a label or prediction outside them is an error.
    pub classes: Option<&'a [String]>,
    /// Rows of each of the manifest's validation folds (`search.cv.folds`), in order.
    pub fold_rows: Option<&'a [u64]>,
    /// Where the manifest names the file, for messages.
    pub named_by: &'a str,
}

/// Which column (0-based) holds each field.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Layout {
    pub configuration: usize,
    pub row: usize,
    pub fold: usize,
    pub label: usize,
    pub prediction: Option<usize>,
    pub score: Option<usize>,
}

impl Layout {
    /// The layout from the header's column names (trimmed), checked against what the task and
    /// metric need. `file` names the source in the diagnostic.
    pub fn from_header<'h>(
        file: &str,
        names: impl IntoIterator<Item = &'h [u8]>,
        expect: &OofExpect<'_>,
    ) -> Result<Layout, Diagnostic> {
        let names: Vec<&[u8]> = names.into_iter().map(<[u8]>::trim_ascii).collect();
        let header = |column: usize, message: String| {
            Diagnostic::at(file, Place::new(1, column as u64 + 1), "(header)", message)
        };
        for (i, name) in names.iter().enumerate() {
            let known = COLUMNS.iter().any(|c| c.as_bytes() == *name);
            if known && names[..i].contains(name) {
                return Err(header(
                    i,
                    format!(
                        "the column {:?} appears twice",
                        String::from_utf8_lossy(name)
                    ),
                )
                .with_help("give every column a distinct name"));
            }
        }
        let column = |name: &str| names.iter().position(|h| *h == name.as_bytes());
        let missing: Vec<&str> = COLUMNS[..4]
            .iter()
            .copied()
            .filter(|c| column(c).is_none())
            .collect();
        let help = "an out-of-fold file has columns configuration, row, fold, label and \
                    prediction and/or score";
        if !missing.is_empty() {
            let s = if missing.len() == 1 { "" } else { "s" };
            return Err(
                header(0, format!("missing column{s} {}", missing.join(", "))).with_help(help),
            );
        }
        let (prediction, score) = (column("prediction"), column("score"));
        let needs = |what: &str, reason: String| Err(header(0, reason).with_help(what.to_owned()));
        match (expect.task, expect.metric) {
            (Task::Regression, _) => {
                if let Some(c) = score {
                    return Err(header(
                        c,
                        "a score column applies to binary classification; a regression file \
                         gives the predicted value in prediction"
                            .into(),
                    ));
                }
                if prediction.is_none() {
                    return needs(
                        "write each configuration's predicted value in a prediction column",
                        "missing column prediction (the predicted value)".into(),
                    );
                }
            }
            (Task::Multiclass, m) if score.is_some() || needs_scores(m) => {
                return Err(header(
                    score.unwrap_or(0),
                    format!(
                        "a score column holds one class's score, which only a binary task has; \
                         the out-of-fold format holds no per-class probabilities, so a multiclass \
                         model's {} cannot be recomputed from it",
                        expect.metric.name()
                    ),
                )
                .with_help("give predicted classes in a prediction column (without score)"));
            }
            (_, m) if needs_scores(m) && score.is_none() => {
                return needs(
                    "write the positive class's probability (or decision value, for roc_auc) in a score column",
                    format!("missing column score, which {} needs", m.name()),
                );
            }
            (_, m) if !needs_scores(m) && prediction.is_none() => {
                return needs(
                    "write each configuration's predicted class in a prediction column",
                    format!("missing column prediction, which {} needs", m.name()),
                );
            }
            _ => {}
        }
        Ok(Layout {
            configuration: column("configuration").unwrap_or(0),
            row: column("row").unwrap_or(0),
            fold: column("fold").unwrap_or(0),
            label: column("label").unwrap_or(0),
            prediction,
            score,
        })
    }
}

/// Whether the metric is computed from a score per row (the positive class's) rather than a
/// predicted class.
fn needs_scores(metric: Metric) -> bool {
    matches!(metric, Metric::RocAuc | Metric::LogLoss)
}

/// One line of an out-of-fold file: one configuration's prediction on one row. `prediction` and
/// `score` are `Some` exactly when the [`Layout`] has those columns.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct OofRecord<'a> {
    pub configuration: Cell<'a>,
    pub row: Cell<'a>,
    pub fold: Cell<'a>,
    pub label: Cell<'a>,
    pub prediction: Option<Cell<'a>>,
    pub score: Option<Cell<'a>>,
}

/// One configuration's records, in file order.
#[derive(Debug, Default)]
struct Column {
    rows: Vec<u32>,
    /// Predicted class per record (classification with a prediction column).
    predicted: Vec<u32>,
    /// Score per record (binary) or predicted value (regression).
    values: Vec<f64>,
    /// One bit per row index: whether this configuration has the row already.
    seen: Vec<u64>,
}

impl Column {
    /// Marks `row`; false when it was marked already.
    fn mark(&mut self, row: u32) -> bool {
        let (word, bit) = (row as usize / 64, row % 64);
        if self.seen.len() <= word {
            self.seen.resize(word + 1, 0);
        }
        let had = self.seen[word] >> bit & 1 == 1;
        self.seen[word] |= 1 << bit;
        !had
    }

    fn has(&self, row: u32) -> bool {
        self.seen
            .get(row as usize / 64)
            .is_some_and(|w| w >> (row % 64) & 1 == 1)
    }
}

/// Row ids interned to indices: an arena of their bytes and a map from a 64-bit hash to the
/// index (ids whose hash collides with another id's go to a second map), so a row costs its
/// bytes and about 16 bytes, not a heap allocation.
#[derive(Debug, Default)]
struct Rows {
    ids: IdArena,
    by_hash: HashMap<u64, u32>,
    collided: HashMap<Box<[u8]>, u32>,
}

impl Rows {
    /// The row's index, and whether it is new; `None` when the ids pass 4 GiB.
    fn intern(&mut self, id: &[u8]) -> Option<(u32, bool)> {
        let mut hasher = DefaultHasher::new();
        id.hash(&mut hasher);
        let hash = hasher.finish();
        let next = self.ids.len() as u32;
        match self.by_hash.get(&hash) {
            Some(&i) if self.ids.get(i as usize) == id => return Some((i, false)),
            Some(_) => {
                if let Some(&i) = self.collided.get(id) {
                    return Some((i, false));
                }
                self.ids.push(id)?;
                self.collided.insert(id.into(), next);
            }
            None => {
                self.ids.push(id)?;
                self.by_hash.insert(hash, next);
            }
        }
        Some((next, true))
    }
}

/// The true target of each row as first read, with its line.
#[derive(Debug, Default)]
struct Truth {
    folds: Vec<u32>,
    /// Class index (classification) per row.
    classes: Vec<u32>,
    /// True value (regression) per row.
    values: Vec<f64>,
    lines: Vec<u64>,
}

/// A label or prediction read from a record.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Target {
    Class(u32),
    Value(f64),
}

/// Takes out-of-fold records one at a time from any source, checks them, and builds the table.
pub struct OofBuilder<'a> {
    file: String,
    expect: OofExpect<'a>,
    layout: Layout,
    problems: Vec<Diagnostic>,
    configurations: Vec<String>,
    by_configuration: HashMap<Vec<u8>, u32>,
    columns: Vec<Column>,
    rows: Rows,
    truth: Truth,
    classes: Classes,
    records: u64,
    /// Reading stopped at the cell bound.
    over_limit: bool,
    /// Digits of a numeric cell read as text (class names), reused from record to record.
    scratch: String,
    /// The configuration and row ids of the record being read, reused from record to record so
    /// a record allocates nothing.
    ids: [Vec<u8>; 2],
    /// A columnar file's column names: problems are then placed as `row N, column NAME` (the
    /// record number passed as the line is the 1-based data row), as for Parquet predictions.
    columnar: Option<Vec<String>>,
}

impl<'a> OofBuilder<'a> {
    /// A builder for records laid out as `layout`; `file` names the source in diagnostics.
    pub fn new(file: &str, expect: OofExpect<'a>, layout: Layout) -> Self {
        OofBuilder {
            file: file.to_owned(),
            expect,
            layout,
            problems: Vec::new(),
            configurations: Vec::new(),
            by_configuration: HashMap::new(),
            columns: Vec::new(),
            rows: Rows::default(),
            truth: Truth::default(),
            classes: Classes::new(expect.classes),
            records: 0,
            over_limit: false,
            scratch: String::new(),
            ids: Default::default(),
            columnar: None,
        }
    }

    /// Places problems by data row and column name, for a columnar file with these columns.
    pub fn columnar(mut self, names: Vec<String>) -> Self {
        self.columnar = Some(names);
        self
    }

    /// Whether reading should stop: enough problems, or the size bound passed.
    pub fn full(&self) -> bool {
        self.over_limit || self.problems.len() >= MAX_PROBLEMS
    }

    /// Records a problem at `line` (and the column, 0-based, when known).
    pub fn problem(
        &mut self,
        line: Option<u64>,
        column: Option<usize>,
        what: &str,
        message: String,
    ) {
        if self.problems.len() >= MAX_PROBLEMS {
            return;
        }
        let diagnostic = match &self.columnar {
            Some(names) => {
                let name = column
                    .and_then(|c| names.get(c))
                    .map_or(what, String::as_str);
                let path = match line {
                    Some(row) => format!("row {row}, column {name}"),
                    None => format!("column {name}"),
                };
                Diagnostic::at(&self.file, Place::default(), path, message)
            }
            None => Diagnostic::at(
                &self.file,
                Place {
                    line,
                    column: column.map(|c| c as u64 + 1),
                },
                what,
                message,
            ),
        };
        self.problems.push(diagnostic);
    }

    /// Copies an id cell (configuration or row) into `buf`; false, with a problem, when it is
    /// blank or holds a control character.
    fn id(
        &mut self,
        buf: &mut Vec<u8>,
        field: &Cell<'_>,
        column: usize,
        line: u64,
        what: &str,
    ) -> bool {
        buf.clear();
        buf.extend_from_slice(field.text(&mut self.scratch));
        let message = if buf.is_empty() {
            format!("expected a {what} id, found an empty cell")
        } else if super::control_at(buf).is_some() {
            super::CONTROL_IN_ID.into()
        } else {
            return true;
        };
        self.problem(Some(line), Some(column), what, message);
        false
    }

    fn fold(&mut self, field: &Cell<'_>, line: u64) -> Option<u32> {
        let column = self.layout.fold;
        let parsed = match field {
            Cell::Int(i) => u32::try_from(*i).ok(),
            Cell::Float(x) if x.fract() == 0.0 && (0.0..=f64::from(u32::MAX)).contains(x) => {
                Some(*x as u32)
            }
            Cell::Float(_) => None,
            Cell::Text(t) => std::str::from_utf8(t.trim_ascii())
                .ok()
                .and_then(|t| t.parse::<u32>().ok()),
            Cell::Null | Cell::Bool(_) => None,
        };
        if parsed.is_none() {
            let mut scratch = String::new();
            let shown = String::from_utf8_lossy(field.text(&mut scratch)).into_owned();
            self.problem(
                Some(line),
                Some(column),
                "fold",
                format!(
                    "expected a fold number (a whole number from 0 to {}), found {shown:?}",
                    u32::MAX
                ),
            );
        }
        parsed
    }

    fn number(&mut self, field: &Cell<'_>, column: usize, line: u64, what: &str) -> Option<f64> {
        let value = match field {
            Cell::Int(i) => Some(*i as f64),
            Cell::Float(x) => Some(*x).filter(|x| x.is_finite()),
            Cell::Text(t) => parse_f64(t),
            Cell::Null | Cell::Bool(_) => None,
        };
        if value.is_none() {
            let mut scratch = String::new();
            let shown = String::from_utf8_lossy(field.text(&mut scratch)).into_owned();
            self.problem(
                Some(line),
                Some(column),
                what,
                format!("expected a finite number, found {shown:?}"),
            );
        }
        value
    }

    fn target(&mut self, field: &Cell<'_>, column: usize, line: u64, what: &str) -> Option<Target> {
        if self.expect.task == Task::Regression {
            return self.number(field, column, line, what).map(Target::Value);
        }
        let mut scratch = std::mem::take(&mut self.scratch);
        let text = field.text(&mut scratch);
        let found = if text.is_empty() {
            Err(format!(
                "expected a class in the {what} column, found an empty cell"
            ))
        } else {
            self.classes.get(text).ok_or_else(|| {
                format!(
                    "{:?} is not one of the classes {}",
                    String::from_utf8_lossy(text),
                    self.classes.names.join(", ")
                )
            })
        };
        self.scratch = scratch;
        match found {
            Ok(class) => Some(Target::Class(class)),
            Err(message) => {
                self.problem(Some(line), Some(column), what, message);
                None
            }
        }
    }

    /// Adds one record read on `line` (1-based; the header is line 1 in a CSV file).
    pub fn push(&mut self, line: u64, record: &OofRecord<'_>) {
        let [mut configuration, mut row] = std::mem::take(&mut self.ids);
        self.push_with(line, record, &mut configuration, &mut row);
        self.ids = [configuration, row];
    }

    /// [`Self::push`] with the buffers the record's two ids are copied into.
    fn push_with(
        &mut self,
        line: u64,
        record: &OofRecord<'_>,
        configuration: &mut Vec<u8>,
        row: &mut Vec<u8>,
    ) {
        let layout = self.layout;
        let configuration_ok = self.id(
            configuration,
            &record.configuration,
            layout.configuration,
            line,
            "configuration",
        );
        let row_ok = self.id(row, &record.row, layout.row, line, "row");
        let fold = self.fold(&record.fold, line);
        let label = self.target(&record.label, layout.label, line, "label");
        let prediction = match (record.prediction, layout.prediction) {
            (Some(p), Some(c)) => self.target(&p, c, line, "prediction").map(Some),
            _ => Some(None),
        };
        let score = match (record.score, layout.score) {
            (Some(s), Some(c)) => self.score(&s, c, line).map(Some),
            _ => Some(None),
        };
        let (true, true, Some(fold), Some(label), Some(prediction), Some(score)) =
            (configuration_ok, row_ok, fold, label, prediction, score)
        else {
            return;
        };
        let (configuration, row) = (&configuration[..], &row[..]);
        let c = match self.by_configuration.get(configuration) {
            Some(&c) => c,
            None => {
                let c = self.configurations.len() as u32;
                self.configurations
                    .push(String::from_utf8_lossy(configuration).into_owned());
                self.by_configuration.insert(configuration.to_vec(), c);
                self.columns.push(Column::default());
                c
            }
        };
        let Some((r, new)) = self.rows.intern(row) else {
            self.problem(
                Some(line),
                Some(layout.row),
                "row",
                "the row ids of this file exceed 4 GiB".into(),
            );
            self.over_limit = true;
            return;
        };
        let cells = self.configurations.len() as u64 * self.rows.ids.len() as u64;
        if cells > MAX_CELLS {
            self.problem(
                Some(line),
                None,
                "(row)",
                format!(
                    "the file holds {} configurations × {} rows so far, more than the limit of {MAX_CELLS} cells (configurations × rows)",
                    self.configurations.len(),
                    self.rows.ids.len()
                ),
            );
            self.over_limit = true;
            return;
        }
        if new {
            self.truth.folds.push(fold);
            self.truth.lines.push(line);
            match label {
                Target::Class(k) => self.truth.classes.push(k),
                Target::Value(v) => self.truth.values.push(v),
            }
        } else if !self.same_truth(r, fold, label, line, row) {
            return;
        }
        let column = &mut self.columns[c as usize];
        if !column.mark(r) {
            let id = String::from_utf8_lossy(row).into_owned();
            let name = self.configurations[c as usize].clone();
            self.problem(
                Some(line),
                Some(layout.row),
                "row",
                format!("configuration {name:?} has row {id:?} twice"),
            );
            return;
        }
        column.rows.push(r);
        match prediction {
            Some(Target::Class(k)) => column.predicted.push(k),
            Some(Target::Value(v)) => column.values.push(v),
            None => {}
        }
        if let Some(s) = score {
            column.values.push(s);
        }
        self.records += 1;
    }

    fn score(&mut self, field: &Cell<'_>, column: usize, line: u64) -> Option<f64> {
        let value = self.number(field, column, line, "score")?;
        if self.expect.metric == Metric::LogLoss && !(0.0..=1.0).contains(&value) {
            self.problem(
                Some(line),
                Some(column),
                "score",
                format!(
                    "log loss needs the positive class's probability, in [0, 1]; found {value}"
                ),
            );
            return None;
        }
        Some(value)
    }

    /// Whether a row seen before has the same fold and label here (a problem when not).
    fn same_truth(&mut self, r: u32, fold: u32, label: Target, line: u64, id: &[u8]) -> bool {
        let i = r as usize;
        let first = self.truth.lines[i];
        let id = String::from_utf8_lossy(id).into_owned();
        if self.truth.folds[i] != fold {
            let was = self.truth.folds[i];
            self.problem(
                Some(line),
                Some(self.layout.fold),
                "fold",
                format!("row {id:?} is in fold {fold} here but in fold {was} on line {first}"),
            );
            return false;
        }
        let (same, here, there) = match label {
            Target::Class(k) => {
                let was = self.truth.classes[i];
                (
                    was == k,
                    self.classes.names[k as usize].clone(),
                    self.classes.names[was as usize].clone(),
                )
            }
            Target::Value(v) => {
                let was = self.truth.values[i];
                (
                    was.to_bits() == v.to_bits() || was == v,
                    v.to_string(),
                    was.to_string(),
                )
            }
        };
        if !same {
            self.problem(
                Some(line),
                Some(self.layout.label),
                "label",
                format!("row {id:?} has label {here:?} here but {there:?} on line {first}"),
            );
        }
        same
    }

    /// The table, or every problem found.
    pub fn finish(mut self) -> Result<OofTable, Vec<Diagnostic>> {
        if self.records == 0 && self.problems.is_empty() {
            self.problems.push(Diagnostic::file(
                &self.file,
                "the out-of-fold file has no rows",
            ));
        }
        if !self.problems.is_empty() {
            return Err(self.problems);
        }
        self.coverage();
        let folds = self.folds();
        if !self.problems.is_empty() {
            return Err(self.problems);
        }
        Ok(self.table(folds))
    }

    /// Every configuration must have every row.
    fn coverage(&mut self) {
        let rows = self.rows.ids.len();
        for c in 0..self.columns.len() {
            if self.columns[c].rows.len() == rows {
                continue;
            }
            let missing = (0..rows as u32)
                .find(|&r| !self.columns[c].has(r))
                .unwrap_or(0);
            let line = self.truth.lines[missing as usize];
            let id = String::from_utf8_lossy(self.rows.ids.get(missing as usize)).into_owned();
            let message = format!(
                "configuration {:?} has {} of the file's {rows} rows: row {id:?} (line {line}, for another configuration) is missing for it",
                self.configurations[c],
                self.columns[c].rows.len(),
            );
            self.problems.push(
                Diagnostic::at(
                    &self.file,
                    Place {
                        line: Some(line),
                        column: Some(self.layout.row as u64 + 1),
                    },
                    "row",
                    message,
                )
                .with_help("every configuration must be validated on the same rows, each once"),
            );
            if self.problems.len() >= MAX_PROBLEMS {
                return;
            }
        }
    }

    /// The folds as 0-based indices (the file's numbers less the smallest), checked to be
    /// consecutive and, when the manifest lists its folds, to hold the same rows.
    fn folds(&mut self) -> Vec<u32> {
        let smallest = self.truth.folds.iter().copied().min().unwrap_or(0);
        let mut counts: Vec<u64> = Vec::new();
        for &f in &self.truth.folds {
            let k = (f - smallest) as usize;
            if k >= counts.len() {
                if k > self.truth.folds.len() {
                    // More fold numbers than rows: they cannot be consecutive.
                    counts.clear();
                    break;
                }
                counts.resize(k + 1, 0);
            }
            counts[k] += 1;
        }
        let gap = counts.iter().position(|&n| n == 0);
        if counts.is_empty() || gap.is_some() {
            let missing = gap.map_or(String::new(), |k| {
                format!(" (no row is in fold {})", k as u64 + u64::from(smallest))
            });
            self.problems.push(
                Diagnostic::file(
                    &self.file,
                    format!("the fold numbers are not consecutive from {smallest}{missing}"),
                )
                .with_help("number the folds 0 … K−1 (or 1 … K), in the order of search.cv.folds"),
            );
            return Vec::new();
        }
        if let Some(expected) = self.expect.fold_rows {
            let found: Vec<String> = counts.iter().map(u64::to_string).collect();
            let wanted: Vec<String> = expected.iter().map(u64::to_string).collect();
            if counts != expected {
                self.problems.push(
                    Diagnostic::file(
                        &self.file,
                        format!(
                            "the file's folds {smallest}… hold [{}] rows, but the search.cv.folds of {} hold [{}]",
                            found.join(", "),
                            self.expect.named_by,
                            wanted.join(", ")
                        ),
                    )
                    .with_help("the out-of-fold predictions must come from the same folds as search.cv.folds, numbered in the same order"),
                );
            }
        }
        self.truth.folds.iter().map(|&f| f - smallest).collect()
    }

    /// Lays the checked records out in the canonical row order.
    fn table(self, folds: Vec<u32>) -> OofTable {
        let rows = self.rows.ids.len();
        let order = self.rows.ids.sorted().order();
        let mut rank = vec![0u32; rows];
        for (i, &r) in order.iter().enumerate() {
            rank[r as usize] = i as u32;
        }
        // Classes that occur, sorted by name; indices remapped to that order.
        let mut used = vec![false; self.classes.names.len()];
        for &k in &self.truth.classes {
            used[k as usize] = true;
        }
        for column in &self.columns {
            for &k in &column.predicted {
                used[k as usize] = true;
            }
        }
        let mut names: Vec<(&String, usize)> = self
            .classes
            .names
            .iter()
            .enumerate()
            .filter(|(k, _)| used[*k])
            .map(|(k, n)| (n, k))
            .collect();
        names.sort();
        let mut remap = vec![0u32; self.classes.names.len()];
        for (new, (_, old)) in names.iter().enumerate() {
            remap[*old] = new as u32;
        }
        let truth = if self.expect.task == Task::Regression {
            OofTruth::Values(
                order
                    .iter()
                    .map(|&r| self.truth.values[r as usize])
                    .collect(),
            )
        } else {
            OofTruth::Classes {
                names: names.iter().map(|(n, _)| (*n).clone()).collect(),
                labels: order
                    .iter()
                    .map(|&r| remap[self.truth.classes[r as usize] as usize])
                    .collect(),
            }
        };
        let configurations = self.columns.len();
        let classify = self.expect.task != Task::Regression;
        let predicted = (classify && self.layout.prediction.is_some()).then(|| {
            let mut out = vec![0u32; configurations * rows];
            for (c, column) in self.columns.iter().enumerate() {
                for (&r, &k) in column.rows.iter().zip(&column.predicted) {
                    out[c * rows + rank[r as usize] as usize] = remap[k as usize];
                }
            }
            out
        });
        let has_values = if classify {
            self.layout.score.is_some()
        } else {
            self.layout.prediction.is_some()
        };
        let scores = has_values.then(|| {
            let mut out = vec![0f64; configurations * rows];
            for (c, column) in self.columns.iter().enumerate() {
                for (&r, &v) in column.rows.iter().zip(&column.values) {
                    out[c * rows + rank[r as usize] as usize] = v;
                }
            }
            out
        });
        OofTable {
            configurations: self.configurations,
            rows,
            folds: order.iter().map(|&r| folds[r as usize]).collect(),
            truth,
            predicted,
            scores,
        }
    }
}

fn cell(record: &csv::ByteRecord, c: usize) -> Cell<'_> {
    Cell::Text(record.get(c).unwrap_or_default())
}

/// Reads and checks an out-of-fold CSV file.
pub fn read_out_of_fold(path: &Path, expect: OofExpect<'_>) -> Result<OofTable, Vec<Diagnostic>> {
    let file = path.display().to_string();
    let refused = |reason: String| {
        vec![Diagnostic::file(
            &file,
            format!(
                "cannot read the out-of-fold file named by {}: {reason}",
                expect.named_by
            ),
        )]
    };
    // Parquet by name or by its magic bytes, as for predictions files.
    let named_parquet = path
        .extension()
        .is_some_and(|e| e.eq_ignore_ascii_case("parquet"));
    let mut buffered = if named_parquet {
        None
    } else {
        let handle = crate::opener::open(path, crate::opener::Kind::OutOfFold).map_err(refused)?;
        let mut buffered = std::io::BufReader::with_capacity(1 << 20, handle);
        let head = std::io::BufRead::fill_buf(&mut buffered).unwrap_or_default();
        (!super::columnar::looks_like_parquet(head)).then_some(buffered)
    };
    let Some(handle) = buffered.take() else {
        return read_out_of_fold_columnar(path, &file, expect, refused);
    };
    let mut csv = csv::ReaderBuilder::new()
        .has_headers(true)
        .from_reader(handle);
    let header = csv_header(&mut csv, &file)?;
    let layout = Layout::from_header(&file, header.iter(), &expect).map_err(|d| vec![d])?;
    let mut builder = OofBuilder::new(&file, expect, layout);
    let mut record = csv::ByteRecord::new();
    while !builder.full() {
        match csv.read_byte_record(&mut record) {
            Ok(false) => break,
            Ok(true) => {
                let line = record.position().map_or(0, csv::Position::line);
                let oof = OofRecord {
                    configuration: cell(&record, layout.configuration),
                    row: cell(&record, layout.row),
                    fold: cell(&record, layout.fold),
                    label: cell(&record, layout.label),
                    prediction: layout.prediction.map(|c| cell(&record, c)),
                    score: layout.score.map(|c| cell(&record, c)),
                };
                builder.push(line, &oof);
            }
            Err(e) => {
                let (line, reason) = crate::opener::csv_failure(&e);
                builder.problem(
                    line,
                    None,
                    "(row)",
                    format!("cannot read the row: {reason}"),
                );
                break;
            }
        }
    }
    builder.finish()
}

/// [`read_out_of_fold`] of a Parquet file: the same checks and messages, placed by data row and
/// column name.
fn read_out_of_fold_columnar(
    path: &Path,
    file: &str,
    expect: OofExpect<'_>,
    refused: impl Fn(String) -> Vec<Diagnostic>,
) -> Result<OofTable, Vec<Diagnostic>> {
    use super::columnar::{self, Type};
    let table = columnar::open(path, crate::opener::Kind::OutOfFoldParquet)
        .map_err(&refused)?
        .map_err(|p| {
            let at = match (p.row, &p.column) {
                (Some(row), Some(column)) => format!("row {row}, column {column}"),
                (None, Some(column)) => format!("column {column}"),
                _ => "(file)".to_owned(),
            };
            vec![Diagnostic::at(file, Place::default(), at, p.message)]
        })?;
    let names: Vec<String> = table.columns().iter().map(|c| c.name.clone()).collect();
    let layout = Layout::from_header(file, names.iter().map(String::as_bytes), &expect)
        .map_err(|d| vec![d])?;
    let classify = expect.task != Task::Regression;
    let mut roles = vec![
        (layout.configuration, &[Type::Text, Type::Int][..]),
        (layout.row, &[Type::Text, Type::Int][..]),
        (layout.fold, &[Type::Int][..]),
    ];
    let classes: &[Type] = &[Type::Text, Type::Int, Type::Bool];
    let numbers: &[Type] = &[Type::Int, Type::Float];
    roles.push((layout.label, if classify { classes } else { numbers }));
    if let Some(c) = layout.prediction {
        roles.push((c, if classify { classes } else { numbers }));
    }
    if let Some(c) = layout.score {
        roles.push((c, numbers));
    }
    let problems: Vec<Diagnostic> = roles
        .iter()
        .filter_map(|&(c, accepted)| {
            super::read::column_type_problem(file, &table.columns()[c], accepted)
        })
        .collect();
    if !problems.is_empty() {
        return Err(problems);
    }
    let mut wanted: Vec<usize> = roles.iter().map(|&(c, _)| c).collect();
    wanted.sort_unstable();
    let mut builder = OofBuilder::new(file, expect, layout).columnar(names);
    let visited = table.visit(&wanted, |row, cells| {
        if builder.full() {
            return false;
        }
        let record = OofRecord {
            configuration: cells[layout.configuration],
            row: cells[layout.row],
            fold: cells[layout.fold],
            label: cells[layout.label],
            prediction: layout.prediction.map(|c| cells[c]),
            score: layout.score.map(|c| cells[c]),
        };
        builder.push(row, &record);
        true
    });
    if let Err(p) = visited {
        builder.problem(
            p.row,
            None,
            p.column.as_deref().unwrap_or("(file)"),
            p.message,
        );
    }
    builder.finish()
}

/// The one configuration whose correct rows in each fold equal `correct` (the manifest's
/// `search.cv.folds[k].correct`), when exactly one does; `None` without predicted classes.
pub fn matching_folds(table: &OofTable, correct: &[u64]) -> Option<usize> {
    let OofTruth::Classes { labels, .. } = &table.truth else {
        return None;
    };
    let predicted = table.predicted.as_ref()?;
    let mut found = None;
    let mut counts = vec![0u64; correct.len()];
    for c in 0..table.configurations.len() {
        counts.iter_mut().for_each(|n| *n = 0);
        let row = &predicted[c * table.rows..(c + 1) * table.rows];
        for ((p, l), &f) in row.iter().zip(labels).zip(&table.folds) {
            if p == l
                && let Some(n) = counts.get_mut(f as usize)
            {
                *n += 1;
            }
        }
        if counts == correct {
            if found.is_some() {
                return None;
            }
            found = Some(c);
        }
    }
    found
}

#[cfg(test)]
mod tests {
    use super::*;

    /// configuration, row, fold, label, prediction.
    const FIVE_COLUMNS: Layout = Layout {
        configuration: 0,
        row: 1,
        fold: 2,
        label: 3,
        prediction: Some(4),
        score: None,
    };

    fn expect(task: Task, metric: Metric) -> OofExpect<'static> {
        OofExpect {
            task,
            metric,
            classes: None,
            fold_rows: None,
            named_by: "the test",
        }
    }

    fn build(expect: OofExpect<'_>, text: &str) -> Result<OofTable, Vec<Diagnostic>> {
        let mut lines = text.lines();
        let header: Vec<&[u8]> = lines
            .next()
            .unwrap_or_default()
            .split(',')
            .map(str::as_bytes)
            .collect();
        let layout = Layout::from_header("t.csv", header, &expect).map_err(|d| vec![d])?;
        let mut builder = OofBuilder::new("t.csv", expect, layout);
        for (i, line) in lines.enumerate() {
            let cells: Vec<&[u8]> = line.split(',').map(str::as_bytes).collect();
            let field = |c: usize| Cell::Text(cells[c]);
            builder.push(
                i as u64 + 2,
                &OofRecord {
                    configuration: field(layout.configuration),
                    row: field(layout.row),
                    fold: field(layout.fold),
                    label: field(layout.label),
                    prediction: layout.prediction.map(field),
                    score: layout.score.map(field),
                },
            );
        }
        builder.finish()
    }

    #[test]
    fn rows_in_any_order_land_in_row_id_order_with_sorted_classes() {
        // Two configurations, rows written in different orders; folds numbered from 1.
        let text = "configuration,row,fold,label,prediction\n\
                    b,r2,2,yes,no\nb,r1,1,no,no\na,r1,1,no,yes\na,r2,2,yes,yes\n";
        let table = build(expect(Task::Binary, Metric::Accuracy), text).unwrap();
        assert_eq!(table.configurations, ["b", "a"]);
        assert_eq!(table.folds, [0, 1]);
        assert_eq!(
            table.truth,
            OofTruth::Classes {
                names: vec!["no".into(), "yes".into()],
                labels: vec![0, 1],
            }
        );
        // b: r1 no, r2 no; a: r1 yes, r2 yes.
        assert_eq!(table.predicted, Some(vec![0, 0, 1, 1]));
        // Correct rows per fold: b [1, 0], a [0, 1]; only a matches [0, 1].
        assert_eq!(matching_folds(&table, &[0, 1]), Some(1));
        assert_eq!(matching_folds(&table, &[1, 1]), None);
    }

    #[test]
    fn regression_values_and_typed_fields() {
        let layout = FIVE_COLUMNS;
        let mut builder = OofBuilder::new("t", expect(Task::Regression, Metric::Rmse), layout);
        for (row, fold, truth, pred) in [(7, 1, 2.5, 2.0), (3, 0, -1.0, 0.5)] {
            builder.push(
                1,
                &OofRecord {
                    configuration: Cell::Int(4),
                    row: Cell::Int(row),
                    fold: Cell::Int(fold),
                    label: Cell::Float(truth),
                    prediction: Some(Cell::Float(pred)),
                    score: None,
                },
            );
        }
        let table = builder.finish().unwrap();
        assert_eq!(table.configurations, ["4"]);
        // Row ids "3" < "7" by bytes.
        assert_eq!(table.truth, OofTruth::Values(vec![-1.0, 2.5]));
        assert_eq!(table.scores, Some(vec![0.5, 2.0]));
        assert_eq!(table.folds, [0, 1]);
        assert_eq!(table.predicted, None);
    }

    #[test]
    fn header_problems_name_the_column() {
        let e = expect(Task::Binary, Metric::RocAuc);
        let no_score = Layout::from_header(
            "t",
            [
                &b"configuration"[..],
                b"row",
                b"fold",
                b"label",
                b"prediction",
            ],
            &e,
        )
        .unwrap_err();
        assert_eq!(
            no_score.message,
            "missing column score, which roc_auc needs"
        );
        let e = expect(Task::Multiclass, Metric::Accuracy);
        let multi = Layout::from_header(
            "t",
            [&b"configuration"[..], b"row", b"fold", b"label", b"score"],
            &e,
        )
        .unwrap_err();
        assert_eq!(multi.column, Some(5));
        let e = expect(Task::Binary, Metric::Accuracy);
        let twice = Layout::from_header(
            "t",
            [
                &b"configuration"[..],
                b"row",
                b"fold",
                b" fold ",
                b"label",
                b"prediction",
            ],
            &e,
        )
        .unwrap_err();
        assert_eq!((twice.line, twice.column), (Some(1), Some(4)));
    }

    #[test]
    fn listed_classes_refuse_others_and_gaps_in_folds_are_refused() {
        let classes = ["keep".to_owned(), "cull".to_owned()];
        let e = OofExpect {
            classes: Some(&classes),
            ..expect(Task::Binary, Metric::Accuracy)
        };
        let problems = build(
            e,
            "configuration,row,fold,label,prediction\na,r1,0,keep,weed\n",
        )
        .unwrap_err();
        assert_eq!((problems[0].line, problems[0].column), (Some(2), Some(5)));
        let gap = "configuration,row,fold,label,prediction\na,r1,0,keep,keep\na,r2,2,cull,keep\n";
        let problems = build(expect(Task::Binary, Metric::Accuracy), gap).unwrap_err();
        assert!(
            problems[0].message.contains("no row is in fold 1"),
            "{:?}",
            problems
        );
    }

    #[test]
    fn control_characters_in_ids_are_refused() {
        // A quoted CSV cell may hold a line break; in a report it would start a new line.
        let mut builder =
            OofBuilder::new("t", expect(Task::Binary, Metric::Accuracy), FIVE_COLUMNS);
        builder.push(
            2,
            &OofRecord {
                configuration: Cell::Text(b"a\nb"),
                row: Cell::Text(b"r1\x1b"),
                fold: Cell::Int(0),
                label: Cell::Text(b"x"),
                prediction: Some(Cell::Text(b"x")),
                score: None,
            },
        );
        let problems = builder.finish().unwrap_err();
        let columns: Vec<_> = problems
            .iter()
            .map(|p| (p.column, p.message.as_str()))
            .collect();
        assert_eq!(
            columns,
            [
                (Some(1), super::super::CONTROL_IN_ID),
                (Some(2), super::super::CONTROL_IN_ID)
            ]
        );
    }

    #[test]
    fn the_cell_bound_stops_a_diagonal_file_early() {
        // Every record a new configuration and a new row: the table would be n × n cells
        // (each configuration missing all rows but one), so the bound must stop it long before
        // n² bits of bookkeeping; 14,143² > 2·10⁸ (the bound).
        let layout = FIVE_COLUMNS;
        let mut builder = OofBuilder::new("t", expect(Task::Binary, Metric::Accuracy), layout);
        let mut pushed = 0u64;
        for i in 0..20_000i64 {
            if builder.full() {
                break;
            }
            builder.push(
                i as u64 + 2,
                &OofRecord {
                    configuration: Cell::Int(i),
                    row: Cell::Int(i),
                    fold: Cell::Int(0),
                    label: Cell::Text(b"a"),
                    prediction: Some(Cell::Text(b"a")),
                    score: None,
                },
            );
            pushed += 1;
        }
        assert_eq!(pushed, 14_143);
        let problems = builder.finish().unwrap_err();
        assert!(
            problems[0].message.contains("200000000 cells"),
            "{problems:?}"
        );
    }
}
