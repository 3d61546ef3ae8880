//! The engine: every rule on every model, with the policy's settings, waivers and handling of
//! inconclusive rules applied. Pure: no I/O, no clock (the date comes in as an argument).

use std::collections::BTreeMap;

use crate::estimate::{self, Estimate};
use crate::finding::{Finding, PolicySource, Severity, Status, Verdict, WaiverNote, verdict_of};
use crate::ledger;
use crate::manifest::Model;
use crate::policy::{Inconclusive, Policy};
use crate::rules::{BasePolicy, Context, HoldoutUse, PolicyReview, RULES, Subject, WaiverView};

/// The outcome of a whole check.
#[derive(Debug, Clone)]
pub struct Assessment {
    pub models: Vec<ModelAssessment>,
    pub verdict: Verdict,
    /// Remarks about the policy, such as entries that matched no model.
    pub notes: Vec<String>,
}

/// Everything the check concluded about one model.
#[derive(Debug, Clone)]
pub struct ModelAssessment {
    pub model: Model,
    pub cv: Option<Estimate>,
    pub test: Option<Estimate>,
    pub findings: Vec<Finding>,
    pub verdict: Verdict,
}

/// Runs every rule on every model. `ledger` holds earlier holdout evaluations; those not among
/// the manifests' own count toward the holdout budget too.
pub fn evaluate(
    models: Vec<Model>,
    ledger: &[ledger::Entry],
    policy: &Policy,
    base_policy: Option<&Policy>,
    base_splits: Option<&BTreeMap<String, String>>,
    today: jiff::civil::Date,
) -> Assessment {
    evaluate_reviewed(
        models,
        ledger,
        policy,
        base_policy,
        base_splits,
        today,
        PolicyReview::default(),
    )
}

/// [`evaluate`], with what the base branch says about reviewing this change's policy.
pub fn evaluate_reviewed(
    models: Vec<Model>,
    ledger: &[ledger::Entry],
    policy: &Policy,
    base_policy: Option<&Policy>,
    base_splits: Option<&BTreeMap<String, String>>,
    today: jiff::civil::Date,
    review: PolicyReview,
) -> Assessment {
    let mut holdout_uses: BTreeMap<String, Vec<HoldoutUse>> = BTreeMap::new();
    let mut keys = std::collections::HashSet::new();
    for model in &models {
        for i in 0..model.holdout.len() {
            keys.insert(ledger::evaluation_key(model, i));
            holdout_uses
                .entry(model.data.test_fingerprint.clone())
                .or_default()
                .push(HoldoutUse {
                    model: model.name.clone(),
                    file: model.origin.file.clone(),
                });
        }
    }
    for entry in ledger.iter().filter(|e| !keys.contains(&e.key)) {
        holdout_uses
            .entry(entry.test_fingerprint.clone())
            .or_default()
            .push(HoldoutUse {
                model: entry.model.clone(),
                file: format!("ledger entry {}", entry.seq),
            });
    }
    let models_sharing = holdout_uses
        .iter()
        .map(|(fingerprint, uses)| {
            let names: std::collections::HashSet<&str> =
                uses.iter().map(|u| u.model.as_str()).collect();
            (fingerprint.clone(), names.len() as u64)
        })
        .collect();
    let names: Vec<&str> = models.iter().map(|m| m.name.as_str()).collect();
    let notes = policy.unmatched_entries(&names);
    let mut context = Context {
        intervals: policy.intervals(),
        holdout_uses,
        models_sharing,
        today,
        waivers: Vec::new(),
        inconclusive_fails: policy.inconclusive == Inconclusive::Fail,
        base: None,
        base_split: None,
        review,
        threads: std::thread::available_parallelism().map_or(1, |n| n.get().min(8)),
    };
    let assessed: Vec<ModelAssessment> = models
        .into_iter()
        .map(|model| {
            context.waivers = waiver_views(policy, &model.name);
            context.base_split = base_splits.map(|splits| splits.get(&model.name).cloned());
            context.base = base_policy.map(|b| BasePolicy {
                settings: b.settings_for(&model.name).0,
                confidence: b.confidence,
                interval_method: b.interval_method,
                inconclusive_fails: b.inconclusive == Inconclusive::Fail,
                waivers: waiver_views(b, &model.name),
            });
            assess(model, policy, &context)
        })
        .collect();
    Assessment {
        verdict: verdict_of(assessed.iter().flat_map(|m| &m.findings)),
        models: assessed,
        notes,
    }
}

fn waiver_views(policy: &Policy, model: &str) -> Vec<WaiverView> {
    policy
        .waivers_for(model)
        .map(|w| WaiverView {
            rule: w.rule.clone(),
            pattern: w.pattern.clone(),
            reason: w.reason.clone(),
            expires: w.expires,
            path: w.path.clone(),
        })
        .collect()
}

fn assess(model: Model, policy: &Policy, context: &Context) -> ModelAssessment {
    let interval = context.intervals;
    let (settings, sources) = policy.settings_for(&model.name);
    let recomputed = estimate::recompute(&model, interval);
    let subject = Subject {
        model: &model,
        cv: estimate::cv_estimate(&model, interval),
        test: estimate::test_estimate(&model, interval, recomputed.as_ref()),
        recomputed,
    };
    let findings: Vec<Finding> = RULES
        .iter()
        .map(|rule| {
            let mut severity = match (&context.base, rule.severity_from_base) {
                (Some(base), true) => base.settings.severity(rule.id),
                _ => settings.severity(rule.id),
            };
            let policy_source = sources.get(rule.id).cloned().unwrap_or(PolicySource {
                path: "defaults".to_owned(),
                line: None,
            });
            let outcome = if severity == Severity::Off {
                crate::rules::Outcome::new(
                    Status::Skipped,
                    "The policy turns this rule off.",
                    Vec::new(),
                )
            } else {
                (rule.check)(&subject, context, &settings)
            };
            if outcome.status == Status::Inconclusive && policy.inconclusive == Inconclusive::Warn {
                severity = severity.min(Severity::Warn);
            }
            let mut finding = Finding {
                rule: rule.id,
                model: model.name.clone(),
                severity,
                status: outcome.status,
                sentence: outcome.sentence,
                evidence: outcome.evidence,
                policy: policy_source,
                waiver: None,
            };
            apply_waiver(&mut finding, context);
            finding
        })
        .collect();
    ModelAssessment {
        cv: subject.cv,
        test: subject.test,
        verdict: verdict_of(&findings),
        findings,
        model,
    }
}

/// A current waiver turns an adverse finding into a waived one; an expired waiver does nothing
/// here (the waiver-expiry rule reports it).
fn apply_waiver(finding: &mut Finding, context: &Context) {
    if !matches!(finding.status, Status::Fail | Status::Inconclusive) {
        return;
    }
    if let Some(w) = context
        .waivers
        .iter()
        .find(|w| w.rule == finding.rule && w.expires >= context.today)
    {
        finding.status = Status::Waived;
        finding.waiver = Some(WaiverNote {
            reason: w.reason.clone(),
            expires: w.expires.to_string(),
        });
    }
}
