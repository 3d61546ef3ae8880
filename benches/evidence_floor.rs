//! The floor of the evidence benchmark (run by `scripts/bench_evidence.sh`): only parses the
//! files vetscore reads for per-example evidence, on one thread — each predictions CSV with the
//! csv crate into an id arena and class indices (labels compared with the class names), each id
//! list split into lines into an id arena — and prints one JSON line with the rows and the
//! seconds taken. A predictions file whose name ends in `.parquet` is read column by column
//! with the `parquet` crate's column readers, the crate vetscore reads Parquet with. No sorting,
//! pairing, hashing or statistics: whatever vetscore takes beyond this is its own work. Not a
//! test: it asserts nothing.
//!
//! Usage: `cargo bench --bench evidence_floor -- PREDICTIONS.csv ... -- IDS.txt ...` (each CSV
//! or Parquet file holding `id`, `label` and `prediction` columns, classes `no` and `yes`; each
//! id list one id per line).
#![allow(clippy::print_stdout, clippy::unwrap_used)]

use std::io::BufRead;
use std::time::Instant;

mod common;

/// What one file parses into: ids back to back, and for a predictions file the two class columns.
#[derive(Default)]
struct Parsed {
    id_bytes: Vec<u8>,
    id_ends: Vec<u32>,
    classes: Vec<u8>,
}

impl Parsed {
    fn push_id(&mut self, id: &[u8]) {
        self.id_bytes.extend_from_slice(id);
        self.id_ends.push(self.id_bytes.len() as u32);
    }
}

fn class(cell: &[u8]) -> u8 {
    [b"no".as_slice(), b"yes"]
        .iter()
        .position(|c| *c == cell)
        .unwrap() as u8
}

fn parse_csv(path: &str) -> Parsed {
    let (mut reader, mut record, [id, label, prediction]) =
        common::open_csv(path, [b"id", b"label", b"prediction"]);
    let mut parsed = Parsed::default();
    while reader.read_byte_record(&mut record).unwrap() {
        parsed.push_id(&record[id]);
        parsed.classes.push(class(&record[label]));
        parsed.classes.push(class(&record[prediction]));
    }
    parsed
}

/// Reads the `id`, `label` and `prediction` string columns of a Parquet file, a row group at a
/// time, with no null handling (the benchmark's files have none).
fn parse_parquet(path: &str) -> Parsed {
    use parquet::column::reader::ColumnReader;
    use parquet::file::reader::{FileReader, SerializedFileReader};
    let reader = SerializedFileReader::new(std::fs::File::open(path).unwrap()).unwrap();
    let schema = reader.metadata().file_metadata().schema_descr_ptr();
    let leaf = |name: &str| {
        (0..schema.num_columns())
            .find(|&i| schema.column(i).name() == name)
            .unwrap()
    };
    let leaves = [leaf("id"), leaf("label"), leaf("prediction")];
    let mut parsed = Parsed::default();
    let mut columns: [Vec<parquet::data_type::ByteArray>; 3] = Default::default();
    for g in 0..reader.num_row_groups() {
        let group = reader.get_row_group(g).unwrap();
        let rows = usize::try_from(group.metadata().num_rows()).unwrap();
        for (values, &leaf) in columns.iter_mut().zip(&leaves) {
            let ColumnReader::ByteArrayColumnReader(mut column) =
                group.get_column_reader(leaf).unwrap()
            else {
                panic!("{path}: column {leaf} does not hold strings");
            };
            values.clear();
            let mut levels = Vec::new();
            column
                .read_records(rows, Some(&mut levels), None, values)
                .unwrap();
        }
        let [ids, labels, predictions] = &columns;
        for ((id, label), prediction) in ids.iter().zip(labels).zip(predictions) {
            parsed.push_id(id.data());
            parsed.classes.push(class(label.data()));
            parsed.classes.push(class(prediction.data()));
        }
    }
    parsed
}

fn parse_ids(path: &str) -> Parsed {
    let mut reader = std::io::BufReader::with_capacity(1 << 20, std::fs::File::open(path).unwrap());
    let mut parsed = Parsed::default();
    let mut line = Vec::new();
    while reader.read_until(b'\n', &mut line).unwrap() > 0 {
        let id = line.strip_suffix(b"\n").unwrap_or(&line).trim_ascii();
        if !id.is_empty() {
            parsed.push_id(id);
        }
        line.clear();
    }
    parsed
}

fn main() {
    let args: Vec<String> = std::env::args()
        .skip(1)
        .filter(|a| a != "--bench")
        .collect();
    let split = args.iter().position(|a| a == "--").unwrap_or(args.len());
    let (csvs, lists) = (&args[..split], args.get(split + 1..).unwrap_or_default());
    let start = Instant::now();
    let parsed: Vec<Parsed> = csvs
        .iter()
        .map(|f| {
            if f.ends_with(".parquet") {
                parse_parquet(f)
            } else {
                parse_csv(f)
            }
        })
        .chain(lists.iter().map(|f| parse_ids(f)))
        .collect();
    let seconds = start.elapsed().as_secs_f64();
    let rows: usize = parsed.iter().map(|p| p.id_ends.len()).sum();
    let checksum: u64 = parsed
        .iter()
        .map(|p| p.id_bytes.len() as u64 + p.classes.iter().map(|&c| u64::from(c)).sum::<u64>())
        .sum();
    println!(
        r#"{{"files": {}, "rows": {rows}, "seconds": {seconds:.4}, "checksum": {checksum}}}"#,
        parsed.len()
    );
}
