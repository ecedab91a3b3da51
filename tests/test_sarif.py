"""SARIF 2.1.0 output of ``rulecheck check --format sarif`` and ``--output FILE``.

The log is validated against the official OASIS SARIF 2.1.0 JSON Schema
(errata 01), shipped as ``tests/reference/sarif-schema-2.1.0.json`` (provenance in
the README beside it), with a draft-07 validator of the ``jsonschema`` package. The findings
in the log are compared with the same run's ``--format json`` output, and the
rule descriptors with the rule data, so neither side is hard-coded here.

The test layout is ``conftest.MINIMAL`` with a 95 psi supply (over the 80 psi
static limit [S: UPC 608.2]) and a 14 gpm demand in 3/4 in type L copper: bore
0.785 in [S: ASTM B88], v = 14 gpm / (π/4 · 0.785² in²) = 9.28 ft/s, over
8 ft/s [S: NSPC 10.14.1].
"""

from __future__ import annotations

import hashlib
import json
from collections.abc import Callable
from pathlib import Path

import jsonschema
import pytest
from conftest import MINIMAL, tweak

from rulecheck.errors import EXIT_FINDINGS, EXIT_INPUT, EXIT_OK
from rulecheck.input.rulebook import rule_specs
from rulecheck.report.sarif import LEVEL

SCHEMA_PATH = Path(__file__).resolve().parent / "reference" / "sarif-schema-2.1.0.json"
SCHEMA_SHA256 = "c3b4bb2d6093897483348925aaa73af03b3e3f4bd4ca38cef26dcb4212a2682e"  # README there
LAYOUT = tweak(
    MINIMAL,
    ("pressure: 60 psi", "pressure: 95 psi"),
    ("service: cold}", "service: cold, demand: 14 gpm}"),
)
WAIVER = "waivers:\n  - {rule: static-pressure, element: J1, reason: Reviewed with the utility.}\n"

Cli = Callable[..., tuple[int, str, str]]


@pytest.fixture(scope="module")
def validator() -> jsonschema.Draft7Validator:
    schema = json.loads(SCHEMA_PATH.read_text(encoding="utf-8"))
    return jsonschema.Draft7Validator(schema)


