//! Columnar input: a Parquet file read column by column as rows of [`Cell`]s, with the 1-based
//! data row of each, for readers that check rows the way the CSV readers do (predictions, and
//! later out-of-fold files).
//!
//! The file is opened through the opener's binary framing ([`crate::opener::open_binary`]) and
//! decoded with the `parquet` crate's low-level column readers (no Arrow). What a file may make
//! the reader do is bounded before anything is decoded: the footer's metadata size, the number
//! of rows and of row groups, each column chunk's decoded size, and, while values are read, each
//! string cell's length (the CSV record limit). Only flat columns of the types pandas and polars
//! write for predictions are read: strings (plain or dictionary-encoded), integers, floats and
//! booleans; a null is a [`Cell::Null`] the caller refuses like a blank CSV cell.

use std::sync::Arc;

use parquet::basic::{ConvertedType, LogicalType, Type as Physical};
use parquet::column::reader::{ColumnReader, ColumnReaderImpl};
use parquet::data_type::{ByteArray, DataType};
use parquet::file::reader::{ChunkReader, FileReader, Length};
use parquet::file::serialized_reader::SerializedFileReader;

use crate::opener::{Binary, Kind, MAX_RECORD_BYTES};

/// The magic bytes at both ends of a Parquet file.
const MAGIC: &[u8; 4] = b"PAR1";
/// Largest footer (schema and row-group metadata) read; a file of ten thousand row groups of a
/// few columns has a footer of a few MiB.
const MAX_METADATA_BYTES: u64 = 64 << 20;
/// Most rows read from one file (row indices are `u32` elsewhere).
pub const MAX_ROWS: u64 = u32::MAX as u64;
/// Most row groups in one file.
pub const MAX_ROW_GROUPS: usize = 1 << 16;
/// Largest decoded column chunk: the memory one column of one row group may take.
const MAX_CHUNK_BYTES: i64 = 1 << 30;
/// Rows decoded per column at a time.
const BATCH: usize = 1 << 16;

/// Whether `head` (the first bytes of a file) starts like a Parquet file.
pub fn looks_like_parquet(head: &[u8]) -> bool {
    head.starts_with(MAGIC)
}

/// One cell of a row, as any record source holds it: a CSV cell is `Text`; a columnar file's
/// cell is typed. Every reader (predictions, out-of-fold results) takes this one type.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Cell<'a> {
    Null,
    Bool(bool),
    Int(i64),
    Float(f64),
    Text(&'a [u8]),
}

impl<'a> Cell<'a> {
    /// The cell as text, for ids, classes and messages: text trimmed of ASCII spaces, numbers as
    /// Rust writes them (shortest round trip), booleans as `true`/`false`, a null empty. `scratch`
    /// holds a number's digits (reused, it saves an allocation per cell).
    #[inline]
    pub fn text<'b>(self, scratch: &'b mut String) -> &'b [u8]
    where
        'a: 'b,
    {
        use std::fmt::Write as _;
        scratch.clear();
        match self {
            Cell::Text(t) => return t.trim_ascii(),
            Cell::Null => return b"",
            Cell::Bool(b) => return if b { b"true" } else { b"false" },
            Cell::Int(i) => write!(scratch, "{i}"),
            Cell::Float(x) => write!(scratch, "{x}"),
        }
        .map_or(&[], |()| scratch.as_bytes())
    }
}

/// What a column holds, as the readers accept or refuse it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Type {
    Bool,
    Int,
    Float,
    Text,
}

impl Type {
    /// The type in words, for messages.
    pub const fn noun(self) -> &'static str {
        match self {
            Type::Bool => "booleans",
            Type::Int => "integers",
            Type::Float => "floats",
            Type::Text => "strings",
        }
    }
}

/// A column of the file: its name and what it holds (`Err`: a type no reader accepts, in words).
#[derive(Debug, Clone)]
pub struct Column {
    pub name: String,
    pub kind: Result<Type, String>,
    /// Index among the file's leaf columns.
    leaf: usize,
    /// Whether the column may hold nulls (it has definition levels).
    nullable: bool,
}

/// A problem with the file, with the data row and column where one is known.
#[derive(Debug, Clone, PartialEq)]
pub struct Problem {
    pub row: Option<u64>,
    pub column: Option<String>,
    pub message: String,
}

impl Problem {
    fn file(message: impl Into<String>) -> Problem {
        Problem {
            row: None,
            column: None,
            message: message.into(),
        }
    }
}

/// The opened file, shared by the page readers; each read is at its own offset.
#[derive(Clone)]
struct Source(Arc<Binary>);

