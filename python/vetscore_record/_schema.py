"""A small validator for the subset of JSON Schema (2020-12) that `vetscore schema manifest`
uses: type, properties, required, additionalProperties, items, enum, const, minimum, anyOf,
oneOf and local $ref. It keeps the package free of dependencies; the tests check it agrees with
the jsonschema package on valid and invalid manifests.
"""

import json
import pathlib

SCHEMA_PATH = pathlib.Path(__file__).with_name("manifest.schema.json")

_TYPES = {
    "object": lambda v: isinstance(v, dict),
    "array": lambda v: isinstance(v, list),
    "string": lambda v: isinstance(v, str),
    "boolean": lambda v: isinstance(v, bool),
    "null": lambda v: v is None,
    "integer": lambda v: isinstance(v, int) and not isinstance(v, bool),
    "number": lambda v: isinstance(v, (int, float)) and not isinstance(v, bool),
}


def load_schema():
    return json.loads(SCHEMA_PATH.read_text(encoding="utf-8"))


def errors(instance, schema=None):
    """Every place where `instance` breaks the schema, as "path: message" strings."""
    root = schema if schema is not None else load_schema()
    found = []
    _check(instance, root, root, "$", found)
    return found


def _resolve(ref, root):
    if not ref.startswith("#/"):
        raise ValueError(f"unsupported $ref {ref}")
    node = root
    for part in ref[2:].split("/"):
        node = node[part]
    return node


def _check(value, schema, root, path, found):
    if schema is True or schema == {}:
        return
    if schema is False:
        found.append(f"{path}: no value is allowed here")
        return
    if "$ref" in schema:
        _check(value, _resolve(schema["$ref"], root), root, path, found)
    for key in ("anyOf", "oneOf"):
        if key in schema:
            passing = sum(1 for s in schema[key] if not _sub(value, s, root, path))
            if passing == 0 or (key == "oneOf" and passing > 1):
                found.append(f"{path}: {json.dumps(value)[:80]} matches {'none' if passing == 0 else 'several'} of the allowed forms")
    if "type" in schema:
        types = schema["type"] if isinstance(schema["type"], list) else [schema["type"]]
        if not any(_TYPES[t](value) for t in types):
            found.append(f"{path}: expected {' or '.join(types)}, found {type(value).__name__}")
            return
    if "enum" in schema and value not in schema["enum"]:
        found.append(f"{path}: {value!r} is not one of {schema['enum']}")
    if "const" in schema and value != schema["const"]:
        found.append(f"{path}: expected {schema['const']!r}, found {value!r}")
    if "minimum" in schema and _TYPES["number"](value) and value < schema["minimum"]:
        found.append(f"{path}: {value} is below the minimum {schema['minimum']}")
    if isinstance(value, dict):
        props = schema.get("properties", {})
        for name in schema.get("required", []):
            if name not in value:
                found.append(f"{path}: missing required key {name!r}")
        extra = schema.get("additionalProperties", True)
        for name, item in value.items():
            if name in props:
                _check(item, props[name], root, f"{path}.{name}", found)
            elif extra is False:
                found.append(f"{path}: unknown key {name!r}")
            elif isinstance(extra, dict):
                _check(item, extra, root, f"{path}.{name}", found)
    if isinstance(value, list) and isinstance(schema.get("items"), dict):
        for i, item in enumerate(value):
            _check(item, schema["items"], root, f"{path}[{i}]", found)


def _sub(value, schema, root, path):
    inner = []
    _check(value, schema, root, path, inner)
    return inner
