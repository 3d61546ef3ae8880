//! Properties of the verdicts drawn from per-example predictions, on random predictions files
//! read by the real reader (`manifest::load`) and judged by the real rules (`evaluate`) under
//! the default policy: the intervals a report shows lie inside the metric's range; a constant
//! or tied input never yields p = 0 or a spread-free interval that passes; and the same
//! evidence on fewer rows, or with a row the model alone got right turned into a tie, never
//! makes `baseline_improvement` more favourable. Each property follows from the definitions (a
//! metric cannot leave its range; identical differences carry no estimate of spread; the
//! permutation test on m differing rows cannot give p below 2/2^m), so no expected number comes
//! from the code itself. Inputs are small and lean on ties and boundary values (scores 0, ½
//! and 1, errors of 0), where the defects were. Case counts stay small: the suite runs in
//! debug builds on two CI cores.

#![allow(clippy::unwrap_used)]

use std::fmt::Write as _;
use std::path::Path;

use proptest::prelude::*;
use vetscore::evaluate::{ModelAssessment, evaluate};
use vetscore::finding::{EvidenceValue, Finding, Status};
use vetscore::manifest::{self, Metric};
use vetscore::policy::Policy;

const CLASSIFICATION: [&str; 5] = ["accuracy", "balanced_accuracy", "f1", "roc_auc", "log_loss"];
const REGRESSION: [&str; 3] = ["rmse", "mae", "r2"];

/// One row of a classification file: true label, predicted label, score of class 1.
type ClassRow = (u8, u8, f64);
/// One row of a regression file: target, prediction.
type RegRow = (f64, f64);

fn metric_of(name: &str) -> Metric {
    serde_json::from_value(serde_json::Value::String(name.into())).unwrap()
}

fn class_csv(rows: &[ClassRow]) -> String {
    let mut out = String::from("id,label,prediction,score\n");
    for (i, (label, predicted, score)) in rows.iter().enumerate() {
        writeln!(out, "r{i:04},{label},{predicted},{score}").unwrap();
    }
    out
}

fn reg_csv(rows: &[RegRow]) -> String {
    let mut out = String::from("id,target,prediction\n");
    for (i, (target, prediction)) in rows.iter().enumerate() {
        writeln!(out, "r{i:04},{target},{prediction}").unwrap();
    }
    out
}

/// Writes a one-model manifest with the model's and the baseline's predictions, reads it with
/// the real loader and judges it under the default policy.
fn assess(metric: &str, model_csv: &str, baseline_csv: &str, rows: usize) -> ModelAssessment {
    let dir = tempfile::tempdir().unwrap();
    let task = if REGRESSION.contains(&metric) {
        "regression"
    } else {
        "binary"
    };
    // A score inside every metric's range, and a whole number of rows for accuracy; the claim
    // is judged by other rules, not these.
    let score = 0.0;
    std::fs::write(dir.path().join("model.csv"), model_csv).unwrap();
    std::fs::write(dir.path().join("baseline.csv"), baseline_csv).unwrap();
    let manifest = format!(
        "format_version: 1
models:
  - name: m
    task: {task}
    metric: {metric}
    seed: 1
    data: {{train_rows: 100, test_rows: {rows}, test_fingerprint: \"fp\"}}
    holdout:
      - {{time: 2026-11-01T10:00:00Z, score: {score}}}
    predictions:
      file: model.csv
    baseline:
      name: b
      predictions_file: baseline.csv
    claim: {{value: {score}, basis: test, beats_baseline: true}}
"
    );
    let path = dir.path().join("manifest.yaml");
    std::fs::write(&path, manifest).unwrap();
    let models = manifest::load(&path, dir.path()).unwrap_or_else(|d| panic!("{d:?}"));
    let today = jiff::civil::date(2026, 12, 1);
    let mut assessment = evaluate(models, &[], &Policy::defaults(), None, None, today);
    assessment.models.remove(0)
}

fn finding<'a>(a: &'a ModelAssessment, rule: &str) -> &'a Finding {
    a.findings.iter().find(|f| f.rule == rule).unwrap()
}

fn number(f: &Finding, key: &str) -> Option<f64> {
    match f.evidence(key) {
        Some(EvidenceValue::Number { value, .. }) => Some(*value),
        _ => None,
    }
}

