"""Meta-tests: the rule registry, the rule data and the case folders agree with each other.

- every id in ``rulecheck.checks.REGISTRY`` has data (title, source, rationale,
  fix, a failing and a passing example) and a case folder ``tests/cases/<id>``;
- every rule in the data files has exactly one registry entry, and no id is
  defined twice across the data files (``rule_specs`` would silently keep the
  last one);
- severities are among ``rulecheck.findings.SEVERITIES``;
- a value taken from memory carries the phrase the engineering basis requires:
  "from memory; verify against the adopted edition" (engineering-basis.md, tags),
  in the ``source`` itself or in the header comment of its data file.
"""

from __future__ import annotations

import re
from pathlib import Path
from typing import Any

import pytest
import yaml
from conftest import CASES, REPO

from rulecheck.checks import REGISTRY
from rulecheck.findings import SEVERITIES
from rulecheck.input.rulebook import RULE_FILES, rule_specs

RULES_DIR = REPO / "rules"
MEMORY_PHRASE = "from memory; verify against the adopted edition"
SPECS = rule_specs()


def _raw_rules() -> list[tuple[str, dict[str, Any]]]:
    found = []
    for filename in RULE_FILES:
        path = RULES_DIR / filename
        if path.is_file():
            for raw in yaml.safe_load(path.read_text(encoding="utf-8"))["rules"]:
                found.append((filename, raw))
    return found


def _header(path: Path) -> str:
    """The file's leading comment block, '#' removed and whitespace collapsed."""
    lines = []
    for line in path.read_text(encoding="utf-8").splitlines():
        if not line.startswith("#"):
            break
        lines.append(line.lstrip("#").strip())
    return " ".join(" ".join(lines).split())


def _sources(data: Any, where: str = "") -> list[tuple[str, str]]:
    """Every string under a ``source`` key anywhere in ``data``, with a readable location."""
    found: list[tuple[str, str]] = []
    if isinstance(data, dict):
        for key, value in data.items():
            here = f"{where}.{key}" if where else str(key)
            if key == "source" and isinstance(value, str):
                ident = data.get("id", "")
                found.append((f"{where}[{ident}]" if ident else here, value))
            else:
                found.extend(_sources(value, here))
    elif isinstance(data, list):
        for i, value in enumerate(data):
            found.extend(_sources(value, f"{where}[{i}]"))
    return found


def test_registry_is_not_empty() -> None:
    assert {"velocity-limit", "static-pressure", "residual-pressure", "waiver-unused"} <= set(
        REGISTRY
    )


@pytest.mark.parametrize("rule_id", sorted(REGISTRY))
def test_registered_rule_has_complete_data(rule_id: str) -> None:
    spec = SPECS.get(rule_id)
    assert spec is not None, f"{rule_id} is registered but has no data in rules/*-rules.yaml"
    for field in ("title", "source", "rationale", "fix"):
        assert str(getattr(spec, field)).strip(), f"{rule_id}: empty {field}"
    assert spec.severity in SEVERITIES
    for kind in ("failing", "passing"):
        snippet = spec.examples.get(kind, "")
        assert snippet.strip(), f"{rule_id}: no {kind} example"
        parsed = yaml.safe_load(snippet)
        assert isinstance(parsed, dict) and parsed, f"{rule_id}: {kind} example is not a mapping"


@pytest.mark.parametrize("rule_id", sorted(REGISTRY))
def test_registered_rule_has_a_case_folder(rule_id: str) -> None:
    folder = CASES / rule_id
    assert folder.is_dir(), f"tests/cases/{rule_id}/ is missing"
    for name in ("fail.yaml", "pass.yaml", "expected.json"):
        assert (folder / name).is_file(), f"tests/cases/{rule_id}/{name} is missing"


def test_every_case_folder_names_a_registered_rule() -> None:
    folders = {p.name for p in CASES.iterdir() if p.is_dir()}
    assert folders - set(REGISTRY) == set()


def test_every_rule_in_the_data_has_exactly_one_registry_entry() -> None:
    raw = _raw_rules()
    ids = [r["id"] for _, r in raw]
    duplicates = sorted({i for i in ids if ids.count(i) > 1})
    assert duplicates == [], f"rule ids defined twice in rules/*-rules.yaml: {duplicates}"
    assert set(ids) == set(REGISTRY), set(ids) ^ set(REGISTRY)
    functions = list(REGISTRY.values())
    assert len({id(f) for f in functions}) == len(functions), "two ids share one function"


def test_rule_data_severities_are_valid() -> None:
    for filename, raw in _raw_rules():
        assert raw["severity"] in SEVERITIES, (filename, raw["id"], raw["severity"])


def test_rule_files_listed_in_rulebook_exist() -> None:
    """A rule file named in RULE_FILES but absent is skipped silently by rule_specs."""
    for filename in RULE_FILES:
        assert (RULES_DIR / filename).is_file(), filename
    on_disk = {p.name for p in RULES_DIR.glob("*-rules.yaml")}
    unread = on_disk - set(RULE_FILES)
    assert not unread, f"rule files not read by rulecheck: {unread}"


@pytest.mark.parametrize("rule_id", sorted(SPECS))
def test_rule_source_carries_a_tag(rule_id: str) -> None:
    """House rule: every source names its tag, [S: ...], [M], [CP] or [D] (engineering basis)."""
    source = SPECS[rule_id].source
    assert re.search(r"\[(S\b|M\]|CP\]|D\])", source), f"{rule_id}: untagged source {source!r}"


def _memory_sources() -> list[tuple[str, str, str]]:
    found = []
    for path in sorted(RULES_DIR.glob("*.yaml")):
        data = yaml.safe_load(path.read_text(encoding="utf-8"))
        for where, text in _sources(data):
            if "[M]" in text or re.search(r"\bmemory\b", text, re.IGNORECASE):
                found.append((path.name, where, text))
    return found


def test_memory_sources_exist() -> None:
    """The data does use memory tags (else the next test would check nothing)."""
    assert _memory_sources()


@pytest.mark.parametrize(
    ("filename", "where", "text"),
    [pytest.param(f, w, t, id=f"{f}:{w}") for f, w, t in _memory_sources()],
)
def test_memory_sources_say_verify(filename: str, where: str, text: str) -> None:
    """engineering-basis.md: a value from memory says "from memory; verify against the
    adopted edition" -- in its own source, or in the header comment of its data file."""
    normalised = " ".join(text.split())
    assert MEMORY_PHRASE in normalised or MEMORY_PHRASE in _header(RULES_DIR / filename), (
        f"rules/{filename} {where}: source tagged from memory without the phrase: {text!r}"
    )
