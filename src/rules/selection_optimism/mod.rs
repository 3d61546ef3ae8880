//! Selection optimism: how much of the best cross-validation score is luck of the search.
//!
//! Owns: the rule ([`RULE`]), its settings and [`Gate`]. [`Facts`] gathers what every gate
//! reports (the estimates of the optimism, the tail probability, the bias correction and, with an
//! out-of-fold file, BBC-CV); [`calibrated`] decides under the default gate, [`out_of_fold`]
//! computes what the out-of-fold file adds; the end of [`check`] decides under the three
//! single-estimate gates, whose bounds the calibration corpus showed are not valid bounds (kept
//! for comparison and for policies that name them).

mod calibrated;
mod out_of_fold;

use schemars::JsonSchema;
use serde::Deserialize;

use super::threshold::{at_least, at_most};
use super::{Context, Outcome, RuleInfo, RuleSettings, Subject, rule_settings};
use crate::finding::{Evidence, Quantity, Severity, Status};
use crate::manifest::Basis;
use crate::stats::{self, Interval};
use out_of_fold::OofFacts;

/// Which estimate decides whether a CV claim is supported.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum Gate {
    /// The valid bound, the least biased estimate (BBC-CV with out-of-fold results) and "cannot
    /// judge" below a standard-error limit, as measured on the calibration corpus.
    Calibrated,
    /// E[max of N standard normals] × the CV standard error (assumes independent configurations).
    ExpectedMax,
    /// Best-of-N binomial tail against the test score (accuracy only; needs a test evaluation).
    BinomialTail,
    /// Tibshirani & Tibshirani (2009) correction (needs every trial's fold scores).
    BiasCorrection,
}

impl Gate {
    fn label(self) -> &'static str {
        match self {
            Gate::Calibrated => "calibrated bound and estimate",
            Gate::ExpectedMax => "expected maximum of N normals",
            Gate::BinomialTail => "best-of-N binomial tail",
            Gate::BiasCorrection => "Tibshirani & Tibshirani correction",
        }
    }
}

impl super::SettingValue for Gate {
    fn show(&self) -> String {
        self.label().to_owned()
    }
    fn is_looser(&self, base: &Self, _way: super::Looser) -> bool {
        self != base
    }
}

rule_settings! {
    /// Settings of the selection-optimism rule.
    severity = Severity::Error;
    /// The estimate that decides whether a CV claim is supported.
    gate: Gate = Gate::Calibrated, looser: Any,
    /// Calibrated gate: the largest CV standard error at which a claim is judged (metrics whose
    /// best value is 1); above it the rule is inconclusive.
    max_std_error: f64 = 0.04, looser: Larger,
    /// Calibrated gate: how far a claim may exceed the least biased estimate (none: only the
    /// bound decides).
    tolerance: Option<f64> = None, looser: Larger,
}

