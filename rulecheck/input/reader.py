"""Read typed values out of a parsed document, collecting problems with positions."""

from __future__ import annotations

from typing import Any

from rulecheck.errors import ProblemCollector
from rulecheck.input.loader import Document, JsonPath
from rulecheck.input.plausible import ambiguous_bare_time
from rulecheck.input.plausible import problem as implausible
from rulecheck.units import BARE_UNIT, QuantityError, to_si


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
        bound: str | None = None,
    ) -> float | None:
        """The SI value of ``node[key]`` (``default`` when absent), or ``None`` after a problem.

        ``bound`` names a row of :data:`rulecheck.plausible.BOUNDS` the value must lie in.
        """
        if key not in node:
            return default
        value = node[key]
        if bound == "closure-time" and ambiguous_bare_time(value):
            self.problems.add(
                self.doc.where((*path, key)),
                f"'{key}: {value}' has no unit, and a valve closes in milliseconds or "
                f"seconds: {value} ms and {value} s are both possible",
                f"write the unit, e.g. '{key}: {value} ms' for a solenoid or quick valve, "
                f"or '{key}: {value} s'",
            )
            return None
        try:
            si = to_si(value, kind, self.system, positive=positive, nonnegative=nonnegative)
        except QuantityError as exc:
            self.problems.add(self.doc.where((*path, key)), f"'{key}': {exc}", exc.hint)
            return None
        if bound is not None:
            shown = value if isinstance(value, str) else f"{value} {BARE_UNIT[self.system][kind]}"
            why = implausible(bound, si, shown)
            if why is not None:
                self.problems.add(self.doc.where((*path, key)), f"'{key}': {why[0]}", why[1])
                return None
        return si
