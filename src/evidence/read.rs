//! Streaming reader for predictions files, with line and column in every error.

use std::collections::HashMap;
use std::path::Path;

use super::{Columns, IdArena, PredictionSet};
use crate::diag::{Diagnostic, Place};
use crate::manifest::Task;

/// Most problems reported for one file before reading stops.
const MAX_PROBLEMS: usize = 20;

/// What the manifest says about the predictions file.
#[derive(Debug, Clone, Copy)]
pub struct Expect<'a> {
    pub task: Task,
    /// The class names, when the manifest lists them (labels outside it are errors).
    pub classes: Option<&'a [String]>,
    /// The positive class for binary F1 and ROC AUC.
    pub positive: Option<&'a str>,
    /// Where the manifest names the file, for messages.
    pub named_by: &'a str,
    /// Whether to compute the fingerprint (a baseline's is never compared).
    pub fingerprint: bool,
}

struct Problems {
    file: String,
    list: Vec<Diagnostic>,
}

impl Problems {
    fn add(&mut self, line: u64, column: Option<u64>, what: &str, message: String) {
        if self.list.len() < MAX_PROBLEMS {
            self.list.push(Diagnostic::at(
                &self.file,
                Place {
                    line: Some(line),
                    column,
                },
                what.to_owned(),
                message,
            ));
        }
    }

    fn full(&self) -> bool {
        self.list.len() >= MAX_PROBLEMS
    }
}

/// Class names mapped to indices, fixed by the manifest or discovered in the file.
pub(super) struct Classes {
    pub(super) names: Vec<String>,
    index: HashMap<Vec<u8>, u32>,
    fixed: bool,
}

impl Classes {
    pub(super) fn new(given: Option<&[String]>) -> Classes {
        let names: Vec<String> = given.map(<[String]>::to_vec).unwrap_or_default();
        let index = names
            .iter()
            .enumerate()
            .map(|(i, n)| (n.as_bytes().to_vec(), i as u32))
            .collect();
        Classes {
            names,
            index,
            fixed: given.is_some(),
        }
    }

    pub(super) fn get(&mut self, label: &[u8]) -> Option<u32> {
        // A few classes are found faster by scanning than by hashing every cell.
        if self.names.len() <= 16 {
            if let Some(i) = self.names.iter().position(|n| n.as_bytes() == label) {
                return Some(i as u32);
            }
        } else if let Some(&i) = self.index.get(label) {
            return Some(i);
        }
        if self.fixed {
            return None;
        }
        let i = self.names.len() as u32;
        self.names.push(String::from_utf8_lossy(label).into_owned());
        self.index.insert(label.to_vec(), i);
        Some(i)
    }
}

pub(super) fn parse_f64(cell: &[u8]) -> Option<f64> {
    std::str::from_utf8(cell)
        .ok()?
        .trim()
        .parse::<f64>()
        .ok()
        .filter(|v| v.is_finite())
}

