"""The command line, in-process (``rulecheck.cli.main``): exit codes, formats, determinism.

Contract: layout-format.md ("Findings in machine form" and the analyze JSON,
all in SI base units), the exit codes of ``rulecheck.errors`` (0 nothing reached
the threshold, 1 a finding did, 2 input or usage error) and the CLI's
``--fail-on`` levels. Hand numbers: 1 gpm = 231 in^3/min, 1 psi = 6894.757 Pa,
1 ft = 0.3048 m [S: NIST SP 811, Appendix B]; copper type L 3/4 bore 0.785 in
[S: ASTM B88].
"""

from __future__ import annotations

import json
import math
import sys
from collections.abc import Callable
from pathlib import Path

import pytest
from conftest import ANSI, CASES, MINIMAL, SAMPLES, tweak

from rulecheck.checks import REGISTRY
from rulecheck.errors import EXIT_FINDINGS, EXIT_INPUT, EXIT_OK
from rulecheck.findings import SEVERITIES
from rulecheck.input.rulebook import rule_specs
from rulecheck.report import CAUTION

Cli = Callable[..., tuple[int, str, str]]
GPM = 231 * 0.0254**3 / 60  # [m^3/s] [S: NIST SP 811]
PSI = 6894.757293168361  # [Pa]
FAIL_ON = ("hazard", "violation", "caution", "advisory", "never")

WAIVER = "waivers:\n  - {rule: velocity-limit, element: P1, reason: accepted by the engineer}\n"
# Layouts with one known highest severity (chosen by hand, checked against the summary).
FAST = ("service: cold}", "service: cold, demand: 20 gpm}")  # 20 gpm in 3/4 L: 13.3 ft/s
LAYOUTS = {
    "clean": (MINIMAL, None),
    "caution": (tweak(MINIMAL, FAST), "caution"),  # velocity-limit only
    "violation": (tweak(MINIMAL, ("pressure: 60 psi", "pressure: 95 psi")), "violation"),
    "advisory": (tweak(MINIMAL, append=WAIVER), "advisory"),  # waiver-unused only
}


@pytest.fixture(autouse=True)
def _plain_environment(monkeypatch: pytest.MonkeyPatch) -> None:
    """No colour settings inherited from the shell that runs the tests."""
    monkeypatch.delenv("NO_COLOR", raising=False)
    monkeypatch.delenv("FORCE_COLOR", raising=False)


def _json(cli: Cli, *args: str | Path) -> tuple[int, dict]:
    rc, out, err = cli(*args, "--format", "json")
    assert "Traceback" not in out + err
    return rc, json.loads(out)


# ---- exit codes ---------------------------------------------------------------------------


def test_exit_0_1_2(write_layout: Callable[..., Path], cli: Cli) -> None:
    assert cli("check", write_layout(MINIMAL, name="ok.yaml"))[0] == EXIT_OK
    assert cli("check", write_layout(LAYOUTS["violation"][0], name="v.yaml"))[0] == EXIT_FINDINGS
    bad = write_layout(tweak(MINIMAL, ("service: cold", "service: cool")), name="bad.yaml")
    assert cli("check", bad)[0] == EXIT_INPUT
    assert (EXIT_OK, EXIT_FINDINGS, EXIT_INPUT) == (0, 1, 2)


@pytest.mark.parametrize("name", sorted(LAYOUTS))
def test_layouts_have_the_intended_highest_severity(
    write_layout: Callable[..., Path], cli: Cli, name: str
) -> None:
    text, highest = LAYOUTS[name]
    rc, doc = _json(cli, "check", write_layout(text), "--fail-on", "never")
    assert rc == EXIT_OK
    counts = doc["summary"]
    present = [s for s in SEVERITIES if counts[s] > 0]
    assert present == ([highest] if highest else []), doc


