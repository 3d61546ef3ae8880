//! Per-example evidence: a model's predictions on the test split, and id lists for leakage.
//!
//! A predictions file is CSV with a header. Every file has an `id` column. Classification files
//! have `label` (the true class) and any of `prediction` (the predicted class), `score` (binary:
//! the score or probability of the positive class) and `prob_<class>` columns (multiclass
//! probabilities). Regression files have `target` and `prediction`. Other columns are ignored.
//!
//! Rows are read in one streaming pass into compact columns: ids in one byte arena, classes as
//! `u32` indices, scores as `f64`. The ids are kept because the test fingerprint needs them
//! sorted and a baseline is paired with the model by id; nothing else is kept per row.

pub mod columnar;
pub mod ids;
pub mod metric;
pub mod oof;
mod plain;
pub mod read;

pub use read::read_predictions;

use std::cmp::Ordering;

use sha2::{Digest, Sha256};

use crate::parallel::both;

/// Why an id with a control character is refused: a line break or tab inside an id (possible in
/// a quoted CSV cell) would make two different id lists hash to the same fingerprint text and
/// show as two rows in a report.
pub const CONTROL_IN_ID: &str =
    "an id must not contain a line break, tab or other control character";

/// Whether `b` is a control character (C0 or DEL).
fn is_control(b: u8) -> bool {
    b < 0x20 || b == 0x7f
}

/// The byte offset of the first control character (C0 or DEL) in `id`. Ids are short and almost
/// never hold one: a scan without an early exit (which the compiler vectorises) comes first.
pub fn control_at(id: &[u8]) -> Option<usize> {
    if !id.iter().fold(false, |found, &b| found | is_control(b)) {
        return None;
    }
    id.iter().position(|&b| is_control(b))
}

/// The high bit of each byte of `word` that equals `byte`, and no other bit.
pub(crate) fn bytes_equal(word: u64, byte: u8) -> u64 {
    const LOW: u64 = u64::from_ne_bytes([0x7f; 8]);
    let x = word ^ u64::from_ne_bytes([byte; 8]);
    // A byte's high bit ends up set when any of its bits is: exact per byte, no carry between
    // bytes (each low-seven-bit sum stays below 0x100).
    !(((x & LOW) + LOW) | x | LOW)
}

/// Row ids stored back to back in one buffer.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct IdArena {
    bytes: Vec<u8>,
    ends: Vec<u32>,
    /// Whether an id holds a zero byte (the readers refuse them; the arena does not), which
    /// makes a key's zero padding ambiguous ([`IdArena::tie`]).
    nul: bool,
}

/// About how many rows a file of `size` bytes holds, from the lines in its first bytes `head`:
/// only for reserving capacity, so a wrong guess costs unused (untouched) capacity or a regrowth,
/// never a result. At most `size / 2` (a row is at least a byte and a line break).
pub fn estimated_rows(size: u64, head: &[u8]) -> usize {
    if head.is_empty() {
        return 0;
    }
    let lines = head.iter().filter(|&&b| b == b'\n').count().max(1) as u64;
    let rows = u128::from(size) * u128::from(lines) / head.len() as u128;
    usize::try_from(rows.min(u128::from(size / 2))).unwrap_or(usize::MAX)
}

/// Reserves room for about `rows` more values in `column` where the allocator grants it (a
/// refusal leaves the column to grow as it fills).
fn reserve<T>(column: &mut Vec<T>, rows: usize) {
    let _ = column.try_reserve(rows);
}

/// An empty column with room for about `rows` values ([`reserve`]).
pub fn with_room<T>(rows: usize) -> Vec<T> {
    let mut column = Vec::new();
    reserve(&mut column, rows);
    column
}

impl IdArena {
    /// Reserves room for about `rows` more ids of `bytes` bytes in all ([`reserve`]).
    pub fn reserve(&mut self, rows: usize, bytes: usize) {
        reserve(&mut self.ends, rows);
        reserve(&mut self.bytes, bytes);
    }

    /// Adds an id; `None` when the arena would pass 4 GiB.
    pub fn push(&mut self, id: &[u8]) -> Option<()> {
        let end = u32::try_from(self.bytes.len() + id.len()).ok()?;
        // Without an early exit (ids are short; a `memchr` call costs more than the scan).
        self.nul |= id.iter().fold(false, |found, &b| found | (b == 0));
        self.bytes.extend_from_slice(id);
        self.ends.push(end);
        Some(())
    }

    /// Adds the id of each non-empty line of `lines`, whole lines each ended by a line feed
    /// (the last one too) holding no control character or space but that line feed: what
    /// [`IdArena::push`] of each line's id would add, in one pass with no per-id checks. The
    /// number of lines, or `None` with nothing added when `lines` is not such text or the
    /// arena would pass 4 GiB (the caller then reads the lines one by one).
    pub fn push_lines(&mut self, lines: &[u8]) -> Option<u64> {
        // Without an early exit, so the scan vectorises; a zero byte is a control character.
        let unusual = lines.iter().fold(false, |found, &b| {
            found | ((b <= b' ') & (b != b'\n')) | (b == 0x7f)
        });
        if unusual
            || lines.last().is_some_and(|&b| b != b'\n')
            || u32::try_from(self.bytes.len() + lines.len()).is_err()
        {
            return None;
        }
        self.bytes.reserve(lines.len());
        let mut start = 0;
        let mut count = 0;
        let mut line = |end: usize| {
            count += 1;
            if end > start {
                self.bytes.extend_from_slice(&lines[start..end]);
                // Fits: the arena and all of `lines` do.
                self.ends.push(self.bytes.len() as u32);
            }
            start = end + 1;
        };
        // Line feeds found a word at a time (ids are short: a search call per line costs more).
        let words = lines.chunks_exact(8);
        let tail = words.remainder().len();
        for (w, word) in words.enumerate() {
            let word = u64::from_le_bytes(word.try_into().unwrap_or_default());
            let mut feeds = bytes_equal(word, b'\n');
            while feeds != 0 {
                line(8 * w + (feeds.trailing_zeros() / 8) as usize);
                feeds &= feeds - 1;
            }
        }
        let from = lines.len() - tail;
        for (i, &b) in lines[from..].iter().enumerate() {
            if b == b'\n' {
                line(from + i);
            }
        }
        Some(count)
    }