pub const RULE: RuleInfo = RuleInfo {
    id: "selection_optimism",
    name: "Selection optimism",
    explanation: "The best of N cross-validation scores is biased upward: even if every \
configuration were equally good, one of them would score highest by chance (optimization bias, \
the winner's curse of model selection). The policy's `gate` decides a claim with basis `cv`; \
every gate reports all the estimates below. \
The default gate, `calibrated`, was chosen by measuring every candidate on 216 real \
scikit-learn searches whose truth is known (tests/calibration/). It reports the least biased \
estimate of the selected configuration's score: BBC-CV (Tsamardinos, Greasidou & Borboudakis \
2018) when the search names an out-of-fold file (`search.out_of_fold`; every metric, on the rows with their bootstrap multiplicities), else the CV \
score less E[max of M normals] × its standard error with M the stated \
`effective_configurations`, else min(N, 2), which had no systematic error on the corpus (with \
M = N it was 0.045 too low: real configurations are far from independent). The claim must not \
exceed the best score the evidence supports: the most favourable of the CV interval's bound, the \
Student-t interval of the fold scores and BBC-CV's percentile bound, which the truth exceeded in \
1–3% of the searches (no more than 6% in any cell of training size or grid size). A policy may \
add a `tolerance`: the claim must then also lie within that distance of the least biased \
estimate. The rule does not judge (inconclusive, which fails under the default `inconclusive: \
fail`) when the CV standard error exceeds `max_std_error` (0.04, metrics whose best value is 1): \
below about 80 validation rows no gate on the corpus could tell a claim within 0.01 of the \
truth from one 0.03 over. Nor when the selected configuration is perfect on every fold after \
more than one configuration: how much of a perfect score is luck cannot be estimated. \
The estimates: (1) expected maximum, E[max of N standard normals] × the standard error of the \
selected configuration's CV estimate, with E[max] from numerical integration of \
N·x·φ(x)·Φ(x)^(N−1) (checked against Harter 1961 and Blom's 1958 approximation), N the stated \
`effective_configurations`, else the effective number estimated from the out-of-fold file \
(Galwey 2009, from the correlation of the configurations' per-row correctness or errors), else the \
configurations counted. For accuracy the standard error is the Agresti–Coull (1998) form \
√(p̃(1−p̃)/(n + z²)), p̃ = (x + z²/2)/(n + z²), which stays positive at 0/n and n/n where the \
plug-in √(p̂(1−p̂)/n) is 0 and would call a perfect CV score exact; for other metrics bounded to \
[0, 1] the fold standard error is floored the same way (see claim support). (2) Best-of-N \
binomial tail, for accuracy: the probability that the best of N configurations reaches the \
observed CV count k of n rows if every configuration's true accuracy were the test score, \
1 − F(k − 1; n, p)^N, on the count correct itself (with repeated k-fold, ⌈k/R⌉ of the n distinct \
rows). (3) Tibshirani & Tibshirani (2009), when every trial's fold scores are given: the mean \
over folds of (best score on that fold − the selected configuration's score on it); the selected \
configuration is the one the manifest reports (its `selected_trial`, or the trial whose folds are \
`cv.folds`). When the selected configuration scores the metric's best value on every fold this \
bias is 0 whatever N is (the per-fold maxima are censored), so the expected maximum replaces it. \
The other gates decide by one estimate: `expected_max` and `bias_correction` compare the claim \
with the CV interval's bound shifted by their estimate of the optimism; `binomial_tail` holds a \
CV claim to the test interval (a small tail means the CV lead over the test split is more than \
luck explains, which makes the CV score no better evidence). On the corpus the shifted bounds \
were not valid bounds (the truth lay above them in a large share of searches), so these gates \
are kept for comparison. Under these three gates, when the tail probability is at least 1 − \
confidence (luck alone explains the CV score) a CV claim must also lie within the test \
interval's bound; the calibrated gate does not cap its bound so (the smaller of two valid bounds \
is not a valid bound: on the corpus the cap left the truth above it in 4.2% of searches) and \
leaves a CV score far above the test split to the CV-to-test gap rule. A claim equal to the bound up to rounding passes. Intervals are clipped to the \
metric's range. A claim with basis `test` rests on an untouched split and passes; the estimates \
are reported for information. Remedies: a larger validation set, nested cross-validation, fewer \
configurations, or a claim on an untouched test split.",
    check,
    severity_from_base: false,
};

pub fn problems(raw: &RawSettings) -> Vec<(String, String)> {
    let mut out = Vec::new();
    if let Some(m) = raw.max_std_error
        && !(m > 0.0 && m.is_finite())
    {
        out.push((
            "max_std_error".into(),
            format!("expected a positive number, found {m}"),
        ));
    }
    if let Some(Some(t)) = raw.tolerance
        && !(t >= 0.0 && t.is_finite())
    {
        out.push((
            "tolerance".into(),
            format!("expected a number of at least 0, found {t}"),
        ));
    }
    out
}

