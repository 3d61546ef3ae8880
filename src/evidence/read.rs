//! Streaming reader for predictions files, with line and column in every error.
//!
//! A file is CSV, or Parquet when its name ends in `.parquet` or it starts with the Parquet magic
//! bytes. Both feed the same checks row by row ([`Row`]): a CSV problem names its line and
//! column number, a Parquet problem its 1-based data row and column name.

use std::collections::HashMap;
use std::path::Path;

use super::columnar::{self, Cell};
use super::plain::{Fields, PlainCsv};
use super::{Class, Columns, IdArena, MAX_CLASSES, PredictionSet};
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
    /// The column names of a columnar file, which its problems name (CSV problems name the
    /// column by number).
    names: Option<Vec<String>>,
}

/// Where a row is: a CSV line, or a columnar file's 1-based data row.
#[derive(Debug, Clone, Copy)]
enum At {
    Line(u64),
    Row(u64),
}

/// One row as the checks see it.
enum Row<'a> {
    Csv(&'a Fields<'a>),
    Cells(&'a [Cell<'a>]),
}

impl Row<'_> {
    #[inline]
    fn cell(&self, col: usize) -> Cell<'_> {
        match self {
            Row::Csv(fields) => Cell::Text(fields.get(col).unwrap_or_default()),
            Row::Cells(cells) => cells.get(col).copied().unwrap_or(Cell::Null),
        }
    }

    /// The cell as text, for ids and classes ([`Cell::text`]; `digits` holds an integer's
    /// digits). A float, which the column check refuses here, is empty.
    #[inline]
    fn text<'b>(&'b self, col: usize, digits: &'b mut String) -> &'b [u8] {
        match self.cell(col) {
            Cell::Float(_) => b"",
            other => other.text(digits),
        }
    }
}

impl Problems {
    fn add(&mut self, at: At, col: usize, what: &str, message: String) {
        if self.list.len() >= MAX_PROBLEMS {
            return;
        }
        let diagnostic = match at {
            At::Line(line) => Diagnostic::at(
                &self.file,
                Place::new(line, col as u64 + 1),
                what.to_owned(),
                message,
            ),
            At::Row(row) => Diagnostic::at(
                &self.file,
                Place::default(),
                row_path(row, self.column_name(col)),
                message,
            ),
        };
        self.list.push(diagnostic);
    }

    fn column_name(&self, col: usize) -> &str {
        self.names
            .as_ref()
            .and_then(|n| n.get(col))
            .map_or("?", String::as_str)
    }

    fn full(&self) -> bool {
        self.list.len() >= MAX_PROBLEMS
    }
}

/// Class names mapped to indices, fixed by the manifest or discovered in the file.
pub(super) struct Classes {
    pub(super) names: Vec<String>,
    index: HashMap<Vec<u8>, u32>,
    /// Each name as a [`Word`], in the order of `names`.
    words: Vec<Word>,
    fixed: bool,
}

/// A name of at most 8 bytes as one number (its bytes and its length), so a few short classes
/// are told apart by comparing numbers rather than calling `memcmp` on every cell; a longer
/// name has none.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
struct Word(Option<(u64, usize)>);

impl Word {
    #[inline]
    fn of(name: &[u8]) -> Word {
        Word((name.len() <= 8).then(|| {
            let bytes = name.iter().fold(0u64, |word, &b| word << 8 | u64::from(b));
            (bytes, name.len())
        }))
    }
}

impl Classes {
    pub(super) fn new(given: Option<&[String]>) -> Classes {
        let mut classes = Classes {
            names: Vec::new(),
            index: HashMap::new(),
            words: Vec::new(),
            fixed: given.is_some(),
        };
        for name in given.unwrap_or_default() {
            classes.add(name.as_bytes(), name.clone());
        }
        classes
    }

    fn add(&mut self, bytes: &[u8], name: String) -> u32 {
        let i = self.names.len() as u32;
        self.names.push(name);
        self.words.push(Word::of(bytes));
        self.index.entry(bytes.to_vec()).or_insert(i);
        i
    }