@pytest.mark.parametrize("fail_on", FAIL_ON)
@pytest.mark.parametrize("name", sorted(LAYOUTS))
def test_fail_on_levels(
    write_layout: Callable[..., Path], cli: Cli, name: str, fail_on: str
) -> None:
    """Exit 1 exactly when a finding at or above the ``--fail-on`` level exists."""
    text, highest = LAYOUTS[name]
    rc, out, err = cli("check", write_layout(text), "--fail-on", fail_on)
    fails = (
        highest is not None
        and fail_on != "never"
        and SEVERITIES.index(highest) <= SEVERITIES.index(fail_on)
    )
    assert rc == (EXIT_FINDINGS if fails else EXIT_OK), (out, err)


@pytest.mark.parametrize("fail_on", FAIL_ON)
def test_fail_on_with_a_hazard(cli: Cli, fail_on: str) -> None:
    """The column-separation case gives a hazard: every level but ``never`` fails."""
    path = CASES / "column-separation" / "fail.yaml"
    rc, doc = _json(cli, "check", path, "--fail-on", "never")
    assert doc["summary"]["hazard"] >= 1
    rc, out, err = cli("check", path, "--fail-on", fail_on)
    assert rc == (EXIT_OK if fail_on == "never" else EXIT_FINDINGS)


def test_default_fail_on_is_violation(write_layout: Callable[..., Path], cli: Cli) -> None:
    assert cli("check", write_layout(LAYOUTS["caution"][0], name="c.yaml"))[0] == EXIT_OK
    assert cli("check", write_layout(LAYOUTS["violation"][0], name="v.yaml"))[0] == EXIT_FINDINGS


def test_bad_fail_on_level_is_a_usage_error(write_layout: Callable[..., Path], cli: Cli) -> None:
    rc, out, err = cli("check", write_layout(), "--fail-on", "sometimes")
    assert rc == EXIT_INPUT and "Traceback" not in out + err
    assert "sometimes" in err


def test_no_arguments(cli: Cli) -> None:
    rc, out, err = cli()
    assert rc == EXIT_INPUT
    assert "Traceback" not in out + err
    assert "check" in out + err  # the help names the commands


def test_unknown_command(cli: Cli) -> None:
    rc, out, err = cli("lint", "x.yaml")
    assert rc == EXIT_INPUT and "Traceback" not in out + err


def test_folder_without_layouts_is_a_usage_error(tmp_path: Path, cli: Cli) -> None:
    empty = tmp_path / "nothing"
    empty.mkdir()
    (empty / "notes.txt").write_text("not a layout\n", encoding="utf-8")
    rc, out, err = cli("check", empty)
    assert rc == EXIT_INPUT and "Traceback" not in out + err
    assert "no layout files" in err


# ---- machine output -----------------------------------------------------------------------

DOC_FINDING_KEYS = [
    "rule",
    "severity",
    "element",
    "line",
    "column",
    "message",
    "measured",
    "limit",
    "unit",
    "source",
]
# Keys the JSON carries beyond layout-format.md's example; listed so that a new one is noticed
# (and documented) rather than slipping in.
EXTRA_FINDING_KEYS = {"fix", "method", "waived"}
EXTRA_SUMMARY_KEYS = {"waived", "baseline_hidden"}


