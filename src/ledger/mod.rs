//! The holdout ledger: an append-only, hash-chained record of every scoring of a test split.
//!
//! The ledger is a JSON Lines file committed in the repository, one [`Entry`] per holdout
//! evaluation. Each entry carries the SHA-256 of its own content (`hash`) and the hash of the
//! entry before it (`prev`), so editing, removing, inserting or reordering entries breaks the chain
//! at a place [`verify`] names. Each entry also carries a `key` identifying the evaluation it
//! records, so appending the same manifest twice adds nothing. The holdout-budget rule counts
//! ledger entries together with the evaluations in the manifests being checked.
//!
//! This module is pure (text in, entries and lines out); [`store`] does the file work.

pub mod store;

use serde::{Deserialize, Serialize};
use sha2::{Digest, Sha256};

use crate::manifest::Model;

/// `prev` of the first entry.
pub const GENESIS: &str = "sha256:0000000000000000000000000000000000000000000000000000000000000000";

/// One recorded scoring of a test split.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Entry {
    /// Position in the ledger, from 1.
    pub seq: u64,
    pub test_fingerprint: String,
    pub model: String,
    pub run_id: Option<String>,
    /// When the split was scored (RFC 3339), as the manifest recorded it.
    pub time: Option<String>,
    pub score: f64,
    pub rows: u64,
    /// Identity of the evaluation, so the same one is never recorded twice.
    pub key: String,
    /// `hash` of the previous entry, or [`GENESIS`].
    pub prev: String,
    /// SHA-256 of this entry without this field.
    pub hash: String,
}

/// The content an entry's hash covers: every field but `hash`, in a fixed order.
#[derive(Serialize)]
struct Body<'a> {
    seq: u64,
    test_fingerprint: &'a str,
    model: &'a str,
    run_id: &'a Option<String>,
    time: &'a Option<String>,
    score: f64,
    rows: u64,
    key: &'a str,
    prev: &'a str,
}

impl Entry {
    /// The hash of this entry's content (all fields but `hash`).
    pub fn content_hash(&self) -> String {
        let body = Body {
            seq: self.seq,
            test_fingerprint: &self.test_fingerprint,
            model: &self.model,
            run_id: &self.run_id,
            time: &self.time,
            score: self.score,
            rows: self.rows,
            key: &self.key,
            prev: &self.prev,
        };
        // Serializing a plain struct of strings and finite numbers cannot fail.
        sha256(serde_json::to_string(&body).unwrap_or_default().as_bytes())
    }
}

fn sha256(bytes: &[u8]) -> String {
    let digest = Sha256::digest(bytes);
    let mut out = String::with_capacity(71);
    out.push_str("sha256:");
    for b in digest {
        out.push_str(&format!("{b:02x}"));
    }
    out
}

/// Why a ledger is not intact: the line (1-based) and what is wrong there.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Broken {
    pub line: u64,
    pub message: String,
}

/// Parses and checks a ledger's text; returns its entries, or the first place the chain breaks.
pub fn verify(text: &str) -> Result<Vec<Entry>, Broken> {
    let mut entries: Vec<Entry> = Vec::new();
    if !text.is_empty() && !text.ends_with('\n') {
        let line = text.lines().count() as u64;
        return Err(Broken {
            line,
            message: "the last entry is incomplete (no line end): a write was cut short".into(),
        });
    }
    for (i, raw) in text.lines().enumerate() {
        let line = i as u64 + 1;
        let entry: Entry = serde_json::from_str(raw).map_err(|e| Broken {
            line,
            message: format!(
                "not a ledger entry: {}",
                e.to_string().split(" at line ").next().unwrap_or_default()
            ),
        })?;
        let expected_seq = entries.len() as u64 + 1;
        if entry.seq != expected_seq {
            return Err(Broken {
                line,
                message: format!(
                    "entry {} is at position {expected_seq}: entries were removed, inserted or reordered",
                    entry.seq
                ),
            });
        }
        if entry.content_hash() != entry.hash {
            return Err(Broken {
                line,
                message: format!(
                    "entry {} does not match its own hash: it was changed after it was written",
                    entry.seq
                ),
            });
        }
        let prev = entries.last().map_or(GENESIS, |e| e.hash.as_str());
        if entry.prev != prev {
            return Err(Broken {
                line,
                message: format!(
                    "entry {} does not follow entry {}: an earlier entry was rewritten, removed or reordered",
                    entry.seq,
                    entry.seq - 1
                ),
            });
        }
        entries.push(entry);
    }
    Ok(entries)
}

/// The identity of one holdout evaluation of a model.
pub fn evaluation_key(model: &Model, index: usize) -> String {
    let e = &model.holdout[index];
    let fields = [
        model.data.test_fingerprint.as_str(),
        model.name.as_str(),
        model.run_id.as_deref().unwrap_or(""),
        &e.time.map(|t| t.to_string()).unwrap_or_default(),
        &index.to_string(),
        &e.score.to_string(),
        &e.rows.to_string(),
    ];
    sha256(fields.join("\u{1f}").as_bytes())
}

/// The entries to append for the evaluations in `models` not yet in the ledger, chained onto it.
pub fn new_entries(ledger: &[Entry], models: &[Model]) -> Vec<Entry> {
    let known: std::collections::HashSet<&str> = ledger.iter().map(|e| e.key.as_str()).collect();
    let mut out: Vec<Entry> = Vec::new();
    let mut prev = ledger.last().map_or(GENESIS.to_owned(), |e| e.hash.clone());
    let mut seq = ledger.len() as u64;
    for model in models {
        for (i, evaluation) in model.holdout.iter().enumerate() {
            let key = evaluation_key(model, i);
            if known.contains(key.as_str()) || out.iter().any(|e| e.key == key) {
                continue;
            }
            seq += 1;
            let mut entry = Entry {
                seq,
                test_fingerprint: model.data.test_fingerprint.clone(),
                model: model.name.clone(),
                run_id: model.run_id.clone(),
                time: evaluation.time.map(|t| t.to_string()),
                score: evaluation.score,
                rows: evaluation.rows,
                key,
                prev: prev.clone(),
                hash: String::new(),
            };
            entry.hash = entry.content_hash();
            prev = entry.hash.clone();
            out.push(entry);
        }
    }
    out
}

/// An entry as one ledger line, with its line end.
pub fn line(entry: &Entry) -> String {
    let mut text = serde_json::to_string(entry).unwrap_or_default();
    text.push('\n');
    text
}
