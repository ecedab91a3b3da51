"""Generated rule docs, ``rulecheck explain`` / ``rules``, and the CI integration files.

``docs/rules.md`` must be exactly what ``scripts/make_rules_doc.py`` writes from
the current rule data (fails when stale). The limits that ``explain`` and the
docs print are compared with pint's conversion of the raw value in the rule
data (1 ft = 0.3048 m and 1 psi = 6894.757 Pa [S: NIST SP 811]), to the three
significant figures shown.
"""

from __future__ import annotations

import importlib.util
import re
from collections.abc import Callable
from pathlib import Path
from types import ModuleType

import pint
import pytest
import yaml

from rulecheck.checks import REGISTRY
from rulecheck.cli.explain import fill_snippet
from rulecheck.errors import EXIT_INPUT, EXIT_OK
from rulecheck.input.profiles import profile_ids
from rulecheck.input.rulebook import rule_specs
from rulecheck.report.explain import (
    explain_text,
    rules_table,
)
from rulecheck.units import quantity_kind

REPO = Path(__file__).resolve().parent.parent
UREG = pint.UnitRegistry()
UREG.define("gpm = gallon / minute")
SHOWN = {
    "us": {
        "velocity": "ft/s",
        "pressure": "psi",
        "temperature": "degF",
        "length": "ft",
        "time": "s",
        "flow": "gpm",
        "volume": "gal",
    },
    "si": {
        "velocity": "m/s",
        "pressure": "kPa",
        "temperature": "degC",
        "length": "m",
        "time": "s",
        "flow": "L/s",
        "volume": "L",
    },
}
Cli = Callable[..., tuple[int, str, str]]


def _generator() -> ModuleType:
    spec = importlib.util.spec_from_file_location(
        "make_rules_doc", REPO / "scripts" / "make_rules_doc.py"
    )
    assert spec and spec.loader
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def test_rules_doc_is_up_to_date() -> None:
    expected = _generator().render()
    current = (REPO / "docs" / "rules.md").read_text(encoding="utf-8")
    assert current == expected, "docs/rules.md is stale: run python scripts/make_rules_doc.py"


def test_generator_check_mode_detects_a_stale_file(tmp_path: Path) -> None:
    generator = _generator()
    target = tmp_path / "rules.md"
    assert generator.main([str(target), "--check"]) == 1  # missing
    assert generator.main([str(target)]) == 0
    assert generator.main([str(target), "--check"]) == 0
    target.write_text(target.read_text(encoding="utf-8") + "edited\n", encoding="utf-8")
    assert generator.main([str(target), "--check"]) == 1


def test_rules_doc_has_one_section_per_rule() -> None:
    text = _generator().render()
    sections = re.findall(r"^## (\S+)$", text, flags=re.M)
    assert sections == ["Profiles", *rule_specs()]
    assert set(rule_specs()) == set(REGISTRY)  # every rule in the data is implemented
    for spec in rule_specs().values():
        body = text.split(f"## {spec.id}\n", 1)[1].split("\n## ", 1)[0]
        for part in (spec.title, spec.source, spec.rationale, spec.fix, spec.formula):
            assert part in body
        for snippet in spec.examples.values():  # catalog references filled, US (SI)
            assert fill_snippet(snippet, "both").rstrip() in body
            assert "{fixture:" not in body and "{arrester:" not in body


def _shown_values(text: str, name: str) -> str:
    match = re.search(rf"^  {re.escape(name)}: (.+)$", text, flags=re.M)
    assert match, f"limit {name} is not shown"
    return match.group(1)


@pytest.mark.parametrize("units", ["us", "si"])
@pytest.mark.parametrize("profile", profile_ids())
def test_explain_shows_every_limit_converted(profile: str, units: str) -> None:
    for spec in rule_specs().values():
        text = explain_text(spec, profile, units)
        for heading in ("Why:", "Source:", "Fix:", f"[rules.{spec.id}]"):
            assert heading in text
        for name, raw in spec.raw_limits(profile).items():
            shown = _shown_values(text, name)
            kind = quantity_kind(raw)
            if kind is None:
                assert shown == str(raw)
                continue
            number = float(shown.split()[0])
            value, unit = raw.split(maxsplit=1)
            expected = UREG.Quantity(float(value), unit).to(SHOWN[units][kind]).magnitude
            assert number == pytest.approx(expected, rel=5e-3, abs=0.05), (spec.id, name)


@pytest.mark.parametrize("profile", profile_ids())
def test_explain_shows_the_profile_parameters_a_rule_uses(profile: str) -> None:
    """Each parameter a rule declares under `uses:` is shown with the value and the source
    rules/profiles.yaml gives it (read here with PyYAML, not through rulecheck)."""
    data = yaml.safe_load((REPO / "rules" / "profiles.yaml").read_text())
    raw = data["profiles"][profile]
    assert any(spec.uses for spec in rule_specs().values())
    for spec in rule_specs().values():
        text = explain_text(spec, profile, "us")
        for name in spec.uses:
            kind = data["parameters"][name]["kind"]
            shown = _shown_values(text, data["parameters"][name]["label"])
            if kind in ("pressure", "length"):
                expected = UREG.Quantity(raw[name]["value"]).to(SHOWN["us"][kind])
                assert float(shown.split()[0]) == pytest.approx(expected.magnitude, rel=5e-3)
            else:
                assert shown.startswith(str(raw[name]["value"]))
            assert f"[{raw[name]['source']}]" in text


