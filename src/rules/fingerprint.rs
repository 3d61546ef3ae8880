//! Test fingerprint: the predictions are on the test split the manifest names.

use super::{Context, Outcome, RuleInfo, RuleSettings, Subject, rule_settings};
use crate::finding::{Evidence, Severity, Status};

rule_settings! {
    /// Settings of the fingerprint rule.
    severity = Severity::Error;
}

pub const RULE: RuleInfo = RuleInfo {
    id: "fingerprint",
    name: "Test fingerprint",
    explanation: "Hashes the row ids of the predictions file, sorted and joined by newlines, with \
SHA-256, and checks the result equals the manifest's `test_fingerprint`. The fingerprint is the \
test split's identity: the holdout budget counts looks by it, and a baseline comparison is only \
fair on the same rows. Predictions on a different, smaller or reshuffled split would otherwise \
pass for the claimed one. A training job computes the same value in Python with \
`\"sha256:\" + hashlib.sha256(\"\\n\".join(sorted(ids)).encode()).hexdigest()` (docs/manifest.md). \
Without a predictions file the rule is skipped.",
    check,
    severity_from_base: false,
};

pub fn problems(_raw: &RawSettings) -> Vec<(String, String)> {
    Vec::new()
}

fn check(subject: &Subject, _ctx: &Context, _settings: &RuleSettings) -> Outcome {
    let Some(p) = &subject.model.predictions else {
        return Outcome::new(
            Status::Skipped,
            "The manifest points at no predictions file, so the fingerprint was not recomputed.",
            Vec::new(),
        );
    };
    let evidence = vec![
        Evidence::text(
            "stated",
            "Fingerprint in the manifest",
            subject.model.data.test_fingerprint.clone(),
        ),
        Evidence::text(
            "computed",
            "Fingerprint of the predictions' ids",
            p.set.fingerprint.clone(),
        ),
    ];
    Outcome::judge(
        p.set.fingerprint == subject.model.data.test_fingerprint,
        "The predictions' row ids hash to the manifest's test fingerprint.",
        "The predictions' row ids hash to {computed}, not to the manifest's test fingerprint \
         {stated}: they are not the test split the manifest names.",
        evidence,
    )
}