    pub fn len(&self) -> usize {
        self.ends.len()
    }

    pub fn is_empty(&self) -> bool {
        self.ends.is_empty()
    }

    pub fn get(&self, i: usize) -> &[u8] {
        let start = if i == 0 { 0 } else { self.ends[i - 1] as usize };
        &self.bytes[start..self.ends[i] as usize]
    }

    /// The ids sorted, built once per list and kept with it for the duplicate check, the
    /// fingerprint, pairing and leakage.
    ///
    /// Comparing ids through the arena is slow for millions of rows, so each id gets a key: the
    /// 8 bytes after the prefix every id shares, big-endian and zero-padded. Ordering by key
    /// agrees with byte order wherever keys differ; runs of equal keys are then sorted by their
    /// full bytes.
    pub fn sorted(&self) -> IdOrder {
        let prefix = self.common_prefix();
        let (mut entries, longer) = self.keyed(prefix);
        if self.nul {
            // Zero bytes make the padding ambiguous: full bytes break ties.
            entries.sort_unstable_by(|a, b| {
                a.key()
                    .cmp(&b.key())
                    .then_with(|| self.tie(self, a.key(), (a.row, b.row), prefix))
            });
        } else {
            entries.sort_unstable_by_key(|e| e.key());
            // Where every id ends inside its key, equal keys are equal ids: nothing to refine.
            if longer {
                self.refine(&mut entries, prefix);
            }
        }
        IdOrder {
            prefix,
            entries,
            whole: !longer && !self.nul,
        }
    }

    /// Every id's key past its first `prefix` bytes, with its row, in file order, and whether
    /// an id goes on past its key (8 bytes or more past the prefix). The 8 bytes at a key's
    /// start are read as one word (the arena's next bytes past a short id masked off); only the
    /// last ids of the arena, within 8 bytes of its end, are copied byte by byte.
    fn keyed(&self, prefix: usize) -> (Vec<Entry>, bool) {
        let mut start = 0;
        let mut longest = 0;
        let entries = self
            .ends
            .iter()
            .enumerate()
            .map(|(row, &end)| {
                let (from, end) = (start + prefix, end as usize);
                start = end;
                let len = end - from;
                longest = longest.max(len);
                let key = match self.bytes.get(from..).and_then(<[u8]>::first_chunk::<8>) {
                    Some(&word) if len >= 8 => u64::from_be_bytes(word),
                    // The top `len` bytes are the id's; the rest, the next ids', become padding.
                    Some(&word) => u64::from_be_bytes(word) & !(u64::MAX >> (8 * len)),
                    None => key(&self.bytes[from..end]),
                };
                Entry::new(key, row as u32)
            })
            .collect();
        (entries, longest >= 8)
    }

    /// Sorts each run of equal keys (sorted by key at `prefix`) by the next 8 bytes of its ids,
    /// and so on until keys differ or end inside the ids (no zero bytes: equal ids); the keys at
    /// `prefix` stay. Ids sharing long prefixes (two dates) are so sorted by keys read in order,
    /// not by bytes looked up elsewhere: each level is a sort of `u64` keys, n log n in all for
    /// ids of bounded length. A stack, not recursion: an id may be megabytes long.
    fn refine(&self, entries: &mut [Entry], prefix: usize) {
        let mut i = 0;
        while i < entries.len() {
            // Most keys differ from the next: stepped over without looking for a run's end.
            if entries
                .get(i + 1)
                .is_none_or(|next| next.key() != entries[i].key())
            {
                i += 1;
                continue;
            }
            let j = run_end(entries, i);
            if entries[i].key() & 0xff != 0 {
                // Every id of the run goes on past its key. Deeper keys are built in a copy, so
                // the run's own keys stay those at `prefix`.
                let mut run = entries[i..j].to_vec();
                let mut pending = vec![(0, run.len(), prefix + 8)];
                while let Some((start, end, offset)) = pending.pop() {
                    for e in &mut run[start..end] {
                        e.key = key(&self.get(e.row as usize)[offset..]);
                    }
                    run[start..end].sort_unstable_by_key(|e| e.key());
                    let mut a = start;
                    while a < end {
                        let b = start + run_end(&run[start..end], a - start);
                        if b - a > 1 && run[a].key() & 0xff != 0 {
                            pending.push((a, b, offset + 8));
                        }
                        a = b;
                    }
                }
                for (e, sorted) in entries[i..j].iter_mut().zip(&run) {
                    e.row = sorted.row;
                }
            }
            i = j;
        }
    }

    /// The order of row `rows.0` here and row `rows.1` of `other`, two ids with the same `key`
    /// past their first `shared` bytes (which they share). A key whose last byte is zero ends
    /// both ids inside it (ids without zero bytes): they are equal, with no bytes read.
    /// Otherwise the bytes past `shared` decide.
    fn tie(&self, other: &IdArena, key: u64, rows: (u32, u32), shared: usize) -> Ordering {
        if key & 0xff == 0 && !self.nul && !other.nul {
            return Ordering::Equal;
        }
        self.get(rows.0 as usize)[shared..].cmp(&other.get(rows.1 as usize)[shared..])
    }

    fn common_prefix(&self) -> usize {
        if self.is_empty() {
            return 0;
        }
        let first = self.get(0);
        let mut len = first.len();
        for i in 1..self.len() {
            let id = self.get(i);
            len = first[..len]
                .iter()
                .zip(id)
                .take_while(|(a, b)| a == b)
                .count();
            if len == 0 {
                break;
            }
        }
        len
    }

