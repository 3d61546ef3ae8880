//! What the parse-only floors of the benchmarks share (`benches/auc_floor.rs`,
//! `benches/evidence_floor.rs`): opening a CSV file and finding its columns.
#![allow(clippy::unwrap_used)]

/// A CSV file opened with its header read, and the positions of the `wanted` columns in it.
pub fn open_csv<const N: usize>(
    path: &str,
    wanted: [&[u8]; N],
) -> (csv::Reader<std::fs::File>, csv::ByteRecord, [usize; N]) {
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(false)
        .from_path(path)
        .unwrap();
    let mut record = csv::ByteRecord::new();
    reader.read_byte_record(&mut record).unwrap();
    let columns = wanted.map(|name| record.iter().position(|c| c == name).unwrap());
    (reader, record, columns)
}
