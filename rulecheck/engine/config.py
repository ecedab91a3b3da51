"""Project configuration: ``rulecheck.toml``, found by walking up from the working folder.

A team keeps its choices beside its layouts::

    profile = "upc"              # for layouts that name no profile of their own
    fail-on = "caution"          # lowest severity that fails the check
    exclude = ["drafts/**"]      # skipped when a folder is expanded

    [rules.velocity-limit]
    severity = "violation"
    limits = { cold = "7 ft/s" }

    [rules.waiver-unused]
    enabled = false

Options given on the command line win over the file. Every mistake in the file
is an input error naming the key and its line (``tomllib`` keeps no positions,
so :func:`key_positions` finds them by scanning the text).
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field, replace
from fnmatch import fnmatchcase
from pathlib import Path, PurePosixPath
from typing import Any

import yaml

from rulecheck.engine.context import Settings
from rulecheck.errors import NO_POSITION, InputError, Position, ProblemCollector
from rulecheck.files import MAX_CONFIG_BYTES, is_regular_file, read_text, relative_posix
from rulecheck.findings import SEVERITIES
from rulecheck.input.plausible import LIMIT_BOUND
from rulecheck.input.plausible import problem as implausible
from rulecheck.input.profiles import default_profile_id, get_profile, parameters, profile_ids
from rulecheck.input.rulebook import RuleSpec, rule_specs
from rulecheck.suggest import suggest
from rulecheck.textscan import unplaced_error
from rulecheck.units import QuantityError, is_number, quantity_kind, to_si

CONFIG_NAME = "rulecheck.toml"
FAIL_ON = (*SEVERITIES, "never")
_TOP_KEYS = ("profile", "fail-on", "exclude", "rules")
_RULE_KEYS = ("enabled", "severity", "limits")
#: Kinds tried, in order, to learn what a limit in the rule data measures.
KeyPath = tuple[str, ...]


@dataclass(frozen=True)
class Config:
    """The choices read from one ``rulecheck.toml`` (all empty when there is none)."""

    path: Path | None = None
    profile: str | None = None
    fail_on: str | None = None
    exclude: tuple[str, ...] = ()
    disabled: frozenset[str] = frozenset()
    severity: dict[str, str] = field(default_factory=dict)
    limits: dict[str, dict[str, Any]] = field(default_factory=dict)

    @property
    def root(self) -> Path:
        """The folder ``exclude`` patterns are relative to: the file's own folder."""
        return self.path.parent if self.path else Path.cwd()

    def apply(self, settings: Settings) -> Settings:
        """``settings`` with this file's rule choices added (the settings' own entries win)."""
        limits = {
            rule: {**values, **settings.limits.get(rule, {})}
            for rule, values in self.limits.items()
        }
        return replace(
            settings,
            disabled=set(settings.disabled) | self.disabled,
            severity={**self.severity, **settings.severity},
            limits={**settings.limits, **limits},
        )

    def excluded(self, path: Path) -> bool:
        """True when an ``exclude`` pattern matches ``path`` or a folder above it.

        Patterns are matched against the path relative to the configuration's folder,
        with ``/`` separators. A pattern without ``/`` (or starting with ``**/``)
        matches at any depth; ``*`` also matches across ``/``.
        """
        parts = PurePosixPath(relative_posix(path, self.root)).parts
        for raw in self.exclude:
            pattern = raw.strip().removeprefix("./").rstrip("/")
            anywhere = "/" not in pattern or pattern.startswith("**/")
            pattern = pattern.removeprefix("**/")
            for start in range(len(parts)) if anywhere else (0,):
                for end in range(start + 1, len(parts) + 1):
                    if fnmatchcase("/".join(parts[start:end]), pattern):
                        return True
        return False

    def profile_for(self, path: Path) -> str | None:
        """The profile to force on ``path``: this file's, unless the layout names its own."""
        if self.profile is None or declares_profile(path):
            return None
        return self.profile


def find_config(start: Path | None = None) -> Path | None:
    """The nearest ``rulecheck.toml`` in ``start`` (default: the working folder) or above."""
    here = (start or Path.cwd()).resolve()
    for folder in (here, *here.parents):
        candidate = folder / CONFIG_NAME
        if candidate.is_file():
            return candidate
    return None


