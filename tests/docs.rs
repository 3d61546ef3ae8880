//! The docs must not drift from the code: `docs/rules.md` is generated from the rule registry,
//! and the default policy written out in `docs/policy.md` must equal the built-in defaults.
//! Run with `VETSCORE_BLESS=1` to rewrite `docs/rules.md` after changing a rule.

#![allow(clippy::unwrap_used)]

mod common;

use vetscore::policy::Policy;
use vetscore::rules::RULES;

fn rules_markdown() -> String {
    let mut out = String::from(
        "# Rules\n\nGenerated from the rule registry (`src/rules/`); `vetscore explain RULE` prints \
         the same text. Settings and defaults: [policy.md](policy.md).\n",
    );
    for rule in RULES {
        out.push_str(&format!(
            "\n## {} (`{}`)\n\n{}\n",
            rule.name, rule.id, rule.explanation
        ));
    }
    out
}

#[test]
fn rules_doc_is_generated_from_the_registry() {
    let path = common::root().join("docs/rules.md");
    let expected = rules_markdown();
    if std::env::var_os("VETSCORE_BLESS").is_some() {
        std::fs::write(&path, &expected).unwrap();
    }
    let actual = std::fs::read_to_string(&path).unwrap();
    assert_eq!(
        actual, expected,
        "docs/rules.md is stale; rerun with VETSCORE_BLESS=1"
    );
}

#[test]
fn policy_doc_writes_out_the_built_in_defaults() {
    let doc = std::fs::read_to_string(common::root().join("docs/policy.md")).unwrap();
    let start = doc.find("```yaml\n").unwrap() + "```yaml\n".len();
    let block = &doc[start..start + doc[start..].find("```").unwrap()];
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("defaults.yaml");
    std::fs::write(&path, block).unwrap();
    let written = Policy::load(&path).unwrap();
    let built_in = Policy::defaults();
    assert_eq!(written.confidence, built_in.confidence);
    assert_eq!(written.interval_method, built_in.interval_method);
    assert_eq!(written.inconclusive, built_in.inconclusive);
    assert_eq!(
        written.settings_for("any").0,
        built_in.settings_for("any").0
    );
}