/// Reads and checks a predictions file.
pub fn read_predictions(path: &Path, expect: Expect) -> Result<PredictionSet, Vec<Diagnostic>> {
    let file = path.display().to_string();
    let handle = crate::opener::open(path, crate::opener::Kind::Predictions).map_err(|reason| {
        vec![Diagnostic::file(
            &file,
            format!(
                "cannot read the predictions file named by {}: {reason}",
                expect.named_by,
            ),
        )]
    })?;
    let mut csv = csv::ReaderBuilder::new()
        .has_headers(true)
        .from_reader(std::io::BufReader::with_capacity(1 << 20, handle));
    let mut problems = Problems {
        file: file.clone(),
        list: Vec::new(),
    };
    let header = match csv.byte_headers() {
        Ok(h) => h.clone(),
        Err(e) => {
            let (line, reason) = crate::opener::csv_failure(&e);
            return Err(vec![Diagnostic::at(
                &file,
                Place { line, column: None },
                "(header)",
                format!("cannot read the header: {reason}"),
            )]);
        }
    };
    let column = |name: &str| {
        header
            .iter()
            .position(|h| h.trim_ascii() == name.as_bytes())
    };
    // A column the reader uses, written twice: which one holds the data is a guess.
    for (i, h) in header.iter().enumerate() {
        let name = h.trim_ascii();
        let used = matches!(
            name,
            b"id" | b"label" | b"prediction" | b"score" | b"target"
        ) || name.starts_with(b"prob_");
        if used && header.iter().take(i).any(|e| e.trim_ascii() == name) {
            return Err(vec![
                Diagnostic::at(
                    &file,
                    Place::new(1, i as u64 + 1),
                    "(header)",
                    format!(
                        "the column {:?} appears twice",
                        String::from_utf8_lossy(name)
                    ),
                )
                .with_help("give every column a distinct name"),
            ]);
        }
    }
    let regression = expect.task == Task::Regression;
    let required: &[&str] = if regression {
        &["id", "target", "prediction"]
    } else {
        &["id", "label"]
    };
    let missing: Vec<&str> = required
        .iter()
        .copied()
        .filter(|c| column(c).is_none())
        .collect();
    if !missing.is_empty() {
        return Err(vec![
            Diagnostic::at(
                &file,
                Place::new(1, 1),
                "(header)",
                format!("missing column{} {}", if missing.len() == 1 { "" } else { "s" }, missing.join(", ")),
            )
            .with_help(if regression {
                "a regression predictions file has columns id, target, prediction"
            } else {
                "a classification predictions file has columns id, label and prediction, score or prob_<class>"
            }),
        ]);
    }
    let id_col = column("id").unwrap_or(0);
    let mut ids = IdArena::default();
    let columns = if regression {
        let (tc, pc) = (
            column("target").unwrap_or(0),
            column("prediction").unwrap_or(0),
        );
        let mut target = Vec::new();
        let mut prediction = Vec::new();
        read_rows(&mut csv, &mut problems, |record, line, p| {
            let (Some(t), Some(y)) = (
                number(record, tc, line, "target", p),
                number(record, pc, line, "prediction", p),
            ) else {
                return false;
            };
            target.push(t);
            prediction.push(y);
            push_id(&mut ids, record, id_col, line, p)
        });
        Columns::Regression { target, prediction }
    } else {
        let label_col = column("label").unwrap_or(0);
        let pred_col = column("prediction");
        let score_col = column("score");
        let mut classes = Classes::new(expect.classes);
        let prob_cols: Vec<(Vec<u8>, usize)> = header
            .iter()
            .enumerate()
            .filter_map(|(i, h)| h.strip_prefix(b"prob_").map(|c| (c.to_vec(), i)))
            .collect();
        let mut actual = Vec::new();
        let mut predicted: Vec<u32> = Vec::new();
        let mut score: Vec<f64> = Vec::new();
        let mut prob_class: Vec<f64> = Vec::new();
        read_rows(&mut csv, &mut problems, |record, line, p| {
            let Some(a) = class(&mut classes, record, label_col, line, "label", p) else {
                return false;
            };
            if let Some(c) = pred_col {
                let Some(y) = class(&mut classes, record, c, line, "prediction", p) else {
                    return false;
                };
                predicted.push(y);
            }
            if let Some(c) = score_col {
                let Some(s) = number(record, c, line, "score", p) else {
                    return false;
                };
                score.push(s);
            }
            if !prob_cols.is_empty() {
                let label = record.get(label_col).unwrap_or_default().trim_ascii();
                match prob_cols.iter().find(|(c, _)| c == label) {
                    Some((_, c)) => {
                        let Some(v) = number(record, *c, line, "prob", p) else {
                            return false;
                        };
                        if !(0.0..=1.0).contains(&v) {
                            p.add(
                                line,
                                Some(*c as u64 + 1),
                                "prob",
                                format!("a probability must lie in [0, 1], found {v}"),
                            );
                            return false;
                        }
                        prob_class.push(v);
                    }
                    None => {
                        p.add(
                            line,
                            Some(label_col as u64 + 1),
                            "label",
                            format!(
                                "no prob_{} column for this row's label",
                                String::from_utf8_lossy(label)
                            ),
                        );
                        return false;
                    }
                }
            }
            actual.push(a);
            push_id(&mut ids, record, id_col, line, p)
        });
        let positive = positive_class(&classes.names, expect.positive);
        let prob_true = if !prob_cols.is_empty() {
            Some(prob_class)
        } else if let (Some(pos), true, true) =
            (positive, !score.is_empty(), classes.names.len() <= 2)
        {
            // A binary score in [0, 1] is the probability of the positive class.
            score.iter().all(|s| (0.0..=1.0).contains(s)).then(|| {
                actual
                    .iter()
                    .zip(&score)
                    .map(|(&a, &s)| if a == pos { s } else { 1.0 - s })
                    .collect()
            })
        } else {
            None
        };
        Columns::Classification {
            classes: classes.names,
            actual,
            predicted: pred_col.map(|_| predicted),
            score: score_col.map(|_| score),
            prob_true,
        }
    };
    if ids.is_empty() && problems.list.is_empty() {
        problems
            .list
            .push(Diagnostic::file(&file, "the predictions file has no rows"));
    }
    if !problems.list.is_empty() {
        return Err(problems.list);
    }
    let sorted = ids.sorted();
    let order = sorted.order();
    if let Some((first, second)) = sorted.first_duplicate() {
        return Err(vec![Diagnostic::at(
            &file,
            Place {
                line: Some(second as u64 + 2),
                column: Some(id_col as u64 + 1),
            },
            "id",
            format!(
                "id {:?} appears twice (also on line {})",
                String::from_utf8_lossy(ids.get(second)),
                first + 2
            ),
        )]);
    }
    let positive = match &columns {
        Columns::Classification { classes, .. } => positive_class(classes, expect.positive),
        Columns::Regression { .. } => None,
    };
    Ok(PredictionSet {
        file,
        fingerprint: if expect.fingerprint {
            ids.fingerprint(&order)
        } else {
            String::new()
        },
        ids,
        columns,
        positive,
        order,
    })
}

