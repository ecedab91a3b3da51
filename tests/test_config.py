"""``rulecheck.toml``: discovery, precedence, rule settings, exclusions, and errors with lines.

The layout is ``conftest.MINIMAL`` with a 14 gpm demand in 3/4 in type L copper:
bore 0.785 in [S: ASTM B88], so v = 14 gpm / (π/4 · 0.785² in²) = 9.28 ft/s =
2.83 m/s, over the 8 ft/s default cold limit [S: NSPC 10.14.1] (caution). Limit
overrides are checked against pint's own conversion of what the file says (1 ft
= 0.3048 m exactly [S: NIST SP 811]). Expected error positions are found in the
TOML text with ``conftest.locate``, never read back from rulecheck.
"""

from __future__ import annotations

import json
from collections.abc import Callable
from pathlib import Path

import pint
import pytest
from conftest import MINIMAL, locate, tweak

from rulecheck.engine.config import (
    Config,
    declares_profile,
    key_positions,
    load_config,
    position_of,
)
from rulecheck.errors import EXIT_FINDINGS, EXIT_INPUT, EXIT_OK, Position

Cli = Callable[..., tuple[int, str, str]]
UREG = pint.UnitRegistry()
FAST = tweak(MINIMAL, ("service: cold}", "service: cold, demand: 14 gpm}"))
NO_PROFILE = tweak(FAST, ("  profile: ipc\n", ""))