fn interval(f: &Finding, key: &str) -> Option<(f64, f64)> {
    match f.evidence(key) {
        Some(EvidenceValue::Interval { lower, upper, .. }) => Some((*lower, *upper)),
        _ => None,
    }
}

/// Scores that lean on ties and on the ends of [0, 1].
fn score() -> impl Strategy<Value = f64> {
    prop_oneof![
        3 => prop::sample::select(vec![0.0, 0.5, 1.0]),
        2 => prop::sample::select(vec![0.1, 0.25, 0.75, 0.9]),
        1 => (0u32..=1000).prop_map(|k| f64::from(k) / 1000.0),
    ]
}

fn class_rows(len: std::ops::Range<usize>) -> impl Strategy<Value = Vec<ClassRow>> {
    prop::collection::vec((0u8..2, 0u8..2, score()), len)
}

/// Targets and predictions on a coarse grid, so errors of 0 and equal errors are common.
fn reg_rows(len: std::ops::Range<usize>) -> impl Strategy<Value = Vec<RegRow>> {
    prop::collection::vec(
        ((0i32..8).prop_map(f64::from), (0i32..8).prop_map(f64::from)),
        len,
    )
}

/// A classification case: metric, model rows, baseline predictions and scores on the same rows.
fn class_case() -> impl Strategy<Value = (&'static str, Vec<ClassRow>, Vec<(u8, f64)>)> {
    (
        prop::sample::select(CLASSIFICATION.to_vec()),
        class_rows(2..40),
    )
        .prop_flat_map(|(metric, rows)| {
            let n = rows.len();
            (
                Just(metric),
                Just(rows),
                prop::collection::vec((0u8..2, score()), n),
            )
        })
}

fn with_baseline(rows: &[ClassRow], baseline: &[(u8, f64)]) -> Vec<ClassRow> {
    rows.iter()
        .zip(baseline)
        .map(|(&(label, _, _), &(p, s))| (label, p, s))
        .collect()
}

/// Whether a verdict is at least as favourable as another: pass beats everything else.
fn passes(f: &Finding) -> bool {
    f.status == Status::Pass
}

