//! Improvement over baseline: "better than the baseline" needs a paired test on the same rows.

use super::{Context, Outcome, RuleInfo, RuleSettings, Subject, rule_settings};
use crate::evidence::metric::compare;
use crate::finding::{Evidence, Quantity, Severity, Status};
use crate::manifest::Baseline;
use crate::stats;

rule_settings! {
    /// Settings of the improvement rule.
    severity = Severity::Error;
    /// Smallest improvement worth claiming, in the metric's units; the interval's lower bound
    /// must exceed it.
    min_improvement: f64 = 0.0, looser: Smaller,
}

pub const RULE: RuleInfo = RuleInfo {
    id: "baseline_improvement",
    name: "Improvement over baseline",
    explanation: "A claim that the model beats its baseline (`claim.beats_baseline`) is checked \
with a paired test on the rows both were scored on, matched by id: for accuracy McNemar's test \
(McNemar 1947; exact binomial on the discordant pairs when there are fewer than 25, chi-square \
with continuity correction otherwise) with the Agresti & Min (2005) interval for the difference \
of paired proportions; for ROC AUC DeLong's paired test (DeLong, DeLong & Clarke-Pearson 1988), which needs two rows \
of each class (with one, the comparison is inconclusive and says so); \
for F1 and balanced accuracy a seeded paired bootstrap that resamples the joint table of (true \
class, model's prediction, baseline's prediction) counts; for log loss and MAE a paired t-test on per-row loss differences; \
for RMSE and R² the paired t-test on per-row squared-error differences decides significance \
(equal MSE on the same rows is equal RMSE and equal R²), while the improvement, its interval \
and `min_improvement` are in the metric's own units: RMSE(baseline) − RMSE(model) with a \
first-order delta-method interval (Oehlert 1992) from the two models' squared errors and their \
covariance, and R²(model) − R²(baseline), which on shared targets is exactly the mean \
squared-error difference times n/Σ(y − ȳ)², so the t interval scales with it. When \
the baseline has no test predictions but was scored on the model's cross-validation folds \
(`baseline.cv_fold_scores`), the Nadeau & Bengio (2003) corrected resampled t-test on the fold \
differences, whose variance allows for the overlap between training sets. Few or identical \
differences: no paired test on m rows (or folds) whose two results differ can honestly give a \
p-value below 2/2^m, since under \"no difference\" all 2^m swaps of the two results are equally \
likely and two of them are as extreme as the data (the exact sign-flip permutation test of \
Fisher 1935 and Pitman 1937). The reported p-value is therefore the larger of the named test's \
and the sign-flip test's: exact, by enumeration, on up to 16 differences, and 2/2^m beyond \
(2 folds can never do better than 0.5, 3 folds than 0.25, 5 than 0.0625). When every difference \
is the same (zero spread, or a spread within float rounding, 1e-9 of the interval's bounds) \
the test has no spread to measure uncertainty by and its interval has no width: a result that \
would pass is then inconclusive instead. It \
fails when the difference is not significant at the policy's confidence, when the interval's \
lower bound does not exceed `min_improvement`, when ids are missing from either file, or when \
the two files disagree on a row's true label. Two models scored on different rows cannot be \
compared this way, and an unpaired comparison of two intervals is far less sensitive. Without a \
claim to beat the baseline the rule is skipped.",
    check,
    severity_from_base: false,
};

pub fn problems(raw: &RawSettings) -> Vec<(String, String)> {
    match raw.min_improvement {
        Some(m) if !m.is_finite() => vec![(
            "min_improvement".into(),
            format!("expected a finite number, found {m}"),
        )],
        _ => Vec::new(),
    }
}

