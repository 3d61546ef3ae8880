//! The code paths the fuzz targets drive, shared with `tests/regressions.rs` so that every crash
//! input kept under `tests/regressions/` is replayed through exactly the code the fuzzer ran.
//!
//! Each function takes arbitrary bytes and must return without panicking. Beyond "no panic" they
//! assert what must hold for any input: a rejected input carries at least one diagnostic, an
//! accepted one satisfies the validated types' promises, and untrusted text rendered into the
//! Markdown report stays inert. The harness never touches the file system except where the code
//! under test does (a manifest may name a trials file).

#![allow(dead_code, clippy::unwrap_used)]

use vetscore::diag::Diagnostic;
use vetscore::input::{self, Syntax};
use vetscore::manifest::trials::TrialReader;
use vetscore::manifest::{self, Basis, Claim, Data, Evaluation, Metric, Model, Origin, Task};
use vetscore::policy::{self, Policy};
use vetscore::report::templates::{self, Templates};
use vetscore::report::view;

/// The date every fuzzed check is judged on, so runs are reproducible.
fn today() -> jiff::civil::Date {
    jiff::civil::date(2026, 12, 1)
}

/// Splits off the first byte (it chooses between variants of a target) and reads the rest as UTF-8.
fn selector_and_text(data: &[u8]) -> Option<(u8, &str)> {
    let (&selector, rest) = data.split_first()?;
    Some((selector, std::str::from_utf8(rest).ok()?))
}

fn syntax(selector: u8) -> (&'static str, Syntax) {
    if selector & 1 == 0 {
        ("fuzz.json", Syntax::Json)
    } else {
        ("fuzz.yaml", Syntax::Yaml)
    }
}

fn assert_rejected(problems: &[Diagnostic]) {
    assert!(!problems.is_empty(), "rejected without a diagnostic");
    for p in problems {
        assert!(!p.message.trim().is_empty(), "empty diagnostic: {p:?}");
    }
}

/// A file in the temporary directory holding `bytes`, unique to this process and `name`: the
/// predictions and id-list readers open files through the opener, and fuzzing them through a
/// real file drives the opener's limits too.
fn scratch(name: &str, bytes: &[u8]) -> std::path::PathBuf {
    // Tests run cases on several threads at once; each call gets its own file.
    static CALLS: std::sync::atomic::AtomicU64 = std::sync::atomic::AtomicU64::new(0);
    let call = CALLS.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
    let path = std::env::temp_dir().join(format!(
        "vetscore-fuzz-{}-{call}-{name}",
        std::process::id()
    ));
    std::fs::write(&path, bytes).unwrap();
    path
}

/// A predictions file → `read_predictions`. The selector byte picks the task (binary,
/// multiclass, regression) and whether the manifest lists the classes. An accepted file keeps
/// its promises: one id per row, none empty or holding a control character, ids unique, every
/// column as long as the ids, class indices in range, a `sha256:` fingerprint.
pub fn predictions(data: &[u8]) {
    use vetscore::evidence::read::Expect;
    use vetscore::evidence::{Columns, read_predictions};
    let Some((&selector, rest)) = data.split_first() else {
        return;
    };
    let task = match selector % 3 {
        0 => Task::Binary,
        1 => Task::Multiclass,
        _ => Task::Regression,
    };
    let listed = ["a".to_owned(), "b".to_owned(), "c".to_owned()];
    let classes = (selector & 0x10 != 0).then_some(&listed[..]);
    let path = scratch("predictions.csv", rest);
    let expect = Expect {
        task,
        classes,
        positive: None,
        named_by: "fuzz",
        fingerprint: true,
    };
    match read_predictions(&path, expect) {
        Err(problems) => assert_rejected(&problems),
        Ok(set) => {
            let rows = set.rows();
            assert!(rows > 0, "an accepted file has rows");
            assert!(set.fingerprint.starts_with("sha256:"));
            assert_eq!(set.order.len(), rows);
            let mut ids: Vec<&[u8]> = (0..rows).map(|i| set.ids.get(i)).collect();
            for id in &ids {
                assert!(!id.is_empty(), "an empty id was accepted");
                assert!(
                    !id.iter().any(|&b| b < 0x20 || b == 0x7f),
                    "an id with a control character was accepted: {id:?}"
                );
            }
            ids.sort_unstable();
            assert!(
                ids.windows(2).all(|w| w[0] != w[1]),
                "a duplicate id was accepted"
            );
            match &set.columns {
                Columns::Classification {
                    classes,
                    actual,
                    predicted,
                    ..
                } => {
                    assert_eq!(actual.len(), rows);
                    assert!(classes.iter().all(|c| !c.is_empty()), "a blank class");
                    for &c in actual.iter().chain(predicted.iter().flatten()) {
                        assert!((c as usize) < classes.len());
                    }
                }
                Columns::Regression { target, prediction } => {
                    assert_eq!(target.len(), rows);
                    assert_eq!(prediction.len(), rows);
                    assert!(target.iter().chain(prediction).all(|v| v.is_finite()));
                }
            }
        }
    }
    let _ = std::fs::remove_file(&path);
}

