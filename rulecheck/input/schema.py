"""Validate a parsed layout against ``schemas/layout.schema.json``.

jsonschema reports a JSON path; :class:`~rulecheck.loader.Document` turns it
back into a line and column. Messages are rewritten in plain words; every error
of a file is reported at once (up to the collector's cap).

Most files are valid, and jsonschema spends several microseconds per value
finding that out. So the schema is first compiled into plain Python predicates
(:func:`_compile`) that answer only "valid or not", keyword for keyword as
jsonschema decides; a file they pass has no errors to report. A file they fail
goes through jsonschema for the full list of errors. A schema keyword the
compiler does not know disables the shortcut (everything goes through
jsonschema), so a later schema change can make validation slower, never wrong.
"""

from __future__ import annotations

import datetime
import json
import numbers
import re
from collections.abc import Callable
from functools import cache
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:  # jsonschema is imported only when a file fails the compiled check
    import jsonschema
    from jsonschema.exceptions import ValidationError

from rulecheck.errors import ProblemCollector
from rulecheck.input.loader import Document, JsonPath
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
    import jsonschema

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
        return f"{where} should be {_a(expected)}, not {_kind_of(value)}", _quote_hint(value)
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
        if _is_fixture_sides_choice(error):
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
    names = {
        "object": "a mapping",
        "array": "a list",
        "string": "text",
        "number": "a number",
        "integer": "a whole number",
        "boolean": "true or false",
    }
    if isinstance(expected, list):
        return " or ".join(names.get(e, str(e)) for e in expected)
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
    if isinstance(value, bytes):
        return "binary data (YAML's !!binary tag)"
    if isinstance(value, (datetime.date, datetime.datetime)):
        return "a date or time (YAML reads an unquoted 2024-05-01 as a timestamp)"
    if isinstance(value, str):
        return "text"
    return f"a YAML {type(value).__name__} value"


def _quote_hint(value: Any) -> str:
    """What to do when YAML read a value as a type the schema does not take."""
    if isinstance(value, bytes):
        return "drop the '!!binary' tag and write the text itself"
    if isinstance(value, (datetime.date, datetime.datetime)):
        return f"put it in quotes to keep it text, e.g. '{value.isoformat()}'"
    return ""


def validate(doc: Document, problems: ProblemCollector) -> None:
    """Add every schema error of ``doc`` to ``problems`` with its position."""
    check = _compiled_check()
    try:
        if check is not None and check(doc.data):
            return  # valid: jsonschema would report nothing
    except Exception:  # noqa: BLE001, S110 - let jsonschema decide
        pass
    for error in _validator().iter_errors(doc.data):
        error = _branch_error(error)
        message, hint = _describe(error)
        path = tuple(error.absolute_path)
        if error.validator == "additionalProperties" and isinstance(error.instance, dict):
            allowed = set(error.schema.get("properties", {}))
            extras = sorted(set(error.instance) - allowed)
            for name in extras:
                problems.add(
                    doc.key_where((*path, name)),
                    message.replace(f"'{extras[0]}'", f"'{name}'"),
                    hint,
                )
            continue
        problems.add(doc.where(path), message, hint)


def _is_fixture_sides_choice(error: ValidationError) -> bool:
    """The schema's "a fixture has cold, hot or both" choice, which has its own message."""
    path = tuple(error.absolute_path)
    return error.validator == "anyOf" and len(path) == 2 and path[0] == "fixtures"


def _branch_error(error: ValidationError) -> ValidationError:
    """For a value that fits none of several forms, the error of the form it was meant as.

    A mapping given where a quantity *or* a mapping is allowed was meant as the mapping:
    report what is wrong inside it (an unknown key, say) rather than "wrong form". The
    branch is the one whose errors are not about the value's type. Fixtures' "cold or hot"
    choice keeps its own message.
    """
    while (
        error.validator in ("oneOf", "anyOf")
        and error.context
        and not _is_fixture_sides_choice(error)
    ):
        meant = [
            e
            for e in error.context
            if e.validator != "type" and e.validator not in ("oneOf", "anyOf")
        ]
        if len({e.schema_path[0] for e in meant}) != 1:
            break  # no single form stands out: keep the general message
        error = meant[0]
    return error


# ---- compiled validity check ------------------------------------------------------------

Check = Callable[[Any], bool]