@pytest.fixture
def project(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    """A working folder with ``layouts/house.yaml`` (no waiver) and ``layouts/waived.yaml``."""
    monkeypatch.chdir(tmp_path)
    (tmp_path / "layouts").mkdir()
    (tmp_path / "layouts" / "house.yaml").write_text(LAYOUT, encoding="utf-8")
    (tmp_path / "layouts" / "waived.yaml").write_text(LAYOUT + WAIVER, encoding="utf-8")
    return tmp_path


def _sarif(cli: Cli, *argv: str) -> tuple[int, dict]:
    rc, out, err = cli("check", "--format", "sarif", *argv)
    assert out, err
    return rc, json.loads(out)


def test_shipped_schema_is_the_published_one() -> None:
    """The copy under tests/reference/ is byte for byte the OASIS file (errata 01)."""
    assert hashlib.sha256(SCHEMA_PATH.read_bytes()).hexdigest() == SCHEMA_SHA256
    schema = json.loads(SCHEMA_PATH.read_text(encoding="utf-8"))
    assert schema["id"] == (
        "https://docs.oasis-open.org/sarif/sarif/v2.1.0/errata01/os/schemas/sarif-schema-2.1.0.json"
    )


def test_log_is_valid_sarif(cli: Cli, project: Path, validator: jsonschema.Draft7Validator) -> None:
    """Findings, a waived finding and an input error all validate against the schema."""
    (project / "layouts" / "broken.yaml").write_text("version: 1\nproject: [\n", encoding="utf-8")
    rc, log = _sarif(cli, "layouts")
    assert rc == EXIT_INPUT
    errors = sorted(validator.iter_errors(log), key=str)
    assert not errors, "\n".join(e.message for e in errors[:5])
    assert log["version"] == "2.1.0" and len(log["runs"]) == 1
    run = log["runs"][0]
    assert run["invocations"][0]["executionSuccessful"] is False
    notes = run["invocations"][0]["toolExecutionNotifications"]
    assert notes and all(n["level"] == "error" for n in notes)
    assert notes[0]["locations"][0]["physicalLocation"]["artifactLocation"]["uri"] == (
        "layouts/broken.yaml"
    )


def test_results_match_the_json_findings(cli: Cli, project: Path) -> None:
    rc_sarif, log = _sarif(cli, "layouts")
    rc_json, out, _ = cli("check", "--format", "json", "layouts")
    assert rc_sarif == rc_json
    findings = [(file["path"], f) for file in json.loads(out)["files"] for f in file["findings"]]
    run = log["runs"][0]
    rules = run["tool"]["driver"]["rules"]
    results = run["results"]
    assert len(results) == len(findings) > 0
    for result, (path, finding) in zip(results, findings, strict=True):
        assert result["ruleId"] == finding["rule"]
        assert rules[result["ruleIndex"]]["id"] == finding["rule"]
        assert result["level"] == LEVEL[finding["severity"]]
        assert result["message"]["text"].startswith(finding["message"])
        location = result["locations"][0]
        assert location["physicalLocation"]["artifactLocation"]["uri"] == path
        assert location["physicalLocation"]["region"] == {
            "startLine": finding["line"],
            "startColumn": finding["column"],
        }
        assert location["logicalLocations"][0]["name"] == finding["element"]
        assert result["properties"]["severity"] == finding["severity"]
        assert ("suppressions" in result) == ("waived" in finding)


def test_levels_follow_the_severities(cli: Cli, project: Path) -> None:
    """hazard and violation → error, caution → warning, advisory → note (SARIF §3.27.10)."""
    assert LEVEL == {
        "hazard": "error",
        "violation": "error",
        "caution": "warning",
        "advisory": "note",
    }
    _, log = _sarif(cli, "layouts/house.yaml")
    levels = {r["ruleId"]: r["level"] for r in log["runs"][0]["results"]}
    assert levels == {"static-pressure": "error", "velocity-limit": "warning"}


def test_driver_lists_every_rule_from_the_rule_data(cli: Cli, project: Path) -> None:
    _, log = _sarif(cli, "layouts/house.yaml")
    driver = log["runs"][0]["tool"]["driver"]
    assert driver["name"] == "rulecheck"
    specs = rule_specs()
    assert [r["id"] for r in driver["rules"]] == list(specs)
    for descriptor in driver["rules"]:
        spec = specs[descriptor["id"]]
        assert descriptor["shortDescription"]["text"] == spec.title
        assert descriptor["fullDescription"]["text"] == spec.rationale
        for part in (spec.rationale, spec.source, spec.fix):
            assert part in descriptor["help"]["text"]
        assert descriptor["defaultConfiguration"]["level"] == LEVEL[spec.severity]
        assert descriptor["name"] and " " not in descriptor["name"]


def test_waived_finding_is_suppressed_with_its_reason(cli: Cli, project: Path) -> None:
    rc, log = _sarif(cli, "layouts/waived.yaml")
    assert rc == EXIT_OK  # the only violation is waived; the caution does not fail by default
    waived = [r for r in log["runs"][0]["results"] if "suppressions" in r]
    assert [r["ruleId"] for r in waived] == ["static-pressure"]
    assert waived[0]["suppressions"] == [
        {"kind": "inSource", "justification": "Reviewed with the utility."}
    ]
    rc, log = _sarif(cli, "--no-waivers", "layouts/waived.yaml")
    assert rc == EXIT_FINDINGS
    assert not any("suppressions" in r for r in log["runs"][0]["results"])


def test_waived_finding_stays_visible_in_json(cli: Cli, project: Path) -> None:
    rc, out, _ = cli("check", "--format", "json", "layouts/waived.yaml")
    findings = json.loads(out)["files"][0]["findings"]
    waived = [f for f in findings if "waived" in f]
    assert [(f["rule"], f["waived"]["reason"]) for f in waived] == [
        ("static-pressure", "Reviewed with the utility.")
    ]


def test_uri_is_relative_posix_and_escaped(cli: Cli, project: Path) -> None:
    folder = project / "layouts" / "east wing"
    folder.mkdir()
    (folder / "unit 1.yaml").write_text(LAYOUT, encoding="utf-8")
    _, log = _sarif(cli, str(folder / "unit 1.yaml"))  # given as an absolute path
    uris = {
        r["locations"][0]["physicalLocation"]["artifactLocation"]["uri"]
        for r in log["runs"][0]["results"]
    }
    assert uris == {"layouts/east%20wing/unit%201.yaml"}


def test_same_input_same_bytes_and_output_file(cli: Cli, project: Path) -> None:
    first = cli("check", "--format", "sarif", "layouts")
    second = cli("check", "--format", "sarif", "layouts")
    assert first == second
    rc, out, _ = cli("check", "--format", "sarif", "--output", "scan.sarif", "layouts")
    assert (rc, out) == (first[0], "")
    assert (project / "scan.sarif").read_bytes() == first[1].encode("utf-8")


@pytest.mark.parametrize("fmt", ["text", "json", "sarif"])
def test_output_writes_each_format_to_the_file(cli: Cli, project: Path, fmt: str) -> None:
    rc, out, _ = cli("check", "--format", fmt, "--output", "report.out", "layouts/house.yaml")
    assert rc == EXIT_FINDINGS and out == ""
    text = (project / "report.out").read_text(encoding="utf-8")
    assert "velocity-limit" in text and "\x1b[" not in text


@pytest.mark.parametrize(
    "target", ["layouts/house.yaml", "./layouts/../layouts/house.yaml", "layouts/waived.yaml"]
)
def test_output_never_overwrites_a_layout(cli: Cli, project: Path, target: str) -> None:
    """The input itself (however spelled) and any other existing YAML file are refused."""
    before = {p: p.read_bytes() for p in (project / "layouts").iterdir()}
    rc, out, err = cli("check", "--format", "sarif", "--output", target, "layouts/house.yaml")
    assert rc == EXIT_INPUT and out == ""
    assert "refusing to write over the layout" in err
    assert {p: p.read_bytes() for p in (project / "layouts").iterdir()} == before


def test_fail_on_controls_the_exit_status(cli: Cli, project: Path) -> None:
    assert _sarif(cli, "layouts/house.yaml")[0] == EXIT_FINDINGS
    assert _sarif(cli, "--fail-on", "never", "layouts/house.yaml")[0] == EXIT_OK
    assert _sarif(cli, "--fail-on", "hazard", "layouts/house.yaml")[0] == EXIT_OK
