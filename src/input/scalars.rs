//! Refusing a quoted scalar where the input's JSON Schema allows only a number or a boolean.
//!
//! serde-saphyr reads the quoted `"100"` into a number field and `"true"` or `"0.8"` into a
//! boolean or number field; none of its 2.2 options stops that (`strict_booleans` only narrows
//! the unquoted spellings, so `yes` and `on` are already refused). A YAML 1.2 or JSON reader sees
//! strings there, so the published schema (`vetscore schema manifest`, `schema policy`) rejects
//! the same document the parser accepted. This module walks the document a second time with
//! granit-parser (the parser serde-saphyr runs on), whose events carry each scalar's quoting,
//! guided by the very schema those commands print: a quoted or block scalar is refused where
//! every type the schema allows is a number, an integer or a boolean. Where the schema allows a
//! string, anything goes, so a model named "2026", a class named "yes" and the severity `off`
//! stay strings.
//!
//! It runs only on a document serde-saphyr has accepted, so that parser's budgets (size, nesting
//! depth, alias expansion) already hold; the walk keeps its own depth bound besides. It reads no
//! file and prints nothing.

use std::borrow::Cow;
use std::collections::HashMap;

use granit_parser::{Event, Parser, ScalarStyle};
use serde_json::Value;

use crate::diag::{Diagnostic, Place};

/// Deeper than serde-saphyr's own nesting budget lets a document reach; a bound on the walk
/// should an alias ever refer to a node that contains it.
const MAX_DEPTH: usize = 4_096;

/// Every scalar of `text` that is quoted where `schema` allows only numbers or booleans, as
/// diagnostics of `file`. serde-saphyr runs granit-parser with the same limits (lookahead, flow
/// and block nesting are granit-parser's defaults in both), so a text it accepted reads here too;
/// should it not, the file is refused rather than passed unchecked.
pub fn check(file: &str, text: &str, schema: &Value) -> Vec<Diagnostic> {
    let Some(tree) = Tree::parse(text) else {
        return vec![Diagnostic::file(
            file,
            "the YAML parser could not read the file a second time to check its value types",
        )];
    };
    let mut walk = Walk {
        file,
        root: schema,
        tree: &tree,
        path: Vec::new(),
        problems: Vec::new(),
    };
    if let Some(root) = tree.root {
        walk.node(root, &walk.alternatives(schema), 0);
    }
    walk.problems
}

/// One node of the document, as granit-parser reported it.
enum Node<'t> {
    Scalar {
        text: Cow<'t, str>,
        style: ScalarStyle,
        place: Place,
    },
    Sequence(Vec<usize>),
    /// Key and value node of each entry, in document order.
    Mapping(Vec<(usize, usize)>),
    /// A `*name` alias: the anchor id it refers to.
    Alias(usize),
}

/// The node tree of a single-document YAML (or JSON) text.
struct Tree<'t> {
    nodes: Vec<Node<'t>>,
    /// Anchor id → the node it is defined on.
    anchors: HashMap<usize, usize>,
    root: Option<usize>,
}

impl<'t> Tree<'t> {
    fn parse(text: &'t str) -> Option<Self> {
        let mut tree = Tree {
            nodes: Vec::new(),
            anchors: HashMap::new(),
            root: None,
        };
        // Open collections: the node and, for a mapping, a key still waiting for its value.
        let mut open: Vec<(usize, Option<usize>)> = Vec::new();
        for event in Parser::new_from_str(text) {
            let (event, span) = event.ok()?;
            let done = match event {
                Event::Scalar(text, style, anchor, _) => {
                    let place = Place::new(span.start.line() as u64, span.start.col() as u64 + 1);
                    Some(tree.add(Node::Scalar { text, style, place }, anchor))
                }
                Event::Alias(anchor) => Some(tree.add(Node::Alias(anchor), 0)),
                Event::SequenceStart(_, anchor, _) => {
                    open.push((tree.add(Node::Sequence(Vec::new()), anchor), None));
                    None
                }
                Event::MappingStart(_, anchor, _) => {
                    open.push((tree.add(Node::Mapping(Vec::new()), anchor), None));
                    None
                }
                Event::SequenceEnd | Event::MappingEnd => Some(open.pop()?.0),
                // The second document is serde-saphyr's to refuse; this walk reads the first.
                Event::DocumentEnd => break,
                _ => None,
            };
            let Some(child) = done else { continue };
            match open.last_mut() {
                None => tree.root = Some(child),
                Some((parent, key)) => match (&mut tree.nodes[*parent], key.take()) {
                    (Node::Sequence(items), _) => items.push(child),
                    (Node::Mapping(entries), Some(k)) => entries.push((k, child)),
                    (Node::Mapping(_), None) => *key = Some(child),
                    _ => return None,
                },
            }
        }
        Some(tree)
    }

    fn add(&mut self, node: Node<'t>, anchor: usize) -> usize {
        let id = self.nodes.len();
        self.nodes.push(node);
        if anchor != 0 {
            self.anchors.insert(anchor, id);
        }
        id
    }