/// Two id lists (split at the first NUL byte: train, then test) → `ids::overlap`. Accepted
/// lists: the shared count is at most either list's count, and the examples are shared ids.
pub fn ids(data: &[u8]) {
    let split = data.iter().position(|&b| b == 0).unwrap_or(data.len());
    let (train, test) = (&data[..split], data.get(split + 1..).unwrap_or_default());
    let train_path = scratch("train.txt", train);
    let test_path = scratch("test.txt", test);
    match vetscore::evidence::ids::overlap(&train_path, "fuzz", &test_path, "fuzz") {
        Err(d) => assert_rejected(&[d]),
        Ok(overlap) => {
            assert!(overlap.shared <= overlap.train_ids);
            assert!(overlap.examples.len() as u64 <= overlap.shared);
            assert!(overlap.examples.len() <= vetscore::evidence::ids::SHOWN);
            for e in &overlap.examples {
                assert!(!e.is_empty() && !e.chars().any(char::is_control), "{e:?}");
            }
        }
    }
    let _ = std::fs::remove_file(&train_path);
    let _ = std::fs::remove_file(&test_path);
}

/// Manifest text → parse → validate; an accepted manifest is then evaluated under the default
/// policy and rendered to Markdown and JSON, as `vetscore check` would.
pub fn manifest(data: &[u8]) {
    let Some((selector, text)) = selector_and_text(data) else {
        return;
    };
    let (file, syntax) = syntax(selector);
    let raw = match input::parse::<manifest::raw::RawManifest>(file, text, syntax) {
        Ok(raw) => raw,
        Err(d) => return assert_rejected(&d),
    };
    match manifest::validate(
        file,
        raw,
        std::path::Path::new("."),
        manifest::Readers::default(),
    ) {
        Ok(models) => {
            assert!(!models.is_empty(), "an accepted manifest has a model");
            for m in &models {
                assert!(m.claim.value.is_finite());
                assert!(m.data.train_rows > 0 && m.data.test_rows > 0);
                for e in &m.holdout {
                    assert!(e.score.is_finite() && e.rows >= 1 && e.rows <= m.data.test_rows);
                    assert!(e.correct.is_none_or(|c| c <= e.rows));
                }
            }
            check_and_render(models, &Policy::defaults());
        }
        Err(problems) => assert_rejected(&problems),
    }
}

/// Policy text → parse → validate; an accepted policy is applied to a fixed model.
pub fn policy(data: &[u8]) {
    let Some((selector, text)) = selector_and_text(data) else {
        return;
    };
    let (file, syntax) = syntax(selector);
    let raw = match input::parse::<policy::RawPolicy>(file, text, syntax) {
        Ok(raw) => raw,
        Err(d) => return assert_rejected(&d),
    };
    match policy::validate(file, raw, "fuzz".to_owned()) {
        Ok(policy) => {
            assert!(policy.confidence > 0.0 && policy.confidence < 1.0);
            let model = model("ok-model", None);
            let _ = policy.unmatched_entries(&["ok-model"]);
            check_and_render(vec![model], &policy);
        }
        Err(problems) => assert_rejected(&problems),
    }
}