def load_config(explicit: str | Path | None = None, start: Path | None = None) -> Config:
    """Read ``explicit`` (which must exist) or the nearest ``rulecheck.toml``; raise InputError."""
    if explicit is not None:
        path = Path(explicit)
    else:
        found = find_config(start)
        if found is None:
            return Config()
        path = found
    missing = ("no such configuration file", "check the path given to --config")
    text = read_text(path, MAX_CONFIG_BYTES, "configuration", missing)
    return parse_config(text, path, str(path) if explicit is not None else relative_posix(path))


def parse_config(text: str, path: Path, name: str | None = None) -> Config:
    """Check and convert the text of a ``rulecheck.toml``; every mistake becomes a problem.

    ``name`` is how messages call the file (default: ``path`` as given).
    """
    import tomllib  # only when there is a file to read (some 8 ms of start-up)

    name = name or str(path)
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        where = re.search(r"\(at line (\d+), column (\d+)\)", str(exc))
        pos = Position(int(where[1]), int(where[2])) if where else NO_POSITION
        message = re.sub(r"\s*\(at (line \d+, column \d+|end of document)\)", "", str(exc))
        raise InputError.at(
            name, pos, f"TOML syntax: {message}", "fix the TOML at this spot"
        ) from None
    except (RecursionError, ValueError) as exc:  # tomllib names no position for these
        raise unplaced_error(
            exc,
            text,
            name,
            "TOML",
            'write ordinary numbers, a quantity such as "7 ft/s", '
            "and only the few levels of tables and lists a configuration needs",
        ) from None
    positions = key_positions(text)
    problems = ProblemCollector(name)

    def problem(key: KeyPath, message: str, hint: str = "") -> None:
        problems.add(position_of(positions, key), message, hint)

    for key in data:
        if key not in _TOP_KEYS:
            problem((key,), f"unknown key '{key}'", _known(key, _TOP_KEYS))
    profile = _choice(data, "profile", profile_ids(), problem)
    fail_on = _choice(data, "fail-on", FAIL_ON, problem)
    exclude = data.get("exclude", [])
    if isinstance(exclude, str):
        exclude = [exclude]
    if not (isinstance(exclude, list) and all(isinstance(p, str) for p in exclude)):
        problem(
            ("exclude",),
            "'exclude' should be a list of glob patterns",
            'e.g. exclude = ["drafts/**", "*.old.yaml"]',
        )
        exclude = []
    disabled: set[str] = set()
    severity: dict[str, str] = {}
    limits: dict[str, dict[str, Any]] = {}
    rules = data.get("rules", {})
    if not isinstance(rules, dict):
        problem(
            ("rules",),
            "'rules' should be a table of rule ids",
            "write [rules.velocity-limit] headers",
        )
        rules = {}
    specs = rule_specs()
    for rule_id, table in rules.items():
        rule_key = ("rules", rule_id)
        if rule_id not in specs:
            problem(rule_key, f"unknown rule '{rule_id}'", _known(rule_id, specs))
            continue
        if not isinstance(table, dict):
            problem(
                rule_key, f"[rules.{rule_id}] should be a table", "keys: enabled, severity, limits"
            )
            continue
        for item in table:
            if item not in _RULE_KEYS:
                problem(
                    (*rule_key, item),
                    f"unknown key '{item}' in [rules.{rule_id}]",
                    _known(item, _RULE_KEYS),
                )
        if "enabled" in table:
            if not isinstance(table["enabled"], bool):
                problem((*rule_key, "enabled"), "'enabled' should be true or false")
            elif not table["enabled"]:
                disabled.add(rule_id)
        level = _choice(table, "severity", SEVERITIES, problem, rule_key)
        if level is not None:
            severity[rule_id] = level
        if "limits" in table:
            limits[rule_id] = _limits(
                specs[rule_id], table["limits"], (*rule_key, "limits"), problem
            )
    problems.raise_if_any()
    return Config(
        path=path,
        profile=profile,
        fail_on=fail_on,
        exclude=tuple(exclude),
        disabled=frozenset(disabled),
        severity=severity,
        limits={k: v for k, v in limits.items() if v},
    )


