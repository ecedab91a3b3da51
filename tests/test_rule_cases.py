"""One folder per rule under ``tests/cases/<rule-id>/``, collected by one parametrised test.

Each folder holds ``fail.yaml`` (a small layout that breaks the rule),
``pass.yaml`` (the same layout fixed) and ``expected.json``: the list of
``{rule, severity, element, line, column}`` that ``fail.yaml`` must give for
the rules named in it (always including the folder's own rule). ``pass.yaml``
must give no finding of the folder's rule. Adding a rule's folder is all it
takes to add its case; the files are run through the command line in-process
(``rulecheck check --format json``), exactly as a user would.
"""

from __future__ import annotations

import json
from collections.abc import Callable
from pathlib import Path

import pytest
from conftest import CASES

from rulecheck.errors import EXIT_INPUT

CASE_DIRS = sorted(p for p in CASES.iterdir() if p.is_dir()) if CASES.is_dir() else []
KEYS = ("rule", "severity", "element", "line", "column")


def _findings(cli: Callable[..., tuple[int, str, str]], path: Path) -> list[dict]:
    rc, out, err = cli("check", path, "--format", "json", "--fail-on", "never")
    assert "Traceback" not in out + err
    assert rc != EXIT_INPUT, f"{path} is not a valid layout:\n{out}{err}"
    assert rc == 0  # --fail-on never
    (entry,) = json.loads(out)["files"]
    return entry["findings"]


def _key(item: dict) -> tuple:
    return tuple(item[k] for k in KEYS)


def test_there_are_case_folders() -> None:
    assert len(CASE_DIRS) >= 4


@pytest.mark.parametrize("case", CASE_DIRS, ids=lambda p: p.name)
def test_rule_case(case: Path, cli: Callable[..., tuple[int, str, str]]) -> None:
    rule = case.name
    for name in ("fail.yaml", "pass.yaml", "expected.json"):
        assert (case / name).is_file(), f"{case} lacks {name}"
    expected = json.loads((case / "expected.json").read_text(encoding="utf-8"))
    assert isinstance(expected, list) and expected, "expected.json: a non-empty list"
    for item in expected:
        assert set(item) == set(KEYS), f"expected.json entries have exactly the keys {KEYS}"
    assert any(item["rule"] == rule for item in expected), f"no {rule} finding expected"

    # Each expected position must sit on a line that names the element, so that a
    # mistyped line number in expected.json cannot pass unnoticed.
    lines = (case / "fail.yaml").read_text(encoding="utf-8").splitlines()
    for item in expected:
        assert item["element"] in lines[item["line"] - 1], item

    watched = {item["rule"] for item in expected}
    got = [
        {k: f[k] for k in KEYS} for f in _findings(cli, case / "fail.yaml") if f["rule"] in watched
    ]
    assert sorted(got, key=_key) == sorted(expected, key=_key)

    passing = [f for f in _findings(cli, case / "pass.yaml") if f["rule"] == rule]
    assert passing == [], passing