/// Trials as CSV or JSON Lines (chosen by the first byte, which also picks the metric and the
/// number of folds) through the streaming reader.
pub fn trials(data: &[u8]) {
    let Some((&selector, rest)) = data.split_first() else {
        return;
    };
    let metrics = [Metric::Accuracy, Metric::LogLoss, Metric::R2, Metric::Rmse];
    let metric = metrics[usize::from(selector >> 1) % metrics.len()];
    let folds = 1 + usize::from(selector >> 3) % 10;
    let mut reader = TrialReader::new("fuzz", metric, folds);
    if selector & 1 == 0 {
        reader.read_csv(rest);
    } else {
        reader.read_jsonl(rest);
    }
    match reader.finish() {
        Ok(summary) => {
            assert!(summary.trials >= 1);
            let binned: u64 = summary.histogram.iter().map(|b| b.count).sum();
            assert_eq!(binned, summary.trials, "every trial lands in one bin");
            assert!(summary.bias.naive_best.is_finite() && summary.bias.bias.is_finite());
            assert!(
                summary.bias.bias >= 0.0,
                "the selection bias is never negative"
            );
        }
        Err(problems) => assert_rejected(&problems),
    }
}

/// Arbitrary model names and claim text (split at the first NUL byte) rendered into the
/// Markdown report; the rendered body must keep the untrusted text inert.
pub fn markdown(data: &[u8]) {
    let text = String::from_utf8_lossy(data);
    let (name, claim) = text.split_once('\0').unwrap_or((&text, ""));
    if name.trim().is_empty() {
        return;
    }
    let models = vec![
        model(name, Some(claim.to_owned())),
        model(&format!("{name}-2"), None),
    ];
    let body = check_and_render(models, &Policy::defaults());
    assert_inert(&body, 2);
}

/// Arbitrary text as a ledger: a rejection names a line within the text (or one past it); an
/// accepted ledger's head is well formed, every prefix's head is extended by the whole ledger,
/// and writing its entries out again reads back the same entries. A `COUNT:HASH` head parsed
/// from the first line prints back as it was read.
pub fn ledger(data: &[u8]) {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    if let Some(first) = text.lines().next()
        && let Ok(head) = vetscore::ledger::Head::parse(first)
    {
        assert_eq!(head.to_string(), first);
    }
    match vetscore::ledger::verify(text) {
        Ok(entries) => {
            let head = vetscore::ledger::Head::of(&entries);
            head.check().unwrap();
            for k in [0, entries.len() / 2, entries.len()] {
                let prefix = vetscore::ledger::Head::of(&entries[..k]);
                vetscore::ledger::extends(&entries, &prefix).unwrap();
            }
            if let Some(last) = entries.len().checked_sub(1) {
                // A head one entry beyond the ledger is never extended.
                let beyond = vetscore::ledger::Head {
                    entries: head.entries + 1,
                    last_hash: entries[last].hash.clone(),
                };
                assert!(vetscore::ledger::extends(&entries[..last], &head).is_err());
                assert!(vetscore::ledger::extends(&entries, &beyond).is_err());
            }
            let again: String = entries.iter().map(vetscore::ledger::line).collect();
            assert_eq!(vetscore::ledger::verify(&again).unwrap(), entries);
        }
        Err(broken) => {
            assert!(broken.line <= text.lines().count() as u64 + 1, "{broken:?}");
            assert!(!broken.message.is_empty());
        }
    }
}

/// Arbitrary text as a `--baseline` report: a rejection says why; an accepted one is compared
/// with two fixed models and rendered, and whatever it carried stays inert in the Markdown.
pub fn base_report(data: &[u8]) {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    let base = match vetscore::report::since::BaseReport::parse(text) {
        Ok(base) => base,
        Err(message) => {
            assert!(!message.is_empty());
            return;
        }
    };
    let policy = Policy::defaults();
    let models = vec![model("ripeness-a", None), model("ripeness-b", None)];
    let assessment = vetscore::evaluate::evaluate(models, &[], &policy, None, None, today());
    let mut view = view::build(&assessment, &policy, None);
    view.since_base = Some(vetscore::report::since::compare(&base, &view.models));
    vetscore::report::json(&view).unwrap();
    let body = Templates::built_in()
        .render(templates::MARKDOWN, &view)
        .unwrap();
    // Headings: the title, one per model and the "since the base branch" section.
    assert_inert(&body, 3);
}