def _choice(
    table: dict[str, Any], key: str, allowed: Any, problem: Any, prefix: KeyPath = ()
) -> str | None:
    if key not in table:
        return None
    value = table[key]
    if isinstance(value, str) and value in allowed:
        return value
    problem(
        (*prefix, key),
        f"'{key}' should be one of: {', '.join(allowed)}; got {value!r}",
        _known(str(value), allowed),
    )
    return None


def _limits(spec: RuleSpec, table: Any, key: KeyPath, problem: Any) -> dict[str, Any]:
    """Check limit overrides by converting each with the kind of the rule data's own value."""
    if not isinstance(table, dict):
        problem(key, "'limits' should be a table", 'e.g. limits = { cold = "7 ft/s" }')
        return {}
    known = limit_defaults(spec)
    shared = parameters()
    result: dict[str, Any] = {}
    for name, value in table.items():
        where = (*key, name)
        if name in spec.uses and shared[name].stage == "analysis":
            problem(
                where,
                f"'{name}' shapes the analysis itself ({shared[name].label}), so one rule "
                "cannot change it",
                'choose a profile (profile = "...", or project.profile in the layout)',
            )
            continue
        if name not in known:
            problem(
                where,
                f"unknown limit '{name}' for rule {spec.id}",
                _known(name, known, f"`rulecheck explain {spec.id}`")
                if known
                else "this rule has no limits to set",
            )
            continue
        if name in shared and shared[name].kind == "text":  # a severity, e.g. the air chamber's
            if value in SEVERITIES:
                result[name] = value
            else:
                problem(
                    where,
                    f"'{name}' of {spec.id} should be a severity, got {value!r}",
                    f"one of: {', '.join(SEVERITIES)}",
                )
            continue
        kind = quantity_kind(known[name])
        if kind is None:
            if (
                isinstance(known[name], (int, float))
                and not isinstance(known[name], bool)
                and isinstance(value, (int, float))
                and not isinstance(value, bool)
            ):
                result[name] = value
            else:
                problem(
                    where,
                    f"limit '{name}' of {spec.id} should be a number like "
                    f"{known[name]!r}, got {value!r}",
                )
            continue
        try:
            if not isinstance(value, str) or is_number(value):
                raise QuantityError(f"needs a {kind} with its unit, got {value!r}")
            si = to_si(value, kind, "si")
        except QuantityError as exc:
            problem(
                where,
                f"limit '{name}' of {spec.id}: {exc}",
                exc.hint or f'write e.g. {name} = "{known[name]}"',
            )
            continue
        why = implausible(LIMIT_BOUND[kind], si, value)
        if why is not None:
            problem(where, f"limit '{name}' of {spec.id}: {why[0]}", why[1])
            continue
        result[name] = value
    return result


def limit_defaults(spec: RuleSpec) -> dict[str, Any]:
    """Every limit name ``spec`` may have overridden, with its first value in the data: its
    own limits (default block first), then the ``rule``-stage profile parameters it uses
    (as the default profile gives them)."""
    names: dict[str, Any] = {}
    for block in ("default", *sorted(spec.limits)):
        for name, raw in (spec.limits.get(block) or {}).items():
            names.setdefault(name, raw)
    profile = get_profile(default_profile_id())
    for name in spec.uses:
        if parameters()[name].stage == "rule":
            names.setdefault(name, profile.raw[name])
    return names


def declares_profile(path: Path) -> bool:
    """True when the layout at ``path`` sets ``project.profile`` (reads only up to it).

    Any problem reading the file answers False; the full load reports it properly.
    """
    stack: list[list[Any]] = []  # per open collection: [is mapping, key expected, last key]
    if not is_regular_file(path):
        return False
    try:
        with open(path, encoding="utf-8-sig") as handle:
            for event in yaml.parse(handle, Loader=getattr(yaml, "CSafeLoader", yaml.SafeLoader)):
                if isinstance(event, (yaml.ScalarEvent, yaml.AliasEvent)):
                    if stack and stack[-1][0]:
                        top = stack[-1]
                        if top[1]:
                            top[2] = getattr(event, "value", None)
                            if len(stack) == 2 and stack[0][2] == "project" and top[2] == "profile":
                                return True
                        top[1] = not top[1]
                elif isinstance(event, yaml.CollectionStartEvent):
                    if stack and stack[-1][0]:
                        stack[-1][1] = True  # this collection is the value; a key comes next
                    stack.append([isinstance(event, yaml.MappingStartEvent), True, None])
                elif isinstance(event, yaml.CollectionEndEvent):
                    stack.pop()
                    if len(stack) == 1 and stack[0][2] == "project":
                        return False
    except (OSError, UnicodeDecodeError, yaml.YAMLError):
        return False
    return False