def test_check_json_shape_and_si_units(write_layout: Callable[..., Path], cli: Cli) -> None:
    """layout-format.md "Findings in machine form": version, files[{path, profile, findings}],
    summary of the four severities; measured and limit in SI with their unit.

    P1: copper-l 3/4 (bore 0.785 in [S: ASTM B88]) at 20 gpm: v = Q/A = 4.0410 m/s; the
    limit 8 ft/s = 2.4384 m/s [S: NSPC 10.14.1; 1 ft = 0.3048 m]. JSON values carry six
    significant figures, hence rel 1e-5."""
    path = write_layout(LAYOUTS["caution"][0])
    rc, doc = _json(cli, "check", path)
    assert list(doc) == ["version", "files", "summary"]
    assert doc["version"] == 1
    (entry,) = doc["files"]
    assert list(entry) == ["path", "profile", "findings"]
    assert entry["path"] == str(path) and entry["profile"] == "ipc"
    (finding,) = entry["findings"]
    keys = list(finding)
    assert [k for k in keys if k in DOC_FINDING_KEYS] == DOC_FINDING_KEYS
    assert set(keys) - set(DOC_FINDING_KEYS) <= EXTRA_FINDING_KEYS
    assert finding["rule"] == "velocity-limit" and finding["severity"] == "caution"
    assert finding["element"] == "P1"
    assert (finding["line"], finding["column"]) == (13, 5)
    assert finding["unit"] == "m/s"
    bore = 0.785 * 0.0254
    assert finding["measured"] == pytest.approx(20 * GPM / (math.pi * bore**2 / 4), rel=1e-5)
    assert finding["limit"] == pytest.approx(8 * 0.3048, rel=1e-5)
    assert finding["source"] == rule_specs()["velocity-limit"].source
    assert isinstance(finding["message"], str) and finding["message"]
    summary = doc["summary"]
    assert [k for k in summary if k in SEVERITIES] == list(SEVERITIES)
    assert set(summary) - set(SEVERITIES) <= EXTRA_SUMMARY_KEYS
    assert [summary[s] for s in SEVERITIES] == [0, 0, 1, 0]


def test_check_json_pressure_in_pascal(write_layout: Callable[..., Path], cli: Cli) -> None:
    """Static pressure finding: measured 95 psi, limit 80 psi [S: UPC 608.2], in Pa."""
    rc, doc = _json(cli, "check", write_layout(LAYOUTS["violation"][0]))
    (finding,) = doc["files"][0]["findings"]
    assert finding["rule"] == "static-pressure" and finding["unit"] == "Pa"
    assert finding["measured"] == pytest.approx(95 * PSI, rel=1e-5)
    assert finding["limit"] == pytest.approx(80 * PSI, rel=1e-5)


def test_json_is_valid_strict_json(write_layout: Callable[..., Path], cli: Cli) -> None:
    """No NaN / Infinity tokens (not JSON, RFC 8259) in either JSON output."""

    def strict(text: str) -> dict:
        def reject(token: str) -> None:
            raise AssertionError(f"non-JSON constant {token}")

        return json.loads(text, parse_constant=reject)

    for args in (
        ("check", SAMPLES / "two-bath-house.yaml", "--format", "json"),
        ("analyze", SAMPLES / "two-bath-house.yaml", "--format", "json"),
    ):
        rc, out, err = cli(*args)
        strict(out)


def test_json_is_strict_even_for_extreme_values(
    write_layout: Callable[..., Path], cli: Cli
) -> None:
    """A finite but absurd design flow (1e300 gpm) overflows the friction to infinity; the
    machine output must still be JSON (RFC 8259 has no Infinity), whether the layout is
    refused as input (exit 2) or checked (exit 1)."""
    path = write_layout(tweak(MINIMAL, ("service: cold}", "service: cold, demand: 1e300 gpm}")))
    for command in ("check", "analyze"):
        rc, out, err = cli(command, path, "--format", "json")
        assert "Traceback" not in out + err
        assert rc in ((EXIT_FINDINGS, EXIT_INPUT) if command == "check" else (EXIT_OK, EXIT_INPUT))
        if command == "check" or rc == EXIT_OK:
            json.loads(out, parse_constant=lambda token: pytest.fail(f"non-JSON constant {token}"))


def test_analyze_json_shape(cli: Cli) -> None:
    """layout-format.md: analyze JSON has version, path, pipes (flow, velocity, head_loss,
    wave_speed per pipe) and points (static max/min, residual), SI base units."""
    path = CASES / "velocity-limit" / "fail.yaml"
    rc, out, err = cli("analyze", path, "--format", "json")
    assert rc == EXIT_OK, err
    doc = json.loads(out)
    assert doc["version"] == 1 and doc["path"] == str(path)
    assert {"pipes", "points"} <= set(doc)
    assert set(doc["pipes"]) == {"P1", "P2", "P3"}
    for values in doc["pipes"].values():
        assert {"flow", "velocity", "head_loss", "wave_speed"} <= set(values)
    for values in doc["points"].values():
        assert set(values) == {"static_pressure_max", "static_pressure_min", "residual_pressure"}
    assert set(doc["points"]) == {"SVC", "J1", "J2", "H0", "H1"}
    # P1 carries its 8 gpm override, in m^3/s; SVC sits at its 60 psi, in Pa.
    assert doc["pipes"]["P1"]["flow"] == pytest.approx(8 * GPM, rel=1e-5)
    assert doc["points"]["SVC"]["static_pressure_max"] == pytest.approx(60 * PSI, rel=1e-5)


