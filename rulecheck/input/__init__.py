"""The input stage: a layout file in, a typed model in SI units out.

``load_layout(path)`` reads the YAML with node positions (``loader``), validates it
against the JSON Schema (``schema``), and builds the typed records (``build`` over
``model``, ``catalog``, ``profiles`` and ``plausible``); ``network`` turns the model into
service trees. Every problem with the file is an ``InputError`` at file:line:column.
"""

from __future__ import annotations

from pathlib import Path

from rulecheck.errors import ProblemCollector
from rulecheck.input.build import build_layout
from rulecheck.input.catalog import Catalog, project_catalog
from rulecheck.input.loader import load_file
from rulecheck.input.model import Layout
from rulecheck.input.rulebook import rule_specs
from rulecheck.input.schema import validate


def load_layout(path: str | Path, profile: str | None = None) -> Layout:
    """Parse, validate and build one layout; raises InputError with every problem found."""
    doc = load_file(path)
    problems = ProblemCollector(doc.path)
    validate(doc, problems)
    problems.raise_if_any()
    return build_layout(doc, set(rule_specs()), profile)


def load_catalog(path: str | Path) -> tuple[Catalog, str]:
    """The catalog a layout may use: built-in entries plus the layout's own ``materials`` and
    ``fixture_types``, and the layout's unit system; raises InputError like load_layout."""
    doc = load_file(path)
    problems = ProblemCollector(doc.path)
    validate(doc, problems)
    problems.raise_if_any()
    system = str(doc.data["project"].get("units", "si"))
    catalog = project_catalog(doc, system, problems)
    problems.raise_if_any()
    return catalog, system