impl Length for Source {
    fn len(&self) -> u64 {
        self.0.len()
    }
}

/// A reader from one offset on; independent of every other (positioned reads).
struct SourceRead {
    source: Arc<Binary>,
    at: u64,
}

impl std::io::Read for SourceRead {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        let left = self.source.len().saturating_sub(self.at);
        let n = buf.len().min(usize::try_from(left).unwrap_or(usize::MAX));
        self.source.read_at(self.at, &mut buf[..n])?;
        self.at += n as u64;
        Ok(n)
    }
}

impl ChunkReader for Source {
    type T = SourceRead;

    fn get_read(&self, start: u64) -> parquet::errors::Result<SourceRead> {
        Ok(SourceRead {
            source: Arc::clone(&self.0),
            at: start,
        })
    }

    fn get_bytes(&self, start: u64, length: usize) -> parquet::errors::Result<bytes::Bytes> {
        let mut buf = vec![0; length];
        self.0
            .read_at(start, &mut buf)
            .map_err(|e| parquet::errors::ParquetError::External(Box::new(e)))?;
        Ok(buf.into())
    }
}

/// A Parquet file, its metadata checked, ready to be read row by row.
pub struct Table {
    reader: SerializedFileReader<Source>,
    columns: Vec<Column>,
    rows: u64,
}

/// Opens `path` as a Parquet input of `kind` and checks its footer. The `Err` of the opener is
/// a refusal ("cannot read …: reason"); a problem of the format is a [`Problem`].
pub fn open(path: &std::path::Path, kind: Kind) -> Result<Result<Table, Problem>, String> {
    let binary = crate::opener::open_binary(path, kind)?;
    Ok(Table::new(binary))
}

fn type_of(leaf: &parquet::schema::types::ColumnDescriptor) -> Result<Type, String> {
    let logical = leaf.logical_type_ref();
    let converted = leaf.converted_type();
    let plain_int = |bits: i8, signed: bool| bits < 32 || signed;
    match leaf.physical_type() {
        Physical::BOOLEAN => Ok(Type::Bool),
        Physical::INT32 | Physical::INT64 => match (logical, converted) {
            (None, ConvertedType::NONE) => Ok(Type::Int),
            (Some(LogicalType::Integer(int)), _) if plain_int(int.bit_width, int.is_signed) => {
                Ok(Type::Int)
            }
            (
                None,
                ConvertedType::INT_8
                | ConvertedType::INT_16
                | ConvertedType::INT_32
                | ConvertedType::INT_64
                | ConvertedType::UINT_8
                | ConvertedType::UINT_16,
            ) => Ok(Type::Int),
            (Some(LogicalType::Integer(_)), _)
            | (None, ConvertedType::UINT_32 | ConvertedType::UINT_64) => {
                Err("unsigned 32- or 64-bit integers".to_owned())
            }
            (Some(other), _) => Err(format!("{other:?} values").to_lowercase()),
            (None, other) => Err(format!("{other} values").to_lowercase()),
        },
        Physical::FLOAT | Physical::DOUBLE => Ok(Type::Float),
        Physical::BYTE_ARRAY => match (logical, converted) {
            (Some(LogicalType::String | LogicalType::Enum), _)
            | (None, ConvertedType::UTF8 | ConvertedType::ENUM) => Ok(Type::Text),
            _ => Err("binary values (not strings)".to_owned()),
        },
        Physical::INT96 => Err("96-bit timestamps".to_owned()),
        Physical::FIXED_LEN_BYTE_ARRAY => Err("fixed-length binary values".to_owned()),
    }
}

