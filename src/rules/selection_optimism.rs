//! Selection optimism: how much of the best cross-validation score is luck of the search.

use schemars::JsonSchema;
use serde::Deserialize;

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
N·x·φ(x)·Φ(x)^(N−1) (checked against Harter 1961 and Blom's 1958 approximation). It assumes the N \
configurations are independent; correlated configurations overstate it, so a manifest may state \
`effective_configurations`. (2) Best-of-N binomial tail, for accuracy: the probability that the \
best of N configurations reaches the observed CV score if every configuration's true accuracy \
were the test score, 1 − F(⌈n·x⌉ − 1; n, p)^N. A large value means luck alone explains the CV \
score. (3) Tibshirani & Tibshirani (2009), when every trial's fold scores are given: the mean over \
folds of (best score on that fold − the selected configuration's score on it), which needs no \
independence assumption; the selected configuration is the one the manifest reports (its \
`selected_trial`, or the trial whose folds are `cv.folds`), never simply the best trial. For a claim with basis `cv`, the policy's `gate` decides: the claim \
must not exceed the CV interval's bound shifted by the estimated optimism (or, for the binomial \
tail when luck explains the CV score, the test interval's bound). A claim with basis `test` \
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
    let tail = match (cv.correct, &subject.test) {
        (Some(_), Some(test)) if model.metric.is_proportion() => {
            stats::best_of_n_tail(n, cv.rows, test.value, cv.value).ok()
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
    let adjusted = match gate {
        Gate::ExpectedMax => optimism.map(|opt| shift(interval, opt)),
        Gate::BiasCorrection => tt.map(|b| shift(interval, b.bias)),
        Gate::BinomialTail => match (tail, subject.test.as_ref().and_then(|t| t.interval)) {
            (Some(p), Some(test_interval)) if p >= 1.0 - ctx.intervals.confidence => {
                Some(test_interval)
            }
            (Some(_), Some(_)) => Some(interval),
            _ => None,
        },
    };
    let Some(adjusted) = adjusted else {
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
    let bound = if higher {
        adjusted.upper
    } else {
        adjusted.lower
    };
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
        model.claim.value <= bound
    } else {
        model.claim.value >= bound
    };
    Outcome::judge(
        supported,
        "After a search of {configurations} configurations the CV evidence supports up to \
         {bound} ({gate}); the claimed {claim} is within it.",
        "After a search of {configurations} configurations the CV evidence supports only up to \
         {bound} ({gate}); the claimed {claim} is beyond it. The best CV score is partly luck of \
         the search: use a larger validation set, nested cross-validation, fewer configurations, \
         or claim the score of an untouched test split.",
        evidence,
    )
}