/// The intervals and p-values of one assessment obey the metric's range and never reach 0.
fn check_ranges(metric: &str, a: &ModelAssessment) -> Result<(), TestCaseError> {
    let (low, high) = metric_of(metric).range();
    if let Some(test) = &a.test
        && let Some(i) = test.interval
    {
        prop_assert!(
            low <= i.lower && i.lower <= i.upper && i.upper <= high,
            "{metric}: test interval [{}, {}] outside [{low}, {high}]",
            i.lower,
            i.upper
        );
        if metric == "roc_auc" {
            prop_assert!(i.upper > i.lower, "AUC interval without width");
        }
    }
    let b = finding(a, "baseline_improvement");
    if let Some(p) = number(b, "p_value") {
        prop_assert!(p > 0.0 && p <= 1.0, "{metric}: p = {p}");
    }
    if let Some((lower, upper)) = interval(b, "interval") {
        prop_assert!(lower <= upper);
        if high - low == 1.0 {
            // A difference of two scores in [0, 1] lies in [−1, 1].
            prop_assert!(
                (-1.0..=1.0).contains(&lower) && (-1.0..=1.0).contains(&upper),
                "{metric}: difference interval [{lower}, {upper}]"
            );
        }
        if passes(b) {
            prop_assert!(upper > lower, "{metric}: passed on a point interval");
        }
    }
    Ok(())
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(48))]

    #[test]
    fn classification_intervals_stay_in_range((metric, rows, baseline) in class_case()) {
        let a = assess(
            metric,
            &class_csv(&rows),
            &class_csv(&with_baseline(&rows, &baseline)),
            rows.len(),
        );
        check_ranges(metric, &a)?;
    }

    #[test]
    fn regression_intervals_stay_in_range(
        metric in prop::sample::select(REGRESSION.to_vec()),
        rows in reg_rows(2..40),
        baseline in prop::collection::vec((0i32..8).prop_map(f64::from), 40),
    ) {
        let base: Vec<RegRow> = rows.iter().zip(&baseline).map(|(&(t, _), &y)| (t, y)).collect();
        let a = assess(metric, &reg_csv(&rows), &reg_csv(&base), rows.len());
        check_ranges(metric, &a)?;
    }

    /// A constant gain on every row (the model's error 1 smaller in absolute value, or every
    /// score tied for the baseline against any model) has no spread: whatever the rows, the
    /// rule must not pass with p = 0 or on a point interval. A constant gain is "inconclusive"
    /// or "fail", never "pass".
    #[test]
    fn constant_gains_never_pass(
        metric in prop::sample::select(REGRESSION.to_vec()),
        targets in prop::collection::vec((0i32..50).prop_map(f64::from), 2..40),
        signs in prop::collection::vec(prop::bool::ANY, 40),
        error in 0i32..4,
    ) {
        let e = f64::from(error);
        let sign = |i: usize| if signs[i] { 1.0 } else { -1.0 };
        let model: Vec<RegRow> =
            targets.iter().enumerate().map(|(i, &t)| (t, t + sign(i) * e)).collect();
        let base: Vec<RegRow> =
            targets.iter().enumerate().map(|(i, &t)| (t, t + sign(i) * (e + 1.0))).collect();
        let a = assess(metric, &reg_csv(&model), &reg_csv(&base), targets.len());
        let b = finding(&a, "baseline_improvement");
        if let Some(p) = number(b, "p_value") {
            prop_assert!(p > 0.0);
        }
        // The absolute-error differences are all 1 and the squared-error ones all 2e + 1.
        prop_assert!(!passes(b), "{metric}: a constant gain passed: {}", b.sentence);
    }

    #[test]
    fn tied_baseline_scores_never_give_p_zero((_, rows, _) in class_case()) {
        let tied: Vec<ClassRow> = rows.iter().map(|&(l, p, _)| (l, p, 0.5)).collect();
        let a = assess("roc_auc", &class_csv(&rows), &class_csv(&tied), rows.len());
        let b = finding(&a, "baseline_improvement");
        if let Some(p) = number(b, "p_value") {
            prop_assert!(p >= 2.0 / 2f64.powi(rows.len() as i32), "p = {p} on {} rows", rows.len());
        }
        check_ranges("roc_auc", &a)?;
    }

    /// The same rows written twice are the same evidence on twice the rows: if the rule passes
    /// on the single copy it must pass on the double (equivalently, fewer rows never help).
    /// Only the deterministic tests: the seeded bootstraps of F1 and balanced accuracy draw
    /// other resamples for other rows, so their verdict near a boundary may move either way.
    #[test]
    fn fewer_rows_never_help(
        (metric, rows, baseline) in class_case(),
        reg in reg_rows(2..30),
        reg_base in prop::collection::vec((0i32..8).prop_map(f64::from), 30),
        regression in prop::sample::select(vec![None, Some("rmse"), Some("mae"), Some("r2")]),
    ) {
        let (metric, once, base_once) = match regression {
            Some(m) => {
                let base: Vec<RegRow> =
                    reg.iter().zip(&reg_base).map(|(&(t, _), &y)| (t, y)).collect();
                (m, reg_csv(&reg), reg_csv(&base))
            }
            None => {
                prop_assume!(!matches!(metric, "f1" | "balanced_accuracy"));
                (metric, class_csv(&rows), class_csv(&with_baseline(&rows, &baseline)))
            }
        };
        let n = once.lines().count() - 1;
        let twice = |csv: &str| {
            let mut out = csv.to_owned();
            for line in csv.lines().skip(1) {
                writeln!(out, "x{line}").unwrap();
            }
            out
        };
        let small = assess(metric, &once, &base_once, n);
        let large = assess(metric, &twice(&once), &twice(&base_once), 2 * n);
        let (small, large) = (finding(&small, "baseline_improvement"), finding(&large, "baseline_improvement"));
        prop_assert!(
            !passes(small) || passes(large),
            "{metric}: passes on {n} rows ({}) but not on {} ({})",
            small.sentence, 2 * n, large.sentence
        );
    }

    /// Accuracy: a row only the model got right, turned into a row both get right (a tie
    /// between the two), removes one discordant pair in the model's favour; while the model is
    /// ahead McNemar's p can only rise and the Agresti–Min lower bound only fall, so the rule
    /// cannot become more favourable.
    #[test]
    fn a_tie_never_helps((_, rows, baseline) in class_case(), pick in any::<prop::sample::Index>()) {
        let base = with_baseline(&rows, &baseline);
        let model_only: Vec<usize> = (0..rows.len())
            .filter(|&i| rows[i].1 == rows[i].0 && base[i].1 != base[i].0)
            .collect();
        prop_assume!(!model_only.is_empty());
        let i = model_only[pick.index(model_only.len())];
        let mut tied = base.clone();
        tied[i].1 = rows[i].1;
        let before = assess("accuracy", &class_csv(&rows), &class_csv(&base), rows.len());
        let after = assess("accuracy", &class_csv(&rows), &class_csv(&tied), rows.len());
        let (before, after) = (finding(&before, "baseline_improvement"), finding(&after, "baseline_improvement"));
        prop_assert!(!passes(after) || passes(before), "{} → {}", before.sentence, after.sentence);
        // While the model is ahead (more rows only it gets right), p can only rise; behind, the
        // step moves away from balance and p may fall, but the rule fails either way.
        let (b, c) = (number(before, "model_only").unwrap(), number(before, "baseline_only").unwrap());
        let (pb, pa) = (number(before, "p_value").unwrap(), number(after, "p_value").unwrap());
        prop_assert!(b <= c || pa >= pb - 1e-12, "p fell from {pb} to {pa} at {b} vs {c}");
    }
}

