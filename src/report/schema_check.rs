//! Checking a JSON value against a JSON Schema of the kind `schemars` writes for the report.
//!
//! A base report given with `--baseline` is the base branch's artifact, but it is still a file
//! read from disk, so before the comparison reads it, it must have the structure `vetscore schema
//! report` publishes. This module implements the keywords that schema uses (JSON Schema 2020-12):
//! `$ref` to `#/$defs/…`, `type` (one or a list), `properties`, `required`, `items`, `enum`,
//! `const`, `anyOf`, `oneOf`, `minimum` and the integer `format`s `uint`, `uint32` and `uint64`;
//! `title`, `description`, `$schema` and `format: double` are annotations. A schema with any
//! other keyword is refused, so a keyword this checker does not know can never pass silently.
//! Properties the schema does not name are allowed (schemars writes no `additionalProperties`).

use serde_json::Value;

/// Most problems listed; the rest are counted.
const SHOWN: usize = 10;

/// Checks `value` against `schema`; returns the problems (empty when it conforms), each naming
/// the JSON pointer of the value and what is wrong, the first [`SHOWN`] of them in full.
pub fn check(schema: &Value, value: &Value) -> Vec<String> {
    let mut checker = Checker {
        root: schema,
        problems: Vec::new(),
        count: 0,
    };
    checker.value(schema, value, "");
    if checker.count > SHOWN {
        let more = checker.count - SHOWN;
        checker.problems.push(format!("and {more} more"));
    }
    checker.problems
}

struct Checker<'a> {
    root: &'a Value,
    problems: Vec<String>,
    count: usize,
}

impl<'a> Checker<'a> {
    fn problem(&mut self, at: &str, message: String) {
        self.count += 1;
        if self.problems.len() < SHOWN {
            let at = if at.is_empty() { "/" } else { at };
            self.problems.push(format!("{at}: {message}"));
        }
    }

    /// Whether `value` conforms, without recording anything (for `anyOf` and `oneOf`).
    fn conforms(&self, schema: &'a Value, value: &Value) -> bool {
        let mut trial = Checker {
            root: self.root,
            problems: Vec::new(),
            count: 0,
        };
        trial.value(schema, value, "");
        trial.count == 0
    }

    fn value(&mut self, schema: &'a Value, value: &Value, at: &str) {
        let Some(schema) = schema.as_object() else {
            if schema.as_bool() == Some(false) {
                self.problem(at, "no value is allowed here".into());
            }
            return;
        };
        for (keyword, rule) in schema {
            match keyword.as_str() {
                "$schema" | "title" | "description" => {}
                "$defs" if at.is_empty() => {}
                "$ref" => match self.resolve(rule) {
                    Some(target) => self.value(target, value, at),
                    None => self.problem(at, format!("unresolvable schema reference {rule}")),
                },
                "type" => {
                    let allowed: Vec<&str> = match rule {
                        Value::String(t) => vec![t.as_str()],
                        Value::Array(ts) => ts.iter().filter_map(Value::as_str).collect(),
                        _ => Vec::new(),
                    };
                    if !allowed.iter().any(|t| has_type(value, t)) {
                        self.problem(
                            at,
                            format!("expected {}, found {}", allowed.join(" or "), kind(value)),
                        );
                    }
                }
                "properties" => {
                    if let (Some(props), Some(object)) = (rule.as_object(), value.as_object()) {
                        for (name, sub) in props {
                            if let Some(v) = object.get(name) {
                                self.value(sub, v, &format!("{at}/{}", pointer(name)));
                            }
                        }
                    }
                }
                "required" => {
                    if let Some(object) = value.as_object() {
                        for name in rule
                            .as_array()
                            .into_iter()
                            .flatten()
                            .filter_map(Value::as_str)
                        {
                            if !object.contains_key(name) {
                                self.problem(at, format!("missing required field {name:?}"));
                            }
                        }
                    }
                }
                "items" => {
                    if let Some(items) = value.as_array() {
                        for (i, item) in items.iter().enumerate() {
                            self.value(rule, item, &format!("{at}/{i}"));
                        }
                    }
                }
                "enum" => {
                    if !rule
                        .as_array()
                        .is_some_and(|options| options.contains(value))
                    {
                        self.problem(at, format!("{} is not one of {rule}", short(value)));
                    }
                }
                "const" => {
                    if rule != value {
                        self.problem(at, format!("expected {rule}, found {}", short(value)));
                    }
                }
                "anyOf" | "oneOf" => {
                    let options = rule.as_array().map(Vec::as_slice).unwrap_or_default();
                    let matching = options.iter().filter(|o| self.conforms(o, value)).count();
                    let fits = if keyword == "anyOf" {
                        matching >= 1
                    } else {
                        matching == 1
                    };
                    if !fits {
                        self.problem(
                            at,
                            format!(
                                "{} matches {matching} of the {} forms allowed here ({keyword})",
                                short(value),
                                options.len()
                            ),
                        );
                    }
                }
                "minimum" => {
                    if let (Some(min), Some(x)) = (rule.as_f64(), value.as_f64())
                        && x < min
                    {
                        self.problem(at, format!("{x} is below the minimum {min}"));
                    }
                }
                "format" => self.format(rule.as_str().unwrap_or(""), value, at),
                other => self.problem(
                    at,
                    format!("the schema uses {other:?}, which is not checked"),
                ),
            }
        }
    }