impl Table {
    fn new(binary: Binary) -> Result<Table, Problem> {
        let len = binary.len();
        let not_parquet =
            || Problem::file("it is not a Parquet file (it must start and end with PAR1)");
        if len < 12 {
            return Err(not_parquet());
        }
        let mut head = [0u8; 4];
        let mut tail = [0u8; 8];
        binary
            .read_at(0, &mut head)
            .and_then(|()| binary.read_at(len - 8, &mut tail))
            .map_err(|e| Problem::file(format!("cannot read: {}", crate::input::io_reason(&e))))?;
        if &head != MAGIC {
            return Err(not_parquet());
        }
        if &tail[4..] != MAGIC {
            return Err(Problem::file(
                "it does not end with PAR1: the Parquet file is truncated or damaged",
            ));
        }
        let footer = u64::from(u32::from_le_bytes([tail[0], tail[1], tail[2], tail[3]]));
        if footer > len - 12 || footer > MAX_METADATA_BYTES {
            return Err(Problem::file(format!(
                "its footer claims {footer} bytes of metadata in a file of {len} bytes \
                 (the limit is {MAX_METADATA_BYTES})"
            )));
        }
        let reader = SerializedFileReader::new(Source(Arc::new(binary)))
            .map_err(|e| Problem::file(format!("cannot read the Parquet metadata: {e}")))?;
        let meta = reader.metadata();
        let groups = meta.num_row_groups();
        if groups > MAX_ROW_GROUPS {
            return Err(Problem::file(format!(
                "it has {groups} row groups; at most {MAX_ROW_GROUPS} are read"
            )));
        }
        let mut rows: u64 = 0;
        for group in meta.row_groups() {
            let n = u64::try_from(group.num_rows())
                .map_err(|_| Problem::file("a row group has a negative row count"))?;
            rows = rows.saturating_add(n);
            for chunk in group.columns() {
                if chunk.uncompressed_size() > MAX_CHUNK_BYTES || chunk.uncompressed_size() < 0 {
                    return Err(Problem::file(format!(
                        "a column chunk of {} decoded bytes passes the limit of {MAX_CHUNK_BYTES}",
                        chunk.uncompressed_size()
                    )));
                }
            }
        }
        if rows > MAX_ROWS {
            return Err(Problem::file(format!(
                "it has {rows} rows; at most {MAX_ROWS} are read"
            )));
        }
        let schema = meta.file_metadata().schema_descr();
        let columns = (0..schema.num_columns())
            .filter_map(|i| {
                let leaf = schema.column(i);
                // Only top-level columns: a list or struct is no predictions column.
                (leaf.path().parts().len() == 1).then(|| Column {
                    name: leaf.name().to_owned(),
                    kind: if leaf.max_rep_level() > 0 {
                        Err("lists".to_owned())
                    } else {
                        type_of(&leaf)
                    },
                    leaf: i,
                    nullable: leaf.max_def_level() > 0,
                })
            })
            .collect();
        Ok(Table {
            reader,
            columns,
            rows,
        })
    }

    /// The file's top-level columns, in file order.
    pub fn columns(&self) -> &[Column] {
        &self.columns
    }

    /// Rows in the file, by its metadata.
    pub fn rows(&self) -> u64 {
        self.rows
    }

