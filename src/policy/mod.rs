//! The policy: what a team declares once and wants enforced on every run.
//!
//! A policy file (YAML) is parsed into the raw types below, then validated into a [`Policy`]:
//! globs compiled, values range-checked, waivers' rules and dates checked, every problem collected
//! with its file, key path and line. No policy file means [`Policy::defaults`], which are
//! documented in `docs/policy.md` and printed by `vetscore init`.

use std::collections::BTreeMap;
use std::path::Path;

use globset::{Glob, GlobMatcher};
use schemars::JsonSchema;
use serde::{Deserialize, Serialize};
use serde_saphyr::Spanned;
use sha2::{Digest, Sha256};

use crate::diag::{Diagnostic, Diagnostics, Place, closest};
use crate::finding::PolicySource;
use crate::input::{self, Syntax};
use crate::rules::{self, RawRuleSettings, RuleSettings};
use crate::stats::ProportionMethod;

/// Rules a waiver may not cover: waiving them would hide the reminder about other expired
/// waivers, or let a merge request excuse its own policy change.
const UNWAIVABLE: &[&str] = &["waiver_expiry", "policy_change"];

/// The policy format version this build reads.
pub const FORMAT_VERSION: u32 = 1;

/// What an inconclusive rule (missing evidence) does.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize, JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum Inconclusive {
    /// Counts like a failure of the rule at its severity (the default: missing evidence is not
    /// a pass).
    #[default]
    Fail,
    /// Reported as a warning whatever the rule's severity.
    Warn,
}

/// A policy file as written.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
#[schemars(title = "vetscore policy", rename = "Policy")]
pub struct RawPolicy {
    /// Policy format version; this build reads version 1.
    #[schemars(with = "u32")]
    pub format_version: Spanned<u32>,
    /// Confidence level of every interval and test, in (0, 1). Default 0.95.
    #[serde(default)]
    #[schemars(with = "Option<f64>")]
    pub confidence: Option<Spanned<f64>>,
    /// Interval for proportions such as accuracy. Default `wilson`.
    #[serde(default)]
    pub interval_method: Option<ProportionMethod>,
    /// What a rule that lacks evidence does. Default `fail`.
    #[serde(default)]
    pub inconclusive: Option<Inconclusive>,
    /// Bootstrap resamples for intervals recomputed from predictions (F1, balanced accuracy,
    /// R²), between 100 and 1,000,000. Default 2000.
    #[serde(default)]
    #[schemars(with = "Option<u32>")]
    pub bootstrap_resamples: Option<Spanned<u32>>,
    /// Seed of every bootstrap, so a report can be reproduced. Default 1.
    #[serde(default)]
    pub seed: Option<u64>,
    /// Settings per rule id.
    #[serde(default)]
    #[schemars(with = "Option<RawRuleSettings>")]
    pub rules: Option<Spanned<RawRuleSettings>>,
    /// Rule settings for models whose names match glob patterns; later entries win.
    #[serde(default)]
    #[schemars(with = "Vec<RawOverride>")]
    pub overrides: Vec<Spanned<RawOverride>>,
    /// Dated exceptions: a rule's failure on matching models is reported, not enforced.
    #[serde(default)]
    #[schemars(with = "Vec<RawWaiver>")]
    pub waivers: Vec<Spanned<RawWaiver>>,
}

/// Rule settings for a group of models.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
#[schemars(rename = "Override")]
pub struct RawOverride {
    /// Glob patterns on model names, e.g. `reef-*`.
    pub models: Vec<String>,
    /// Settings that replace the policy's for matching models.
    pub rules: RawRuleSettings,
}

/// A dated exception.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
#[schemars(rename = "Waiver")]
pub struct RawWaiver {
    /// The rule id the waiver covers.
    pub rule: String,
    /// Glob pattern on model names.
    pub models: String,
    /// Why the exception is acceptable.
    pub reason: String,
    /// Last day the waiver applies (YYYY-MM-DD).
    pub expires: String,
}

/// A validated policy.
#[derive(Debug, Clone)]
pub struct Policy {
    /// The file the policy came from, if any.
    pub file: Option<String>,
    /// SHA-256 of the policy file's bytes, or `defaults`.
    pub digest: String,
    /// The policy file's text, for the policy-change diff.
    pub text: Option<String>,
    pub confidence: f64,
    pub interval_method: ProportionMethod,
    pub inconclusive: Inconclusive,
    pub bootstrap_resamples: u32,
    pub seed: u64,
    base: RuleSettings,
    base_line: Option<u64>,
    /// The rules block as written, for the line of each rule's own block.
    base_lines: RawRuleSettings,
    base_touched: Vec<&'static str>,
    overrides: Vec<Override>,
    waivers: Vec<Waiver>,
    /// Every override and waiver pattern in one matcher each, so a model is matched against
    /// thousands of patterns in one pass instead of one pattern at a time (5k waivers and 5k
    /// overrides over 10k models took 99 s). `None` when the set could not be built, in which
    /// case the patterns are tried one by one.
    index: Option<PatternIndex>,
}

