//! Policy change: a merge request must not pass by loosening the gate it is judged by.

use super::{Context, Outcome, RuleInfo, RuleSettings, SettingChange, Subject, rule_settings};
use crate::finding::{Evidence, Severity, Status};

rule_settings! {
    /// Settings of the policy-change rule. Its severity is read from the base branch's policy,
    /// so a merge request cannot switch it off for itself.
    severity = Severity::Error;
}

pub const RULE: RuleInfo = RuleInfo {
    id: "policy_change",
    name: "Policy change",
    explanation: "Compares the policy on this branch with the base branch's policy (given with \
`--base-policy`) as it applies to each model, and fails when a change loosens the gate: a larger \
bound or budget, a smaller minimum, a rule lowered from error to warn or off, fewer required \
fields, a lower confidence level, inconclusive rules no longer failing, or a waiver that is new \
or expires later. Changes whose direction is not known (the interval method, the selection \
gate, the reported margin) count as loosening until a reviewer accepts them, since they can make \
a claim pass. Tightening is reported but passes. The severity of this rule comes from the base \
branch's policy, not from the policy under review, so a merge request cannot weaken it in the \
same change. A reviewer accepts a loosened policy by recording its SHA-256 digest (shown in the \
report) in the base branch's list of reviewed policies (`--reviewed-policies`); the base branch \
is trusted, the change is not. When the base branch has no policy yet (`--no-base-policy`), the \
change adopts vetscore and there is nothing to review. The report shows the unified diff of the \
two policy files. This is common practice \
for change control of quality gates (no single source).",
    check,
    severity_from_base: true,
};

pub fn problems(_raw: &RawSettings) -> Vec<(String, String)> {
    Vec::new()
}

fn check(_subject: &Subject, ctx: &Context, settings: &RuleSettings) -> Outcome {
    if ctx.review.adopting {
        return Outcome::pass(
            "The base branch has no policy yet: this change adopts vetscore, so there is no \
             policy change to review.",
            Vec::new(),
        );
    }
    let Some(base) = &ctx.base else {
        return Outcome::new(
            Status::Skipped,
            "No base-branch policy was given (--base-policy), so policy changes were not reviewed.",
            Vec::new(),
        );
    };
    let mut changes = settings.changes(&base.settings);
    if ctx.intervals.confidence != base.confidence {
        changes.push(SettingChange {
            setting: "confidence".into(),
            from: base.confidence.to_string(),
            to: ctx.intervals.confidence.to_string(),
            looser: ctx.intervals.confidence < base.confidence,
        });
    }
    if ctx.intervals.method != base.interval_method {
        changes.push(SettingChange {
            setting: "interval_method".into(),
            from: format!("{:?}", base.interval_method),
            to: format!("{:?}", ctx.intervals.method),
            looser: true,
        });
    }
    if ctx.inconclusive_fails != base.inconclusive_fails {
        changes.push(SettingChange {
            setting: "inconclusive".into(),
            from: if base.inconclusive_fails {
                "fail"
            } else {
                "warn"
            }
            .into(),
            to: if ctx.inconclusive_fails {
                "fail"
            } else {
                "warn"
            }
            .into(),
            looser: !ctx.inconclusive_fails,
        });
    }
    for w in &ctx.waivers {
        let before = base
            .waivers
            .iter()
            .filter(|b| b.rule == w.rule && b.pattern == w.pattern)
            .map(|b| b.expires)
            .max();
        if before.is_none_or(|b| b < w.expires) {
            changes.push(SettingChange {
                setting: format!("{} ({} for {:?})", w.path, w.rule, w.pattern),
                from: before.map_or("no waiver".into(), |b| format!("until {b}")),
                to: format!("until {}", w.expires),
                looser: true,
            });
        }
    }
    let describe = |looser: bool| -> String {
        changes
            .iter()
            .filter(|c| c.looser == looser)
            .map(|c| format!("{}: {} → {}", c.setting, c.from, c.to))
            .collect::<Vec<_>>()
            .join("; ")
    };
    let loosened = changes.iter().filter(|c| c.looser).count() as u64;
    let mut evidence = vec![Evidence::count("loosened", "Loosening changes", loosened)];
    // An empty list says nothing; only the lists with entries are evidence.
    for (key, label, looser) in [
        ("loosened_list", "Loosened", true),
        ("tightened_list", "Tightened", false),
    ] {
        if changes.iter().any(|c| c.looser == looser) {
            evidence.push(Evidence::text(key, label, describe(looser)));
        }
    }
    if loosened > 0 && ctx.review.accepted {
        return Outcome::pass(
            "The policy was loosened for this model in this change ({loosened_list}), and a \
             reviewer accepted it: its digest is listed as reviewed on the base branch.",
            evidence,
        );
    }
    if changes.is_empty() {
        return Outcome::pass(
            "The policy applies to this model as on the base branch.",
            evidence,
        );
    }
    Outcome::judge(
        loosened == 0,
        "The policy changed for this model, only tightening: {tightened_list}.",
        "The policy was loosened for this model in this change: {loosened_list}. A reviewer must \
         accept the new policy before it can judge this merge request.",
        evidence,
    )
}