def test_analyze_text_and_input_error(write_layout: Callable[..., Path], cli: Cli) -> None:
    rc, out, err = cli("analyze", write_layout())
    assert rc == EXIT_OK and "P1" in out and "J1" in out
    bad = write_layout(tweak(MINIMAL, ("service: cold", "service: cool")), name="bad.yaml")
    rc, out, err = cli("analyze", bad)
    assert rc == EXIT_INPUT and "Traceback" not in out + err
    assert f"{bad}:13:" in err


# ---- several files ------------------------------------------------------------------------


def test_folder_expands_to_layout_files(tmp_path: Path, cli: Cli) -> None:
    """A folder argument is replaced by the *.yaml / *.yml files below it, sorted."""
    folder = tmp_path / "layouts"
    (folder / "sub").mkdir(parents=True)
    (folder / "b.yaml").write_text(MINIMAL, encoding="utf-8")
    (folder / "a.yaml").write_text(LAYOUTS["caution"][0], encoding="utf-8")
    (folder / "sub" / "c.yml").write_text(MINIMAL, encoding="utf-8")
    (folder / "notes.txt").write_text("version: 1\n", encoding="utf-8")
    (folder / "README.md").write_text("# layouts\n", encoding="utf-8")
    rc, doc = _json(cli, "check", folder)
    assert [f["path"] for f in doc["files"]] == [
        str(folder / "a.yaml"),
        str(folder / "b.yaml"),
        str(folder / "sub" / "c.yml"),
    ]
    rc, out, err = cli("check", folder)
    assert "3 files checked" in out


# ---- rules and explain ----------------------------------------------------------------------


def test_rules_lists_every_rule(cli: Cli) -> None:
    rc, out, err = cli("rules")
    assert rc == EXIT_OK
    rows = out.split("\n\n")[0].splitlines()[1:]  # the table: header, then one row per rule
    listed = {line.split()[0] for line in rows}
    assert listed == set(REGISTRY)
    for rule_id, spec in rule_specs().items():
        line = next(x for x in out.splitlines() if x.split() and x.split()[0] == rule_id)
        assert spec.severity in line and spec.title in line


@pytest.mark.parametrize("rule_id", sorted(REGISTRY))
def test_explain_prints_the_source(cli: Cli, rule_id: str) -> None:
    spec = rule_specs()[rule_id]
    rc, out, err = cli("explain", rule_id)
    assert rc == EXIT_OK, err
    flat = " ".join(out.split())
    assert " ".join(spec.source.split()) in flat
    assert " ".join(spec.rationale.split()) in flat
    assert out.startswith(f"{rule_id} — {spec.title}")


def test_explain_unknown_rule(cli: Cli) -> None:
    rc, out, err = cli("explain", "speed-limit")
    assert rc == EXIT_INPUT and "Traceback" not in out + err
    assert "unknown rule 'speed-limit'" in err


def test_explain_limits_in_both_unit_systems(cli: Cli) -> None:
    """velocity-limit's cold limit, 8 ft/s [S: NSPC 10.14.1] = 2.4384 m/s."""
    rc, us, _ = cli("explain", "velocity-limit", "--units", "us")
    rc2, si, _ = cli("explain", "velocity-limit", "--units", "si")
    assert rc == rc2 == EXIT_OK
    assert "cold: 8.00 ft/s" in us
    assert "cold: 2.44 m/s" in si


# ---- text output ----------------------------------------------------------------------------


