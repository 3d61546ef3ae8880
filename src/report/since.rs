//! "Since base": what changed against the base branch's JSON report — models added or removed,
//! scores and intervals that moved, test splits that changed (by fingerprint), verdicts that
//! changed, and findings that are new, resolved or still open.
//!
//! The base report is read with types of its own that keep only what the comparison needs, so
//! a base report from this report version with extra fields still compares.

use schemars::JsonSchema;
use serde::{Deserialize, Serialize};

use super::view::{Effect, EstimateView, ModelView, REPORT_VERSION};

/// The base branch's JSON report, as far as the comparison reads it.
#[derive(Debug, Deserialize)]
pub struct BaseReport {
    verdict: String,
    models: Vec<BaseModel>,
    #[serde(default)]
    ledger_head: Option<BaseLedger>,
}

/// Where the ledger the base branch's check read ended.
#[derive(Debug, Deserialize)]
struct BaseLedger {
    entries: u64,
    last_hash: String,
}

impl BaseReport {
    /// Parses a base report; errors say what is wrong with it. The report must have the
    /// structure `vetscore schema report` publishes (it is the base branch's artifact, but still
    /// a file): verdicts and statuses are then the report's own words, never free text.
    pub fn parse(text: &str) -> Result<BaseReport, String> {
        // A report whose inputs were invalid has no models to compare with: say so plainly.
        if let Ok(probe) = serde_json::from_str::<VerdictOnly>(text)
            && probe.verdict == "could_not_check"
        {
            return Err(
                "the base branch's report says it could not check its inputs (verdict \
                        \"could not check\"), so there is nothing to compare with; fix the base \
                        branch first"
                    .to_owned(),
            );
        }
        let value: serde_json::Value =
            serde_json::from_str(text).map_err(|e| format!("not a vetscore JSON report: {e}"))?;
        if let Some(version) = value
            .get("report_version")
            .and_then(serde_json::Value::as_u64)
            && version != u64::from(REPORT_VERSION)
        {
            return Err(format!(
                "expected report version {REPORT_VERSION}, found {version}; regenerate the base \
                 branch's report with this version of vetscore"
            ));
        }
        let schema = serde_json::to_value(super::checked_schema()).map_err(|e| e.to_string())?;
        let problems = super::schema_check::check(&schema, &value);
        if !problems.is_empty() {
            return Err(format!(
                "not a vetscore JSON report of version {REPORT_VERSION} (`vetscore schema report`): {}",
                problems.join("; ")
            ));
        }
        let base: BaseReport = serde_json::from_value(value)
            .map_err(|e| format!("not a vetscore JSON report: {e}"))?;
        if let Some(bad) = base
            .models
            .iter()
            .flat_map(|m| &m.findings)
            .map(|f| f.rule.as_str())
            .find(|r| {
                r.is_empty()
                    || r.len() > 64
                    || !r
                        .bytes()
                        .all(|b| b.is_ascii_lowercase() || b.is_ascii_digit() || b == b'_')
            })
        {
            return Err(format!(
                "not a vetscore JSON report: finding rule {} is not a rule id",
                serde_json::Value::from(bad)
            ));
        }
        if let Some(head) = base.ledger_head() {
            head.check().map_err(|m| format!("ledger_head: {m}"))?;
        }
        Ok(base)
    }

    /// The head of the ledger the base branch's check read: a ledger a later check reads must
    /// extend it.
    pub fn ledger_head(&self) -> Option<crate::ledger::Head> {
        self.ledger_head.as_ref().map(|l| crate::ledger::Head {
            entries: l.entries,
            last_hash: l.last_hash.clone(),
        })
    }

    /// Each model's test fingerprint in the base report.
    pub fn test_splits(&self) -> std::collections::BTreeMap<String, String> {
        self.models
            .iter()
            .map(|m| (m.name.clone(), m.test_fingerprint.clone()))
            .collect()
    }
}

#[derive(Debug, Deserialize)]
struct VerdictOnly {
    verdict: String,
}

#[derive(Debug, Deserialize)]
struct BaseModel {
    name: String,
    test_fingerprint: String,
    cv: Option<BaseEstimate>,
    test: Option<BaseEstimate>,
    verdict: String,
    findings: Vec<BaseFinding>,
}

#[derive(Debug, Deserialize)]
struct BaseEstimate {
    value: f64,
    lower: Option<f64>,
    upper: Option<f64>,
}

#[derive(Debug, Deserialize)]
struct BaseFinding {
    rule: String,
    status: String,
    effect: Effect,
}

/// The comparison with the base branch's report.
#[derive(Debug, Clone, Serialize, JsonSchema)]
pub struct SinceBase {
    pub base_verdict: String,
    pub added: Vec<String>,
    pub removed: Vec<String>,
    pub moved: Vec<Moved>,
    pub verdicts: Vec<VerdictChange>,
    /// Models now scored on a different test split than in the base report: their scores are
    /// no longer comparable, and the split change needs a reason.
    pub split_changes: Vec<SplitChange>,
    pub new_findings: Vec<FindingRef>,
    pub resolved_findings: Vec<FindingRef>,
    pub open_findings: Vec<FindingRef>,
}