    /// The test fingerprint: `sha256:` + the SHA-256 of the sorted ids joined by newlines.
    /// In Python: `"sha256:" + hashlib.sha256("\n".join(sorted(ids)).encode()).hexdigest()`.
    ///
    /// Where every id is whole in its key (integer ids past a shared prefix, up to 7 digits) the
    /// ids are read off the keys in order, gathered 64 KiB at a time; otherwise each is looked
    /// up in the arena, out of file order.
    pub fn fingerprint(&self, order: &IdOrder) -> String {
        let mut hasher = Sha256::new();
        if order.whole {
            hasher = self.hash_from_keys(order);
        } else {
            for (k, i) in order.rows().enumerate() {
                if k > 0 {
                    hasher.update(b"\n");
                }
                hasher.update(self.get(i as usize));
            }
        }
        let digest = hasher.finalize();
        let mut out = String::from("sha256:");
        for b in digest {
            out.push_str(&format!("{b:02x}"));
        }
        out
    }

    /// The hash of the ids read off the keys of `order` (every id whole in its key), joined by
    /// line feeds: gathered 64 KiB at a time here and hashed on a second thread as they come
    /// (gathering and hashing take about as long as each other), the batches handed back for
    /// reuse.
    fn hash_from_keys(&self, order: &IdOrder) -> Sha256 {
        const BATCH: usize = 1 << 16;
        let prefix = order
            .entries
            .first()
            .map_or(&[][..], |e| &self.get(e.row as usize)[..order.prefix]);
        let room = BATCH + prefix.len() + 9;
        let (full, to_hash) = std::sync::mpsc::sync_channel::<Vec<u8>>(2);
        let (emptied, spare) = std::sync::mpsc::channel::<Vec<u8>>();
        let (hasher, ()) = crate::parallel::both(
            move || {
                let mut hasher = Sha256::new();
                for batch in to_hash {
                    hasher.update(&batch);
                    // The gatherer may be done; the batch is then dropped here.
                    let _ = emptied.send(batch);
                }
                hasher
            },
            move || {
                let mut batch = Vec::with_capacity(room);
                for (k, e) in order.entries.iter().enumerate() {
                    if k > 0 {
                        batch.push(b'\n');
                    }
                    batch.extend_from_slice(prefix);
                    let key = e.key();
                    // The id's bytes are the key's up to its zero padding (a zero key: none).
                    let len = 8 - (key.trailing_zeros() / 8) as usize;
                    batch.extend_from_slice(&key.to_be_bytes()[..len]);
                    if batch.len() >= BATCH {
                        let mut next = spare
                            .try_recv()
                            .unwrap_or_else(|_| Vec::with_capacity(room));
                        next.clear();
                        // The hasher ends only when this sender is dropped.
                        let _ = full.send(std::mem::replace(&mut batch, next));
                    }
                }
                let _ = full.send(batch);
            },
        );
        hasher
    }
}

/// The end of the run of entries with the key of `entries[start]`.
fn run_end(entries: &[Entry], start: usize) -> usize {
    let k = entries[start].key();
    start
        + entries[start..]
            .iter()
            .position(|e| e.key() != k)
            .unwrap_or(entries.len() - start)
}

/// The 8 bytes at the start of `suffix`, big-endian, zero-padded.
fn key(suffix: &[u8]) -> u64 {
    let mut bytes = [0u8; 8];
    let n = suffix.len().min(8);
    bytes[..n].copy_from_slice(&suffix[..n]);
    u64::from_be_bytes(bytes)
}

/// An id's sort key and its row in 12 bytes, where a `(u64, u32)` pair takes 16 (ten million
/// ids need 120 MB of them): packed to 4-byte alignment, the key read whole (an unaligned load
/// costs nothing on the targets that matter), which sorts faster than a key in two halves.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[repr(C, packed(4))]
struct Entry {
    key: u64,
    row: u32,
}

// 12 bytes an id, as the comment above says.
const _: () = assert!(std::mem::size_of::<Entry>() == 12);

impl Entry {
    fn new(key: u64, row: u32) -> Entry {
        Entry { key, row }
    }

    fn key(self) -> u64 {
        self.key
    }
}

/// The ids of an [`IdArena`] in byte order (for UTF-8, code-point order, as Python's `sorted` on
/// strings), each with its sort key ([`IdArena::sorted`]).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct IdOrder {
    /// How many leading bytes every id shares; keys are the 8 bytes after them.
    prefix: usize,
    entries: Vec<Entry>,
    /// Whether every id is its prefix and its key's leading bytes up to the padding (each ends
    /// inside its key and none holds a zero byte), so the ids can be read off the keys in order.
    whole: bool,
}

impl IdOrder {
    /// The first id that appears twice, as (earlier row, later row). Only neighbours with equal
    /// keys need their bytes compared.
    pub fn first_duplicate(&self, ids: &IdArena) -> Option<(usize, usize)> {
        self.entries
            .windows(2)
            .find(|w| {
                w[0].key() == w[1].key()
                    && ids.tie(ids, w[0].key(), (w[0].row, w[1].row), self.prefix)
                        == Ordering::Equal
            })
            .map(|w| {
                (
                    w[0].row.min(w[1].row) as usize,
                    w[0].row.max(w[1].row) as usize,
                )
            })
    }

    /// Row indices in id order.
    pub fn rows(&self) -> impl Iterator<Item = u32> + '_ {
        self.entries.iter().map(|e| e.row)
    }

    /// Row indices in id order, collected.
    pub fn order(&self) -> Vec<u32> {
        self.rows().collect()
    }

    pub fn len(&self) -> usize {
        self.entries.len()
    }

    pub fn is_empty(&self) -> bool {
        self.entries.is_empty()
    }
}

/// One step of walking two sorted id lists together ([`walk`]).
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub enum Step {
    /// An id in both lists: its row in the first and in the second.
    Both(u32, u32),
    /// The row of an id of the first list that the second does not hold.
    OnlyFirst(u32),
    /// The row of an id of the second list that the first does not hold.
    OnlySecond(u32),
}

