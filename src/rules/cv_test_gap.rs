//! CV-to-test gap: the cross-validation estimate and the test score agree within a bound and
//! within sampling noise.

use super::{Context, Outcome, RuleInfo, RuleSettings, Subject, rule_settings};
use crate::finding::{Evidence, Quantity, Severity};
use crate::stats;

rule_settings! {
    /// Settings of the CV-to-test gap rule.
    severity = Severity::Error;
    /// Largest allowed |CV estimate − test score|, in the metric's units.
    max_gap: f64 = 0.05, looser: Larger,
    /// Whether a gap beyond sampling noise fails even when it is inside `max_gap`.
    fail_beyond_noise: bool = true, looser: False,
}

pub const RULE: RuleInfo = RuleInfo {
    id: "cv_test_gap",
    name: "CV-to-test gap",
    explanation: "Compares the cross-validation estimate of the selected configuration with the \
score on the test split. It fails when the absolute gap exceeds `max_gap`, and (unless \
`fail_beyond_noise` is false) when the gap is larger than sampling noise explains. For accuracy, \
noise is judged with Newcombe's hybrid score interval for a difference of two independent \
proportions (Newcombe 1998, method 10, built from Wilson intervals) and a two-proportion z-test \
with pooled variance; the CV count is taken over distinct training rows. A gap beyond noise means \
the CV estimate and the test split disagree for a reason other than chance: optimistic model \
selection, leakage in the folds, or a test split drawn from a different population. Other \
metrics are judged against `max_gap` only until per-example predictions give them an interval.",
    check,
    severity_from_base: false,
};

pub fn problems(raw: &RawSettings) -> Vec<(String, String)> {
    match raw.max_gap {
        Some(g) if !(g.is_finite() && g >= 0.0) => vec![(
            "max_gap".into(),
            format!("expected a non-negative number, found {g}"),
        )],
        _ => Vec::new(),
    }
}

fn check(subject: &Subject, ctx: &Context, settings: &RuleSettings) -> Outcome {
    let settings = &settings.cv_test_gap;
    let (Some(cv), Some(test)) = (&subject.cv, &subject.test) else {
        return Outcome::inconclusive(
            "The gap needs both a cross-validation estimate and a test score; the manifest lacks one.",
        );
    };
    let gap = cv.value - test.value;
    let mut evidence = vec![
        Evidence::number("cv", "CV estimate", cv.value, Quantity::Score),
        Evidence::number("test", "Test score", test.value, Quantity::Score),
        Evidence::number("gap", "CV − test", gap, Quantity::Score),
        Evidence::number(
            "max_gap",
            "Largest allowed gap",
            settings.max_gap,
            Quantity::Score,
        ),
    ];
    let within_bound = super::threshold::at_most(gap.abs(), settings.max_gap);
    let noise = match (cv.successes, test.successes) {
        (Some(x1), Some(x2)) => {
            let interval = stats::newcombe_difference_mean(
                x1,
                cv.rows,
                x2,
                test.rows,
                ctx.intervals.confidence,
            );
            let z = stats::two_proportion_z_test_mean(x1, cv.rows, x2, test.rows);
            match (interval, z) {
                (Ok(interval), Ok(z)) => {
                    evidence.push(Evidence::interval(
                        "gap_interval",
                        "Interval for the gap (Newcombe)",
                        interval,
                        ctx.intervals.confidence,
                    ));
                    evidence.push(Evidence::number(
                        "z",
                        "z statistic",
                        z.statistic,
                        Quantity::Score,
                    ));
                    evidence.push(Evidence::number(
                        "p_value",
                        "p-value",
                        z.p_value,
                        Quantity::Probability,
                    ));
                    // One decision: beyond noise when either approximation says so. They
                    // disagree only near the boundary (16/20 against 20/20: the interval
                    // touches 0 while p = 0.035), and there the gate fails closed.
                    let alpha = 1.0 - ctx.intervals.confidence;
                    let significant = !super::threshold::at_least(z.p_value, alpha);
                    Some(!super::threshold::inside(interval, 0.0) || significant)
                }
                _ => None,
            }
        }
        _ => None,
    };
    let beyond_noise = noise == Some(true);
    if !within_bound {
        return Outcome::fail(
            if beyond_noise {
                "CV estimate {cv} and test score {test} differ by {gap}, more than the allowed \
                 {max_gap} and more than sampling noise explains (p = {p_value})."
            } else {
                "CV estimate {cv} and test score {test} differ by {gap}, more than the allowed \
                 {max_gap}."
            },
            evidence,
        );
    }
    match noise {
        Some(true) if settings.fail_beyond_noise => Outcome::fail(
            "CV estimate {cv} and test score {test} differ by {gap}: inside the allowed {max_gap}, \
             but beyond sampling noise (p = {p_value}, interval {gap_interval}).",
            evidence,
        ),
        Some(_) => Outcome::pass(
            "CV estimate {cv} and test score {test} differ by {gap}, inside the allowed {max_gap}; \
             the interval for the gap is {gap_interval}.",
            evidence,
        ),
        None if cv.successes.is_some() && test.successes.is_some() => Outcome::pass(
            "CV estimate {cv} and test score {test} differ by {gap}, inside the allowed {max_gap} \
             (no noise test: with every row right, or every row wrong, the counts leave no \
             variation to test).",
            evidence,
        ),
        None => Outcome::pass(
            "CV estimate {cv} and test score {test} differ by {gap}, inside the allowed {max_gap} \
             (no noise test: it needs counts of correct rows).",
            evidence,
        ),
    }
}