/// A score or interval that moved.
#[derive(Debug, Clone, Serialize, JsonSchema)]
pub struct Moved {
    pub model: String,
    /// `cv` or `test`.
    pub estimate: &'static str,
    pub before: f64,
    pub after: f64,
    pub before_lower: Option<f64>,
    pub before_upper: Option<f64>,
    pub after_lower: Option<f64>,
    pub after_upper: Option<f64>,
}

#[derive(Debug, Clone, Serialize, JsonSchema)]
pub struct SplitChange {
    pub model: String,
    pub before: String,
    pub after: String,
}

#[derive(Debug, Clone, Serialize, JsonSchema)]
pub struct VerdictChange {
    pub model: String,
    pub before: String,
    pub after: String,
}

/// A finding that blocks or warns, named by model and rule.
#[derive(Debug, Clone, Serialize, JsonSchema)]
pub struct FindingRef {
    pub model: String,
    pub rule: String,
    pub status: String,
}

/// Compares this run's models with the base report.
pub fn compare(base: &BaseReport, models: &[ModelView]) -> SinceBase {
    // Indexes by name, so the comparison is n log n in the number of models.
    let by_name: std::collections::BTreeMap<&str, &BaseModel> = base
        .models
        .iter()
        .rev()
        .map(|m| (m.name.as_str(), m))
        .collect();
    let current: std::collections::BTreeSet<&str> =
        models.iter().map(|m| m.name.as_str()).collect();
    let find = |name: &str| by_name.get(name).copied();
    let mut since = SinceBase {
        base_verdict: base.verdict.clone(),
        added: Vec::new(),
        removed: base
            .models
            .iter()
            .filter(|b| !current.contains(b.name.as_str()))
            .map(|b| b.name.clone())
            .collect(),
        moved: Vec::new(),
        verdicts: Vec::new(),
        split_changes: Vec::new(),
        new_findings: Vec::new(),
        resolved_findings: Vec::new(),
        open_findings: Vec::new(),
    };
    for model in models {
        let verdict = serde_json::to_value(model.verdict)
            .ok()
            .and_then(|v| v.as_str().map(str::to_owned))
            .unwrap_or_default();
        let Some(old) = find(&model.name) else {
            since.added.push(model.name.clone());
            continue;
        };
        for (estimate, before, after) in
            [("cv", &old.cv, &model.cv), ("test", &old.test, &model.test)]
        {
            if let Some(m) = moved(&model.name, estimate, before.as_ref(), after.as_ref()) {
                since.moved.push(m);
            }
        }
        if old.test_fingerprint != model.test_fingerprint {
            since.split_changes.push(SplitChange {
                model: model.name.clone(),
                before: old.test_fingerprint.clone(),
                after: model.test_fingerprint.clone(),
            });
        }
        if old.verdict != verdict {
            since.verdicts.push(VerdictChange {
                model: model.name.clone(),
                before: old.verdict.clone(),
                after: verdict,
            });
        }
        for f in &model.findings {
            let was = old
                .findings
                .iter()
                .find(|b| b.rule == f.rule)
                .is_some_and(|b| b.effect != Effect::None);
            let is = f.effect != Effect::None;
            let status = serde_json::to_value(f.status)
                .ok()
                .and_then(|v| v.as_str().map(str::to_owned))
                .unwrap_or_default();
            let reference = FindingRef {
                model: model.name.clone(),
                rule: f.rule.to_owned(),
                status,
            };
            match (was, is) {
                (false, true) => since.new_findings.push(reference),
                (true, true) => since.open_findings.push(reference),
                (true, false) => since.resolved_findings.push(reference),
                (false, false) => {}
            }
        }
        // Rules that blocked or warned in the base report and no longer exist are resolved too.
        for b in old.findings.iter().filter(|b| b.effect != Effect::None) {
            if !model.findings.iter().any(|f| f.rule == b.rule) {
                since.resolved_findings.push(FindingRef {
                    model: model.name.clone(),
                    rule: b.rule.clone(),
                    status: b.status.clone(),
                });
            }
        }
    }
    since
}

fn moved(
    model: &str,
    estimate: &'static str,
    before: Option<&BaseEstimate>,
    after: Option<&EstimateView>,
) -> Option<Moved> {
    let (before, after) = (before?, after?);
    let same = |a: Option<f64>, b: Option<f64>| match (a, b) {
        (Some(a), Some(b)) => (a - b).abs() <= 1e-12,
        (None, None) => true,
        _ => false,
    };
    if same(Some(before.value), Some(after.value))
        && same(before.lower, after.lower)
        && same(before.upper, after.upper)
    {
        return None;
    }
    Some(Moved {
        model: model.to_owned(),
        estimate,
        before: before.value,
        after: after.value,
        before_lower: before.lower,
        before_upper: before.upper,
        after_lower: after.lower,
        after_upper: after.upper,
    })
}
