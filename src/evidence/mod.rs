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
pub mod read;

pub use read::read_predictions;

use sha2::{Digest, Sha256};

/// Why an id with a control character is refused: a line break or tab inside an id (possible in
/// a quoted CSV cell) would make two different id lists hash to the same fingerprint text and
/// show as two rows in a report.
pub const CONTROL_IN_ID: &str =
    "an id must not contain a line break, tab or other control character";

/// The byte offset of the first control character (C0 or DEL) in `id`.
pub fn control_at(id: &[u8]) -> Option<usize> {
    id.iter().position(|&b| b < 0x20 || b == 0x7f)
}

/// Row ids stored back to back in one buffer.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct IdArena {
    bytes: Vec<u8>,
    ends: Vec<u32>,
}

impl IdArena {
    /// Adds an id; `None` when the arena would pass 4 GiB.
    pub fn push(&mut self, id: &[u8]) -> Option<()> {
        let end = u32::try_from(self.bytes.len() + id.len()).ok()?;
        self.bytes.extend_from_slice(id);
        self.ends.push(end);
        Some(())
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

    /// The ids sorted, for fast lookups.
    ///
    /// Comparing ids through the arena is slow for millions of rows, so each id gets a key: the
    /// 8 bytes after the prefix every id shares, big-endian and zero-padded. Ordering by key
    /// agrees with byte order wherever keys differ; runs of equal keys are then sorted by their
    /// full bytes.
    pub fn sorted(&self) -> SortedIds<'_> {
        let prefix = self.common_prefix();
        let mut keyed: Vec<(u64, u32)> = (0..self.len())
            .map(|i| (key(&self.get(i)[prefix..]), i as u32))
            .collect();
        // One sort by key, full bytes breaking ties: n log n comparisons whatever the ids share.
        keyed.sort_unstable_by(|a, b| {
            a.0.cmp(&b.0)
                .then_with(|| self.get(a.1 as usize).cmp(self.get(b.1 as usize)))
        });
        SortedIds {
            arena: self,
            prefix,
            keyed,
        }
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
    pub fn fingerprint(&self, order: &[u32]) -> String {
        let mut hasher = Sha256::new();
        for (k, &i) in order.iter().enumerate() {
            if k > 0 {
                hasher.update(b"\n");
            }
            hasher.update(self.get(i as usize));
        }
        let digest = hasher.finalize();
        let mut out = String::from("sha256:");
        for b in digest {
            out.push_str(&format!("{b:02x}"));
        }
        out
    }
}

/// The 8 bytes at the start of `suffix`, big-endian, zero-padded.
fn key(suffix: &[u8]) -> u64 {
    let mut bytes = [0u8; 8];
    let n = suffix.len().min(8);
    bytes[..n].copy_from_slice(&suffix[..n]);
    u64::from_be_bytes(bytes)
}

/// Ids in sorted order with their sort keys, for membership tests by binary search.
pub struct SortedIds<'a> {
    arena: &'a IdArena,
    prefix: usize,
    keyed: Vec<(u64, u32)>,
}

impl SortedIds<'_> {
    /// The first id that appears twice, as (earlier row, later row). Only neighbours with equal
    /// keys need their bytes compared.
    pub fn first_duplicate(&self) -> Option<(usize, usize)> {
        self.keyed
            .windows(2)
            .find(|w| {
                w[0].0 == w[1].0
                    && self.arena.get(w[0].1 as usize) == self.arena.get(w[1].1 as usize)
            })
            .map(|w| (w[0].1.min(w[1].1) as usize, w[0].1.max(w[1].1) as usize))
    }

    /// Row indices in id order (byte order, which for UTF-8 is code-point order, as Python's
    /// `sorted` on strings).
    pub fn order(&self) -> Vec<u32> {
        self.keyed.iter().map(|&(_, i)| i).collect()
    }

    /// Whether `id` is among the ids.
    pub fn contains(&self, id: &[u8]) -> bool {
        if self.keyed.is_empty() || id.len() < self.prefix {
            return false;
        }
        let shared = &self.arena.get(self.keyed[0].1 as usize)[..self.prefix];
        if &id[..self.prefix] != shared {
            return false;
        }
        // The list is in (key, bytes) order, which is byte order: one binary search on both,
        // so ids sharing a key (long common prefixes) cost log n comparisons, not a scan.
        let k = key(&id[self.prefix..]);
        self.keyed
            .binary_search_by(|&(kk, i)| {
                kk.cmp(&k).then_with(|| self.arena.get(i as usize).cmp(id))
            })
            .is_ok()
    }
}

/// What the predictions file holds for each row.
#[derive(Debug, Clone, PartialEq)]
pub enum Columns {
    Classification {
        /// Class names; indices below refer to them.
        classes: Vec<String>,
        actual: Vec<u32>,
        predicted: Option<Vec<u32>>,
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
    /// Row indices in id order.
    pub order: Vec<u32>,
}

impl PredictionSet {
    pub fn rows(&self) -> usize {
        self.ids.len()
    }
}

/// Pairs the rows of two prediction sets by id: `(row in a, row in b)` for every id in both,
/// and the count of ids found in only one of them.
pub fn pair_by_id(a: &PredictionSet, b: &PredictionSet) -> (Vec<(u32, u32)>, usize) {
    let (mut i, mut j) = (0, 0);
    let mut pairs = Vec::with_capacity(a.rows().min(b.rows()));
    let mut unmatched = 0;
    while i < a.order.len() && j < b.order.len() {
        let (ra, rb) = (a.order[i], b.order[j]);
        match a.ids.get(ra as usize).cmp(b.ids.get(rb as usize)) {
            std::cmp::Ordering::Equal => {
                pairs.push((ra, rb));
                i += 1;
                j += 1;
            }
            std::cmp::Ordering::Less => {
                unmatched += 1;
                i += 1;
            }
            std::cmp::Ordering::Greater => {
                unmatched += 1;
                j += 1;
            }
        }
    }
    unmatched += (a.order.len() - i) + (b.order.len() - j);
    (pairs, unmatched)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn fingerprint_is_the_hash_of_sorted_ids_joined_by_newlines() {
        let mut ids = IdArena::default();
        for id in ["b", "a", "c"] {
            ids.push(id.as_bytes()).unwrap();
        }
        let order = ids.sorted().order();
        // sha256 of the bytes "a\nb\nc", computed with Python 3.11 hashlib:
        // hashlib.sha256(b"a\nb\nc").hexdigest()
        assert_eq!(
            ids.fingerprint(&order),
            "sha256:ea7fb08b7a2dc4619ffb7c7bb38d95a2047935fa165d71b12efd3852a2e6d0cc"
        );
        assert_eq!(ids.sorted().first_duplicate(), None);
    }

    /// Ids that share a long prefix and all fall on two keys (two dates), with random suffixes:
    /// membership once cost a scan of every id with the same key (200k ids took 39 s). This just
    /// has to end; the order must still be byte order and every id must be found.
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
        assert!((0..n).all(|i| sorted.contains(ids.get(i))));
        assert!(!sorted.contains(b"2026-11-29/plant-A/row-x"));
        assert_eq!(sorted.first_duplicate(), None);
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
            assert!(lookup.contains(w.as_bytes()));
        }
        for absent in ["row-3", "row-", "col-1", "row-10000000\u{0}\u{0}"] {
            assert!(!lookup.contains(absent.as_bytes()), "{absent}");
        }
    }
}