    #[inline]
    pub(super) fn get(&mut self, label: &[u8]) -> Option<u32> {
        // A few classes are found faster by scanning than by hashing every cell.
        if self.names.len() <= 16 {
            let word = Word::of(label);
            let found = if word.0.is_some() {
                self.words.iter().position(|&w| w == word)
            } else {
                self.names.iter().position(|n| n.as_bytes() == label)
            };
            if let Some(i) = found {
                return Some(i as u32);
            }
        } else if let Some(&i) = self.index.get(label) {
            return Some(i);
        }
        if self.fixed {
            return None;
        }
        Some(self.add(label, String::from_utf8_lossy(label).into_owned()))
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
    let refused = |reason: String| {
        vec![Diagnostic::file(
            &file,
            format!(
                "cannot read the predictions file named by {}: {reason}",
                expect.named_by,
            ),
        )]
    };
    let named_parquet = path
        .extension()
        .is_some_and(|e| e.eq_ignore_ascii_case("parquet"));
    // About how many rows a CSV file holds, to reserve its columns once ([`super::with_room`]).
    let mut rows_hint = 0;
    let mut source = if named_parquet {
        None
    } else {
        let handle =
            crate::opener::open(path, crate::opener::Kind::Predictions).map_err(refused)?;
        let mut buffered = std::io::BufReader::with_capacity(1 << 20, handle);
        let head = std::io::BufRead::fill_buf(&mut buffered).unwrap_or_default();
        let size = std::fs::metadata(path).map_or(0, |m| m.len());
        rows_hint = super::estimated_rows(size, head);
        (!columnar::looks_like_parquet(head)).then(|| match PlainCsv::open(buffered) {
            Ok(plain) => Text::Plain(plain),
            Err(buffered) => Text::Csv(
                csv::ReaderBuilder::new()
                    .has_headers(true)
                    .from_reader(buffered),
            ),
        })
    };
    let table = match source {
        Some(_) => None,
        None => Some(
            columnar::open(path, crate::opener::Kind::PredictionsParquet)
                .map_err(refused)?
                .map_err(|p| vec![columnar_problem(&file, p)])?,
        ),
    };
    let mut problems = Problems {
        file: file.clone(),
        list: Vec::new(),
        names: table
            .as_ref()
            .map(|t| t.columns().iter().map(|c| c.name.clone()).collect()),
    };
    let header = match (&mut source, &table) {
        (_, Some(table)) => csv::ByteRecord::from(
            table
                .columns()
                .iter()
                .map(|c| c.name.as_str())
                .collect::<Vec<_>>(),
        ),
        (Some(Text::Plain(plain)), None) => plain.header().clone(),
        (Some(Text::Csv(csv)), None) => csv_header(csv, &file)?,
        (None, None) => return Err(refused("no reader for it".to_owned())),
    };
    let columnar_file = table.is_some();
    let header_place = |i: usize| {
        if columnar_file {
            Place::default()
        } else {
            Place::new(1, i as u64 + 1)
        }
    };
    let header_path = if columnar_file {
        "(columns)"
    } else {
        "(header)"
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
                    header_place(i),
                    header_path,
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
                header_place(0),
                header_path,
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
    let rows = match (source, table) {
        (Some(Text::Plain(plain)), None) => Rows::Plain(plain),
        (Some(Text::Csv(csv)), None) => Rows::Csv(csv),
        (_, Some(table)) => {
            let wanted = check_types(&file, &table, expect.task)?;
            Rows::Columnar(table, wanted)
        }
        (None, None) => return Err(refused("no reader for it".to_owned())),
    };
    let mut ids = IdArena::default();
    ids.reserve(rows_hint, 0);
    let reserved = |present: bool| if present { rows_hint } else { 0 };
    let columns = if regression {
        let (tc, pc) = (
            column("target").unwrap_or(0),
            column("prediction").unwrap_or(0),
        );
        let mut target = super::with_room(reserved(true));
        let mut prediction = super::with_room(reserved(true));
        read_rows(rows, &mut problems, |record, line, p| {
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
        let mut actual = super::with_room(reserved(true));
        let mut predicted: Vec<Class> = super::with_room(reserved(pred_col.is_some()));
        let mut score: Vec<f64> = super::with_room(reserved(score_col.is_some()));
        let mut prob_class: Vec<f64> = super::with_room(reserved(!prob_cols.is_empty()));
        read_rows(rows, &mut problems, |record, line, p| {
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
                let mut digits = String::new();
                let label = record.text(label_col, &mut digits);
                match prob_cols.iter().find(|(c, _)| c == label) {
                    Some((_, c)) => {
                        let Some(v) = number(record, *c, line, "prob", p) else {
                            return false;
                        };
                        if !(0.0..=1.0).contains(&v) {
                            p.add(
                                line,
                                *c,
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
                            label_col,
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
                    .map(|(&a, &s)| if u32::from(a) == pos { s } else { 1.0 - s })
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
    let order = ids.sorted();
    if let Some((first, second)) = order.first_duplicate(&ids) {
        let id = String::from_utf8_lossy(ids.get(second));
        return Err(vec![if columnar_file {
            Diagnostic::at(
                &file,
                Place::default(),
                row_path(second as u64 + 1, problems.column_name(id_col)),
                format!("id {id:?} appears twice (also on row {})", first + 1),
            )
        } else {
            Diagnostic::at(
                &file,
                Place {
                    line: Some(second as u64 + 2),
                    column: Some(id_col as u64 + 1),
                },
                "id",
                format!("id {id:?} appears twice (also on line {})", first + 2),
            )
        }]);
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
pub(crate) fn positive_class(classes: &[String], named: Option<&str>) -> Option<u32> {
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

/// A CSV source after its header: read as plain lines, or by the csv crate from the start (the
/// header is not a plain line).
enum Text<R> {
    Plain(PlainCsv<R>),
    Csv(csv::Reader<R>),
}

/// Where the rows come from.
enum Rows<R> {
    Plain(PlainCsv<R>),
    Csv(csv::Reader<R>),
    /// A columnar file and the columns the checks read.
    Columnar(columnar::Table, Vec<usize>),
}

/// `row 5, column score`: where a problem in a columnar file is.
fn row_path(row: u64, column: &str) -> String {
    format!("row {row}, column {column}")
}

/// A problem of a columnar file as a diagnostic: its row and column in the path.
fn columnar_problem(file: &str, problem: columnar::Problem) -> Diagnostic {
    match (problem.row, problem.column) {
        (Some(row), Some(column)) => Diagnostic::at(
            file,
            Place::default(),
            row_path(row, &column),
            problem.message,
        ),
        (None, Some(column)) => Diagnostic::at(file, Place::default(), column, problem.message),
        _ => Diagnostic::file(
            file,
            format!("cannot read the Parquet file: {}", problem.message),
        ),
    }
}

/// The columns of a columnar file the checks read, each of a type its role takes: ids are
/// strings or integers, classes strings, integers or booleans, numbers integers or floats.
fn check_types(
    file: &str,
    table: &columnar::Table,
    task: Task,
) -> Result<Vec<usize>, Vec<Diagnostic>> {
    use columnar::Type;
    let mut wanted = Vec::new();
    let mut problems = Vec::new();
    for (i, column) in table.columns().iter().enumerate() {
        let name = column.name.trim_ascii();
        let accepted: &[Type] = match name {
            "id" => &[Type::Text, Type::Int],
            "label" | "prediction" if task != Task::Regression => {
                &[Type::Text, Type::Int, Type::Bool]
            }
            "target" | "prediction" | "score" => &[Type::Int, Type::Float],
            _ if name.starts_with("prob_") => &[Type::Int, Type::Float],
            _ => continue,
        };
        match column_type_problem(file, column, accepted) {
            None => wanted.push(i),
            Some(problem) => problems.push(problem),
        }
    }
    if problems.is_empty() {
        Ok(wanted)
    } else {
        Err(problems)
    }
}

/// The problem with a columnar file's column whose type is not one of `accepted`, if it has one.
pub(crate) fn column_type_problem(
    file: &str,
    column: &columnar::Column,
    accepted: &[columnar::Type],
) -> Option<Diagnostic> {
    let found = match &column.kind {
        Ok(kind) if accepted.contains(kind) => return None,
        Ok(kind) => kind.noun().to_owned(),
        Err(other) => other.clone(),
    };
    let expected: Vec<&str> = accepted.iter().map(|t| t.noun()).collect();
    Some(
        Diagnostic::at(
            file,
            Place::default(),
            format!("column {}", column.name),
            format!(
                "the column holds {found}; expected {}",
                expected.join(" or ")
            ),
        )
        .with_help("write the column with one of the accepted types (see docs/manifest.md)"),
    )
}

fn read_rows<R: std::io::BufRead>(
    rows: Rows<R>,
    problems: &mut Problems,
    mut row: impl FnMut(&Row<'_>, At, &mut Problems) -> bool,
) {
    let cannot_read = |problems: &mut Problems, line, reason| {
        problems.list.push(Diagnostic::at(
            &problems.file,
            Place { line, column: None },
            "(row)",
            format!("cannot read the row: {reason}"),
        ));
    };
    let mut csv = match rows {
        Rows::Csv(csv) => csv,
        Rows::Plain(plain) => {
            let read = plain.visit(|fields, line| {
                row(&Row::Csv(fields), At::Line(line), problems);
                !problems.full()
            });
            if let Err((line, reason)) = read {
                cannot_read(problems, line, reason);
            }
            return;
        }
        Rows::Columnar(table, wanted) => {
            let result = table.visit(&wanted, |number, cells| {
                if problems.full() {
                    return false;
                }
                row(&Row::Cells(cells), At::Row(number), problems);
                true
            });
            if let Err(problem) = result
                && problems.list.len() < MAX_PROBLEMS
            {
                problems
                    .list
                    .push(columnar_problem(&problems.file, problem));
            }
            return;
        }
    };
    let mut record = csv::ByteRecord::new();
    loop {
        if problems.full() {
            return;
        }
        match csv.read_byte_record(&mut record) {
            Ok(false) => return,
            Ok(true) => {
                let line = record.position().map_or(0, |p| p.line());
                row(&Row::Csv(&Fields::Csv(&record)), At::Line(line), problems);
            }
            Err(e) => {
                let (line, reason) = crate::opener::csv_failure(&e);
                cannot_read(problems, line, reason);
                return;
            }
        }
    }
}

fn push_id(ids: &mut IdArena, record: &Row<'_>, col: usize, line: At, p: &mut Problems) -> bool {
    let mut digits = String::new();
    let id = record.text(col, &mut digits);
    if super::control_at(id).is_some() {
        p.add(line, col, "id", super::CONTROL_IN_ID.into());
        return false;
    }
    if id.is_empty() {
        p.add(
            line,
            col,
            "id",
            format!("expected a row id, found {}", empty(record, col)),
        );
        return false;
    }
    if ids.push(id).is_none() {
        p.add(line, col, "id", "the ids of this file exceed 4 GiB".into());
        return false;
    }
    true
}

/// What an empty cell is called: a null in a columnar file, a blank cell in CSV.
fn empty(record: &Row<'_>, col: usize) -> &'static str {
    match record.cell(col) {
        Cell::Null => "a null cell",
        _ => "an empty cell",
    }
}

fn number(record: &Row<'_>, col: usize, line: At, what: &str, p: &mut Problems) -> Option<f64> {
    let cell = record.cell(col);
    let value = match cell {
        Cell::Text(text) => parse_f64(text),
        // Integers past 2^53 round, as they do when CSV text is parsed.
        Cell::Int(i) => Some(i as f64),
        Cell::Float(v) => Some(v).filter(|v| v.is_finite()),
        Cell::Bool(_) | Cell::Null => None,
    };
    if value.is_none() {
        let found = match cell {
            Cell::Text(text) => format!("{:?}", String::from_utf8_lossy(text)),
            Cell::Float(v) => v.to_string(),
            Cell::Bool(b) => b.to_string(),
            Cell::Int(i) => i.to_string(),
            Cell::Null => "a null cell".to_owned(),
        };
        p.add(
            line,
            col,
            what,
            format!("expected a finite number, found {found}"),
        );
    }
    value
}

fn class(
    classes: &mut Classes,
    record: &Row<'_>,
    col: usize,
    line: At,
    what: &str,
    p: &mut Problems,
) -> Option<Class> {
    let mut digits = String::new();
    let cell = record.text(col, &mut digits);
    if cell.is_empty() {
        // A blank cell is no class: read as the class "", blank labels and predictions agreed.
        p.add(
            line,
            col,
            what,
            format!(
                "expected a class in the {what} column, found {}",
                empty(record, col)
            ),
        );
        return None;
    }
    let Some(index) = classes.get(cell) else {
        p.add(
            line,
            col,
            what,
            format!(
                "{:?} is not one of the classes {}",
                String::from_utf8_lossy(cell),
                classes.names.join(", ")
            ),
        );
        return None;
    };
    let narrow = Class::try_from(index).ok();
    if narrow.is_none() {
        p.add(
            line,
            col,
            what,
            format!(
                "{:?} would be class {} of the file, and a classification predictions file holds \
                 at most {MAX_CLASSES} classes",
                String::from_utf8_lossy(cell),
                u64::from(index) + 1,
            ),
        );
    }
    narrow
}

/// The header record of a CSV file, or the one diagnostic (file and line) that says why it
/// cannot be read. Every CSV reader of per-row evidence starts here.
pub(super) fn csv_header<R: std::io::Read>(
    csv: &mut csv::Reader<R>,
    file: &str,
) -> Result<csv::ByteRecord, Vec<Diagnostic>> {
    csv.byte_headers().cloned().map_err(|e| {
        let (line, reason) = crate::opener::csv_failure(&e);
        vec![Diagnostic::at(
            file,
            Place { line, column: None },
            "(header)",
            format!("cannot read the header: {reason}"),
        )]
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn read(csv: &str) -> Result<PredictionSet, Vec<Diagnostic>> {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("predictions.csv");
        std::fs::write(&path, csv).unwrap();
        read_predictions(
            &path,
            Expect {
                task: Task::Multiclass,
                classes: None,
                positive: None,
                named_by: "the test",
                fingerprint: false,
            },
        )
    }

    proptest::proptest! {
        /// Class lookup against a list searched in order: labels of up to 8 bytes are told
        /// apart as numbers with their length ("a" and "a\0", "ab" and "ba" differ), longer
        /// ones by bytes, past 16 classes by hashing; a new label is appended unless the classes
        /// are fixed.
        #[test]
        fn class_lookup_agrees_with_a_list(
            given in proptest::option::of(proptest::collection::vec("[ab\0]{0,3}|[ab]{8,10}", 0..20)),
            labels in proptest::collection::vec("[ab\0]{0,3}|[ab]{7,10}", 0..200),
        ) {
            let mut classes = Classes::new(given.as_deref());
            let mut list: Vec<String> = given.clone().unwrap_or_default();
            for label in &labels {
                let expected = match list.iter().position(|n| n == label) {
                    Some(i) => Some(i as u32),
                    None if given.is_some() => None,
                    None => {
                        list.push(label.clone());
                        Some(list.len() as u32 - 1)
                    }
                };
                proptest::prop_assert_eq!(classes.get(label.as_bytes()), expected, "{:?}", label);
            }
            proptest::prop_assert_eq!(&classes.names, &list);
        }
    }

    /// A file of `classes` distinct labels, each row predicting its own label.
    fn distinct_labels(classes: usize) -> String {
        let mut csv = String::from("id,label,prediction\n");
        for i in 0..classes {
            csv.push_str(&format!("r{i},c{i},c{i}\n"));
        }
        csv
    }

    /// Classes are stored in two bytes a row ([`Class`]): 2^16 = 65,536 distinct classes are
    /// read, the next is refused on its own line (header + 65,537 rows), not wrapped around.
    #[test]
    fn the_class_past_the_two_byte_limit_is_refused_on_its_line() {
        let set = read(&distinct_labels(65_536)).unwrap();
        let Columns::Classification {
            classes, actual, ..
        } = &set.columns
        else {
            panic!("a classification file");
        };
        assert_eq!(classes.len(), 65_536);
        assert_eq!(actual.last(), Some(&u16::MAX));
        assert_eq!(classes.last().map(String::as_str), Some("c65535"));

        let problems = read(&distinct_labels(65_537)).unwrap_err();
        assert_eq!(problems.len(), 1, "{problems:?}");
        assert_eq!(problems[0].line, Some(65_538));
        assert_eq!(problems[0].column, Some(2));
        assert_eq!(
            problems[0].message,
            "\"c65536\" would be class 65537 of the file, and a classification predictions file \
             holds at most 65536 classes"
        );
    }
}
