"""Baselines: ``--write-baseline`` records today's findings, ``--baseline`` reports only new ones.

The layout is ``conftest.MINIMAL`` with a 95 psi supply, over the 80 psi static
limit [S: UPC 608.2] (a violation at J1, the first point after the service), and a
14 gpm demand in 3/4 in type L copper, 9.28 ft/s against 8 ft/s
[S: NSPC 10.14.1; bore 0.785 in per ASTM B88]
(a caution on P1). The key of a baseline entry is (path relative to the
working folder, rule, element): the tests shift lines and change values to show
that an accepted finding stays accepted, and add elements to show that new
findings still appear.
"""

from __future__ import annotations

import json
from collections import Counter
from collections.abc import Callable
from pathlib import Path

import pytest
from conftest import MINIMAL, tweak

from rulecheck.engine.baseline import apply_baseline, read_baseline
from rulecheck.errors import EXIT_FINDINGS, EXIT_INPUT, EXIT_OK, InputError
from rulecheck.findings import Finding

Cli = Callable[..., tuple[int, str, str]]
LAYOUT = tweak(
    MINIMAL,
    ("pressure: 60 psi", "pressure: 95 psi"),
    ("service: cold}", "service: cold, demand: 14 gpm}"),
)
# A second fast pipe (a new caution) and comment lines that shift every line below them.
SHIFTED = tweak(
    LAYOUT,
    ("points:\n", "# Revised after the site visit.\n# Two more lines of notes.\npoints:\n"),
)
EXTENDED = tweak(
    SHIFTED,
    (
        "  - {id: J1, elevation: 0 ft}\n",
        "  - {id: J1, elevation: 0 ft}\n  - {id: J2, elevation: 0 ft}\n",
    ),
    (
        "fixtures:\n",
        "  - {id: P2, from: J1, to: J2, material: copper-l, size: 1/2, length: 5 ft, "
        "service: cold, demand: 8 gpm}\nfixtures:\n",
    ),
)


