//! Selection optimism: how much of the best cross-validation score is luck of the search.

use schemars::JsonSchema;
use serde::Deserialize;

use super::threshold::{at_least, at_most};
use super::{Context, Outcome, RuleInfo, RuleSettings, Subject, rule_settings};
use crate::finding::{Evidence, Quantity, Severity};
use crate::manifest::Basis;
use crate::stats::{self, Interval};

/// Which estimate of the optimism decides whether a CV claim is supported.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum Gate {
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
    gate: Gate = Gate::ExpectedMax, looser: Any,
}

pub const RULE: RuleInfo = RuleInfo {
    id: "selection_optimism",
    name: "Selection optimism",
    explanation: "The best of N cross-validation scores is biased upward: even if every \
configuration were equally good, one of them would score highest by chance (optimization bias, \
the winner's curse of model selection). This rule estimates that optimism three ways and reports \
all of them. (1) Expected maximum: E[max of N standard normals] × the standard error of the \
selected configuration's CV estimate, with E[max] from numerical integration of \
N·x·φ(x)·Φ(x)^(N−1) (checked against Harter 1961 and Blom's 1958 approximation). For accuracy \
the standard error is the Agresti–Coull (1998) form √(p̃(1−p̃)/(n + z²)), p̃ = (x + z²/2)/(n + z²), \
which stays positive at 0/n and n/n where the plug-in √(p̂(1−p̂)/n) is 0 and would call a perfect \
CV score exact; for other metrics bounded to [0, 1] the fold standard error is floored the same \
way (see claim support). It assumes the N configurations are independent; \
correlated configurations overstate it, so a manifest may state `effective_configurations`. \
(2) Best-of-N binomial tail, for accuracy: the probability that the best of N configurations \
reaches the observed CV count k of n rows if every configuration's true accuracy were the test \
score, 1 − F(k − 1; n, p)^N, on the count correct itself (never re-derived from the rounded \
proportion; with repeated k-fold, ⌈k/R⌉ of the n distinct rows). (3) Tibshirani & Tibshirani \
(2009), when every trial's fold scores are given: the mean over folds of (best score on that \
fold − the selected configuration's score on it), which needs no independence assumption; the \
selected configuration is the one the manifest reports (its `selected_trial`, or the trial whose \
folds are `cv.folds`), never simply the best trial. When \
the selected configuration scores the metric's best value on every fold, no trial can beat it on \
any fold and this bias is 0 whatever N is (the per-fold maxima are censored), so the expected \
maximum replaces it and the finding says so. For a claim with basis `cv`, the policy's `gate` \
decides: the claim must not exceed the CV interval's bound shifted by the chosen estimate of the \
optimism (the binomial-tail gate uses the unshifted CV interval). Under every gate, when the tail \
probability is at least 1 − confidence (luck alone explains the CV score), the CV score is no \
evidence beyond the test split and the claim must also lie within the test interval's bound: a \
large tail never passes a claim the test split does not support. A claim equal to the bound up \
to rounding passes. Intervals are clipped to the metric's range. A claim with basis `test` \
rests on an untouched split and passes; the estimates are reported for information. Remedies: a \
larger validation set, nested cross-validation, fewer configurations, or a claim on an untouched \
test split.",
    check,
    severity_from_base: false,
};

pub fn problems(_raw: &RawSettings) -> Vec<(String, String)> {
    Vec::new()
}

fn check(subject: &Subject, ctx: &Context, settings: &RuleSettings) -> Outcome {
    let gate = settings.selection_optimism.gate;
    let model = subject.model;
    let (Some(search), Some(cv)) = (&model.search, &subject.cv) else {
        return Outcome::inconclusive(
            "Selection optimism needs the search's cross-validation folds; the manifest has none.",
        );
    };
    let (Some(configurations), Some(interval), Some(se)) =
        (search.effective(), cv.interval, cv.std_error)
    else {
        return Outcome::inconclusive(
            "Selection optimism needs the number of configurations evaluated and a CV interval.",
        );
    };
    let n = configurations.round().max(1.0) as u64;
    let higher = model.metric.higher_is_better();
    // Optimism moves a score toward "worse": down for accuracy, up for RMSE.
    let toward_worse = if higher { -1.0 } else { 1.0 };
    let shift = |i: Interval, by: f64| Interval {
        lower: i.lower + toward_worse * by,
        upper: i.upper + toward_worse * by,
    };
    let mut evidence = vec![
        Evidence::number(
            "configurations",
            "Configurations assumed",
            n as f64,
            Quantity::Count,
        ),
        Evidence::number("claim", "Claimed score", model.claim.value, Quantity::Score),
        Evidence::number("cv", "CV estimate", cv.value, Quantity::Score),
        Evidence::number("cv_se", "CV standard error", se, Quantity::Score),
        Evidence::text("gate", "Deciding estimate", gate.label()),
    ];
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
    let alpha = 1.0 - ctx.intervals.confidence;
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
    let range = model.metric.range();
    // At the metric's best value (every fold perfect) the per-fold maxima of the Tibshirani &
    // Tibshirani estimate are censored: no configuration can beat the selected one on any fold,
    // so their bias is 0 however many configurations were tried. It measures nothing there, and
    // the expected maximum (whose standard error does not collapse) takes its place.
    let best_value = if higher { range.1 } else { range.0 };
    let censored = n > 1 && cv.value == best_value;
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
        Gate::BinomialTail => tail.map(|_| interval),
    };
    let Some(adjusted) = gate_interval.map(|i| i.clamp_to(range)) else {
        return Outcome::new(
            crate::finding::Status::Inconclusive,
            match gate {
                Gate::BiasCorrection => {
                    "The policy decides by the Tibshirani & Tibshirani correction, which needs every \
                     trial's fold scores; the manifest lists none."
                }
                Gate::BinomialTail => {
                    "The policy decides by the best-of-N binomial tail, which needs an accuracy \
                     metric and a test evaluation."
                }
                Gate::ExpectedMax => "The expected maximum of N normals could not be computed.",
            },
            evidence,
        );
    };
    evidence.push(Evidence::interval(
        "adjusted_interval",
        "CV interval adjusted for selection",
        adjusted,
        ctx.intervals.confidence,
    ));
    let mut bound = if higher {
        adjusted.upper
    } else {
        adjusted.lower
    };
    // Whatever the gate: when luck of the search explains the CV score (the best of N
    // configurations, each truly at the test score, reaches it with probability at least α),
    // the CV score is no evidence beyond the test split, so a CV claim may not exceed what the
    // test interval supports. A pass next to a large tail therefore always means the claim is
    // inside the test interval too.
    let luck = tail.is_some_and(|p| at_least(p, alpha));
    let test_interval = subject.test.as_ref().and_then(|t| t.interval);
    if let (true, Some(t)) = (luck, test_interval) {
        evidence.push(Evidence::interval(
            "test_interval",
            "Test interval (luck explains the CV score)",
            t,
            ctx.intervals.confidence,
        ));
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
    let pass = if luck && test_interval.is_some() {
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