/// The positive class: the one the manifest names, or for two classes named 0/1 or
/// false/true, the second (common practice, no source).
fn positive_class(classes: &[String], named: Option<&str>) -> Option<u32> {
    if let Some(name) = named {
        return classes.iter().position(|c| c == name).map(|i| i as u32);
    }
    let conventional = ["1", "true", "True", "yes", "positive"];
    (classes.len() == 2)
        .then(|| {
            classes
                .iter()
                .position(|c| conventional.contains(&c.as_str()))
        })
        .flatten()
        .map(|i| i as u32)
}

fn read_rows<R: std::io::Read>(
    csv: &mut csv::Reader<R>,
    problems: &mut Problems,
    mut row: impl FnMut(&csv::ByteRecord, u64, &mut Problems) -> bool,
) {
    let mut record = csv::ByteRecord::new();
    loop {
        if problems.full() {
            return;
        }
        match csv.read_byte_record(&mut record) {
            Ok(false) => return,
            Ok(true) => {
                let line = record.position().map_or(0, |p| p.line());
                row(&record, line, problems);
            }
            Err(e) => {
                let (line, reason) = crate::opener::csv_failure(&e);
                problems.list.push(Diagnostic::at(
                    &problems.file,
                    Place { line, column: None },
                    "(row)",
                    format!("cannot read the row: {reason}"),
                ));
                return;
            }
        }
    }
}

fn push_id(
    ids: &mut IdArena,
    record: &csv::ByteRecord,
    col: usize,
    line: u64,
    p: &mut Problems,
) -> bool {
    let id = record.get(col).unwrap_or_default().trim_ascii();
    if super::control_at(id).is_some() {
        p.add(
            line,
            Some(col as u64 + 1),
            "id",
            super::CONTROL_IN_ID.into(),
        );
        return false;
    }
    if id.is_empty() {
        p.add(
            line,
            Some(col as u64 + 1),
            "id",
            "expected a row id, found an empty cell".into(),
        );
        return false;
    }
    if ids.push(id).is_none() {
        p.add(
            line,
            Some(col as u64 + 1),
            "id",
            "the ids of this file exceed 4 GiB".into(),
        );
        return false;
    }
    true
}

fn number(
    record: &csv::ByteRecord,
    col: usize,
    line: u64,
    what: &str,
    p: &mut Problems,
) -> Option<f64> {
    let cell = record.get(col).unwrap_or_default();
    let value = parse_f64(cell);
    if value.is_none() {
        p.add(
            line,
            Some(col as u64 + 1),
            what,
            format!(
                "expected a finite number, found {:?}",
                String::from_utf8_lossy(cell)
            ),
        );
    }
    value
}

fn class(
    classes: &mut Classes,
    record: &csv::ByteRecord,
    col: usize,
    line: u64,
    what: &str,
    p: &mut Problems,
) -> Option<u32> {
    let cell = record.get(col).unwrap_or_default().trim_ascii();
    if cell.is_empty() {
        // A blank cell is no class: read as the class "", blank labels and predictions agreed.
        p.add(
            line,
            Some(col as u64 + 1),
            what,
            format!("expected a class in the {what} column, found an empty cell"),
        );
        return None;
    }
    let index = classes.get(cell);
    if index.is_none() {
        p.add(
            line,
            Some(col as u64 + 1),
            what,
            format!(
                "{:?} is not one of the classes {}",
                String::from_utf8_lossy(cell),
                classes.names.join(", ")
            ),
        );
    }
    index
}