/// The override and waiver patterns compiled together.
#[derive(Debug, Clone)]
struct PatternIndex {
    overrides: globset::GlobSet,
    /// For each pattern in `overrides`, the index of its override.
    override_of: Vec<usize>,
    waivers: globset::GlobSet,
}

impl PatternIndex {
    fn build(overrides: &[Override], waivers: &[Waiver]) -> Option<PatternIndex> {
        let mut o = globset::GlobSetBuilder::new();
        let mut override_of = Vec::new();
        for (i, ov) in overrides.iter().enumerate() {
            for (_, m) in &ov.patterns {
                o.add(m.glob().clone());
                override_of.push(i);
            }
        }
        let mut w = globset::GlobSetBuilder::new();
        for waiver in waivers {
            w.add(waiver.matcher.glob().clone());
        }
        Some(PatternIndex {
            overrides: o.build().ok()?,
            override_of,
            waivers: w.build().ok()?,
        })
    }
}

#[derive(Debug, Clone)]
struct Override {
    patterns: Vec<(String, GlobMatcher)>,
    rules: RawRuleSettings,
    line: Option<u64>,
}

/// A validated waiver.
#[derive(Debug, Clone)]
pub struct Waiver {
    pub rule: String,
    pub pattern: String,
    matcher: GlobMatcher,
    pub reason: String,
    pub expires: jiff::civil::Date,
    /// `waivers[i]`.
    pub path: String,
    pub line: Option<u64>,
}

impl Waiver {
    /// Whether the waiver names this model.
    pub fn matches(&self, model: &str) -> bool {
        self.matcher.is_match(model)
    }
}

impl Policy {
    /// The documented defaults, used when no policy file is given.
    pub fn defaults() -> Policy {
        Policy {
            file: None,
            digest: "defaults".to_owned(),
            text: None,
            confidence: 0.95,
            interval_method: ProportionMethod::Wilson,
            inconclusive: Inconclusive::Fail,
            bootstrap_resamples: crate::stats::DEFAULT_RESAMPLES,
            seed: 1,
            base: RuleSettings::default(),
            base_line: None,
            base_lines: RawRuleSettings::default(),
            base_touched: Vec::new(),
            overrides: Vec::new(),
            waivers: Vec::new(),
            index: None,
        }
    }

    /// Reads and validates a policy file.
    pub fn load(path: &Path) -> Result<Policy, Vec<Diagnostic>> {
        let file = path.display().to_string();
        let text = crate::opener::read_text(Some(path), crate::opener::Kind::Policy)
            .map_err(|d| vec![d])?;
        let raw: RawPolicy = input::parse(&file, &text, Syntax::detect(path, &text))?;
        let digest = hex(&Sha256::digest(text.as_bytes()));
        let mut policy = validate(&file, raw, digest)?;
        let key_line = |id: &str, line: u64| rule_key_line(&text, id, line);
        policy.base_lines.relocate(key_line);
        for o in &mut policy.overrides {
            o.rules.relocate(key_line);
        }
        policy.text = Some(text);
        Ok(policy)
    }

    /// How every interval of the check is formed.
    pub fn intervals(&self) -> crate::stats::IntervalSettings {
        crate::stats::IntervalSettings {
            confidence: self.confidence,
            method: self.interval_method,
            resamples: self.bootstrap_resamples,
            seed: self.seed,
        }
    }

    /// The rule settings for one model, with where each rule's settings came from.
    pub fn settings_for(
        &self,
        model: &str,
    ) -> (RuleSettings, BTreeMap<&'static str, PolicySource>) {
        let mut settings = self.base.clone();
        let mut sources: BTreeMap<&'static str, PolicySource> = rules::RULES
            .iter()
            .map(|r| {
                let source = if self.base_touched.contains(&r.id) {
                    PolicySource {
                        path: format!("rules.{}", r.id),
                        line: self.base_lines.line(r.id).or(self.base_line),
                    }
                } else {
                    PolicySource {
                        path: "defaults".to_owned(),
                        line: None,
                    }
                };
                (r.id, source)
            })
            .collect();
        for i in self.matching_overrides(model) {
            let o = &self.overrides[i];
            {
                for id in settings.apply(&o.rules) {
                    sources.insert(
                        id,
                        PolicySource {
                            path: format!("overrides[{i}].rules.{id}"),
                            line: o.rules.line(id).or(o.line),
                        },
                    );
                }
            }
        }
        (settings, sources)
    }