/// A valid accuracy model with CV and test evidence.
pub fn model(name: &str, claim_text: Option<String>) -> Model {
    let fold = |correct: u64| manifest::Fold {
        rows: 100,
        score: correct as f64 / 100.0,
        correct: Some(correct),
        class_rows: None,
    };
    Model {
        name: name.to_owned(),
        predictions: None,
        leakage: None,
        baseline: None,
        origin: Origin {
            file: "fuzz.yaml".to_owned(),
            line: Some(3),
        },
        task: Task::Binary,
        metric: Metric::Accuracy,
        run_id: None,
        commit: None,
        trained_at: None,
        seed: Some(1),
        data: Data {
            train_rows: 200,
            test_rows: 100,
            test_fingerprint: format!("fp-{name}"),
            class_counts: None,
        },
        search: Some(manifest::Search {
            method: manifest::SearchMethod::Grid,
            configurations: Some(4),
            effective_configurations: None,
            cv: manifest::CrossValidation {
                scheme: manifest::CvScheme::KFold,
                repeats: 1,
                folds: vec![fold(81), fold(83)],
            },
            trials: None,
            out_of_fold: None,
        }),
        holdout: vec![Evaluation {
            time: None,
            score: 0.8,
            rows: 100,
            correct: Some(80),
            note: None,
        }],
        claim: Claim {
            value: 0.8,
            basis: Basis::Test,
            text: claim_text,
            beats_baseline: false,
        },
    }
}

/// Evaluates and renders as `vetscore check` does; returns the Markdown.
fn check_and_render(models: Vec<Model>, policy: &Policy) -> String {
    let count = models.len();
    let assessment = vetscore::evaluate::evaluate(models, &[], policy, None, None, today());
    assert_eq!(assessment.models.len(), count);
    let view = view::build(&assessment, policy, None);
    vetscore::report::json(&view).unwrap();
    let built_in = Templates::built_in();
    let body = built_in.render(templates::MARKDOWN, &view).unwrap();
    assert!(body.starts_with(templates::MARKER));
    // The JUnit XML must stay well formed too (checked by its own tests); render it here so a
    // fuzzed name that breaks the template is found.
    built_in.render(templates::JUNIT, &view).unwrap();
    body
}

/// Whether the character before byte `i` of `line` escapes it (an odd run of backslashes).
fn escaped(line: &str, i: usize) -> bool {
    line[..i].bytes().rev().take_while(|&b| b == b'\\').count() % 2 == 1
}

/// The report's own markup, which is not untrusted text.
const TEMPLATE_TAGS: &[&str] = &[
    "<details>",
    "<summary>",
    "</summary>",
    "</details>",
    "<sub>",
    "</sub>",
];

/// Whether `text` holds the start of a GitHub extended autolink (`http://`, `https://`, `ftp://`,
/// `www.`); `<…>` autolinks are caught as tags and e-mail autolinks as `@` before a word.
pub fn has_autolink(text: &str) -> bool {
    let lower = text.to_lowercase();
    ["http://", "https://", "ftp://", "www."]
        .iter()
        .any(|s| lower.contains(s))
}

/// Asserts that nothing untrusted became markup in a rendered report of `models` models.
pub fn assert_inert(body: &str, models: usize) {
    let body = body
        .strip_prefix(templates::MARKER)
        .expect("the report starts with its marker");
    let mut rest = body.to_owned();
    for tag in TEMPLATE_TAGS {
        rest = rest.replace(tag, "");
    }
    let bytes = rest.as_bytes();
    for (i, w) in bytes.windows(2).enumerate() {
        let opens_tag = w[0] == b'<' && (w[1].is_ascii_alphabetic() || b"/!?".contains(&w[1]));
        assert!(!opens_tag, "an HTML tag opens at byte {i}:\n{body}");
    }
    assert!(!rest.contains("]("), "a link or image opens:\n{body}");
    assert!(!has_autolink(&rest), "an autolink:\n{body}");
    for (i, c) in rest.char_indices() {
        if c == '@' {
            let next = rest[i + 1..].chars().next();
            assert!(
                !next.is_some_and(|n| n.is_alphanumeric() || n == '_'),
                "an @-mention at byte {i}:\n{body}"
            );
        }
    }
    // Table rows keep their cell count: 7 borders in the summary table, 6 in each rule table.
    for line in body.lines().filter(|l| l.starts_with('|')) {
        let borders = line
            .match_indices('|')
            .filter(|(i, _)| !escaped(line, *i))
            .count();
        assert!(
            borders == 7 || borders == 6,
            "a table row has {borders} cells borders: {line}"
        );
    }
    let headings = body.lines().filter(|l| l.starts_with('#')).count();
    assert_eq!(headings, 1 + models, "a heading was injected:\n{body}");
}