@pytest.fixture
def project(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    """``tmp_path/repo`` with ``layouts/house.yaml``; the working folder is ``repo/layouts``."""
    layouts = tmp_path / "repo" / "layouts"
    layouts.mkdir(parents=True)
    (layouts / "house.yaml").write_text(FAST, encoding="utf-8")
    monkeypatch.chdir(layouts)
    return tmp_path / "repo"


def _findings(cli: Cli, *argv: str) -> tuple[int, list[dict], list[dict]]:
    rc, out, err = cli("check", "--format", "json", *argv)
    assert out, err
    files = json.loads(out)["files"]
    return rc, files, [f for file in files for f in file.get("findings", [])]


def test_without_a_file_the_defaults_apply(cli: Cli, project: Path) -> None:
    rc, _, findings = _findings(cli, "house.yaml")
    assert rc == EXIT_OK  # a caution does not reach the default fail-on (violation)
    assert [(f["rule"], f["severity"]) for f in findings] == [("velocity-limit", "caution")]


def test_file_above_the_working_folder_is_found(cli: Cli, project: Path) -> None:
    (project / "rulecheck.toml").write_text(
        '[rules.velocity-limit]\nseverity = "violation"\n', encoding="utf-8"
    )
    rc, _, findings = _findings(cli, "house.yaml")
    assert rc == EXIT_FINDINGS
    assert [(f["rule"], f["severity"]) for f in findings] == [("velocity-limit", "violation")]


def test_rule_can_be_disabled(cli: Cli, project: Path) -> None:
    (project / "rulecheck.toml").write_text(
        "[rules.velocity-limit]\nenabled = false\n", encoding="utf-8"
    )
    assert _findings(cli, "house.yaml")[2] == []


@pytest.mark.parametrize(
    ("value", "fires"), [("7 ft/s", True), ("2 m/s", True), ("10 ft/s", False), ("3 m/s", False)]
)
def test_limit_override_with_units(cli: Cli, project: Path, value: str, fires: bool) -> None:
    (project / "rulecheck.toml").write_text(
        f'[rules.velocity-limit]\nlimits = {{ cold = "{value}" }}\n', encoding="utf-8"
    )
    _, _, findings = _findings(cli, "house.yaml")
    assert bool(findings) == fires
    if fires:
        expected = UREG.Quantity(value).to("m/s").magnitude
        assert findings[0]["limit"] == pytest.approx(expected, rel=1e-5)  # 6 significant figures


def test_fail_on_from_the_file_and_the_command_line_wins(cli: Cli, project: Path) -> None:
    (project / "rulecheck.toml").write_text('fail-on = "caution"\n', encoding="utf-8")
    assert _findings(cli, "house.yaml")[0] == EXIT_FINDINGS
    assert _findings(cli, "--fail-on", "violation", "house.yaml")[0] == EXIT_OK


def test_profile_is_a_default_for_layouts_without_one(cli: Cli, project: Path) -> None:
    (project / "rulecheck.toml").write_text('profile = "upc"\n', encoding="utf-8")
    (project / "layouts" / "bare.yaml").write_text(NO_PROFILE, encoding="utf-8")
    _, files, _ = _findings(cli, "bare.yaml", "house.yaml")
    assert {f["path"]: f["profile"] for f in files} == {"bare.yaml": "upc", "house.yaml": "ipc"}
    _, files, _ = _findings(cli, "--profile", "ipc", "bare.yaml")
    assert files[0]["profile"] == "ipc"


def test_explicit_config_wins_over_the_discovered_one(cli: Cli, project: Path) -> None:
    (project / "rulecheck.toml").write_text(
        "[rules.velocity-limit]\nenabled = false\n", encoding="utf-8"
    )
    other = project / "strict.toml"
    other.write_text('[rules.velocity-limit]\nseverity = "hazard"\n', encoding="utf-8")
    rc, _, findings = _findings(cli, "--config", str(other), "house.yaml")
    assert rc == EXIT_FINDINGS and [f["severity"] for f in findings] == ["hazard"]


def test_missing_explicit_config_is_an_input_error(cli: Cli, project: Path) -> None:
    rc, out, err = cli("check", "--config", "nowhere.toml", "house.yaml")
    assert rc == EXIT_INPUT and out == ""
    assert "nowhere.toml:1:1: error: no such configuration file" in err


def test_exclude_skips_matching_files_when_expanding_folders(
    cli: Cli, project: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    layouts = project / "layouts"
    for name in ("drafts/a.yaml", "drafts/deep/b.yaml", "c.old.yaml", "wing/d.yaml"):
        (layouts / name).parent.mkdir(parents=True, exist_ok=True)
        (layouts / name).write_text(FAST, encoding="utf-8")
    (project / "rulecheck.toml").write_text(
        'exclude = ["layouts/drafts/**", "*.old.yaml"]\n', encoding="utf-8"
    )
    monkeypatch.chdir(project)
    _, files, _ = _findings(cli, "layouts")
    assert [f["path"] for f in files] == ["layouts/house.yaml", "layouts/wing/d.yaml"]
    _, files, _ = _findings(cli, "layouts/c.old.yaml")  # a file named explicitly is checked
    assert [f["path"] for f in files] == ["layouts/c.old.yaml"]


def test_exclude_patterns() -> None:
    config = Config(path=Path("/p/rulecheck.toml"), exclude=("drafts", "**/old/*.yaml", "a/*"))
    assert config.excluded(Path("/p/x/drafts/y.yaml"))  # no slash: any depth
    assert config.excluded(Path("/p/q/old/z.yaml"))
    assert config.excluded(Path("/p/a/b/c.yaml"))  # '*' crosses '/'
    assert not config.excluded(Path("/p/b/a/c.yaml"))  # anchored at the file's folder
    assert not config.excluded(Path("/p/drafts.yaml"))


# (case id, TOML text, needle whose position is reported, message fragment)
ERRORS = [
    ("unknown key", 'fail_on = "caution"\n', "fail_on", "unknown key 'fail_on'"),
    ("bad fail-on", 'fail-on = "sometimes"\n', "fail-on", "'fail-on' should be one of"),
    ("bad profile", 'profile = "nspc"\n', "profile", "'profile' should be one of"),
    ("bad exclude", "exclude = 3\n", "exclude", "'exclude' should be a list"),
    (
        "unknown rule",
        "[rules.velocty-limit]\nenabled = false\n",
        "[rules.velocty-limit]",
        "did you mean 'velocity-limit'",
    ),
    (
        "unknown rule key",
        'profile = "ipc"\n\n[rules.static-pressure]\nlevel = "caution"\n',
        "level",
        "unknown key 'level' in [rules.static-pressure]",
    ),
    (
        "bad severity",
        '[rules.static-pressure]\nseverity = "minor"\n',
        "severity",
        "'severity' should be one of",
    ),
    (
        "enabled not a boolean",
        '[rules.static-pressure]\nenabled = "no"\n',
        "enabled",
        "'enabled' should be true or false",
    ),
    (
        "unknown limit",
        '[rules.velocity-limit]\nlimits = { cold = "7 ft/s", cool = "7 ft/s" }\n',
        "cool",
        "unknown limit 'cool'",
    ),
    (
        "limit of the wrong kind",
        '[rules.static-pressure]\nlimits = { max_static = "80 ft/s" }\n',
        "max_static",
        "is not a unit of pressure",
    ),
    (
        "limit without a unit",
        "[rules.static-pressure]\nlimits = { max_static = 80 }\n",
        "max_static",
        "needs a pressure with its unit",
    ),
    (
        "limit with an unknown unit",
        '[rules]\nvelocity-limit.limits.cold = "7 zorks/s"\n',
        "velocity-limit.limits.cold",
        "unknown unit",
    ),
    (
        "limits not a table",
        '[rules.velocity-limit]\nlimits = "7 ft/s"\n',
        "limits",
        "'limits' should be a table",
    ),
    ("TOML syntax", 'profile = "ipc"\nfail-on = caution\n', "caution", "TOML syntax"),
]


@pytest.mark.parametrize(
    ("text", "needle", "fragment"), [c[1:] for c in ERRORS], ids=[c[0] for c in ERRORS]
)
def test_errors_name_the_key_and_its_line(
    cli: Cli, project: Path, text: str, needle: str, fragment: str
) -> None:
    (project / "rulecheck.toml").write_text(text, encoding="utf-8")
    rc, out, err = cli("check", "house.yaml")
    assert rc == EXIT_INPUT and out == ""
    line, column = locate(text, needle)
    assert f"../rulecheck.toml:{line}:{column}: error: " in err, err
    assert fragment in err


def test_every_problem_in_the_file_is_reported_at_once(project: Path) -> None:
    text = 'fail_on = "x"\n[rules.nope]\n[rules.static-pressure]\nseverity = "minor"\n'
    (project / "rulecheck.toml").write_text(text, encoding="utf-8")
    with pytest.raises(Exception) as caught:
        load_config()
    lines = [p.position.line for p in caught.value.problems]
    assert lines == [1, 2, 4]


def test_key_positions_scanner() -> None:
    text = (
        'a = 1  # comment = no\n[rules."velocity-limit"]\nlimits = { cold = "8 ft/s", '
        'hot_return = "3 ft/s" }\n[rules]\nx.y = { z = [1, 2], w = "a,b = c" }\n'
    )
    found = key_positions(text)
    assert found[("a",)] == Position(*locate(text, "a ="))
    assert found[("rules", "velocity-limit")] == Position(*locate(text, "[rules."))
    assert found[("rules", "velocity-limit", "limits", "hot_return")] == Position(
        *locate(text, "hot_return")
    )
    assert found[("rules", "x", "y", "w")] == Position(*locate(text, "w ="))
    assert ("rules", "x", "y", "b") not in found  # inside a string
    assert ("comment",) not in found
    assert (
        position_of(found, ("rules", "velocity-limit", "nothing"))
        == found[("rules", "velocity-limit")]
    )


@pytest.mark.parametrize(
    ("text", "declared"),
    [
        ("version: 1\nproject: {name: x, profile: upc}\n", True),
        ("version: 1\nproject:\n  name: x\n  profile: ipc\npipes: []\n", True),
        ("version: 1\nproject:\n  name: x\n  units: us\nprofile: ipc\n", False),
        ("project:\n  notes: {profile: upc}\n  name: x\n", False),
        ("version: 1\nproject: [\n", False),
    ],
)
def test_declares_profile(tmp_path: Path, text: str, declared: bool) -> None:
    path = tmp_path / "layout.yaml"
    path.write_text(text, encoding="utf-8")
    assert declares_profile(path) is declared
