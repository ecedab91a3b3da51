"""``rulecheck size FILE``: the least-material pipe sizes and the arresters that make a layout pass.

Prints the changes (pipe, old → new size, what binds it), the arresters added and the
check summary of the sized layout; ``--output SIZED.yaml`` writes the sized layout (the
original text with only those values changed, never over the input), ``--diff`` prints a
unified diff against the input, ``--format json`` gives it all for tools. Method and
sources: docs/sizing.md.
"""

from __future__ import annotations

import argparse
import difflib
import io
import json
import sys
from pathlib import Path
from typing import TYPE_CHECKING, Any

from rulecheck.cli.common import UsageError
from rulecheck.cli.outputs import OutputRefused, guard_outputs
from rulecheck.errors import EXIT_FINDINGS, EXIT_OK
from rulecheck.files import atomic_output
from rulecheck.findings import SEVERITY_RANK
from rulecheck.input.profiles import profile_ids
from rulecheck.units import fmt

if TYPE_CHECKING:  # rich is imported only when text is written
    from rich.console import Console

#: rules the sizing answers for; a finding of these in the sized layout is a bug
HELD = ("velocity-limit", "residual-pressure", "arrester-required")


def add_parser(sub: argparse._SubParsersAction) -> None:
    size = sub.add_parser(
        "size", help="size the pipes (least material) and add the arresters a layout needs"
    )
    size.add_argument("path", metavar="FILE", help="layout file")
    size.add_argument(
        "--output", metavar="SIZED.yaml", help="write the sized layout to this new file"
    )
    size.add_argument("--diff", action="store_true", help="print a unified diff against FILE")
    size.add_argument("--format", choices=("text", "json"), default="text")
    size.add_argument("--config", metavar="FILE", help="configuration file (rulecheck.toml)")
    size.add_argument("--profile", choices=profile_ids(), help="override the layout's profile")


def run(args: argparse.Namespace, console: Console) -> int:
    from rulecheck.engine.config import load_config
    from rulecheck.engine.context import Settings
    from rulecheck.layout_edit import edit_layout
    from rulecheck.sizing_run import size_file

    config = load_config(args.config)
    if args.output is not None:
        protected: list[tuple[str, str | Path]] = [("layout", args.path)]
        if config.path is not None:
            protected.append(("configuration", config.path))
        try:
            guard_outputs([("--output", args.output)], protected)
        except OutputRefused as exc:
            raise UsageError(
                f"rulecheck size: {exc}".replace(
                    "write the report to a .txt, .json or .sarif file", "give a new file name"
                )
            ) from None
    settings = config.apply(Settings())
    result = size_file(args.path, settings, args.profile or config.profile_for(Path(args.path)))
    text = edited = ""
    if result.sizing.feasible:
        with open(args.path, encoding="utf-8-sig", newline="") as handle:
            text = handle.read()
        edited = edit_layout(
            text,
            result.sizing.sizes,
            [{"id": p.id, "at": p.at, "rating": p.rating} for p in result.proposals],
        )
        if args.output is not None:
            with atomic_output(args.output) as handle:
                handle.write(edited)
    out = sys.stdout
    diff = ""
    if args.diff and result.sizing.feasible:
        diff = "".join(
            difflib.unified_diff(
                text.splitlines(keepends=True),
                edited.splitlines(keepends=True),
                fromfile=args.path,
                tofile=args.output or f"{args.path} (sized)",
            )
        )
    if args.format == "json":
        data = _as_json(result)
        if args.diff:
            data["diff"] = diff
        json.dump(data, out, indent=2, ensure_ascii=False)
        out.write("\n")
    else:
        _text(result, out, console)
        out.write(diff)
    if not result.sizing.feasible:
        return EXIT_FINDINGS
    failing = any(
        SEVERITY_RANK[f.severity] <= SEVERITY_RANK["violation"] and f.waived is None
        for f in result.findings
    )
    return EXIT_FINDINGS if failing else EXIT_OK


