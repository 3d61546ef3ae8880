//! The holdout ledger: an append-only, hash-chained record of every scoring of a test split.
//!
//! The ledger is a JSON Lines file committed in the repository, one [`Entry`] per holdout
//! evaluation. Each entry carries the SHA-256 of its own content (`hash`) and the hash of the
//! entry before it (`prev`), so editing, removing, inserting or reordering entries breaks the chain
//! at a place [`verify`] names. Each entry also carries a `key` identifying the evaluation it
//! records, so appending the same manifest twice adds nothing. The holdout-budget rule counts
//! ledger entries together with the evaluations in the manifests being checked.
//!
//! A chain cannot see its own end cut off, nor a ledger rewritten from scratch with its chain
//! recomputed: both are valid chains. So a check is given a [`Head`] it can trust — the entry
//! count and last hash of the ledger on the base branch, from the base branch's JSON report or a
//! `--ledger-head` value — and [`extends`] fails unless the ledger read starts with exactly the
//! entries that head ends. Entries up to the head are then known to be unchanged (each hash
//! covers the previous one), and entries after it are new.
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

/// Where a ledger ends: its entry count and the hash of its last entry ([`GENESIS`] when empty).
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize, schemars::JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct Head {
    pub entries: u64,
    pub last_hash: String,
}

impl Head {
    /// The head of a ledger with these entries.
    pub fn of(entries: &[Entry]) -> Head {
        Head {
            entries: entries.len() as u64,
            last_hash: entries
                .last()
                .map_or(GENESIS, |e| e.hash.as_str())
                .to_owned(),
        }
    }

    /// Parses `COUNT:HASH`, e.g. `3:sha256:9f…` (the form [`fmt::Display`] writes); an empty
    /// ledger's head is `0:` followed by [`GENESIS`].
    ///
    /// [`fmt::Display`]: std::fmt::Display
    pub fn parse(text: &str) -> Result<Head, String> {
        let (count, hash) = text
            .split_once(':')
            .ok_or_else(|| format!("expected COUNT:HASH, found {text:?}"))?;
        let entries: u64 = count.parse().map_err(|_| {
            format!("expected an entry count before the first `:`, found {count:?}")
        })?;
        let head = Head {
            entries,
            last_hash: hash.to_owned(),
        };
        head.check()?;
        Ok(head)
    }

    /// Whether the hash is well formed and fits the count (an empty ledger ends at [`GENESIS`]).
    pub fn check(&self) -> Result<(), String> {
        let hex = self.last_hash.strip_prefix("sha256:").unwrap_or("");
        if hex.len() != 64
            || !hex
                .bytes()
                .all(|b| b.is_ascii_digit() || (b'a'..=b'f').contains(&b))
        {
            return Err(format!(
                "expected a hash of the form sha256:<64 lowercase hex digits>, found {:?}",
                self.last_hash
            ));
        }
        if (self.entries == 0) != (self.last_hash == GENESIS) {
            return Err(if self.entries == 0 {
                format!("an empty ledger's head ends at {GENESIS}")
            } else {
                format!(
                    "{GENESIS} is the head of an empty ledger, not of {} entries",
                    self.entries
                )
            });
        }
        Ok(())
    }
}

impl std::fmt::Display for Head {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}:{}", self.entries, self.last_hash)
    }
}

/// Checks that verified `entries` extend `head`: at least as many entries, and the entry at the
/// head's position has the head's hash. As every hash covers the one before, the entries up to
/// the head are then exactly the ones the head was taken from.
pub fn extends(entries: &[Entry], head: &Head) -> Result<(), Broken> {
    let have = entries.len() as u64;
    if have < head.entries {
        return Err(Broken {
            line: have,
            message: format!(
                "the ledger has {have} entr{} but the trusted head has {}: entries were cut off or \
                 the ledger was emptied or replaced",
                if have == 1 { "y" } else { "ies" },
                head.entries
            ),
        });
    }
    let at = head.entries as usize;
    let hash = if at == 0 {
        GENESIS
    } else {
        entries[at - 1].hash.as_str()
    };
    if hash != head.last_hash {
        return Err(Broken {
            line: head.entries,
            message: format!(
                "entry {} is not the entry the trusted head ends with ({}): the ledger was \
                 rewritten up to there, its chain recomputed",
                head.entries, head.last_hash
            ),
        });
    }
    Ok(())
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
    // Keys seen so far, the ledger's and the new entries': one set, so each evaluation costs
    // one lookup however many there are.
    let mut known: std::collections::HashSet<String> =
        ledger.iter().map(|e| e.key.clone()).collect();
    let mut out: Vec<Entry> = Vec::new();
    let mut prev = ledger.last().map_or(GENESIS.to_owned(), |e| e.hash.clone());
    let mut seq = ledger.len() as u64;
    for model in models {
        for (i, evaluation) in model.holdout.iter().enumerate() {
            let key = evaluation_key(model, i);
            if !known.insert(key.clone()) {
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
