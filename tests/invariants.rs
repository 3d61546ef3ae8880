//! Invariants of the verdict (issue 9), as proptest properties over generated manifests run
//! through the real pipeline: YAML text → `input::parse` → `manifest::validate` → `evaluate`.
//!
//! Each property follows from what a gate must never do (reward a weaker case), so no expected
//! value comes from the code:
//! - more configurations, a higher claim (lower for lower-is-better metrics) or one more look at
//!   the test split never make the verdict more favourable;
//! - the same CV scores on fewer rows never make the fold-size finding more favourable nor the
//!   CV standard error (the scale of the selection optimism) or the fold's standard error
//!   smaller; a smaller fold never makes the fold-size finding more favourable;
//! - a perfect CV score x = n, claimed as such, never gets more support from the selection rule
//!   than x = n − 1 claimed as such, on the same rows after the same search;
//! - every interval reported (estimates and evidence) lies inside the metric's range.
//!
//! Known limit (not asserted, reported in the thread): the whole verdict is not monotone
//! in the number of rows, because claim support asks whether the claim lies inside a two-sided
//! interval, which widens as rows fall; only the rules that scale with rows are checked for it.
//! Case counts stay small: each case parses and evaluates two manifests in a debug build.

#![allow(clippy::unwrap_used)]

use proptest::prelude::*;
use vetscore::evaluate::{ModelAssessment, evaluate};
use vetscore::finding::{EvidenceValue, Status, Verdict};
use vetscore::input::{self, Syntax};
use vetscore::manifest::{self, raw::RawManifest};
use vetscore::policy::Policy;

/// An accuracy model as a training job would write it.
#[derive(Debug, Clone)]
struct Case {
    /// Correct rows per fold; every fold has `fold_rows` rows.
    correct: Vec<u64>,
    fold_rows: u64,
    configurations: u64,
    test_rows: u64,
    test_correct: u64,
    looks: u64,
    claim: f64,
    cv_claim: bool,
}

impl Case {
    fn yaml(&self) -> String {
        let folds: String = self
            .correct
            .iter()
            .map(|&c| {
                format!(
                    "          - {{rows: {}, score: {:.8}, correct: {c}}}\n",
                    self.fold_rows,
                    c as f64 / self.fold_rows as f64
                )
            })
            .collect();
        let looks: String = (1..=self.looks)
            .map(|i| {
                format!(
                    "      - {{time: 2026-11-{i:02}T10:00:00Z, score: {:.8}, correct: {}}}\n",
                    self.test_correct as f64 / self.test_rows as f64,
                    self.test_correct
                )
            })
            .collect();
        format!(
            "format_version: 1\nmodels:\n  - name: gen\n    task: binary\n    metric: accuracy\n    seed: 1\n    data: {{train_rows: {}, test_rows: {}, test_fingerprint: fp-gen}}\n    search:\n      method: random\n      configurations: {}\n      cv:\n        scheme: k_fold\n        folds:\n{folds}    holdout:\n{looks}    claim: {{value: {}, basis: {}}}\n",
            self.fold_rows * self.correct.len() as u64,
            self.test_rows,
            self.configurations,
            self.claim,
            if self.cv_claim { "cv" } else { "test" },
        )
    }
}

fn run(yaml: &str) -> ModelAssessment {
    let raw: RawManifest =
        input::parse("gen.yaml", yaml, Syntax::Yaml).unwrap_or_else(|d| panic!("{d:?}\n{yaml}"));
    let models = manifest::validate(
        "gen.yaml",
        raw,
        std::path::Path::new("."),
        manifest::Readers::default(),
    )
    .unwrap_or_else(|d| panic!("{d:?}\n{yaml}"));
    let today = jiff::civil::date(2026, 12, 1);
    let mut a = evaluate(models, &[], &Policy::defaults(), None, None, today);
    a.models.remove(0)
}

fn verdict(c: &Case) -> Verdict {
    run(&c.yaml()).verdict
}

/// 1 for a favourable finding, 0 for an adverse one.
fn rank(m: &ModelAssessment, rule: &str) -> u8 {
    let f = m.findings.iter().find(|f| f.rule == rule).unwrap();
    u8::from(matches!(
        f.status,
        Status::Pass | Status::Waived | Status::Skipped
    ))
}