# ---- where each key sits in the TOML text ---------------------------------------------

_BARE_KEY = re.compile(r"[A-Za-z0-9_-]+")


def key_positions(text: str) -> dict[KeyPath, Position]:
    """Map each key path (table headers, ``key =`` lines, inline tables) to its position.

    A line scanner, not a TOML parser: it understands ``[a.b]`` headers, dotted and
    quoted keys and one-line inline tables, which is what a configuration holds.
    """
    found: dict[KeyPath, Position] = {}
    table: KeyPath = ()
    for number, line in enumerate(text.splitlines(), start=1):
        stripped = line.lstrip()
        indent = len(line) - len(stripped)
        if stripped.startswith("["):
            inner = stripped.lstrip("[")
            parts, end = _read_key(inner, 0)
            if parts and inner[end:].lstrip().startswith("]"):
                table = tuple(parts)
                found.setdefault(table, Position(number, indent + 1))
                continue
        _scan_line(line, number, table, found)
    return found


def position_of(found: dict[KeyPath, Position], key: KeyPath) -> Position:
    """Position of ``key``, else of its nearest enclosing table, else line 1."""
    while key:
        if key in found:
            return found[key]
        key = key[:-1]
    return NO_POSITION


def _scan_line(line: str, number: int, table: KeyPath, found: dict[KeyPath, Position]) -> None:
    stack = [table]  # enclosing inline tables
    depth = 0  # inside [...] arrays
    expect_key = True
    i = 0
    while i < len(line):
        char = line[i]
        if char in " \t":
            i += 1
        elif char == "#":
            return
        elif expect_key:
            expect_key = False
            parts, end = _read_key(line, i)
            if parts and line[end : end + 1] == "=":
                path = stack[-1] + tuple(parts)
                found.setdefault(path, Position(number, i + 1))
                value = end + 1 + len(line[end + 1 :]) - len(line[end + 1 :].lstrip())
                if line[value : value + 1] == "{":
                    stack.append(path)
                    expect_key = True
                    value += 1
                i = value
        elif char in "\"'":
            i = _string_end(line, i)
        else:
            if char == "[":
                depth += 1
            elif char == "]":
                depth -= 1
            elif char == "}" and len(stack) > 1:
                stack.pop()
            elif char == "," and depth == 0 and len(stack) > 1:
                expect_key = True
            i += 1


def _read_key(line: str, i: int) -> tuple[list[str], int]:
    """Read a (dotted, maybe quoted) key at ``i``; return its parts and the index after it."""
    parts: list[str] = []
    while True:
        while i < len(line) and line[i] in " \t":
            i += 1
        if i < len(line) and line[i] in "\"'":
            end = _string_end(line, i)
            parts.append(line[i + 1 : end - 1])
            i = end
        else:
            match = _BARE_KEY.match(line, i)
            if not match:
                return [], i
            parts.append(match.group())
            i = match.end()
        while i < len(line) and line[i] in " \t":
            i += 1
        if i < len(line) and line[i] == ".":
            i += 1
            continue
        return parts, i


def _string_end(line: str, i: int) -> int:
    """Index just after the string literal opening at ``i`` (or the end of the line)."""
    quote = line[i]
    j = i + 1
    while j < len(line):
        if quote == '"' and line[j] == "\\":
            j += 2
            continue
        if line[j] == quote:
            return j + 1
        j += 1
    return len(line)


def _known(word: str, choices: Any, where: str = "`rulecheck rules`") -> str:
    return suggest(word, choices, where)