    fn format(&mut self, format: &str, value: &Value, at: &str) {
        let max = match format {
            "double" | "float" => return,
            "uint32" => u64::from(u32::MAX),
            "uint64" | "uint" => u64::MAX,
            other => {
                self.problem(
                    at,
                    format!("the schema uses format {other:?}, which is not checked"),
                );
                return;
            }
        };
        if value.is_number() && value.as_u64().is_none_or(|v| v > max) {
            self.problem(
                at,
                format!("{} is not an integer from 0 to {max}", short(value)),
            );
        }
    }

    fn resolve(&self, reference: &Value) -> Option<&'a Value> {
        let name = reference.as_str()?.strip_prefix("#/$defs/")?;
        self.root.get("$defs")?.get(name)
    }
}

fn has_type(value: &Value, t: &str) -> bool {
    match t {
        "null" => value.is_null(),
        "boolean" => value.is_boolean(),
        "string" => value.is_string(),
        "array" => value.is_array(),
        "object" => value.is_object(),
        "number" => value.is_number(),
        // JSON Schema counts 3.0 as an integer.
        "integer" => {
            value.is_u64() || value.is_i64() || value.as_f64().is_some_and(|x| x.fract() == 0.0)
        }
        _ => false,
    }
}

fn kind(value: &Value) -> &'static str {
    match value {
        Value::Null => "null",
        Value::Bool(_) => "a boolean",
        Value::Number(_) => "a number",
        Value::String(_) => "a string",
        Value::Array(_) => "an array",
        Value::Object(_) => "an object",
    }
}

/// A value for a message: short, and only as JSON (quoted, escaped), never raw text.
fn short(value: &Value) -> String {
    match value {
        Value::Array(_) => "an array".into(),
        Value::Object(_) => "an object".into(),
        other => {
            let text = other.to_string();
            if text.chars().count() > 40 {
                format!("{}…", text.chars().take(40).collect::<String>())
            } else {
                text
            }
        }
    }
}

/// A property name as a JSON pointer segment (RFC 6901).
fn pointer(name: &str) -> String {
    name.replace('~', "~0").replace('/', "~1")
}

#[cfg(test)]
#[allow(clippy::unwrap_used)]
mod tests {
    use super::*;
    use serde_json::json;

    #[test]
    fn keywords_of_the_report_schema_are_checked() {
        let schema = json!({
            "type": "object",
            "properties": {
                "n": {"type": "integer", "format": "uint32", "minimum": 0},
                "v": {"$ref": "#/$defs/V"},
                "o": {"anyOf": [{"type": "string"}, {"type": "null"}]},
                "l": {"type": "array", "items": {"type": ["number", "null"]}}
            },
            "required": ["n", "v"],
            "$defs": {"V": {"type": "string", "enum": ["a", "b"]}}
        });
        assert!(
            check(
                &schema,
                &json!({"n": 3, "v": "a", "o": null, "l": [1.5, null]})
            )
            .is_empty()
        );
        let problems = check(&schema, &json!({"n": -1, "v": "<img>", "o": 4, "l": ["x"]}));
        assert_eq!(problems.len(), 5, "{problems:?}");
        assert!(
            problems
                .iter()
                .any(|p| p.starts_with("/v: \"<img>\" is not one of"))
        );
        assert_eq!(
            check(&schema, &json!({"v": "a"})),
            vec!["/: missing required field \"n\""]
        );
        // A keyword the checker does not implement is a problem, not a pass.
        assert!(!check(&json!({"pattern": "^a$"}), &json!("a")).is_empty());
    }
}