/// The folds path, on generated fold differences: with K ≤ 5 folds no test can give p below
/// 2/2^5 = 0.0625 > 0.05, so the rule never passes at the default 95%; and K identical
/// differences never pass.
fn fold_manifest(dir: &Path, model: &[f64], base: &[f64]) -> ModelAssessment {
    let folds: String = model
        .iter()
        .map(|s| format!("          - {{rows: 100, score: {s}}}\n"))
        .collect();
    let base: Vec<String> = base.iter().map(f64::to_string).collect();
    let text = format!(
        "format_version: 1
models:
  - name: m
    task: binary
    metric: accuracy
    seed: 1
    data: {{train_rows: {}, test_rows: 1000, test_fingerprint: \"fp\"}}
    search:
      method: grid
      configurations: 1
      cv:
        scheme: k_fold
        folds:
{folds}    holdout:
      - {{time: 2026-11-01T10:00:00Z, score: 0.8, correct: 800}}
    baseline:
      name: b
      cv_fold_scores: [{}]
    claim: {{value: 0.8, basis: test, beats_baseline: true}}
",
        100 * model.len(),
        base.join(", ")
    );
    let path = dir.join("manifest.yaml");
    std::fs::write(&path, text).unwrap();
    let models = manifest::load(&path, dir).unwrap_or_else(|d| panic!("{d:?}"));
    let today = jiff::civil::date(2026, 12, 1);
    evaluate(models, &[], &Policy::defaults(), None, None, today)
        .models
        .remove(0)
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(48))]

    #[test]
    fn few_or_identical_folds_never_pass(
        k in 2usize..12,
        model in prop::collection::vec((0u32..=100).prop_map(|c| f64::from(c) / 100.0), 12),
        other in prop::collection::vec((0u32..=100).prop_map(|c| f64::from(c) / 100.0), 12),
        gain in (1u32..=20).prop_map(|c| f64::from(c) / 100.0),
        constant in prop::bool::ANY,
    ) {
        let model: Vec<f64> = model[..k].iter().map(|s| s.max(gain)).collect();
        let base: Vec<f64> = if constant {
            // A constant gain on every fold: identical differences, up to float rounding.
            model.iter().map(|s| ((s - gain) * 100.0).round() / 100.0).collect()
        } else if k <= 5 {
            other[..k].to_vec()
        } else {
            return Ok(());
        };
        let dir = tempfile::tempdir().unwrap();
        let a = fold_manifest(dir.path(), &model, &base);
        let b = finding(&a, "baseline_improvement");
        prop_assert!(!passes(b), "{k} folds: {}", b.sentence);
        if let Some(p) = number(b, "p_value") {
            prop_assert!(p >= 2.0 / 2f64.powi(k as i32) - 1e-15, "p = {p} on {k} folds");
        }
    }
}
