"""Every public physics function documents its parameters and result with units and sources.

Covers each module that pkgutil finds in ``rulecheck.physics``, so new modules are
checked too. Docstrings follow the numpydoc section layout (house style): a title
line followed by a line of dashes; entries ``name : type`` with an indented description.
"""

from __future__ import annotations

import doctest
import importlib
import inspect
import pkgutil
import re
from types import ModuleType

import pytest

import rulecheck.physics

# A unit in brackets, e.g. [m/s], [-], [Pa s]; not a source tag such as [S: ...], [M], [CP], [D].
UNIT = re.compile(r"\[(?!(?:S|M|CP|D)(?:\]|:))[^\]\n]+\]")


def _modules() -> list[ModuleType]:
    names = pkgutil.iter_modules(rulecheck.physics.__path__, rulecheck.physics.__name__ + ".")
    return [
        importlib.import_module(info.name)
        for info in names
        if not info.name.rsplit(".")[-1].startswith("_")
    ]


def _public_functions() -> list[tuple[str, object]]:
    found = []
    for module in _modules():
        for name, obj in vars(module).items():
            if name.startswith("_") or inspect.isclass(obj):
                continue
            func = inspect.unwrap(obj) if callable(obj) else obj
            if inspect.isfunction(func) and func.__module__ == module.__name__:
                found.append((f"{module.__name__}.{name}", func))
    return found


def _sections(doc: str) -> dict[str, list[str]]:
    """Split a docstring into {section title: lines}; the text before the first is ''."""
    lines = doc.splitlines()
    sections: dict[str, list[str]] = {"": []}
    current = ""
    i = 0
    while i < len(lines):
        if i + 1 < len(lines) and lines[i].strip() and set(lines[i + 1].strip()) == {"-"}:
            current = lines[i].strip()
            sections[current] = []
            i += 2
            continue
        sections[current].append(lines[i])
        i += 1
    return sections


def _entries(lines: list[str]) -> dict[str, str]:
    """Numpydoc entries {name: header line + description}; an unindented line starts an
    entry, and ``a, b : type`` documents both names with the same text."""
    entries: dict[str, str] = {}
    names: list[str] = []
    for line in lines:
        if line and not line[0].isspace():
            names = [n.strip() for n in line.split(":")[0].split(",")]
            entries.update(dict.fromkeys(names, line))
        else:
            for name in names:
                entries[name] += "\n" + line
    return entries


FUNCTIONS = _public_functions()


def test_finds_the_physics_modules() -> None:
    names = {name.rsplit(".", 1)[0] for name, _ in FUNCTIONS}
    expected = {"water", "friction", "demand", "wavespeed", "surge"}
    assert {f"rulecheck.physics.{m}" for m in expected} <= names


@pytest.mark.parametrize("name, func", FUNCTIONS, ids=[name for name, _ in FUNCTIONS])
def test_docstring_sections(name: str, func) -> None:
    doc = inspect.getdoc(func)
    assert doc, f"{name} has no docstring"
    sections = _sections(doc)
    summary = sections[""][0] if sections[""] else ""
    assert summary.strip(), f"{name}: first line must be a one-line summary"

    params = [p for p in inspect.signature(func).parameters if p not in ("self", "cls")]
    if params:
        assert "Parameters" in sections, f"{name}: no Parameters section"
        documented = _entries(sections["Parameters"])
        assert list(documented) == params, f"{name}: documented {list(documented)} != {params}"
        for param, text in documented.items():
            assert UNIT.search(text), f"{name}: parameter {param!r} carries no [unit]"

    assert "Returns" in sections, f"{name}: no Returns section"
    assert UNIT.search("\n".join(sections["Returns"])), f"{name}: Returns carries no [unit]"
    assert "References" in sections, f"{name}: no References section"
    assert any(line.strip() for line in sections["References"]), f"{name}: empty References"


@pytest.mark.parametrize("module", _modules(), ids=lambda m: m.__name__)
def test_docstring_examples_run(module: ModuleType) -> None:
    """The worked examples in the docstrings are doctests and must hold."""
    result = doctest.testmod(module, verbose=False, optionflags=doctest.ELLIPSIS)
    assert result.failed == 0


def test_unit_pattern() -> None:
    """The unit pattern accepts units and rejects bare source tags."""
    assert UNIT.search("velocity [m/s]") and UNIT.search("ratio [-]") and UNIT.search("[Pa s]")
    assert not UNIT.search("value [S: IPC Table 604.3] [M] [CP] [D]")