/// Walks two sorted id lists together in byte order: every id of the first list once, as
/// [`Step::Both`] with the row of the equal id in the second list or as [`Step::OnlyFirst`];
/// every id of the second list that no id of the first equals as [`Step::OnlySecond`]. An id
/// repeated in the first list is paired each time; the second list's ids are taken as unique
/// (a repeat past the first is reported as [`Step::OnlySecond`]).
///
/// n + m steps, each comparing the two keys (read in order, next to the rows) and the bytes only
/// where the keys are equal, so ids sharing long prefixes cost no more than any others. Keys are
/// taken past the prefix both lists share: where one list's ids share more than that, its keys
/// are rebuilt as the walk goes.
pub fn walk(
    (a, a_order): (&IdArena, &IdOrder),
    (b, b_order): (&IdArena, &IdOrder),
    each: impl FnMut(Step),
) {
    let (a, b) = sides((a, a_order), (b, b_order));
    walk_sides(a, b, each);
}

/// One list as [`walk`] reads it: its ids and its entries in id order (all, or a part split off
/// at a key), with keys taken past the `shared` bytes both lists share.
#[derive(Clone, Copy)]
struct Side<'a> {
    ids: &'a IdArena,
    entries: &'a [Entry],
    /// Whether the entries' keys were taken past more bytes than `shared`, so they are rebuilt.
    rebuild: bool,
    shared: usize,
}

impl Side<'_> {
    /// `entry`'s key past the `shared` bytes.
    fn key(&self, entry: Entry) -> u64 {
        if self.rebuild {
            key(&self.ids.get(entry.row as usize)[self.shared..])
        } else {
            entry.key()
        }
    }

    /// The part before the first entry whose key is `pivot` or more, and the rest. Keys past a
    /// prefix of ids in byte order never decrease, so equal ids fall in the same part.
    fn split(self, pivot: u64) -> (Self, Self) {
        let at = self.entries.partition_point(|&e| self.key(e) < pivot);
        let (first, rest) = self.entries.split_at(at);
        (
            Side {
                entries: first,
                ..self
            },
            Side {
                entries: rest,
                ..self
            },
        )
    }
}

/// The two lists of a [`walk`], with the prefix their ids share.
fn sides<'a>(
    (a, a_order): (&'a IdArena, &'a IdOrder),
    (b, b_order): (&'a IdArena, &'a IdOrder),
) -> (Side<'a>, Side<'a>) {
    let shared = match (a_order.entries.first(), b_order.entries.first()) {
        (Some(x), Some(y)) => {
            let (x, y) = (
                &a.get(x.row as usize)[..a_order.prefix],
                &b.get(y.row as usize)[..b_order.prefix],
            );
            x.iter().zip(y).take_while(|(p, q)| p == q).count()
        }
        _ => 0,
    };
    let side = |ids, order: &'a IdOrder| Side {
        ids,
        entries: &order.entries,
        rebuild: order.prefix != shared,
        shared,
    };
    (side(a, a_order), side(b, b_order))
}

/// [`walk`] on two sides.
fn walk_sides(a: Side<'_>, b: Side<'_>, mut each: impl FnMut(Step)) {
    let (mut i, mut j, mut b_paired) = (0, 0, false);
    let (an, bn) = (a.entries.len(), b.entries.len());
    while i < an && j < bn {
        let (ra, rb) = (a.entries[i].row, b.entries[j].row);
        let (ka, kb) = (a.key(a.entries[i]), b.key(b.entries[j]));
        let ordering = ka
            .cmp(&kb)
            .then_with(|| a.ids.tie(b.ids, ka, (ra, rb), a.shared));
        match ordering {
            Ordering::Equal => {
                each(Step::Both(ra, rb));
                i += 1;
                b_paired = true;
            }
            Ordering::Less => {
                each(Step::OnlyFirst(ra));
                i += 1;
            }
            Ordering::Greater => {
                if !b_paired {
                    each(Step::OnlySecond(rb));
                }
                j += 1;
                b_paired = false;
            }
        }
    }
    for e in &a.entries[i..] {
        each(Step::OnlyFirst(e.row));
    }
    let rest = if b_paired { j + 1 } else { j };
    for e in b.entries.get(rest..).unwrap_or_default() {
        each(Step::OnlySecond(e.row));
    }
}

/// A class, as its index in the class names of its file: two bytes a row (10^7 rows of labels
/// and predictions take 40 MB rather than 80), so a file holds at most [`MAX_CLASSES`].
pub type Class = u16;

/// Most distinct classes a predictions file may hold ([`Class`]); the next is refused.
pub const MAX_CLASSES: usize = Class::MAX as usize + 1;

/// What the predictions file holds for each row.
#[derive(Debug, Clone, PartialEq)]
pub enum Columns {
    Classification {
        /// Class names; indices below refer to them.
        classes: Vec<String>,
        actual: Vec<Class>,
        predicted: Option<Vec<Class>>,
        /// Binary: score of the positive class (`positive` index).
        score: Option<Vec<f64>>,
        /// Probability given to the true class (from `score` in binary, `prob_<class>` otherwise).
        prob_true: Option<Vec<f64>>,
    },
    Regression {
        target: Vec<f64>,
        prediction: Vec<f64>,
    },
}

/// A model's predictions on the test split, read and checked.
#[derive(Debug, Clone, PartialEq)]
pub struct PredictionSet {
    pub file: String,
    pub ids: IdArena,
    pub columns: Columns,
    /// Index of the positive class, for binary F1 and ROC AUC.
    pub positive: Option<u32>,
    /// `sha256:` hash of the sorted ids.
    pub fingerprint: String,
    /// The ids in byte order with their sort keys.
    pub order: IdOrder,
}

impl PredictionSet {
    pub fn rows(&self) -> usize {
        self.ids.len()
    }
}