fn number(m: &ModelAssessment, rule: &str, key: &str) -> f64 {
    let f = m.findings.iter().find(|f| f.rule == rule).unwrap();
    match f.evidence(key) {
        Some(EvidenceValue::Number { value, .. }) => *value,
        other => panic!("{rule}.{key}: {other:?}"),
    }
}

fn case() -> impl Strategy<Value = Case> {
    (
        2usize..=5,
        2u64..=60,
        1u64..=2000,
        20u64..=2000,
        1u64..=3,
        any::<bool>(),
    )
        .prop_flat_map(
            |(k, fold_rows, configurations, test_rows, looks, cv_claim)| {
                (
                    prop::collection::vec(0..=fold_rows, k),
                    0..=test_rows,
                    0u32..=10_000,
                )
                    .prop_map(move |(correct, test_correct, claim)| Case {
                        correct,
                        fold_rows,
                        configurations,
                        test_rows,
                        test_correct,
                        looks,
                        claim: f64::from(claim) / 10_000.0,
                        cv_claim,
                    })
            },
        )
}

/// Every interval a finding or an estimate reports lies in `range`.
fn intervals_inside(m: &ModelAssessment) -> Result<(), String> {
    let (lo, hi) = m.model.metric.range();
    let ok = |l: f64, u: f64| lo <= l && l <= u && u <= hi;
    for e in [&m.cv, &m.test].into_iter().flatten() {
        if let Some(i) = e.interval
            && !ok(i.lower, i.upper)
        {
            return Err(format!("estimate interval {i:?} outside [{lo}, {hi}]"));
        }
    }
    for f in &m.findings {
        for e in &f.evidence {
            if let EvidenceValue::Interval {
                lower,
                upper,
                quantity: vetscore::finding::Quantity::Score,
                ..
            } = e.value
                && e.key != "gap_interval"
                && !ok(lower, upper)
            {
                return Err(format!(
                    "{}.{}: [{lower}, {upper}] outside [{lo}, {hi}]",
                    f.rule, e.key
                ));
            }
        }
    }
    Ok(())
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(48))]

    #[test]
    fn more_configurations_never_help(c in case(), more in 1u64..5000) {
        let before = verdict(&c);
        let after = verdict(&Case { configurations: c.configurations + more, ..c.clone() });
        prop_assert!(after <= before, "{before:?} -> {after:?}\n{}", c.yaml());
    }

    #[test]
    fn a_higher_claim_never_helps(c in case(), up in 1u32..3000) {
        let higher = (c.claim + f64::from(up) / 10_000.0).min(1.0);
        let before = verdict(&c);
        let after = verdict(&Case { claim: higher, ..c.clone() });
        prop_assert!(after <= before, "{before:?} -> {after:?} at {higher}\n{}", c.yaml());
    }

    #[test]
    fn another_look_at_the_test_split_never_helps(c in case()) {
        let before = verdict(&c);
        let after = verdict(&Case { looks: c.looks + 1, ..c.clone() });
        prop_assert!(after <= before, "{before:?} -> {after:?}\n{}", c.yaml());
    }

    #[test]
    fn the_same_scores_on_fewer_rows_never_help(c in case(), scale in 2u64..=5) {
        // The large case has every count multiplied by `scale`: the same fold scores and the
        // same CV score, on `scale` times the rows.
        let large = Case {
            correct: c.correct.iter().map(|x| x * scale).collect(),
            fold_rows: c.fold_rows * scale,
            ..c.clone()
        };
        let (small, large) = (run(&c.yaml()), run(&large.yaml()));
        prop_assert!(rank(&small, "fold_size") <= rank(&large, "fold_size"));
        let (se_small, se_large) = (
            number(&small, "selection_optimism", "cv_se"),
            number(&large, "selection_optimism", "cv_se"),
        );
        prop_assert!(se_small >= se_large, "cv_se {se_large} on more rows, {se_small} on fewer");
        let (f_small, f_large) = (
            number(&small, "fold_size", "fold_se"),
            number(&large, "fold_size", "fold_se"),
        );
        prop_assert!(f_small >= f_large, "fold_se {f_large} on more rows, {f_small} on fewer");
    }

    #[test]
    fn a_smaller_fold_never_helps(c in case(), cut in 1u64..=10) {
        // Fold 0 loses `cut` rows (and as many correct ones as it can spare).
        prop_assume!(c.fold_rows > cut);
        let smaller: String = c.yaml().replacen(
            &format!("{{rows: {}, score: {:.8}, correct: {}}}", c.fold_rows,
                c.correct[0] as f64 / c.fold_rows as f64, c.correct[0]),
            &{
                let rows = c.fold_rows - cut;
                let correct = c.correct[0].min(rows);
                format!("{{rows: {rows}, score: {:.8}, correct: {correct}}}", correct as f64 / rows as f64)
            },
            1,
        ).replacen(
            &format!("train_rows: {}", c.fold_rows * c.correct.len() as u64),
            &format!("train_rows: {}", c.fold_rows * c.correct.len() as u64 - cut),
            1,
        );
        let (before, after) = (run(&c.yaml()), run(&smaller));
        // The fold's score may move (it keeps what correct rows it can), so only the finding
        // is compared; the standard error's growth on fewer rows is the property above.
        prop_assert!(rank(&after, "fold_size") <= rank(&before, "fold_size"), "{smaller}");
    }

    #[test]
    fn a_perfect_cv_score_gets_no_more_support_than_one_row_less(c in case()) {
        // x = n against x = n − 1 on the same folds, each claimed as its own CV score.
        let n = c.fold_rows * c.correct.len() as u64;
        let perfect = Case {
            correct: vec![c.fold_rows; c.correct.len()],
            claim: 1.0,
            cv_claim: true,
            ..c.clone()
        };
        let mut one_less = perfect.clone();
        one_less.correct[0] -= 1;
        one_less.claim = (n - 1) as f64 / n as f64;
        let (p, q) = (run(&perfect.yaml()), run(&one_less.yaml()));
        prop_assert!(
            rank(&p, "selection_optimism") <= rank(&q, "selection_optimism"),
            "perfect passes, one less fails\n{}", perfect.yaml()
        );
    }

    #[test]
    fn accuracy_intervals_stay_in_range(c in case()) {
        let m = run(&c.yaml());
        prop_assert!(intervals_inside(&m).is_ok(), "{:?}\n{}", intervals_inside(&m), c.yaml());
    }
}