/// What every gate reads about one model's search.
struct Facts<'a> {
    /// Configurations counted (the trials, or `search.configurations`).
    counted: u64,
    /// `search.effective_configurations` as stated.
    stated_effective: Option<f64>,
    claim: f64,
    claim_basis: Basis,
    higher: bool,
    /// −1 when higher is better (optimism moves a score down), +1 otherwise.
    toward_worse: f64,
    range: (f64, f64),
    proportion: bool,
    repeats: u32,
    fold_scores: &'a [f64],
    cv_value: f64,
    /// The CV interval at the policy's confidence.
    interval: Interval,
    se: f64,
    confidence: f64,
    /// Every fold at the metric's best value after more than one configuration.
    censored: bool,
    oof: Option<OofFacts>,
}

fn check(subject: &Subject, ctx: &Context, settings: &RuleSettings) -> Outcome {
    let settings = &settings.selection_optimism;
    let gate = settings.gate;
    let model = subject.model;
    let (Some(search), Some(cv)) = (&model.search, &subject.cv) else {
        return Outcome::inconclusive(
            "Selection optimism needs the search's cross-validation folds; the manifest has none.",
        );
    };
    let (Some(stated_or_counted), Some(interval), Some(se)) =
        (search.effective(), cv.interval, cv.std_error)
    else {
        return Outcome::inconclusive(
            "Selection optimism needs the number of configurations evaluated and a CV interval.",
        );
    };
    let confidence = ctx.intervals.confidence;
    let hints = out_of_fold::ClassHints {
        positive: model
            .predictions
            .as_ref()
            .and_then(|p| match &p.set.columns {
                crate::evidence::Columns::Classification { classes, .. } => p
                    .set
                    .positive
                    .and_then(|i| classes.get(i as usize))
                    .map(String::as_str),
                crate::evidence::Columns::Regression { .. } => None,
            }),
        f1: model.predictions.as_ref().map(|p| p.f1),
    };
    let oof = search
        .out_of_fold
        .as_ref()
        .map(|o| out_of_fold::analyse(o, model.metric, hints, &ctx.intervals, ctx.threads));
    // The configurations the expected maximum assumes: stated, else estimated from the
    // out-of-fold results, else counted.
    let estimated = oof
        .as_ref()
        .and_then(|o| o.effective.as_ref().ok().copied());
    let assumed = search
        .effective_configurations
        .or(estimated)
        .unwrap_or(stated_or_counted);
    let n = assumed.round().max(1.0) as u64;
    let counted_n = search
        .configurations
        .unwrap_or_else(|| stated_or_counted.round().max(1.0) as u64)
        .max(1);
    let higher = model.metric.higher_is_better();
    let toward_worse = if higher { -1.0 } else { 1.0 };
    let mut evidence = vec![
        Evidence::number(
            "configurations",
            "Configurations evaluated",
            counted_n as f64,
            Quantity::Count,
        ),
        Evidence::number("claim", "Claimed score", model.claim.value, Quantity::Score),
        Evidence::number("cv", "CV estimate", cv.value, Quantity::Score),
        Evidence::number("cv_se", "CV standard error", se, Quantity::Score),
        Evidence::text("gate", "Deciding estimate", gate.label()),
    ];
    if n != counted_n {
        evidence.push(Evidence::count(
            "assumed_configurations",
            "Independent configurations assumed",
            n,
        ));
    }
    let expected_max = stats::expected_max_normal(n).ok();
    let optimism = expected_max.map(|e| e * se);
    if let (Some(e), Some(opt)) = (expected_max, optimism) {
        evidence.push(Evidence::number(
            "expected_max",
            "E[max of N normals]",
            e,
            Quantity::Score,
        ));
        if let Ok(b) = stats::blom_expected_max(n) {
            evidence.push(Evidence::number(
                "blom",
                "Blom's approximation",
                b,
                Quantity::Score,
            ));
        }
        evidence.push(Evidence::number(
            "optimism",
            "Expected optimism",
            opt,
            Quantity::Score,
        ));
        evidence.push(Evidence::number(
            "adjusted",
            "CV estimate less expected optimism",
            cv.value + toward_worse * opt,
            Quantity::Score,
        ));
    }
    let alpha = 1.0 - confidence;
    // The count correct, never re-derived from the rounded proportion; with repeated k-fold the
    // CV score k/(R·n) is reached by at least ⌈k/R⌉ of the n distinct rows.
    let cv_count = search
        .cv
        .folds
        .iter()
        .map(|f| f.correct)
        .sum::<Option<u64>>();
    let tail = match (cv_count, &subject.test) {
        (Some(k), Some(test)) if model.metric.is_proportion() => {
            let repeats = u64::from(search.cv.repeats.max(1));
            stats::best_of_n_tail_count(n, cv.rows, test.value, k.div_ceil(repeats)).ok()
        }
        _ => None,
    };
    if let Some(p) = tail {
        evidence.push(Evidence::number(
            "tail_probability",
            "P(best of N reaches the CV score | test score is the truth)",
            p,
            Quantity::Probability,
        ));
    }
    let tt = search.trials.as_ref().map(|t| t.bias);
    if let Some(b) = tt {
        evidence.push(Evidence::count("trials", "Trials listed", b.trials));
        if let Some(t) = &search.trials
            && let (Some(id), Some(by)) = (&t.selected_id, t.selected_by)
        {
            evidence.push(Evidence::text(
                "selected_trial",
                "Trial the bias is computed for",
                format!("{id} ({by})"),
            ));
        }
        evidence.push(Evidence::number(
            "tt_bias",
            "Tibshirani & Tibshirani bias",
            b.bias,
            Quantity::Score,
        ));
        evidence.push(Evidence::number(
            "tt_corrected",
            "Best CV score corrected for bias",
            b.corrected,
            Quantity::Score,
        ));
    }
    if let Some(o) = &oof {
        o.evidence(confidence, &mut evidence);
    }
    let range = model.metric.range();
    // At the metric's best value (every fold perfect) the per-fold maxima of the Tibshirani &
    // Tibshirani estimate are censored: no configuration can beat the selected one on any fold,
    // so their bias is 0 however many configurations were tried.
    let best_value = if higher { range.1 } else { range.0 };
    let censored = counted_n > 1 && cv.value == best_value;
    // Under the single-estimate gates: when luck of the search explains the CV score (the best of N
    // configurations, each truly at the test score, reaches it with probability at least α),
    // the CV score is no evidence beyond the test split, so a CV claim may not exceed what the
    // test interval supports.
    let luck = tail.is_some_and(|p| at_least(p, alpha));
    let test_interval = subject.test.as_ref().and_then(|t| t.interval);
    let luck_test_interval = if luck { test_interval } else { None };
    let fold_scores: Vec<f64> = search.cv.folds.iter().map(|f| f.score).collect();
    let facts = Facts {
        counted: counted_n,
        stated_effective: search.effective_configurations,
        claim: model.claim.value,
        claim_basis: model.claim.basis,
        higher,
        toward_worse,
        range,
        proportion: model.metric.is_proportion(),
        repeats: search.cv.repeats,
        fold_scores: &fold_scores,
        cv_value: cv.value,
        interval,
        se,
        confidence,
        censored,
        oof,
    };
    if gate == Gate::Calibrated {
        return calibrated::judge(&facts, settings, evidence);
    }
    if let Some(t) = luck_test_interval {
        evidence.push(Evidence::interval(
            "test_interval",
            "Test interval (luck explains the CV score)",
            t,
            confidence,
        ));
    }

    let shift = |i: Interval, by: f64| Interval {
        lower: i.lower + toward_worse * by,
        upper: i.upper + toward_worse * by,
    };
    let tt_shift = tt.map(|b| {
        if censored {
            optimism.map_or(b.bias, |o| b.bias.max(o))
        } else {
            b.bias
        }
    });
    if censored && tt.is_some() {
        evidence.push(Evidence::text(
            "censored",
            "Bias correction at the boundary",
            "the selected configuration is perfect on every fold, so the correction is \
             replaced by the expected maximum of N normals",
        ));
    }
    let gate_interval = match gate {
        Gate::ExpectedMax => optimism.map(|opt| shift(interval, opt)),
        Gate::BiasCorrection => tt_shift.map(|b| shift(interval, b)),
        // The tail says whether luck explains the CV lead over the test split; either way the
        // test split is the evidence a CV claim is held to (a tail below α means the lead is
        // more than luck explains, which makes the CV score no better evidence).
        Gate::BinomialTail => tail.and(test_interval),
        Gate::Calibrated => None,
    };
    let Some(adjusted) = gate_interval.map(|i| i.clamp_to(range)) else {
        return Outcome::new(
            Status::Inconclusive,
            match gate {
                Gate::BiasCorrection => {
                    "The policy decides by the Tibshirani & Tibshirani correction, which needs every \
                     trial's fold scores; the manifest lists none."
                }
                Gate::BinomialTail => {
                    "The policy decides by the best-of-N binomial tail, which needs an accuracy \
                     metric and a test evaluation."
                }
                Gate::ExpectedMax | Gate::Calibrated => {
                    "The expected maximum of N normals could not be computed."
                }
            },
            evidence,
        );
    };
    evidence.push(Evidence::interval(
        "adjusted_interval",
        if gate == Gate::BinomialTail {
            "Test interval (the binomial-tail gate holds CV claims to it)"
        } else {
            "CV interval adjusted for selection"
        },
        adjusted,
        confidence,
    ));
    let mut bound = if higher {
        adjusted.upper
    } else {
        adjusted.lower
    };
    if let Some(t) = luck_test_interval {
        bound = if higher {
            bound.min(t.upper)
        } else {
            bound.max(t.lower)
        };
    }
    evidence.push(Evidence::number(
        "bound",
        "Best score the evidence supports",
        bound,
        Quantity::Score,
    ));
    if model.claim.basis == Basis::Test {
        return Outcome::pass(
            if optimism.is_some() {
                "The claim rests on the test split, not on the search; for reference the best of \
                 {configurations} CV scores is optimistic by about {optimism}."
            } else {
                "The claim rests on the test split, not on the search."
            },
            evidence,
        );
    }
    let supported = if higher {
        at_most(model.claim.value, bound)
    } else {
        at_least(model.claim.value, bound)
    };
    let pass = if luck_test_interval.is_some() {
        "After a search of {configurations} configurations luck explains the CV score (tail \
         probability {tail_probability}), so the claim is held to the test interval \
         {test_interval}: the evidence supports up to {bound} ({gate}); the claimed {claim} is \
         within it."
    } else {
        "After a search of {configurations} configurations the CV evidence supports up to \
         {bound} ({gate}); the claimed {claim} is within it."
    };
    Outcome::judge(
        supported,
        pass,
        "After a search of {configurations} configurations the CV evidence supports only up to \
         {bound} ({gate}); the claimed {claim} is beyond it. The best CV score is partly luck of \
         the search: use a larger validation set, nested cross-validation, fewer configurations, \
         or claim the score of an untouched test split.",
        evidence,
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::rules::{Looser, SettingValue};

    #[test]
    fn removing_or_raising_a_tolerance_loosens_the_gate() {
        // No tolerance lets every claim within the bound through, so it is the loosest value.
        assert!(None.is_looser(&Some(0.02), Looser::Larger));
        assert!(!Some(0.02).is_looser(&None, Looser::Larger));
        assert!(Some(0.03).is_looser(&Some(0.02), Looser::Larger));
        assert!(!Some(0.01).is_looser(&Some(0.02), Looser::Larger));
        assert_eq!(None::<f64>.show(), "none");
    }

    #[test]
    fn settings_outside_their_range_are_problems() {
        let raw = RawSettings {
            max_std_error: Some(0.0),
            tolerance: Some(Some(-0.01)),
            ..RawSettings::default()
        };
        let fields: Vec<String> = problems(&raw).into_iter().map(|(f, _)| f).collect();
        assert_eq!(fields, ["max_std_error", "tolerance"]);
        let fine = RawSettings {
            max_std_error: Some(0.05),
            tolerance: Some(Some(0.0)),
            ..RawSettings::default()
        };
        assert!(problems(&fine).is_empty());
    }
}