fn check(subject: &Subject, ctx: &Context, settings: &RuleSettings) -> Outcome {
    let min = settings.baseline_improvement.min_improvement;
    let model = subject.model;
    if !model.claim.beats_baseline {
        return Outcome::new(
            Status::Skipped,
            "The claim does not say the model beats a baseline.",
            Vec::new(),
        );
    }
    let Some(baseline) = &model.baseline else {
        return Outcome::inconclusive(
            "The claim says the model beats its baseline, but the manifest names no baseline.",
        );
    };
    let (Some(p), Some(set)) = (&model.predictions, &baseline.set) else {
        return folds_only(subject, ctx, baseline, min);
    };
    // The model's DeLong pieces from the recomputation, so ROC AUC is not ranked twice.
    let pieces = match &subject.recomputed {
        Some(Ok(r)) => r.auc_pieces.as_ref(),
        _ => None,
    };
    let c = match compare(&p.set, set, model.metric, p.f1, ctx.intervals, pieces) {
        Ok(c) => c,
        Err(why) => {
            return Outcome::inconclusive(format!(
                "The paired comparison could not be made: {why}."
            ));
        }
    };
    let mut evidence = vec![
        Evidence::text("baseline", "Baseline", baseline.name.clone()),
        Evidence::text("test", "Paired test", c.test),
        Evidence::count("paired_rows", "Rows in both files", c.paired_rows),
        Evidence::count("unpaired", "Ids in only one file", c.unpaired),
        Evidence::count(
            "label_mismatches",
            "Rows whose true label differs",
            c.label_mismatches,
        ),
        Evidence::number(
            "improvement",
            "Improvement over the baseline",
            c.improvement,
            Quantity::Score,
        ),
        Evidence::interval(
            "interval",
            "Interval for the improvement",
            c.interval,
            ctx.intervals.confidence,
        ),
        Evidence::number("p_value", "p-value", c.p_value, Quantity::Probability),
        Evidence::number(
            "test_p_value",
            "p-value of the named test",
            c.test_p_value,
            Quantity::Probability,
        ),
        Evidence::number(
            "p_floor",
            "Sign-flip bound on the p-value",
            c.p_floor,
            Quantity::Probability,
        ),
        Evidence::number(
            "min_improvement",
            "Smallest improvement worth claiming",
            min,
            Quantity::Score,
        ),
    ];
    if let Some((b, d)) = c.discordant {
        evidence.push(Evidence::count(
            "model_only",
            "Rows only the model gets right",
            b,
        ));
        evidence.push(Evidence::count(
            "baseline_only",
            "Rows only the baseline gets right",
            d,
        ));
    }
    if c.unpaired > 0 || c.label_mismatches > 0 {
        return Outcome::fail(
            "The model and the baseline were not scored on the same rows: {unpaired} ids are in \
             only one file and {label_mismatches} rows disagree on the true label.",
            evidence,
        );
    }
    let significant = c.p_value < 1.0 - ctx.intervals.confidence;
    let meaningful = c.interval.lower > min;
    judge(
        significant && meaningful && c.improvement > 0.0,
        c.no_spread,
        [
            "On {paired_rows} paired rows the model improves on {baseline} by {improvement} \
             (interval {interval}, p = {p_value}, {test}).",
            "On {paired_rows} paired rows the improvement over {baseline} is {improvement} \
             (interval {interval}, p = {p_value}, {test}): not enough to claim the model is \
             better (the interval must lie above {min_improvement}).",
            "On {paired_rows} paired rows the differences between the model and {baseline} do \
             not vary, so the test ({test}) has no spread to measure uncertainty by \
             (improvement {improvement}, interval {interval}); p = {p_value} is only the \
             sign-flip bound. A gain without any variation does not show the model is better.",
        ],
        evidence,
    )
}

/// Pass or fail on `ok`; but an outcome that would pass when the test found no spread (every
/// difference the same, up to float rounding) is inconclusive: the test estimated no
/// uncertainty, which identical differences cannot justify. `sentences` are pass, fail and
/// no-spread.
fn judge(ok: bool, no_spread: bool, sentences: [&str; 3], evidence: Vec<Evidence>) -> Outcome {
    let [pass, fail, spread_free] = sentences;
    if ok && no_spread {
        return Outcome::new(Status::Inconclusive, spread_free, evidence);
    }
    Outcome::judge(ok, pass, fail, evidence)
}