    /// The node `id` stands for, following aliases.
    fn target(&self, mut id: usize) -> Option<&Node<'t>> {
        for _ in 0..=self.nodes.len() {
            match &self.nodes[id] {
                Node::Alias(anchor) => id = *self.anchors.get(anchor)?,
                node => return Some(node),
            }
        }
        None
    }
}

struct Walk<'a, 't> {
    file: &'a str,
    root: &'a Value,
    tree: &'a Tree<'t>,
    /// The key path of the node being walked, formatted only for a problem.
    path: Vec<Step<'a>>,
    problems: Vec<Diagnostic>,
}

/// One step of a key path: a mapping key or a list index.
enum Step<'a> {
    Key(&'a str),
    Index(usize),
}

impl<'a> Walk<'a, '_> {
    /// Checks node `id`, which must satisfy one of `schemas`.
    fn node(&mut self, id: usize, schemas: &[&'a Value], depth: usize) {
        // Nothing is refused inside a value the schema leaves free (`metadata`).
        if depth > MAX_DEPTH || schemas.is_empty() || schemas.contains(&&ANY) {
            return;
        }
        let tree = self.tree;
        match tree.target(id) {
            Some(Node::Scalar { text, style, place }) => self.scalar(text, *style, *place, schemas),
            Some(Node::Sequence(items)) => {
                let inner = self.children(schemas, "array", |s| s.get("items"));
                for (i, item) in items.iter().enumerate() {
                    self.path.push(Step::Index(i));
                    self.node(*item, &inner, depth + 1);
                    self.path.pop();
                }
            }
            Some(Node::Mapping(entries)) => {
                for (key, value) in entries {
                    let Some(Node::Scalar {
                        text: key, style, ..
                    }) = tree.target(*key)
                    else {
                        continue;
                    };
                    if key == "<<" && *style == ScalarStyle::Plain {
                        // A merge key: its mapping (or list of mappings) joins this one.
                        self.merged(*value, schemas, depth + 1);
                        continue;
                    }
                    let inner = self.children(schemas, "object", |s| property(s, key));
                    self.path.push(Step::Key(key));
                    self.node(*value, &inner, depth + 1);
                    self.path.pop();
                }
            }
            Some(Node::Alias(_)) | None => {}
        }
    }

    fn merged(&mut self, id: usize, schemas: &[&'a Value], depth: usize) {
        match self.tree.target(id) {
            Some(Node::Sequence(items)) => {
                for item in items {
                    self.node(*item, schemas, depth + 1);
                }
            }
            _ => self.node(id, schemas, depth),
        }
    }

    fn scalar(&mut self, text: &str, style: ScalarStyle, place: Place, schemas: &[&Value]) {
        if style == ScalarStyle::Plain || schemas.iter().any(|s| admits(s, "string")) {
            return;
        }
        let number = schemas
            .iter()
            .any(|s| admits(s, "number") || admits(s, "integer"));
        let boolean = schemas.iter().any(|s| admits(s, "boolean"));
        let expected = match (number, boolean) {
            (true, false) => "a number",
            (false, true) => "a boolean (true or false)",
            (true, true) => "a number or a boolean",
            (false, false) => return,
        };
        let fix = match style {
            ScalarStyle::SingleQuoted | ScalarStyle::DoubleQuoted => "write it without quotes",
            _ => "write it as a plain value on the key's line",
        };
        let shown: String = text.chars().take(40).collect();
        let mut path = String::new();
        for step in &self.path {
            match step {
                Step::Key(key) if path.is_empty() => path.push_str(key),
                Step::Key(key) => {
                    path.push('.');
                    path.push_str(key);
                }
                Step::Index(i) => path.push_str(&format!("[{i}]")),
            }
        }
        self.problems.push(Diagnostic::at(
            self.file,
            place,
            path,
            format!("expected {expected}, found the string \"{shown}\"; {fix}"),
        ));
    }

    /// The schemas a child of a `kind` ("object" or "array") node must satisfy one of: `pick`
    /// applied to every alternative of `schemas` that allows that kind.
    fn children(
        &self,
        schemas: &[&'a Value],
        kind: &str,
        pick: impl Fn(&'a Value) -> Option<&'a Value>,
    ) -> Vec<&'a Value> {
        let mut out = Vec::new();
        for schema in schemas.iter().filter(|s| admits(s, kind)) {
            match pick(schema) {
                Some(child) => out.extend(self.alternatives(child)),
                // No rule for the child (`true`, no `items`, a key neither `properties` nor
                // `additionalProperties` names): any value, strings included.
                None => out.push(&ANY),
            }
        }
        out
    }

    /// The schemas a value must satisfy one of, with `$ref` followed and `anyOf` / `oneOf` split
    /// into their branches. A schema with other keywords beside those is kept whole.
    fn alternatives(&self, schema: &'a Value) -> Vec<&'a Value> {
        let mut out = Vec::new();
        self.split(schema, &mut out, 0);
        out
    }

    fn split(&self, schema: &'a Value, out: &mut Vec<&'a Value>, depth: usize) {
        if depth > MAX_DEPTH {
            return;
        }
        if let Some(reference) = schema.get("$ref").and_then(Value::as_str) {
            match reference
                .strip_prefix('#')
                .and_then(|pointer| self.root.pointer(pointer))
            {
                Some(target) => self.split(target, out, depth + 1),
                // Unresolvable: no type is known, so none is refused.
                None => out.push(&ANY),
            }
        } else if let Some(branches) = schema
            .get("anyOf")
            .or_else(|| schema.get("oneOf"))
            .and_then(Value::as_array)
        {
            for branch in branches {
                self.split(branch, out, depth + 1);
            }
        } else if schema != &Value::Bool(false) {
            out.push(schema);
        }
    }
}

/// The schema that allows every value.
static ANY: Value = Value::Bool(true);

/// The schema of property `key` of an object schema, or of any key it does not name.
fn property<'a>(schema: &'a Value, key: &str) -> Option<&'a Value> {
    schema
        .get("properties")
        .and_then(|p| p.get(key))
        .or_else(|| schema.get("additionalProperties"))
}

/// Whether a schema without `$ref`, `anyOf` or `oneOf` lets a value of JSON type `kind` through
/// its `type`, `enum` or `const` keyword (a schema with none of them lets every type through).
fn admits(schema: &Value, kind: &str) -> bool {
    let Some(schema) = schema.as_object() else {
        return schema.as_bool() != Some(false);
    };
    if let Some(types) = schema.get("type") {
        return match types {
            Value::String(t) => t == kind,
            Value::Array(ts) => ts.iter().any(|t| t.as_str() == Some(kind)),
            _ => true,
        };
    }
    let values: Vec<&Value> = match (schema.get("enum"), schema.get("const")) {
        (Some(Value::Array(values)), _) => values.iter().collect(),
        (_, Some(value)) => vec![value],
        _ => return true,
    };
    values.iter().any(|v| json_type(v) == kind)
}

fn json_type(value: &Value) -> &'static str {
    match value {
        Value::Null => "null",
        Value::Bool(_) => "boolean",
        Value::Number(_) => "number",
        Value::String(_) => "string",
        Value::Array(_) => "array",
        Value::Object(_) => "object",
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::json;

    fn problems(text: &str, schema: &Value) -> Vec<String> {
        check("f.yaml", text, schema)
            .iter()
            .map(ToString::to_string)
            .collect()
    }

    #[test]
    fn a_quoted_value_is_refused_only_where_no_string_is_allowed() {
        let schema = json!({
            "type": "object",
            "properties": {
                "rows": {"type": "integer", "format": "uint64", "minimum": 0},
                "score": {"anyOf": [{"$ref": "#/$defs/Score"}, {"type": "null"}]},
                "flag": {"type": ["boolean", "null"]},
                "name": {"type": "string"},
                "level": {"enum": ["off", "warn"]},
                "either": {"anyOf": [{"type": "number"}, {"type": "string"}]},
                "meta": {"type": "object", "additionalProperties": true},
                "list": {"type": "array", "items": {"type": "number"}}
            },
            "$defs": {"Score": {"type": "number", "format": "double"}}
        });
        let text = "rows: \"100\"\nscore: '0.8'\nflag: \"true\"\nname: \"2026\"\nlevel: off\n\
                    either: \"3\"\nmeta: {x: \"1\"}\nlist: [1, \"2\"]\n";
        assert_eq!(
            problems(text, &schema),
            [
                "f.yaml:1:7: rows: expected a number, found the string \"100\"; write it without quotes",
                "f.yaml:2:8: score: expected a number, found the string \"0.8\"; write it without quotes",
                "f.yaml:3:7: flag: expected a boolean (true or false), found the string \"true\"; write it without quotes",
                "f.yaml:8:11: list[1]: expected a number, found the string \"2\"; write it without quotes",
            ]
        );
        assert!(problems("rows: 100\nflag: true\nname: 2026\n", &schema).is_empty());
    }

    #[test]
    fn aliases_and_merge_keys_are_followed() {
        let schema = json!({
            "type": "object",
            "properties": {
                "a": {"$ref": "#/$defs/Row"},
                "b": {"$ref": "#/$defs/Row"}
            },
            "$defs": {"Row": {"type": "object", "properties": {"n": {"type": "integer"}}}}
        });
        // Column 13 is the opening quote; the alias reports the place of the value it repeats.
        let text = "a: &row {n: \"1\"}\nb:\n  <<: *row\n";
        assert_eq!(
            problems(text, &schema),
            [
                "f.yaml:1:13: a.n: expected a number, found the string \"1\"; write it without quotes",
                "f.yaml:1:13: b.n: expected a number, found the string \"1\"; write it without quotes",
            ]
        );
    }
}