/// Pairs the rows of two prediction sets by id: `(row in a, row in b)` for every id in both,
/// and the count of ids found in only one of them.
///
/// Past [`PAIR_ON_TWO_THREADS`] rows the lists are split at the key of the model's middle id and
/// the two parts walked on two threads; every id falls in the same part of both lists, so the
/// pairs, in id order, are the same as one walk's.
pub fn pair_by_id(a: &PredictionSet, b: &PredictionSet) -> (Vec<(u32, u32)>, usize) {
    let (a, b) = sides((&a.ids, &a.order), (&b.ids, &b.order));
    pair(a, b, a.entries.len() >= PAIR_ON_TWO_THREADS)
}

/// `a` and `b` each split in two at the key of `a`'s middle entry, when `two_threads` and `a`
/// has entries: every id falls in the same part of both lists, so walking the first parts and
/// then the second ones is walking the whole lists.
fn halves<'a>(a: Side<'a>, b: Side<'a>, two_threads: bool) -> Option<[(Side<'a>, Side<'a>); 2]> {
    let &middle = a.entries.get(a.entries.len() / 2).filter(|_| two_threads)?;
    let pivot = a.key(middle);
    let ((a_first, a_rest), (b_first, b_rest)) = (a.split(pivot), b.split(pivot));
    Some([(a_first, b_first), (a_rest, b_rest)])
}

/// [`pair_by_id`] on two sides, on one thread or on two ([`halves`]). Each part fills its own
/// stretch of one list, which has room for a pair per id of `a` (an id of the first list pairs
/// once at most; the list is zeroed memory, so room never paired for stays untouched); the
/// second part's pairs are then moved down to follow the first's.
fn pair(a: Side<'_>, b: Side<'_>, two_threads: bool) -> (Vec<(u32, u32)>, usize) {
    let mut pairs = vec![(0, 0); a.entries.len()];
    let Some([(a_first, b_first), (a_rest, b_rest)]) = halves(a, b, two_threads) else {
        let (written, unmatched) = fill_pairs(a, b, &mut pairs);
        pairs.truncate(written);
        return (pairs, unmatched);
    };
    let (first, rest) = pairs.split_at_mut(a_first.entries.len());
    let ((first_pairs, first_unmatched), (rest_pairs, rest_unmatched)) = both(
        || fill_pairs(a_first, b_first, first),
        || fill_pairs(a_rest, b_rest, rest),
    );
    let rest_start = a_first.entries.len();
    pairs.copy_within(rest_start..rest_start + rest_pairs, first_pairs);
    pairs.truncate(first_pairs + rest_pairs);
    (pairs, first_unmatched + rest_unmatched)
}

/// Counts over the rows two prediction sets share, summed as their ids are walked
/// ([`count_by_id`]).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Counted<const N: usize> {
    /// Ids in both sets.
    pub pairs: u64,
    /// Ids in only one of them.
    pub unpaired: usize,
    /// The sums of `count` over the shared rows.
    pub sums: [u64; N],
}

impl<const N: usize> Counted<N> {
    const NONE: Counted<N> = Counted {
        pairs: 0,
        unpaired: 0,
        sums: [0; N],
    };

    fn add(self, other: Counted<N>) -> Counted<N> {
        Counted {
            pairs: self.pairs + other.pairs,
            unpaired: self.unpaired + other.unpaired,
            sums: std::array::from_fn(|k| self.sums[k] + other.sums[k]),
        }
    }
}

/// Sums `count(row in a, row in b)` over every id in both sets as the ids are walked, for a test
/// that needs only counts (McNemar's): no list of pairs is written and read again. Split and
/// walked on two threads past [`PAIR_ON_TWO_THREADS`] rows, as [`pair_by_id`] is; the sums are
/// whole numbers, so they are the same on any number of threads.
pub fn count_by_id<const N: usize>(
    a: &PredictionSet,
    b: &PredictionSet,
    count: impl Fn(usize, usize) -> [u64; N] + Sync,
) -> Counted<N> {
    let (a, b) = sides((&a.ids, &a.order), (&b.ids, &b.order));
    count_sides(a, b, &count, a.entries.len() >= PAIR_ON_TWO_THREADS)
}

/// [`count_by_id`] on two sides, on one thread or on two ([`halves`]).
fn count_sides<const N: usize>(
    a: Side<'_>,
    b: Side<'_>,
    count: &(impl Fn(usize, usize) -> [u64; N] + Sync),
    two_threads: bool,
) -> Counted<N> {
    // The pairs a stretch of the walk finds are counted together: a loop of loads without
    // branches keeps many reads out of file order in flight, where counting each pair inside
    // the walk waits on the walk's comparisons.
    let flush = |(counted, chunk): &mut (Counted<N>, Vec<(u32, u32)>)| {
        for &(i, j) in chunk.iter() {
            for (sum, c) in counted.sums.iter_mut().zip(count(i as usize, j as usize)) {
                *sum += c;
            }
        }
        counted.pairs += chunk.len() as u64;
        chunk.clear();
    };
    let parts = walk_sides_in_parts(
        a,
        b,
        two_threads,
        || (Counted::NONE, Vec::with_capacity(COUNT_CHUNK)),
        |state, step| match step {
            Step::Both(ra, rb) => {
                state.1.push((ra, rb));
                if state.1.len() == COUNT_CHUNK {
                    flush(state);
                }
            }
            Step::OnlyFirst(_) | Step::OnlySecond(_) => state.0.unpaired += 1,
        },
    );
    parts.into_iter().fold(Counted::NONE, |all, mut part| {
        flush(&mut part);
        all.add(part.0)
    })
}

/// [`walk`] in parts: split in two at the first list's middle key past [`PAIR_ON_TWO_THREADS`]
/// ids of it ([`halves`]) and the parts walked on two threads, else whole. Each part starts
/// from `start()` and passes each of its steps, in id order, to `each`; the parts' states are
/// returned in id order. Every id falls in the same part of both lists, so each id's steps are
/// those one walk gives.
pub fn walk_parts<S: Send>(
    a: (&IdArena, &IdOrder),
    b: (&IdArena, &IdOrder),
    start: impl Fn() -> S + Sync,
    each: impl Fn(&mut S, Step) + Sync,
) -> Vec<S> {
    let (a, b) = sides(a, b);
    walk_sides_in_parts(a, b, a.entries.len() >= PAIR_ON_TWO_THREADS, start, each)
}