/// Without paired predictions: the Nadeau & Bengio (2003) corrected resampled t-test on the
/// differences between the model's and the baseline's scores on the same CV folds.
fn folds_only(subject: &Subject, ctx: &Context, baseline: &Baseline, min: f64) -> Outcome {
    let model = subject.model;
    let (Some(scores), Some(search)) = (&baseline.cv_fold_scores, &model.search) else {
        return Outcome::inconclusive(
            "The baseline has neither predictions on the test rows nor scores on the model's folds.",
        );
    };
    let folds = &search.cv.folds;
    let sign = if model.metric.higher_is_better() {
        1.0
    } else {
        -1.0
    };
    let diffs: Vec<f64> = folds
        .iter()
        .zip(scores)
        .map(|(f, b)| sign * (f.score - b))
        .collect();
    // n2/n1 for each fold: its validation rows over the rows trained on (the rest of the
    // distinct training rows); averaged over folds, 1/(k - 1) for equal k-fold splits.
    let distinct = search.cv.distinct_rows() as f64;
    let ratio = folds
        .iter()
        .map(|f| f.rows as f64 / (distinct - f.rows as f64).max(1.0))
        .sum::<f64>()
        / folds.len() as f64;
    let tested =
        stats::corrected_resampled_t(&diffs, ratio, ctx.intervals.confidence).and_then(|t| {
            let differing = diffs.iter().filter(|&&d| d != 0.0).count() as u64;
            stats::floored_p(t.p_value, Some(&diffs), differing).map(|p| (t, p))
        });
    let (t, (p_value, p_floor)) = match tested {
        Ok(t) => t,
        Err(e) => {
            return Outcome::inconclusive(format!(
                "The fold differences could not be tested: {e}."
            ));
        }
    };
    let evidence = vec![
        Evidence::text("baseline", "Baseline", baseline.name.clone()),
        Evidence::text(
            "test",
            "Paired test",
            "Nadeau–Bengio corrected resampled t on fold differences",
        ),
        Evidence::count("folds", "Folds compared", diffs.len() as u64),
        Evidence::number(
            "ratio",
            "Validation / training rows per fold",
            ratio,
            Quantity::Score,
        ),
        Evidence::number(
            "improvement",
            "Mean improvement per fold",
            t.mean,
            Quantity::Score,
        ),
        Evidence::interval(
            "interval",
            "Interval for the improvement",
            t.interval,
            ctx.intervals.confidence,
        ),
        Evidence::number("t", "Corrected t", t.t, Quantity::Score),
        Evidence::number("p_value", "p-value", p_value, Quantity::Probability),
        Evidence::number(
            "test_p_value",
            "p-value of the corrected t",
            t.p_value,
            Quantity::Probability,
        ),
        Evidence::number(
            "p_floor",
            "Sign-flip bound on the p-value",
            p_floor,
            Quantity::Probability,
        ),
        Evidence::number(
            "min_improvement",
            "Smallest improvement worth claiming",
            min,
            Quantity::Score,
        ),
    ];
    let significant = p_value < 1.0 - ctx.intervals.confidence;
    judge(
        significant && t.interval.lower > min && t.mean > 0.0,
        stats::no_spread(t.interval),
        [
            "On the same {folds} CV folds the model improves on {baseline} by {improvement} per \
             fold (interval {interval}, p = {p_value}, {test}); there are no test predictions \
             to pair.",
            "On the same {folds} CV folds the improvement over {baseline} is {improvement} per \
             fold (interval {interval}, p = {p_value}, {test}): not enough to claim the model is \
             better (the interval must lie above {min_improvement}).",
            "On the same {folds} CV folds the model beats {baseline} by the same {improvement} \
             on every fold, so the interval {interval} has no width and the test ({test}) has \
             no spread to measure uncertainty by; p = {p_value} is only the sign-flip bound. \
             A gain without any variation does not show the model is better.",
        ],
        evidence,
    )
}
