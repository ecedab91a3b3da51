"""Read typed values out of a parsed document, collecting problems with positions."""

from __future__ import annotations

from typing import Any

from rulecheck.errors import ProblemCollector
from rulecheck.loader import Document, JsonPath
from rulecheck.units import QuantityError, to_si


class Reader:
    """Pull quantities from ``doc`` by JSON path, in the unit ``system`` for bare numbers.

    Problems are added to ``problems`` at the node's position; the call then
    returns ``None`` so that reading can go on and every problem is reported.
    """

    def __init__(self, doc: Document, system: str, problems: ProblemCollector) -> None:
        self.doc = doc
        self.system = system
        self.problems = problems

    def quantity(
        self,
        node: dict[str, Any],
        path: JsonPath,
        key: str,
        kind: str,
        default: float | None = None,
        *,
        positive: bool = False,
        nonnegative: bool = False,
    ) -> float | None:
        if key not in node:
            return default
        try:
            return to_si(node[key], kind, self.system, positive=positive, nonnegative=nonnegative)
        except QuantityError as exc:
            self.problems.add(self.doc.where((*path, key)), f"'{key}': {exc}", exc.hint)
            return None