_ANNOTATIONS = frozenset(
    {
        "$schema",
        "$comment",
        "$defs",
        "title",
        "description",
        "default",
        "examples",
        "deprecated",
        "readOnly",
        "writeOnly",
    }
)
_OBJECT = frozenset({"properties", "additionalProperties", "required", "minProperties"})
_ARRAY = frozenset({"items", "minItems"})
_STRING = frozenset({"pattern", "minLength"})
_NUMBER = frozenset({"minimum", "maximum", "exclusiveMinimum", "exclusiveMaximum"})
_OTHER = frozenset({"$ref", "type", "const", "enum", "oneOf", "anyOf"})


class _Unsupported(Exception):
    """The schema uses something :func:`_compile` does not reproduce."""


def _is_number(x: Any) -> bool:
    return not isinstance(x, bool) and isinstance(x, numbers.Number)


# jsonschema's draft 2020-12 type checker, type by type.
_TYPES: dict[str, Check] = {
    "object": lambda x: isinstance(x, dict),
    "array": lambda x: isinstance(x, list),
    "string": lambda x: isinstance(x, str),
    "number": _is_number,
    "integer": lambda x: (
        not isinstance(x, bool)
        and (isinstance(x, int) or (isinstance(x, float) and x.is_integer()))
    ),
    "boolean": lambda x: isinstance(x, bool),
    "null": lambda x: x is None,
}


@cache
def _compiled_check() -> Check | None:
    """The compiled layout schema, or ``None`` when it uses an unsupported keyword."""
    schema = layout_schema()
    try:
        return _compile(schema, schema, {}, top=True)
    except _Unsupported:
        return None


def _compile(
    schema: Any, root: dict[str, Any], refs: dict[str, list[Check]], top: bool = False
) -> Check:
    """A predicate true exactly where jsonschema (draft 2020-12) finds ``schema`` valid."""
    if schema is True or schema == {}:
        return lambda x: True
    if schema is False:
        return lambda x: False
    if not isinstance(schema, dict):
        raise _Unsupported(repr(schema))
    unknown = set(schema) - _ANNOTATIONS - _OBJECT - _ARRAY - _STRING - _NUMBER - _OTHER
    if unknown - ({"$id"} if top else set()):
        raise _Unsupported(", ".join(sorted(unknown)))
    checks: list[Check] = []
    if "$ref" in schema:
        checks.append(_ref(schema["$ref"], root, refs))
    # One type whose own keywords are present ({"type": "string", "pattern": ...}): the
    # keyword check tests the type itself (strict), instead of passing other types along.
    names = schema.get("type", [])
    names = names if isinstance(names, list) else [names]
    if any(name not in _TYPES for name in names):
        raise _Unsupported(f"type {names}")
    strict = names[0] if len(names) == 1 else None
    families = {"object": _OBJECT, "array": _ARRAY, "string": _STRING, "number": _NUMBER}
    if names and not (strict in families and families[strict] & set(schema)):
        tests = [_TYPES[name] for name in names]
        checks.append(tests[0] if len(tests) == 1 else lambda x: any(t(x) for t in tests))
    if "const" in schema:
        checks.append(_const(schema["const"]))
    if "enum" in schema:
        checks.append(_enum(schema["enum"]))
    if _OBJECT & set(schema):
        checks.append(_object(schema, root, refs, strict == "object"))
    if _ARRAY & set(schema):
        checks.append(_array(schema, root, refs, strict == "array"))
    if _STRING & set(schema):
        checks.append(_string(schema, strict == "string"))
    if _NUMBER & set(schema):
        checks.append(_number(schema, strict == "number"))
    if "oneOf" in schema:
        one = [_compile(sub, root, refs) for sub in schema["oneOf"]]
        if len(one) == 2:  # exactly one of two (every check returns a bool)
            first, second = one
            checks.append(lambda x: first(x) != second(x))
        else:
            checks.append(lambda x: sum(1 for c in one if c(x)) == 1)
    if "anyOf" in schema:
        some = [_compile(sub, root, refs) for sub in schema["anyOf"]]
        checks.append(lambda x: any(c(x) for c in some))
    return _all_of(checks)


def _all_of(checks: list[Check]) -> Check:
    """One predicate for all of ``checks`` (unrolled for the short lists schemas have)."""
    if not checks:
        return lambda x: True
    if len(checks) == 1:
        return checks[0]
    if len(checks) == 2:
        first, second = checks
        return lambda x: first(x) and second(x)
    return lambda x: all(c(x) for c in checks)