def test_explain_and_rules_from_the_command_line(cli: Cli) -> None:
    rc, out, _ = cli("rules")
    assert rc == EXIT_OK and out == rules_table()
    for rule_id in rule_specs():
        assert re.search(rf"^{re.escape(rule_id)}\s", out, flags=re.M)
    rc, out, _ = cli("explain", "static-pressure", "--units", "si")
    assert rc == EXIT_OK and "max_static: 552 kPa" in out  # 80 psi = 551.6 kPa [S: NIST SP 811]
    rc, _, err = cli("explain", "velocity")
    assert rc == EXIT_INPUT and "unknown rule 'velocity'" in err


def test_pre_commit_hook_definition() -> None:
    hooks = yaml.safe_load((REPO / ".pre-commit-hooks.yaml").read_text(encoding="utf-8"))
    (hook,) = hooks
    assert hook["id"] == "rulecheck-layouts"
    assert hook["entry"] == "rulecheck check" and hook["language"] == "python"
    pattern = re.compile(hook["files"])
    assert all(pattern.search(p) for p in ("a.yaml", "layouts/b.yml"))
    assert not any(pattern.search(p) for p in ("c.json", "d.yaml.bak", "notes.yamlx"))


def test_ci_doc_names_the_commands_it_documents() -> None:
    text = (REPO / "docs" / "ci.md").read_text(encoding="utf-8")
    for needle in (
        "rulecheck check --format sarif --output rulecheck.sarif layouts/",
        "github/codeql-action/upload-sarif",
        "id: rulecheck-layouts",
        "# yaml-language-server: $schema=<path printed by rulecheck schema>",
        "--write-baseline",
        "--baseline",
        "rulecheck.toml",
    ):
        assert needle in text


# --- docs/layout-format.md (issue 13) --------------------------------------------------------


def _layout_generator() -> ModuleType:
    spec = importlib.util.spec_from_file_location(
        "make_layout_doc", REPO / "scripts" / "make_layout_doc.py"
    )
    assert spec and spec.loader
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def test_layout_doc_is_up_to_date() -> None:
    expected = _layout_generator().render()
    current = (REPO / "docs" / "layout-format.md").read_text(encoding="utf-8")
    assert current == expected, (
        "docs/layout-format.md is stale: run python scripts/make_layout_doc.py"
    )


def test_layout_doc_check_mode_detects_a_stale_file(tmp_path: Path) -> None:
    generator = _layout_generator()
    target = tmp_path / "layout-format.md"
    assert generator.main([str(target), "--check"]) == 1
    assert generator.main([str(target)]) == 0
    assert generator.main([str(target), "--check"]) == 0
    target.write_text(target.read_text(encoding="utf-8") + "edited\n", encoding="utf-8")
    assert generator.main([str(target), "--check"]) == 1


def _schema_keys(node: dict, path: str, out: list[tuple[str, dict]]) -> None:
    for key, child in node.get("properties", {}).items():
        here = f"{path}.{key}" if path else key
        out.append((here, child))
        _schema_keys(child, here, out)
        if child.get("type") == "array":
            _schema_keys(child.get("items", {}), f"{here}[]", out)
        if isinstance(child.get("additionalProperties"), dict):
            _schema_keys(child["additionalProperties"], f"{here}.LABEL", out)


def test_every_schema_key_is_described_and_documented() -> None:
    import json

    schema = json.loads((REPO / "schemas" / "layout.schema.json").read_text(encoding="utf-8"))
    assert "docs/layout-format.md" in schema["description"]
    keys: list[tuple[str, dict]] = []
    _schema_keys(schema, "", keys)
    doc = (REPO / "docs" / "layout-format.md").read_text(encoding="utf-8")
    assert len(keys) > 80
    for path, node in keys:
        assert node.get("description", "").strip(), f"{path} has no description in the schema"
        assert f"| `{path}` |" in doc, f"{path} is missing from docs/layout-format.md"


def test_layout_doc_lists_the_catalog_and_profiles() -> None:
    from rulecheck.input.catalog import builtin_catalog

    doc = (REPO / "docs" / "layout-format.md").read_text(encoding="utf-8")
    for mid in builtin_catalog().materials:
        assert f"| `{mid}` |" in doc
    for tid in builtin_catalog().fixture_types:
        assert f"| `{tid}` |" in doc
    for pid in profile_ids():
        assert f"### `{pid}`:" in doc


def test_layout_doc_example_checks(tmp_path: Path) -> None:
    from rulecheck.pipeline import check_file

    path = tmp_path / "example.yaml"
    path.write_text(_layout_generator().EXAMPLE, encoding="utf-8")
    result = check_file(path)
    assert result.profile == "en806"
    assert result.analysis.layout.pipes[1].size == "25x3.5"