def _shortfall_lines(result: Any) -> list[str]:
    units = result.layout.units
    lines = []
    for s in result.sizing.shortfalls:
        short = s.need - s.best
        helps = [f"a booster adding at least {fmt(short, 'pressure', units)} at {s.supply}"]
        if s.lift > 0:
            helps.append(
                f"a lower fixture (the path lifts {fmt(s.lift, 'pressure', units)} "
                f"above {s.supply})"
            )
        if s.device_loss > 0:
            helps.append(
                f"lower-loss devices (meters, backflow preventers, heater take "
                f"{fmt(s.device_loss, 'pressure', units)} on the path)"
            )
        helps.append("a larger water service or another material with larger sizes")
        lines.append(
            f"fixture {s.fixture} at {s.point} needs {fmt(s.need, 'pressure', units)} and gets "
            f"{fmt(s.best, 'pressure', units)} even with every pipe on its path at its largest "
            f"size: {fmt(short, 'pressure', units)} short. What would help: " + "; ".join(helps)
        )
    for t in result.sizing.too_fast:
        lines.append(
            f"pipe {t.pipe} carries {fmt(t.flow, 'flow', units)}: even at its material's largest "
            f"size {t.largest} it runs at {fmt(t.velocity, 'velocity', units)}, over the "
            f"{fmt(t.limit, 'velocity', units)} limit. What would help: split the flow over two "
            "pipes, or a material with larger sizes"
        )
    lines.extend(result.sizing.notes)
    return lines


def _text(result: Any, out: Any, console: Console) -> None:
    from rulecheck.report.formats import FORMATS, CheckReport

    sizing = result.sizing
    units = result.layout.units
    if not sizing.feasible:
        out.write(f"{result.path}: cannot be sized; nothing written.\n")
        for line in _shortfall_lines(result):
            out.write(f"  {line}\n")
        return
    out.write(
        f"{result.path}: {len(sizing.changes)} pipe sizes changed, "
        f"{len(result.proposals)} arresters added\n"
    )
    if sizing.changes:
        width = max(len(c.pipe) for c in sizing.changes)
        for c in sizing.changes:
            out.write(f"  {c.pipe:<{width}}  {c.old:>6} -> {c.new:<6}  {c.reason}\n")
    before, after = sizing.material_before, sizing.material_after
    area = "m^2" if units == "si" else "ft·in"
    scale = 1.0 if units == "si" else 1.0 / (0.3048 * 0.0254)
    out.write(
        f"  material (Σ length × outside diameter): {before * scale:.4g} -> "
        f"{after * scale:.4g} {area}\n"
    )
    for p in result.proposals:
        out.write(
            f"  + arrester {p.id}: sealed class {p.rating} at {p.at} ({p.side}), serves "
            f"{p.serves:.1f} WSFU\n"
        )
    out.write("\nCheck of the sized layout:\n")
    report = CheckReport([(result.path, result.layout.profile, list(result.findings))], [], None, 0)
    buffer = io.StringIO()
    FORMATS["text"].write(report, buffer, False)
    out.write(buffer.getvalue())


def _as_json(result: Any) -> dict[str, Any]:
    sizing = result.sizing
    return {
        "version": 1,
        "path": result.path,
        "feasible": sizing.feasible,
        "changes": [
            {"pipe": c.pipe, "old": c.old, "new": c.new, "reason": c.reason} for c in sizing.changes
        ],
        "reasons": dict(sorted(sizing.reasons.items())),
        "material": {
            "before": round(sizing.material_before, 9),
            "after": round(sizing.material_after, 9),
            "unit": "m^2 (Σ length × outside diameter)",
        },
        "arresters": [
            {"id": p.id, "at": p.at, "side": p.side, "rating": p.rating, "wsfu": p.serves}
            for p in result.proposals
        ],
        "problems": _shortfall_lines(result) if not sizing.feasible else [],
        "findings": [f.to_dict() for f in result.findings],
    }
