"""Baselines: accept today's findings once, then report only what is new.

``rulecheck check --write-baseline FILE`` records every finding that is not
waived, keyed by (file path relative to the working folder, rule, element) with
a count. ``--baseline FILE`` then hides up to that many findings per key and
reports the rest. Lines and messages are not part of the key, so edits
elsewhere in a layout (which shift lines) or a changed measured value do not
turn an accepted finding into a new one; a second finding of the same rule on
the same element does show.
"""

from __future__ import annotations

import json
from collections import Counter
from pathlib import Path
from typing import Any

from rulecheck.errors import NO_POSITION, InputError, Position
from rulecheck.files import MAX_BASELINE_BYTES, atomic_output, read_text, relative_posix
from rulecheck.findings import Finding
from rulecheck.textscan import unplaced_error

BASELINE_VERSION = 1

Key = tuple[str, str, str]  # (path relative to the working folder, rule, element)
Results = list[tuple[str, str, list[Finding]]]  # (path, profile, findings) per file


def finding_key(finding: Finding, cwd: Path | None = None) -> Key:
    return (relative_posix(finding.path, cwd), finding.rule, finding.element)


def baseline_counts(results: Results, cwd: Path | None = None) -> Counter[Key]:
    """How many unwaived findings each key has (waived findings are already accepted)."""
    return Counter(
        finding_key(f, cwd) for _, _, findings in results for f in findings if f.waived is None
    )


def baseline_document(counts: Counter[Key]) -> dict[str, Any]:
    return {
        "version": BASELINE_VERSION,
        "tool": "rulecheck",
        "findings": [
            {"path": path, "rule": rule, "element": element, "count": counts[path, rule, element]}
            for path, rule, element in sorted(counts)
        ],
    }


def write_baseline(target: str | Path, results: Results, cwd: Path | None = None) -> Counter[Key]:
    """Write the baseline of ``results`` to ``target`` (same findings → same bytes)."""
    counts = baseline_counts(results, cwd)
    text = json.dumps(baseline_document(counts), indent=2, ensure_ascii=False) + "\n"
    with atomic_output(target) as handle:
        handle.write(text)
    return counts


def read_baseline(source: str | Path) -> Counter[Key]:
    """Read a baseline file; a missing or malformed one is an :class:`InputError`."""
    name = str(source)
    missing = ("no such baseline file", "write one first with --write-baseline")
    try:
        text = read_text(source, MAX_BASELINE_BYTES, "baseline", missing)
        data = json.loads(text)
    except json.JSONDecodeError as exc:
        raise InputError.at(
            name,
            Position(exc.lineno, exc.colno),
            f"not JSON: {exc.msg}",
            "write the baseline again with --write-baseline",
        ) from None
    except (RecursionError, ValueError) as exc:  # json names no position for these
        raise unplaced_error(
            exc, text, name, "JSON", "write the baseline again with --write-baseline"
        ) from None
    entries = data.get("findings") if isinstance(data, dict) else None
    if (
        not isinstance(data, dict)
        or data.get("version") != BASELINE_VERSION
        or not isinstance(entries, list)
    ):
        raise InputError.at(
            name,
            NO_POSITION,
            "not a rulecheck baseline (version 1)",
            "write the baseline again with --write-baseline",
        )
    counts: Counter[Key] = Counter()
    for number, entry in enumerate(entries, start=1):
        fields = (
            [entry.get(k) for k in ("path", "rule", "element")] if isinstance(entry, dict) else []
        )
        count = entry.get("count", 1) if isinstance(entry, dict) else None
        if (
            len(fields) != 3
            or not all(isinstance(v, str) for v in fields)
            or isinstance(count, bool)
            or not isinstance(count, int)
            or count < 1
        ):
            raise InputError.at(
                name,
                NO_POSITION,
                f"entry {number} of the baseline is malformed",
                "each entry needs path, rule, element (text) and count (>= 1)",
            )
        counts[str(fields[0]), str(fields[1]), str(fields[2])] += count
    return counts


def apply_baseline(
    results: Results, counts: Counter[Key], cwd: Path | None = None
) -> tuple[Results, int]:
    """Drop the findings the baseline accounts for; return what is left and how many it hid.

    Waived findings are never hidden: they stay visible, marked as waived.
    """
    left = Counter(counts)
    kept: Results = []
    hidden = 0
    for path, profile, findings in results:
        shown = []
        for finding in findings:
            key = finding_key(finding, cwd)
            if finding.waived is None and left[key] > 0:
                left[key] -= 1
                hidden += 1
            else:
                shown.append(finding)
        kept.append((path, profile, shown))
    return kept, hidden
