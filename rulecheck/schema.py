"""Validate a parsed layout against ``schemas/layout.schema.json``.

jsonschema reports a JSON path; :class:`~rulecheck.loader.Document` turns it
back into a line and column. Messages are rewritten in plain words; every error
of a file is reported at once (up to the collector's cap).
"""

from __future__ import annotations

import json
from functools import cache
from typing import Any

import jsonschema
from jsonschema.exceptions import ValidationError

from rulecheck.errors import ProblemCollector
from rulecheck.loader import Document, JsonPath
from rulecheck.resources import data_dir, read_text

SCHEMA_FILE = "layout.schema.json"


@cache
def layout_schema() -> dict[str, Any]:
    schema: dict[str, Any] = json.loads(read_text("schemas", SCHEMA_FILE))
    return schema


def schema_path() -> str:
    """Filesystem path of the installed layout schema (for editor modelines)."""
    return str(data_dir("schemas") / SCHEMA_FILE)


@cache
def _validator() -> jsonschema.Draft202012Validator:
    return jsonschema.Draft202012Validator(layout_schema())


def _where_text(path: JsonPath) -> str:
    if not path:
        return "the file"
    parts = [str(p) if isinstance(p, str) else f"[{p}]" for p in path]
    return "'" + ".".join(parts).replace(".[", "[") + "'"


def _describe(error: ValidationError) -> tuple[str, str]:
    """Plain-words message and hint for one validation error."""
    kind = error.validator
    path = tuple(error.absolute_path)
    where = _where_text(path)
    value = error.instance
    if kind == "required":
        missing = error.message.split("'")[1] if "'" in error.message else "a key"
        return f"{where} is missing the required key '{missing}'", f"add '{missing}:'"
    if kind == "additionalProperties":
        allowed = sorted(error.schema.get("properties", {}))
        extra = sorted(set(value) - set(allowed)) if isinstance(value, dict) else []
        name = extra[0] if extra else "?"
        hint = f"allowed keys here: {', '.join(allowed)}" if allowed else "remove it"
        return f"unknown key '{name}' in {where}", hint
    if kind == "enum":
        choices = ", ".join(str(c) for c in error.validator_value)
        return f"{where} is {value!r}; expected one of: {choices}", "pick one of the listed values"
    if kind == "const":
        return f"{where} must be {error.validator_value!r}, not {value!r}", ""
    if kind == "type":
        expected = error.validator_value
        return f"{where} should be {_a(expected)}, not {_kind_of(value)}", ""
    if kind == "pattern":
        if path and path[-1] in ("id", "from", "to", "at", "on", "element", "inlet", "outlet"):
            return (
                f"{where} {value!r} is not a valid id",
                "ids start with a letter and use letters, digits, '_', '.', '-'",
            )
        if path and path[-1] == "reason":
            return "a waiver needs a non-empty 'reason'", "say why the finding is accepted"
        return f"{where} {value!r} is not a quantity", "write a number and a unit, e.g. '12 ft'"
    if kind in ("minItems", "minProperties"):
        return f"{where} must not be empty", "add at least one entry"
    if kind in ("minimum", "exclusiveMinimum", "maximum", "exclusiveMaximum"):
        return f"{where} is {value!r}, out of range ({error.message})", ""
    if kind in ("oneOf", "anyOf"):
        if path and path[-1] in ("cold", "hot") or (error.schema.get("anyOf") and path[:1] == ("fixtures",)):
            return f"{where} needs 'cold', 'hot' or both", "name the point that feeds each side"
        return f"{where} has the wrong form: {_kind_of(value)} {value!r}", _oneof_hint(path)
    return f"{where}: {error.message}", ""


def _oneof_hint(path: JsonPath) -> str:
    last = path[-1] if path else ""
    hints = {
        "pressure": "a quantity such as '65 psi', or {min: 50 psi, max: 70 psi}",
        "wsfu": "a number, or {cold: .., hot: .., total: ..}",
        "rating": "a class AA, A-F or the fixture units it is rated for",
        "size": "a size label such as 3/4 or 1-1/4",
        "fittings": "a length such as '5 ft', or a fraction such as 0.25",
    }
    return hints.get(str(last), "a number, or a string of a number and a unit")


def _a(expected: Any) -> str:
    names = {"object": "a mapping", "array": "a list", "string": "text", "number": "a number",
             "integer": "a whole number", "boolean": "true or false"}
    if isinstance(expected, list):
        return " or ".join(names.get(e, e) for e in expected)
    return names.get(expected, str(expected))


def _kind_of(value: Any) -> str:
    if isinstance(value, bool):
        return "true/false"
    if isinstance(value, dict):
        return "a mapping"
    if isinstance(value, list):
        return "a list"
    if isinstance(value, (int, float)):
        return "a number"
    if value is None:
        return "empty"
    return "text"


def validate(doc: Document, problems: ProblemCollector) -> None:
    """Add every schema error of ``doc`` to ``problems`` with its position."""
    for error in _validator().iter_errors(doc.data):
        message, hint = _describe(error)
        path = tuple(error.absolute_path)
        if error.validator == "additionalProperties" and isinstance(error.instance, dict):
            allowed = set(error.schema.get("properties", {}))
            extras = sorted(set(error.instance) - allowed)
            for name in extras:
                problems.add(doc.key_where((*path, name)), message.replace(
                    f"'{extras[0]}'", f"'{name}'"), hint)
            continue
        problems.add(doc.where(path), message, hint)