    /// Indices of the overrides with a pattern matching `model`, in policy order.
    fn matching_overrides(&self, model: &str) -> Vec<usize> {
        match &self.index {
            Some(index) => {
                let mut hits: Vec<usize> = index
                    .overrides
                    .matches(model)
                    .into_iter()
                    .map(|p| index.override_of[p])
                    .collect();
                hits.sort_unstable();
                hits.dedup();
                hits
            }
            None => (0..self.overrides.len())
                .filter(|&i| {
                    self.overrides[i]
                        .patterns
                        .iter()
                        .any(|(_, m)| m.is_match(model))
                })
                .collect(),
        }
    }

    /// Indices of the waivers naming `model`, in policy order.
    fn matching_waivers(&self, model: &str) -> Vec<usize> {
        match &self.index {
            Some(index) => index.waivers.matches(model),
            None => (0..self.waivers.len())
                .filter(|&i| self.waivers[i].matches(model))
                .collect(),
        }
    }

    /// The waivers naming this model.
    pub fn waivers_for<'a>(&'a self, model: &'a str) -> impl Iterator<Item = &'a Waiver> + 'a {
        self.matching_waivers(model)
            .into_iter()
            .map(move |i| &self.waivers[i])
    }

    /// Policy entries that matched none of the models: probably a typo or a stale entry.
    pub fn unmatched_entries(&self, models: &[&str]) -> Vec<String> {
        // Which patterns matched some model, found model by model through the index.
        let mut override_hit: Vec<Vec<bool>> = self
            .overrides
            .iter()
            .map(|o| vec![false; o.patterns.len()])
            .collect();
        let mut waiver_hit = vec![false; self.waivers.len()];
        for name in models {
            for i in self.matching_overrides(name) {
                for (k, (_, m)) in self.overrides[i].patterns.iter().enumerate() {
                    if !override_hit[i][k] && m.is_match(name) {
                        override_hit[i][k] = true;
                    }
                }
            }
            for i in self.matching_waivers(name) {
                waiver_hit[i] = true;
            }
        }
        let mut out = Vec::new();
        for (i, o) in self.overrides.iter().enumerate() {
            for (k, (pattern, _)) in o.patterns.iter().enumerate() {
                if !override_hit[i][k] {
                    out.push(format!(
                        "overrides[{i}]: pattern {pattern:?} matched no model"
                    ));
                }
            }
        }
        for (w, _) in self
            .waivers
            .iter()
            .zip(&waiver_hit)
            .filter(|(_, hit)| !**hit)
        {
            {
                out.push(format!(
                    "{}: pattern {:?} matched no model",
                    w.path, w.pattern
                ));
            }
        }
        out
    }
}

fn hex(bytes: &[u8]) -> String {
    bytes.iter().map(|b| format!("{b:02x}")).collect()
}

