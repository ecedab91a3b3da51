"""The stages import one way only: a test on the package's import graph.

Every ``import rulecheck...`` / ``from rulecheck... import`` in the package (module level
or inside a function) is read with :mod:`ast`, and each module is placed in its layer.
An import may point to its own layer or below, never up; and three contracts of the
architecture (DEVELOPERS.md) are checked by name: physics imports nothing above the
base, rules do not import reporters or the command line, reporters do not import the
rule engine, the pipeline or the command line.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parent.parent / "rulecheck"

#: layers, lowest first; a module belongs to the first prefix it starts with
LAYERS: list[tuple[str, tuple[str, ...]]] = [
    (
        "base",
        (
            "rulecheck.errors",
            "rulecheck.findings",
            "rulecheck.files",
            "rulecheck.units",
            "rulecheck.unit_table",
            "rulecheck.suggest",
            "rulecheck.textscan",
            "rulecheck.resources",
            "rulecheck.native",
            "rulecheck.cache",
            "rulecheck.record_methods",
        ),
    ),
    ("physics", ("rulecheck.physics",)),
    ("input", ("rulecheck.input", "rulecheck.layout_edit")),
    ("analysis", ("rulecheck.analysis",)),
    ("engine", ("rulecheck.engine", "rulecheck.checks")),
    ("report", ("rulecheck.report",)),
    ("pipeline", ("rulecheck.pipeline", "rulecheck.folder", "rulecheck.sizing_run")),
    ("cli", ("rulecheck.cli", "rulecheck.__main__")),
]
RANK = {name: i for i, (name, _) in enumerate(LAYERS)}


def layer_of(module: str) -> str | None:
    for name, prefixes in LAYERS:
        if any(module == p or module.startswith(p + ".") for p in prefixes):
            return name
    return None  # the package root (rulecheck/__init__.py: the version only)


def module_name(path: Path) -> str:
    parts = list(path.relative_to(PACKAGE.parent).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def imports_of(path: Path) -> list[tuple[int, str]]:
    """(line, module) of every rulecheck import in the file, functions included."""
    found = []
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import):
            found += [(node.lineno, a.name) for a in node.names if a.name.startswith("rulecheck")]
        elif isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            if node.module == "rulecheck":  # from rulecheck import x: x is the module
                found += [(node.lineno, f"rulecheck.{a.name}") for a in node.names]
            elif node.module.startswith("rulecheck."):
                found.append((node.lineno, node.module))
    return [(line, m) for line, m in found if m != "rulecheck.__version__"]


EDGES = [
    (module_name(path), line, target)
    for path in sorted(PACKAGE.rglob("*.py"))
    for line, target in imports_of(path)
]


def test_every_module_has_a_layer() -> None:
    modules = {module_name(p) for p in PACKAGE.rglob("*.py")} - {"rulecheck"}
    assert modules, "no modules found"
    assert {m for m in modules if layer_of(m) is None} == set()


def test_the_graph_is_read() -> None:
    """The reader sees imports at all: the pipeline imports the analysis and the engine."""
    targets = {t for source, _, t in EDGES if source == "rulecheck.pipeline"}
    assert {"rulecheck.analysis", "rulecheck.engine.run", "rulecheck.input"} <= targets


def test_no_import_points_up() -> None:
    upward = [
        f"{source}:{line} imports {target} ({layer_of(source)} -> {layer_of(target)})"
        for source, line, target in EDGES
        if layer_of(source) and layer_of(target) and RANK[layer_of(target)] > RANK[layer_of(source)]
    ]
    assert upward == []


@pytest.mark.parametrize(
    "importer, forbidden",
    [
        ("physics", ("input", "analysis", "engine", "report", "pipeline", "cli")),
        ("engine", ("report", "pipeline", "cli")),  # rules and the engine
        ("report", ("engine", "pipeline", "cli")),
    ],
)
def test_contract(importer: str, forbidden: tuple[str, ...]) -> None:
    broken = [
        f"{source}:{line} imports {target}"
        for source, line, target in EDGES
        if layer_of(source) == importer and layer_of(target) in forbidden
    ]
    assert broken == []


def test_the_layering_check_can_fail() -> None:
    """A physics module importing the command line is caught (the checker is not empty)."""
    source, target = "rulecheck.physics.surge", "rulecheck.cli"
    assert RANK[layer_of(target)] > RANK[layer_of(source)]  # type: ignore[index]


#: "Modules stay under about 500 lines. If one grows past that, it is two ideas." (the
#: house style); a little slack for a docstring or a table row
MAX_MODULE_LINES = 520


def test_modules_stay_small() -> None:
    long = {
        module_name(p): n
        for p in PACKAGE.rglob("*.py")
        if (n := len(p.read_text(encoding="utf-8").splitlines())) > MAX_MODULE_LINES
    }
    assert long == {}
