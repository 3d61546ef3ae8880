//! Waiver expiry: a waiver past its expiry date is an error, not a silent pass.

use super::{Context, Outcome, RuleInfo, RuleSettings, Subject, rule_settings};
use crate::finding::{Evidence, Severity};

rule_settings! {
    /// Settings of the waiver-expiry rule.
    severity = Severity::Error;
}

pub const RULE: RuleInfo = RuleInfo {
    id: "waiver_expiry",
    name: "Waiver expiry",
    explanation: "Checks the policy's waivers that name this model. A waiver turns a failing \
rule into a reported exception for a stated reason until a stated date. Once that date has \
passed the waiver no longer applies: the rule it covered counts again, and this rule fails so \
the expired entry is renewed with a new reason or removed from the policy. A waiver expires at \
the end of its `expires` day. Dates are compared with the date the check runs on (UTC), or the \
date given with `--today` for reproducible runs. This is common practice for exception \
registers (no single source).",
    check,
    severity_from_base: false,
};

pub fn problems(_raw: &RawSettings) -> Vec<(String, String)> {
    Vec::new()
}

fn check(_subject: &Subject, ctx: &Context, _settings: &RuleSettings) -> Outcome {
    let expired: Vec<String> = ctx
        .waivers
        .iter()
        .filter(|w| w.expires < ctx.today)
        .map(|w| format!("{} (rule {}, expired {})", w.path, w.rule, w.expires))
        .collect();
    let evidence = vec![
        Evidence::count(
            "waivers",
            "Waivers naming this model",
            ctx.waivers.len() as u64,
        ),
        Evidence::text("expired", "Expired waivers", expired.join("; ")),
        Evidence::text("today", "Checked on", ctx.today.to_string()),
    ];
    if ctx.waivers.is_empty() {
        return Outcome::pass("No waiver names this model.", evidence);
    }
    Outcome::judge(
        expired.is_empty(),
        "Waivers naming this model: {waivers}, none expired.",
        "Expired waivers still name this model: {expired}. Renew them with a reason or remove them.",
        evidence,
    )
}