/// Validates a parsed policy, collecting every problem.
pub fn validate(file: &str, raw: RawPolicy, digest: String) -> Result<Policy, Vec<Diagnostic>> {
    let mut out = Diagnostics::default();
    out.extend(crate::diag::format_version(
        file,
        "policy",
        &raw.format_version,
        FORMAT_VERSION,
    ));
    let defaults = Policy::defaults();
    let confidence = raw
        .confidence
        .as_ref()
        .map_or(defaults.confidence, |c| c.value);
    if !(confidence > 0.0 && confidence < 1.0) {
        out.push(Diagnostic::at(
            file,
            place_of(&raw.confidence),
            "confidence",
            format!("expected a number between 0 and 1 (exclusive), found {confidence}"),
        ));
    }
    let bootstrap_resamples = raw
        .bootstrap_resamples
        .as_ref()
        .map_or(defaults.bootstrap_resamples, |r| r.value);
    if !(100..=1_000_000).contains(&bootstrap_resamples) {
        out.push(Diagnostic::at(
            file,
            place_of(&raw.bootstrap_resamples),
            "bootstrap_resamples",
            format!("expected between 100 and 1000000, found {bootstrap_resamples}"),
        ));
    }
    let mut base = RuleSettings::default();
    let (base_touched, base_line, base_lines) = match raw.rules {
        Some(rules) => {
            let place = Place::of(&rules.referenced);
            setting_problems(&mut out, file, place, "rules", &rules.value);
            (base.apply(&rules.value), place.line, rules.value)
        }
        None => (Vec::new(), None, RawRuleSettings::default()),
    };
    let mut overrides = Vec::new();
    for (i, spanned) in raw.overrides.into_iter().enumerate() {
        let place = Place::of(&spanned.referenced);
        let path = format!("overrides[{i}]");
        let o = spanned.value;
        if o.models.is_empty() {
            out.push(Diagnostic::at(
                file,
                place,
                format!("{path}.models"),
                "expected at least one model pattern, found an empty list",
            ));
        }
        let patterns = o
            .models
            .iter()
            .enumerate()
            .filter_map(|(j, p)| {
                compile(&mut out, file, place, &format!("{path}.models[{j}]"), p)
                    .map(|m| (p.clone(), m))
            })
            .collect();
        setting_problems(&mut out, file, place, &format!("{path}.rules"), &o.rules);
        overrides.push(Override {
            patterns,
            rules: o.rules,
            line: place.line,
        });
    }
    let mut waivers = Vec::new();
    for (i, spanned) in raw.waivers.into_iter().enumerate() {
        let place = Place::of(&spanned.referenced);
        let path = format!("waivers[{i}]");
        let w = spanned.value;
        if rules::rule(&w.rule).is_none() {
            let mut d = Diagnostic::at(
                file,
                place,
                format!("{path}.rule"),
                format!("no rule is named {:?}", w.rule),
            );
            if let Some(c) = closest(&w.rule, rules::RULES.iter().map(|r| r.id)) {
                d = d.with_help(format!("did you mean `{c}`?"));
            }
            out.push(d);
        }
        if UNWAIVABLE.contains(&w.rule.as_str()) {
            out.push(
                Diagnostic::at(
                    file,
                    place,
                    format!("{path}.rule"),
                    format!("rule {} cannot be waived", w.rule),
                )
                .with_help(
                    "waiver_expiry and policy_change guard the waivers and the policy themselves",
                ),
            );
        }
        if w.reason.trim().is_empty() {
            out.push(Diagnostic::at(
                file,
                place,
                format!("{path}.reason"),
                "expected a reason, found an empty string",
            ));
        }
        let expires = match w.expires.parse::<jiff::civil::Date>() {
            Ok(d) => Some(d),
            Err(e) => {
                out.push(
                    Diagnostic::at(
                        file,
                        place,
                        format!("{path}.expires"),
                        format!("expected a date, found {:?}: {e}", w.expires),
                    )
                    .with_help("write dates as YYYY-MM-DD"),
                );
                None
            }
        };
        let matcher = compile(&mut out, file, place, &format!("{path}.models"), &w.models);
        if let (Some(expires), Some(matcher)) = (expires, matcher) {
            waivers.push(Waiver {
                rule: w.rule,
                pattern: w.models,
                matcher,
                reason: w.reason,
                expires,
                path,
                line: place.line,
            });
        }
    }
    out.finish(Policy {
        file: Some(file.to_owned()),
        digest,
        text: None,
        confidence,
        interval_method: raw.interval_method.unwrap_or(defaults.interval_method),
        inconclusive: raw.inconclusive.unwrap_or_default(),
        bootstrap_resamples,
        seed: raw.seed.unwrap_or(defaults.seed),
        base,
        base_line,
        base_lines,
        base_touched,
        index: PatternIndex::build(&overrides, &waivers),
        overrides,
        waivers,
    })
}

/// The line of the key `id:` (or `"id":`) that owns a rule block whose value starts on `line`:
/// that line itself for a flow mapping or JSON, the line above for a block mapping. The parser
/// records where a value starts, not where its key is, and a finding should name the key.
fn rule_key_line(text: &str, id: &str, line: u64) -> Option<u64> {
    let lines: Vec<&str> = text.lines().collect();
    let last = usize::try_from(line).ok()?.min(lines.len());
    (1..=last).rev().find_map(|n| {
        let content = lines[n - 1].trim_start().trim_start_matches("- ");
        let rest = content
            .strip_prefix('"')
            .and_then(|c| c.strip_prefix(id))
            .and_then(|c| c.strip_prefix('"'))
            .or_else(|| content.strip_prefix(id))?;
        rest.trim_start().starts_with(':').then_some(n as u64)
    })
}

/// Where an optional top-level setting is in the file (unknown when it is absent).
fn place_of<T>(setting: &Option<Spanned<T>>) -> Place {
    setting
        .as_ref()
        .map(|s| Place::of(&s.referenced))
        .unwrap_or_default()
}

fn setting_problems(
    out: &mut Diagnostics,
    file: &str,
    place: Place,
    path: &str,
    raw: &RawRuleSettings,
) {
    for (key, message) in raw.problems() {
        out.push(Diagnostic::at(
            file,
            place,
            format!("{path}.{key}"),
            message,
        ));
    }
}

fn compile(
    out: &mut Diagnostics,
    file: &str,
    place: Place,
    path: &str,
    pattern: &str,
) -> Option<GlobMatcher> {
    match Glob::new(pattern) {
        Ok(g) => Some(g.compile_matcher()),
        Err(e) => {
            out.push(Diagnostic::at(
                file,
                place,
                path,
                format!("invalid glob pattern {pattern:?}: {}", e.kind()),
            ));
            None
        }
    }
}

/// The JSON Schema of the policy format.
pub fn schema() -> schemars::Schema {
    schemars::schema_for!(RawPolicy)
}
