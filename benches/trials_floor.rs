//! The floor for the trials path (run by `scripts/bench_trials.sh`): only what any reader of a
//! trials CSV must do, in one pass with the csv crate: tokenize every record into one reused
//! `ByteRecord` and parse every `fold_K` cell with `str::parse::<f64>`. No id check, no
//! accumulator, no report. Not a test: it asserts nothing and prints one JSON line.
//!
//! Usage: `cargo bench --bench trials_floor -- TRIALS.csv`.
#![allow(clippy::print_stdout, clippy::unwrap_used)]

use std::time::Instant;

fn main() {
    let path = std::env::args()
        .skip(1)
        .find(|a| a != "--bench")
        .expect("usage: trials_floor TRIALS.csv");
    let start = Instant::now();
    let file = std::fs::File::open(&path).unwrap();
    let mut csv = csv::ReaderBuilder::new()
        .has_headers(true)
        .from_reader(std::io::BufReader::with_capacity(1 << 16, file));
    let folds: Vec<usize> = csv
        .byte_headers()
        .unwrap()
        .iter()
        .enumerate()
        .filter(|(_, h)| h.starts_with(b"fold_"))
        .map(|(c, _)| c)
        .collect();
    let mut record = csv::ByteRecord::new();
    let (mut rows, mut sum) = (0u64, 0.0f64);
    while csv.read_byte_record(&mut record).unwrap() {
        rows += 1;
        for &c in &folds {
            let cell = std::str::from_utf8(&record[c]).unwrap();
            sum += cell.parse::<f64>().unwrap();
        }
    }
    println!(
        "{{\"rows\": {rows}, \"folds\": {}, \"sum\": {sum}, \"seconds\": {:.4}}}",
        folds.len(),
        start.elapsed().as_secs_f64()
    );
}