def _ref(ref: Any, root: dict[str, Any], refs: dict[str, list[Check]]) -> Check:
    """A reference inside the schema document (``#/...``), compiled once."""
    if not isinstance(ref, str) or not ref.startswith("#/"):
        raise _Unsupported(f"$ref {ref!r}")
    if ref not in refs:
        cell: list[Check] = []
        refs[ref] = cell
        target: Any = root
        for part in ref[2:].split("/"):
            part = part.replace("~1", "/").replace("~0", "~")
            if not isinstance(target, dict) or part not in target:
                raise _Unsupported(f"$ref {ref!r}")
            target = target[part]
        if isinstance(target, dict) and "$id" in target:
            raise _Unsupported(f"$ref {ref!r} enters another resource")
        cell.append(_compile(target, root, refs))
    cell = refs[ref]
    return lambda x: cell[0](x)


def _json_equal() -> Callable[[Any, Any], bool]:
    """jsonschema's own equality (1 is not true, 1.0 is 1), for const/enum values other
    than texts and numbers (none in the shipped schema, so jsonschema stays unimported)."""
    try:
        from jsonschema._utils import equal
    except ImportError as exc:  # pragma: no cover - a private helper; no shortcut without it
        raise _Unsupported("const/enum without jsonschema's equality") from exc
    return equal  # type: ignore[no-any-return]


def _const(const: Any) -> Check:
    """Equal to ``const`` as JSON Schema counts equality (1 == 1.0, true is not 1)."""
    if isinstance(const, str):
        return lambda x: isinstance(x, str) and x == const
    if _is_number(const):
        return lambda x: _is_number(x) and bool(x == const)
    equal = _json_equal()
    return lambda x: equal(x, const)


def _enum(values: Any) -> Check:
    if not isinstance(values, list):
        raise _Unsupported("enum")
    if all(isinstance(v, str) for v in values):
        texts = frozenset(values)  # a non-text instance equals none of them
        return lambda x: isinstance(x, str) and x in texts
    equal = _json_equal()
    return lambda x: any(equal(v, x) for v in values)


def _object(
    schema: dict[str, Any], root: dict[str, Any], refs: dict[str, list[Check]], strict: bool
) -> Check:
    props = {k: _compile(v, root, refs) for k, v in schema.get("properties", {}).items()}
    extra = schema.get("additionalProperties", True)
    closed = extra is False
    extra_check = None if isinstance(extra, bool) else _compile(extra, root, refs)
    required = list(schema.get("required", []))
    least = schema.get("minProperties", 0)

    def check(x: Any) -> bool:
        if not isinstance(x, dict):
            return not strict
        if len(x) < least:
            return False
        for name in required:
            if name not in x:
                return False
        for key, value in x.items():
            test = props.get(key)
            if test is not None:
                if not test(value):
                    return False
            elif closed:
                return False
            elif extra_check is not None and not extra_check(value):
                return False
        return True

    return check


def _array(
    schema: dict[str, Any], root: dict[str, Any], refs: dict[str, list[Check]], strict: bool
) -> Check:
    items = schema.get("items", True)
    if items is False:
        raise _Unsupported("items: false")
    item = _compile(items, root, refs)
    least = schema.get("minItems", 0)

    def check(x: Any) -> bool:
        if not isinstance(x, list):
            return not strict
        if len(x) < least:
            return False
        for value in x:
            if not item(value):
                return False
        return True

    return check


def _string(schema: dict[str, Any], strict: bool) -> Check:
    search = re.compile(schema["pattern"]).search if "pattern" in schema else None
    least = schema.get("minLength", 0)

    def check(x: Any) -> bool:
        if not isinstance(x, str):
            return not strict
        return len(x) >= least and (search is None or search(x) is not None)

    return check


def _number(schema: dict[str, Any], strict: bool) -> Check:
    low, high = schema.get("minimum"), schema.get("maximum")
    above, below = schema.get("exclusiveMinimum"), schema.get("exclusiveMaximum")

    def check(x: Any) -> bool:
        if not _is_number(x):
            return not strict
        return not (
            (low is not None and x < low)
            or (high is not None and x > high)
            or (above is not None and x <= above)
            or (below is not None and x >= below)
        )

    return check