def test_text_output_has_the_caution_and_positions(
    write_layout: Callable[..., Path], cli: Cli
) -> None:
    # The caution must say what it is for (guard against an emptied constant).
    assert "do not replace" in CAUTION and "licensed professional" in CAUTION
    path = write_layout(LAYOUTS["caution"][0])
    rc, out, err = cli("check", path)
    assert CAUTION in " ".join(out.split())
    # grouped: the file, then the element with its line, then the finding
    assert f"{path}\nP1  line 13\n  caution  velocity-limit  [1]\n" in out
    assert "1 file checked: 0 hazards, 0 violations, 1 caution, 0 advisories" in " ".join(
        out.split()
    )
    rc, lines, _ = cli("check", path, "--format", "lines")
    assert f"{path}:13:5: caution: velocity-limit: " in lines


def test_non_terminal_output_has_no_ansi(write_layout: Callable[..., Path], cli: Cli) -> None:
    rc, out, err = cli("check", write_layout(LAYOUTS["caution"][0]))
    assert out and not ANSI.search(out + err)


def test_no_color_on_a_terminal_has_no_ansi(
    write_layout: Callable[..., Path], cli: Cli, monkeypatch: pytest.MonkeyPatch
) -> None:
    """NO_COLOR set (https://no-color.org) on an ANSI-capable terminal: plain text. The
    terminal is simulated by making the captured stdout claim to be a tty; the first run,
    without NO_COLOR, shows the simulation works (escape codes appear)."""
    path = write_layout(LAYOUTS["caution"][0])
    monkeypatch.setenv("TERM", "xterm-256color")
    monkeypatch.setattr(sys.stdout, "isatty", lambda: True, raising=False)
    rc, coloured, _ = cli("check", path)
    assert ANSI.search(coloured), "the terminal simulation did not take effect"
    monkeypatch.setenv("NO_COLOR", "1")
    monkeypatch.setattr(sys.stdout, "isatty", lambda: True, raising=False)
    rc, plain, err = cli("check", path)
    assert not ANSI.search(plain + err), repr(plain[:300])


# ---- determinism ----------------------------------------------------------------------------


@pytest.mark.parametrize("fmt", ["text", "json"])
def test_same_input_same_bytes(cli: Cli, fmt: str) -> None:
    args = (
        "check",
        SAMPLES,
        CASES / "velocity-limit" / "fail.yaml",
        "--format",
        fmt,
        "--fail-on",
        "never",
    )
    first = cli(*args)
    second = cli(*args)
    assert first == second
    assert first[1]


def test_analyze_same_bytes(cli: Cli) -> None:
    args = ("analyze", SAMPLES / "two-bath-house.yaml", "--format", "json")
    assert cli(*args) == cli(*args)


# ---- waivers --------------------------------------------------------------------------------


def test_waived_findings_do_not_count(write_layout: Callable[..., Path], cli: Cli) -> None:
    """P1 runs over the velocity limit and carries a waiver: it is reported as waived, it is
    not counted in the summary, and it does not fail the check even at --fail-on advisory."""
    path = write_layout(tweak(LAYOUTS["caution"][0], append=WAIVER))
    rc, out, err = cli("check", path, "--fail-on", "advisory")
    assert rc == EXIT_OK, out
    assert "waived" in out
    rc, doc = _json(cli, "check", path, "--fail-on", "advisory")
    (finding,) = doc["files"][0]["findings"]
    assert finding["rule"] == "velocity-limit"
    assert finding["waived"] == {"reason": "accepted by the engineer"}
    assert [doc["summary"][s] for s in SEVERITIES] == [0, 0, 0, 0]


def test_no_waivers_reports_them(write_layout: Callable[..., Path], cli: Cli) -> None:
    path = write_layout(tweak(LAYOUTS["caution"][0], append=WAIVER))
    rc, out, err = cli("check", path, "--fail-on", "caution", "--no-waivers")
    assert rc == EXIT_FINDINGS
    rc, doc = _json(cli, "check", path, "--no-waivers")
    findings = doc["files"][0]["findings"]
    assert [(f["rule"], "waived" in f) for f in findings] == [("velocity-limit", False)]
    assert doc["summary"]["caution"] == 1