/// [`walk_parts`] on two sides, on one thread or on two.
fn walk_sides_in_parts<S: Send>(
    a: Side<'_>,
    b: Side<'_>,
    two_threads: bool,
    start: impl Fn() -> S + Sync,
    each: impl Fn(&mut S, Step) + Sync,
) -> Vec<S> {
    let walk_part = |a, b| {
        let mut state = start();
        walk_sides(a, b, |step| each(&mut state, step));
        state
    };
    match halves(a, b, two_threads) {
        Some([(a_first, b_first), (a_rest, b_rest)]) => {
            let (first, rest) = both(|| walk_part(a_first, b_first), || walk_part(a_rest, b_rest));
            vec![first, rest]
        }
        None => vec![walk_part(a, b)],
    }
}

/// The pairs of two sides written into `out`, which has room for a pair per id of `a`: the
/// count of pairs written and of ids in only one side.
fn fill_pairs(a: Side<'_>, b: Side<'_>, out: &mut [(u32, u32)]) -> (usize, usize) {
    let (mut written, mut unmatched) = (0, 0);
    walk_sides(a, b, |step| match step {
        Step::Both(ra, rb) => {
            out[written] = (ra, rb);
            written += 1;
        }
        Step::OnlyFirst(_) | Step::OnlySecond(_) => unmatched += 1,
    });
    (written, unmatched)
}

/// Pairs [`count_by_id`] collects before counting them.
const COUNT_CHUNK: usize = 1 << 12;