/// A model scored by fold means: every bounded metric and the regression metrics.
fn fold_mean_yaml(metric: &str, task: &str, scores: &[f64], configurations: u64) -> String {
    let folds: String = scores
        .iter()
        .map(|s| format!("          - {{rows: 40, score: {s}}}\n"))
        .collect();
    format!(
        "format_version: 1\nmodels:\n  - name: gen\n    task: {task}\n    metric: {metric}\n    seed: 1\n    data: {{train_rows: {}, test_rows: 100, test_fingerprint: fp-gen}}\n    search:\n      method: random\n      configurations: {configurations}\n      cv:\n        scheme: k_fold\n        folds:\n{folds}    claim: {{value: {}, basis: cv}}\n",
        40 * scores.len(),
        scores[0],
    )
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(48))]

    #[test]
    fn fold_mean_intervals_stay_in_range(
        pick in 0usize..7,
        raw in prop::collection::vec(0u32..=1000, 2..=6),
        spread in prop::sample::select(vec![0.0, 0.001, 0.1, 1.0]),
        configurations in 1u64..1000,
    ) {
        let (metric, task, lo, width) = [
            ("f1", "binary", 0.0, 1.0),
            ("roc_auc", "binary", 0.0, 1.0),
            ("balanced_accuracy", "binary", 0.0, 1.0),
            ("r2", "regression", -1.0, 2.0),
            ("mae", "regression", 0.0, 5.0),
            ("rmse", "regression", 0.0, 5.0),
            ("log_loss", "binary", 0.0, 5.0),
        ][pick];
        // Scores crowd at the top (or the bottom, for errors) of the range: where a symmetric
        // interval leaves it.
        let top = if matches!(metric, "mae" | "rmse" | "log_loss") { lo } else { lo + width };
        let scores: Vec<f64> = raw.iter().map(|&r| {
            let off = spread * width * f64::from(r) / 1000.0;
            let s = if top == lo { lo + off } else { top - off };
            (s * 1e6).round() / 1e6
        }).collect();
        let yaml = fold_mean_yaml(metric, task, &scores, configurations);
        let m = run(&yaml);
        prop_assert!(intervals_inside(&m).is_ok(), "{:?}\n{yaml}", intervals_inside(&m));
    }
}
