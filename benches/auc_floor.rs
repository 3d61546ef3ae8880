//! The floor of the ROC AUC benchmark (run by `scripts/bench_auc.sh`): only parses the files
//! vetscore reads — ids into one byte buffer, labels compared with the class names, scores parsed
//! as `f64` with the standard library, as vetscore does — and prints one JSON line with the rows
//! and the seconds taken. No ranking, no statistics: whatever vetscore takes beyond this is its
//! own work. Not a test: it asserts nothing.
//!
//! Usage: `cargo bench --bench auc_floor -- FILE ...` (each a CSV with a header holding `id`,
//! `label` and `score` columns; other columns are tokenized and skipped).
#![allow(clippy::print_stdout, clippy::unwrap_used)]

use std::time::Instant;

mod common;

/// What one file parses into: the columns vetscore keeps for ROC AUC.
struct Parsed {
    id_bytes: Vec<u8>,
    id_ends: Vec<u32>,
    positive: Vec<bool>,
    score: Vec<f64>,
}

fn parse(path: &str) -> Parsed {
    let (mut reader, mut record, [id, label, score]) =
        common::open_csv(path, [b"id", b"label", b"score"]);
    let mut parsed = Parsed {
        id_bytes: Vec::new(),
        id_ends: Vec::new(),
        positive: Vec::new(),
        score: Vec::new(),
    };
    while reader.read_byte_record(&mut record).unwrap() {
        parsed.id_bytes.extend_from_slice(&record[id]);
        parsed.id_ends.push(parsed.id_bytes.len() as u32);
        parsed.positive.push(&record[label] == b"yes");
        let value: f64 = std::str::from_utf8(&record[score])
            .unwrap()
            .trim()
            .parse()
            .unwrap();
        assert!(value.is_finite());
        parsed.score.push(value);
    }
    parsed
}

fn main() {
    let files: Vec<String> = std::env::args()
        .skip(1)
        .filter(|a| a != "--bench")
        .collect();
    let start = Instant::now();
    let parsed: Vec<Parsed> = files.iter().map(|f| parse(f)).collect();
    let seconds = start.elapsed().as_secs_f64();
    let rows: usize = parsed.iter().map(|p| p.score.len()).sum();
    let checksum: f64 = parsed
        .iter()
        .map(|p| {
            p.score.iter().sum::<f64>()
                + p.positive.iter().filter(|&&b| b).count() as f64
                + p.id_ends.last().copied().unwrap_or(0) as f64
                + p.id_bytes.len() as f64
        })
        .sum();
    println!(
        r#"{{"files": {}, "rows": {rows}, "seconds": {seconds:.4}, "checksum": {checksum}}}"#,
        files.len()
    );
}