/// Rows past which [`pair_by_id`] walks on two threads.
const PAIR_ON_TWO_THREADS: usize = 1 << 20;

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn fingerprint_is_the_hash_of_sorted_ids_joined_by_newlines() {
        let mut ids = IdArena::default();
        for id in ["b", "a", "c"] {
            ids.push(id.as_bytes()).unwrap();
        }
        let order = ids.sorted();
        // sha256 of the bytes "a\nb\nc", computed with Python 3.11 hashlib:
        // hashlib.sha256(b"a\nb\nc").hexdigest()
        assert_eq!(
            ids.fingerprint(&order),
            "sha256:ea7fb08b7a2dc4619ffb7c7bb38d95a2047935fa165d71b12efd3852a2e6d0cc"
        );
        assert_eq!(order.first_duplicate(&ids), None);
    }

    /// Whether `id` is among `ids`, by walking a one-id list beside them.
    fn contains(ids: &IdArena, order: &IdOrder, id: &[u8]) -> bool {
        let mut one = IdArena::default();
        one.push(id).unwrap();
        let mut found = false;
        walk((&one, &one.sorted()), (ids, order), |step| {
            found |= matches!(step, Step::Both(..));
        });
        found
    }

    /// Ids that share a long prefix and all fall on two keys (two dates), with random suffixes:
    /// membership once cost a scan of every id with the same key (200k ids took 39 s). This just
    /// has to end; the order must still be byte order and every id must be paired with itself.
    #[test]
    fn ids_sharing_long_prefixes_sort_and_look_up_in_n_log_n() {
        let mut ids = IdArena::default();
        let mut state = 0x9e37_79b9_7f4a_7c15u64;
        let n = 200_000;
        for i in 0..n {
            // xorshift64: a fixed pseudo-random suffix, so the ids are in no useful order.
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            let date = if i % 2 == 0 {
                "29/plant-A"
            } else {
                "30/plant-B"
            };
            let id = format!("2026-11-{date}/row-{:012}-{i}", state % 1_000_000_000_000);
            ids.push(id.as_bytes()).unwrap();
        }
        let sorted = ids.sorted();
        let order = sorted.order();
        assert!(
            order
                .windows(2)
                .all(|w| ids.get(w[0] as usize) < ids.get(w[1] as usize))
        );
        let mut paired = 0;
        walk((&ids, &sorted), (&ids, &sorted), |step| {
            assert!(matches!(step, Step::Both(a, b) if a == b), "{step:?}");
            paired += 1;
        });
        assert_eq!(paired, n);
        assert!(!contains(&ids, &sorted, b"2026-11-29/plant-A/row-x"));
        assert_eq!(sorted.first_duplicate(&ids), None);
    }

    #[test]
    fn sorting_by_key_agrees_with_byte_order() {
        // Ids sharing long prefixes, of unequal length, with bytes equal to the zero padding:
        // the order must be plain byte order (what Python's `sorted` gives on these strings).
        let words = [
            "row-10",
            "row-1",
            "row-100000000",
            "row-10000000\u{0}",
            "row-2",
            "row-1000000000",
            "row-10000000",
            "row-099999999",
        ];
        let mut ids = IdArena::default();
        for w in words {
            ids.push(w.as_bytes()).unwrap();
        }
        let sorted: Vec<&[u8]> = ids
            .sorted()
            .order()
            .iter()
            .map(|&i| ids.get(i as usize))
            .collect();
        let mut expected: Vec<&[u8]> = words.iter().map(|w| w.as_bytes()).collect();
        expected.sort();
        assert_eq!(sorted, expected);
        let lookup = ids.sorted();
        for w in words {
            assert!(contains(&ids, &lookup, w.as_bytes()));
        }
        for absent in ["row-3", "row-", "col-1", "row-10000000\u{0}\u{0}"] {
            assert!(!contains(&ids, &lookup, absent.as_bytes()), "{absent}");
        }
    }

    /// Counting as the ids are walked over more shared rows than one chunk holds, on one thread
    /// and split in two: the counts the list of pairs gives (the pairs, the ids in one list
    /// only, and a sum over the pairs).
    #[test]
    fn counts_over_many_chunks_are_the_counts_of_the_pairs() {
        // Every third id of the first list and every fifth of the second are their own: 8 in 15
        // are shared, over 3 chunks' worth.
        let n = 6 * COUNT_CHUNK + 100;
        // Row i holds `own` + i where i is a multiple of `every`, else the shared `s` + i.
        let list = |rows: Vec<usize>, every: usize, own: &str| -> Vec<String> {
            rows.into_iter()
                .map(|i| {
                    if i % every == 0 {
                        format!("{own}{i}")
                    } else {
                        format!("s{i}")
                    }
                })
                .collect()
        };
        let first = list((0..n).collect(), 3, "a");
        let second = list((0..n).rev().collect(), 5, "b");
        let (a, b) = (arena(&first), arena(&second));
        let (a_order, b_order) = (a.sorted(), b.sorted());
        let (sa, sb) = sides((&a, &a_order), (&b, &b_order));
        let (pairs, unpaired) = pair(sa, sb, false);
        // Shared: i neither a multiple of 3 nor of 5; pairs of the second list's rows reversed.
        let shared = (0..n).filter(|i| i % 3 != 0 && i % 5 != 0).count();
        assert_eq!(pairs.len(), shared);
        assert!(shared > 3 * COUNT_CHUNK);
        let count = |i: usize, j: usize| [(i + j) as u64];
        let want = Counted {
            pairs: shared as u64,
            unpaired,
            sums: [pairs.iter().map(|&(i, j)| u64::from(i + j)).sum()],
        };
        for two_threads in [false, true] {
            assert_eq!(count_sides(sa, sb, &count, two_threads), want);
        }
    }

    /// Ids as hostile inputs give them: long shared prefixes on two dates (so most keys past the
    /// shared prefix are equal), one list's prefix a prefix of another's, suffixes of unequal
    /// length with bytes equal to the key's zero padding.
    pub(crate) fn hostile_id() -> impl proptest::strategy::Strategy<Value = String> {
        use proptest::strategy::Strategy;
        let prefixes = [
            "2026-11-29/plant-A/row-0000",
            "2026-11-30/plant-B/row-0000",
            "2026-11-29/plant-A/row-00",
            "",
        ];
        (0..prefixes.len(), "[01z\u{0}]{0,10}")
            .prop_map(move |(p, s)| format!("{}{s}", prefixes[p]))
    }

    /// Every byte value at every place of a word, among other bytes equal to the one looked
    /// for or not, for a line feed, a comma and the bytes at either end: the marks are the high
    /// bits of the bytes equal to it, by comparing each byte.
    #[test]
    fn equal_bytes_are_marked_exactly() {
        for sought in [b'\n', b',', 0x00, 0x7f, 0x80, 0xff] {
            for fill in [sought, b'a', sought ^ 1, 0x00, 0xff] {
                for at in 0..8 {
                    for b in 0..=255u8 {
                        let mut bytes = [fill; 8];
                        bytes[at] = b;
                        let want = bytes.iter().enumerate().fold(0u64, |m, (i, &x)| {
                            m | (u64::from(x == sought) << (8 * i + 7))
                        });
                        let got = bytes_equal(u64::from_le_bytes(bytes), sought);
                        assert_eq!(got, want, "{sought} in {bytes:?}");
                    }
                }
            }
        }
    }

    /// Ids read off their keys over many 64 KiB batches (hashed on a second thread, the
    /// batches reused) hash as the sorted ids joined by line feeds hashed in one piece.
    #[test]
    fn a_fingerprint_over_many_batches_is_the_hash_of_the_joined_ids() {
        let ids: Vec<String> = (0..60_000u32)
            .map(|i| format!("row-{}", i.wrapping_mul(2_654_435_761) % 9_999_991))
            .collect();
        let a = arena(&ids);
        let order = a.sorted();
        assert!(order.whole, "every id whole in its key");
        let mut sorted = ids.clone();
        sorted.sort();
        let joined = sorted.join("\n");
        assert!(joined.len() > 5 << 16, "several batches");
        let hex: String = Sha256::digest(joined.as_bytes())
            .iter()
            .map(|b| format!("{b:02x}"))
            .collect();
        assert_eq!(a.fingerprint(&order), format!("sha256:{hex}"));
    }

    fn arena(ids: &[String]) -> IdArena {
        let mut arena = IdArena::default();
        for id in ids {
            arena.push(id.as_bytes()).unwrap();
        }
        arena
    }

    proptest::proptest! {
        /// The shared prefix is the longest prefix every id starts with, counted byte by byte:
        /// ids of 0 to 20 bytes sharing prefixes shorter and longer than a word, the last ones
        /// within 8 bytes of the arena's end.
        #[test]
        fn the_common_prefix_is_the_longest_every_id_starts_with(
            stem in "[ab]{0,12}",
            tails in proptest::collection::vec("[ab]{0,8}", 1..12),
            cut in proptest::collection::vec(0usize..21, 1..12),
        ) {
            let ids: Vec<String> = tails
                .iter()
                .zip(cut.iter().cycle())
                .map(|(tail, &cut)| format!("{stem}{tail}").chars().take(cut).collect())
                .collect();
            let longest = (0..=ids[0].len())
                .rev()
                .find(|&n| ids.iter().all(|id| id.as_bytes().starts_with(&ids[0].as_bytes()[..n])))
                .unwrap_or(0);
            proptest::prop_assert_eq!(arena(&ids).common_prefix(), longest);
        }

        /// Ids that all end inside their key (at most 7 bytes past the shared prefix, as integer
        /// ids are) skip the refinement of equal keys, and their fingerprint is read off the
        /// keys. Against the obvious: the order a sorted `Vec`'s, the first repeat the smallest
        /// repeated id, the fingerprint its definition (the SHA-256 of the sorted ids joined by
        /// line breaks, hashed in one piece; `fingerprint_is_the_hash_of_sorted_ids_joined_by_newlines`
        /// pins that to Python's). Some cases add one id of 8 bytes or more past the prefix,
        /// which turns the refinement and the arena's lookups back on.
        #[test]
        fn ids_ending_inside_their_keys_sort_and_hash_as_bytes(
            short in proptest::collection::vec("(row-)?[0-9a-z]{0,7}", 1..80),
            long in proptest::option::of("(row-)?[0-9]{8,12}"),
        ) {
            let mut ids: Vec<String> = short;
            ids.extend(long);
            let a = arena(&ids);
            let order = a.sorted();
            let got: Vec<&[u8]> = order.rows().map(|r| a.get(r as usize)).collect();
            let mut sorted = ids.clone();
            sorted.sort();
            let expected: Vec<&[u8]> = sorted.iter().map(String::as_bytes).collect();
            proptest::prop_assert_eq!(got, expected);

            let mut counts = std::collections::BTreeMap::new();
            for id in &ids {
                *counts.entry(id.as_str()).or_insert(0) += 1;
            }
            let repeated = counts.iter().find(|&(_, &c)| c > 1).map(|(id, _)| *id);
            let found = order.first_duplicate(&a).map(|(x, y)| {
                assert_eq!(ids[x], ids[y]);
                ids[x].as_str()
            });
            proptest::prop_assert_eq!(found, repeated);

            let digest = Sha256::digest(sorted.join("\n").as_bytes());
            let hex: String = digest.iter().map(|b| format!("{b:02x}")).collect();
            proptest::prop_assert_eq!(a.fingerprint(&order), format!("sha256:{hex}"));
        }

        /// Sorting, the duplicate check and the merge walk against the obvious: a sorted `Vec`,
        /// a `BTreeMap` of counts and a `HashMap` from id to row.
        #[test]
        fn sorting_and_walking_agree_with_sets(
            first in proptest::collection::vec(hostile_id(), 0..60),
            second in proptest::collection::vec(hostile_id(), 0..60),
            from_one_prefix in proptest::bool::ANY,
            with_nul in proptest::bool::ANY,
        ) {
            use std::collections::{BTreeMap, BTreeSet, HashMap, HashSet};
            // Without zero bytes (as the readers give them) ties on a key are settled unread.
            let strip = |ids: Vec<String>| -> Vec<String> {
                if with_nul { ids } else { ids.into_iter().map(|id| id.replace('\0', "z")).collect() }
            };
            let (first, second) = (strip(first), strip(second));
            // Half the cases hold ids of one date only, whose shared prefix is long.
            let first: Vec<String> = if from_one_prefix {
                first.into_iter().filter(|id| id.starts_with("2026-11-29")).collect()
            } else {
                first
            };
            // The second list's ids unique, as `walk` takes them (first occurrence kept).
            let mut seen = HashSet::new();
            let second: Vec<String> = second.into_iter().filter(|id| seen.insert(id.clone())).collect();
            let (a, b) = (arena(&first), arena(&second));
            let (a_order, b_order) = (a.sorted(), b.sorted());

            let mut expected = first.clone();
            expected.sort();
            let got: Vec<String> = a_order
                .rows()
                .map(|r| String::from_utf8(a.get(r as usize).to_vec()).unwrap())
                .collect();
            proptest::prop_assert_eq!(got, expected);

            let mut counts: BTreeMap<&str, usize> = BTreeMap::new();
            for id in &first {
                *counts.entry(id).or_default() += 1;
            }
            let smallest_repeated = counts.iter().find(|&(_, &c)| c > 1).map(|(id, _)| *id);
            match (a_order.first_duplicate(&a), smallest_repeated) {
                (None, None) => {}
                (Some((x, y)), Some(id)) => {
                    proptest::prop_assert!(x < y);
                    proptest::prop_assert_eq!(&first[x], id);
                    proptest::prop_assert_eq!(&first[y], id);
                }
                (got, want) => proptest::prop_assert!(false, "{got:?} against {want:?}"),
            }

            let row_in_second: HashMap<&str, u32> =
                second.iter().enumerate().map(|(i, id)| (id.as_str(), i as u32)).collect();
            let in_first: HashSet<&str> = first.iter().map(String::as_str).collect();
            let mut want = BTreeSet::new();
            for (i, id) in first.iter().enumerate() {
                want.insert(match row_in_second.get(id.as_str()) {
                    Some(&j) => Step::Both(i as u32, j),
                    None => Step::OnlyFirst(i as u32),
                });
            }
            for (j, id) in second.iter().enumerate() {
                if !in_first.contains(id.as_str()) {
                    want.insert(Step::OnlySecond(j as u32));
                }
            }
            // Pairing split in two at the first list's middle key (on two threads, as past a
            // million rows) gives what one walk gives.
            let (sa, sb) = sides((&a, &a_order), (&b, &b_order));
            proptest::prop_assert_eq!(pair(sa, sb, true), pair(sa, sb, false));
            // Counting as the ids are walked, split or not, counts what the list of pairs holds:
            // the pairs, the ids in one list only and a sum over the pairs.
            let (pairs, unpaired) = pair(sa, sb, false);
            let count = |i: usize, j: usize| [u64::from(i < j), (i * 7 + j) as u64];
            let from_pairs = Counted {
                pairs: pairs.len() as u64,
                unpaired,
                sums: [
                    pairs.iter().filter(|&&(i, j)| i < j).count() as u64,
                    pairs.iter().map(|&(i, j)| u64::from(i) * 7 + u64::from(j)).sum(),
                ],
            };
            for two_threads in [false, true] {
                proptest::prop_assert_eq!(count_sides(sa, sb, &count, two_threads), from_pairs);
            }
            // Walked in parts, the parts' steps one after the other are one walk's steps.
            let mut one_walk = Vec::new();
            walk_sides(sa, sb, |step| one_walk.push(step));
            let parts = walk_sides_in_parts(sa, sb, true, Vec::new, |steps, step| steps.push(step));
            proptest::prop_assert_eq!(parts.concat(), one_walk);

            let mut steps = Vec::new();
            walk((&a, &a_order), (&b, &b_order), |step| steps.push(step));
            proptest::prop_assert_eq!(steps.len(), want.len());
            proptest::prop_assert_eq!(steps.into_iter().collect::<BTreeSet<_>>(), want);
        }
    }
}