@pytest.fixture
def project(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    monkeypatch.chdir(tmp_path)
    (tmp_path / "layouts").mkdir()
    (tmp_path / "layouts" / "house.yaml").write_text(LAYOUT, encoding="utf-8")
    return tmp_path


def _json(cli: Cli, *argv: str) -> tuple[int, dict]:
    rc, out, err = cli("check", "--format", "json", *argv)
    assert out, err
    return rc, json.loads(out)


def _rules(document: dict) -> list[tuple[str, str]]:
    return [(f["rule"], f["element"]) for file in document["files"] for f in file["findings"]]


def test_write_baseline_records_findings_and_accepts_them(cli: Cli, project: Path) -> None:
    assert cli("check", "layouts")[0] == EXIT_FINDINGS
    rc, out, err = cli("check", "--write-baseline", "baseline.json", "layouts")
    assert rc == EXIT_OK
    assert "2 hidden by the baseline" in " ".join(out.split()) and "wrote the baseline" in err
    data = json.loads((project / "baseline.json").read_text(encoding="utf-8"))
    assert data["version"] == 1
    assert data["findings"] == [
        {"path": "layouts/house.yaml", "rule": "static-pressure", "element": "J1", "count": 1},
        {"path": "layouts/house.yaml", "rule": "velocity-limit", "element": "P1", "count": 1},
    ]


def test_baseline_bytes_are_deterministic(cli: Cli, project: Path) -> None:
    cli("check", "--write-baseline", "one.json", "layouts")
    cli("check", "--write-baseline", "two.json", "./layouts/house.yaml")  # spelled differently
    assert (project / "one.json").read_bytes() == (project / "two.json").read_bytes()
    assert (project / "one.json").read_bytes().endswith(b"}\n")


def test_line_shifts_and_new_values_do_not_break_the_match(cli: Cli, project: Path) -> None:
    cli("check", "--write-baseline", "baseline.json", "layouts")
    moved = tweak(SHIFTED, ("demand: 14 gpm", "demand: 15 gpm"))  # a different measured value
    (project / "layouts" / "house.yaml").write_text(moved, encoding="utf-8")
    rc, document = _json(cli, "--baseline", "baseline.json", "layouts")
    assert rc == EXIT_OK
    assert _rules(document) == []
    assert document["summary"]["baseline_hidden"] == 2


def test_new_findings_are_reported(cli: Cli, project: Path) -> None:
    cli("check", "--write-baseline", "baseline.json", "layouts")
    (project / "layouts" / "house.yaml").write_text(EXTENDED, encoding="utf-8")
    rc, document = _json(cli, "--baseline", "baseline.json", "--fail-on", "caution", "layouts")
    assert rc == EXIT_FINDINGS
    assert _rules(document) == [("velocity-limit", "P2")]
    assert document["summary"]["baseline_hidden"] == 2
    rc, out, _ = cli("check", "--baseline", "baseline.json", "layouts")
    assert rc == EXIT_OK  # the new finding is a caution, under the default fail-on
    assert "2 hidden by the baseline" in " ".join(out.split()) and "P2" in out and "P1" not in out


def test_a_new_file_is_not_covered(cli: Cli, project: Path) -> None:
    cli("check", "--write-baseline", "baseline.json", "layouts")
    (project / "layouts" / "annex.yaml").write_text(LAYOUT, encoding="utf-8")
    rc, document = _json(cli, "--baseline", "baseline.json", "layouts")
    assert rc == EXIT_FINDINGS
    assert [f["path"] for f in document["files"] if f["findings"]] == ["layouts/annex.yaml"]


def test_waived_findings_are_not_recorded_and_stay_visible(cli: Cli, project: Path) -> None:
    waiver = "waivers:\n  - {rule: static-pressure, element: J1, reason: Utility agreed.}\n"
    (project / "layouts" / "house.yaml").write_text(LAYOUT + waiver, encoding="utf-8")
    cli("check", "--write-baseline", "baseline.json", "layouts")
    data = json.loads((project / "baseline.json").read_text(encoding="utf-8"))
    assert [e["rule"] for e in data["findings"]] == ["velocity-limit"]
    rc, document = _json(cli, "--baseline", "baseline.json", "layouts")
    findings = [f for file in document["files"] for f in file["findings"]]
    assert [(f["rule"], f["waived"]["reason"]) for f in findings] == [
        ("static-pressure", "Utility agreed.")
    ]
    rc, document = _json(cli, "--baseline", "baseline.json", "--no-waivers", "layouts")
    assert rc == EXIT_FINDINGS  # audit mode: the waived violation is not in the baseline
    assert _rules(document) == [("static-pressure", "J1")]


def test_counts_hide_only_as_many_findings_as_recorded() -> None:
    def finding(element: str, line: int) -> Finding:
        return Finding("velocity-limit", "caution", "fast", "a.yaml", line, 5, element, "src")

    results = [("a.yaml", "ipc", [finding("P1", 3), finding("P1", 9), finding("P2", 4)])]
    kept, hidden = apply_baseline(
        results, Counter({("a.yaml", "velocity-limit", "P1"): 1}), cwd=Path.cwd()
    )
    assert hidden == 1
    assert [(f.element, f.line) for f in kept[0][2]] == [("P1", 9), ("P2", 4)]


@pytest.mark.parametrize(
    ("content", "fragment"),
    [
        (None, "no such baseline file"),
        ("{not json", "not JSON"),
        ('{"version": 2, "findings": []}', "not a rulecheck baseline"),
        ('{"version": 1, "findings": [{"path": "a", "rule": "r"}]}', "entry 1 of the baseline"),
        (
            '{"version": 1, "findings": [{"path": "a", "rule": "r", "element": "e", "count": 0}]}',
            "entry 1 of the baseline",
        ),
    ],
)
def test_bad_baseline_is_an_input_error(
    cli: Cli, project: Path, content: str | None, fragment: str
) -> None:
    if content is not None:
        (project / "baseline.json").write_text(content, encoding="utf-8")
    rc, out, err = cli("check", "--baseline", "baseline.json", "layouts")
    assert rc == EXIT_INPUT and out == ""
    assert "baseline.json:" in err and fragment in err
    with pytest.raises(InputError):
        read_baseline(project / "baseline.json")


def test_baseline_is_not_written_over_input_errors(cli: Cli, project: Path) -> None:
    (project / "layouts" / "broken.yaml").write_text("version: 1\nproject: [\n", encoding="utf-8")
    rc, _, err = cli("check", "--write-baseline", "baseline.json", "layouts")
    assert rc == EXIT_INPUT
    assert "baseline not written" in err and not (project / "baseline.json").exists()


def test_baseline_options_exclude_each_other_and_spare_layouts(cli: Cli, project: Path) -> None:
    rc, _, err = cli("check", "--baseline", "a.json", "--write-baseline", "b.json", "layouts")
    assert rc == EXIT_INPUT and "not allowed with" in err
    before = (project / "layouts" / "house.yaml").read_bytes()
    rc, _, err = cli("check", "--write-baseline", "layouts/house.yaml", "layouts")
    assert rc == EXIT_INPUT and "refusing to write over the layout" in err
    assert (project / "layouts" / "house.yaml").read_bytes() == before
