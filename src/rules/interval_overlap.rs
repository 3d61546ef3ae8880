//! Interval overlap: the CV interval and the test interval overlap.

use super::{Context, Outcome, RuleInfo, RuleSettings, Subject, rule_settings};
use crate::finding::{Evidence, Severity};

rule_settings! {
    /// Settings of the interval-overlap rule.
    severity = Severity::Warn;
}

pub const RULE: RuleInfo = RuleInfo {
    id: "interval_overlap",
    name: "Interval overlap",
    explanation: "Checks that the confidence interval of the cross-validation estimate and the \
confidence interval of the test score overlap. Two intervals that do not overlap at all are \
strong evidence that the two estimates measure different things. The converse does not hold: \
overlap of two 95% intervals is a conservative test of a difference (Schenker & Gentleman 2001, \
'On judging the significance of differences by examining the overlap between confidence \
intervals'), so intervals can overlap while the difference is still significant. That is why the \
CV-to-test gap rule runs a direct test of the difference as well; this rule is the picture a \
reviewer sees in the interval strip, and it defaults to a warning. Intervals that touch (equal \
bounds up to rounding) overlap; a degenerate interval (at 0/n or n/n the Wilson interval ends \
exactly at 0 or 1) is compared like any other.",
    check,
    severity_from_base: false,
};

pub fn problems(_raw: &RawSettings) -> Vec<(String, String)> {
    Vec::new()
}

fn check(subject: &Subject, ctx: &Context, _settings: &RuleSettings) -> Outcome {
    let (Some(cv), Some(test)) = (
        subject.cv.as_ref().and_then(|e| e.interval),
        subject.test.as_ref().and_then(|e| e.interval),
    ) else {
        return Outcome::inconclusive(
            "Overlap needs an interval for both the CV estimate and the test score; one is missing.",
        );
    };
    let evidence = vec![
        Evidence::interval("cv_interval", "CV interval", cv, ctx.intervals.confidence),
        Evidence::interval(
            "test_interval",
            "Test interval",
            test,
            ctx.intervals.confidence,
        ),
    ];
    Outcome::judge(
        super::threshold::overlap(cv, test),
        "The CV interval {cv_interval} and the test interval {test_interval} overlap.",
        "The CV interval {cv_interval} and the test interval {test_interval} do not overlap: \
         the two estimates disagree beyond their uncertainty.",
        evidence,
    )
}