    /// Calls `row(number, cells)` for each row in file order, `number` 1-based, `cells` as wide
    /// as [`Table::columns`] with the columns in `wanted` (indices into it) filled and the others
    /// [`Cell::Null`]. `row` returns `false` to stop. Every wanted column must have a type.
    pub fn visit(
        &self,
        wanted: &[usize],
        mut row: impl FnMut(u64, &[Cell<'_>]) -> bool,
    ) -> Result<(), Problem> {
        let mut number: u64 = 0;
        for g in 0..self.reader.num_row_groups() {
            let group = self
                .reader
                .get_row_group(g)
                .map_err(|e| Problem::file(format!("cannot read row group {}: {e}", g + 1)))?;
            let expected = usize::try_from(group.metadata().num_rows()).unwrap_or(0);
            let mut readers = Vec::with_capacity(wanted.len());
            for &w in wanted {
                let column = &self.columns[w];
                let reader = group.get_column_reader(column.leaf).map_err(|e| Problem {
                    row: Some(number + 1),
                    column: Some(column.name.clone()),
                    message: format!("cannot read the column: {e}"),
                })?;
                readers.push((w, Values::new(reader, column.nullable)));
            }
            let mut done = 0;
            while done < expected {
                let want = BATCH.min(expected - done);
                for (w, values) in &mut readers {
                    let column = &self.columns[*w];
                    values.read(want).map_err(|message| Problem {
                        row: Some(number + 1),
                        column: Some(column.name.clone()),
                        message,
                    })?;
                    if let Some(at) = values.long_cell() {
                        return Err(Problem {
                            row: Some(number + at as u64 + 1),
                            column: Some(column.name.clone()),
                            message: format!("a cell is longer than {MAX_RECORD_BYTES} bytes"),
                        });
                    }
                }
                let mut cells = vec![Cell::Null; self.columns.len()];
                for k in 0..want {
                    number += 1;
                    for (w, values) in &readers {
                        cells[*w] = values.cell(k);
                    }
                    if !row(number, &cells) {
                        return Ok(());
                    }
                }
                done += want;
            }
        }
        Ok(())
    }
}

/// One column's decoded batch: values (dense, nulls left out) and definition levels.
struct Buffer<T: DataType> {
    reader: ColumnReaderImpl<T>,
    values: Vec<T::T>,
    levels: Vec<i16>,
    /// Index into `values` of each row's value, `None` for a null.
    slots: Vec<Option<u32>>,
    nullable: bool,
}

impl<T: DataType> Buffer<T> {
    fn new(reader: ColumnReaderImpl<T>, nullable: bool) -> Self {
        Buffer {
            reader,
            values: Vec::new(),
            levels: Vec::new(),
            slots: Vec::new(),
            nullable,
        }
    }

    fn read(&mut self, rows: usize) -> Result<(), String> {
        self.values.clear();
        self.levels.clear();
        self.slots.clear();
        let levels = self.nullable.then_some(&mut self.levels);
        let (records, _, _) = self
            .reader
            .read_records(rows, levels, None, &mut self.values)
            .map_err(|e| format!("cannot decode the column: {e}"))?;
        if records != rows {
            return Err(format!(
                "the column ends after {records} of the row group's next {rows} rows"
            ));
        }
        if self.nullable {
            let mut next = 0u32;
            for &level in &self.levels {
                if level > 0 {
                    self.slots.push(Some(next));
                    next += 1;
                } else {
                    self.slots.push(None);
                }
            }
            if next as usize != self.values.len() {
                return Err("the column's values do not match its null markers".to_owned());
            }
        } else if self.values.len() != rows {
            return Err("the column has fewer values than rows".to_owned());
        }
        Ok(())
    }

    fn get(&self, k: usize) -> Option<&T::T> {
        if self.nullable {
            self.slots[k].map(|i| &self.values[i as usize])
        } else {
            Some(&self.values[k])
        }
    }
}

enum Values {
    Bool(Buffer<parquet::data_type::BoolType>),
    Int32(Buffer<parquet::data_type::Int32Type>),
    Int64(Buffer<parquet::data_type::Int64Type>),
    Float(Buffer<parquet::data_type::FloatType>),
    Double(Buffer<parquet::data_type::DoubleType>),
    Bytes(Buffer<parquet::data_type::ByteArrayType>),
    /// A column whose type [`type_of`] refused; never wanted.
    Other,
}

impl Values {
    fn new(reader: ColumnReader, n: bool) -> Values {
        match reader {
            ColumnReader::BoolColumnReader(r) => Values::Bool(Buffer::new(r, n)),
            ColumnReader::Int32ColumnReader(r) => Values::Int32(Buffer::new(r, n)),
            ColumnReader::Int64ColumnReader(r) => Values::Int64(Buffer::new(r, n)),
            ColumnReader::FloatColumnReader(r) => Values::Float(Buffer::new(r, n)),
            ColumnReader::DoubleColumnReader(r) => Values::Double(Buffer::new(r, n)),
            ColumnReader::ByteArrayColumnReader(r) => Values::Bytes(Buffer::new(r, n)),
            _ => Values::Other,
        }
    }

    fn read(&mut self, rows: usize) -> Result<(), String> {
        match self {
            Values::Bool(b) => b.read(rows),
            Values::Int32(b) => b.read(rows),
            Values::Int64(b) => b.read(rows),
            Values::Float(b) => b.read(rows),
            Values::Double(b) => b.read(rows),
            Values::Bytes(b) => b.read(rows),
            Values::Other => Err("the column's type is not read".to_owned()),
        }
    }

    /// The first row of the batch whose string passes the record limit.
    fn long_cell(&self) -> Option<usize> {
        let Values::Bytes(b) = self else {
            return None;
        };
        let long = b
            .values
            .iter()
            .position(|v: &ByteArray| v.len() > MAX_RECORD_BYTES)?;
        (0..b.slots.len().max(b.values.len())).find(|&k| {
            if b.nullable {
                b.slots[k] == Some(long as u32)
            } else {
                k == long
            }
        })
    }

    fn cell(&self, k: usize) -> Cell<'_> {
        match self {
            Values::Bool(b) => b.get(k).map_or(Cell::Null, |&v| Cell::Bool(v)),
            Values::Int32(b) => b.get(k).map_or(Cell::Null, |&v| Cell::Int(i64::from(v))),
            Values::Int64(b) => b.get(k).map_or(Cell::Null, |&v| Cell::Int(v)),
            Values::Float(b) => b.get(k).map_or(Cell::Null, |&v| Cell::Float(f64::from(v))),
            Values::Double(b) => b.get(k).map_or(Cell::Null, |&v| Cell::Float(v)),
            Values::Bytes(b) => b.get(k).map_or(Cell::Null, |v| Cell::Text(v.data())),
            Values::Other => Cell::Null,
        }
    }
}
