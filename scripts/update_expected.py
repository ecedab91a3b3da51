"""Rewrite ``samples/*.expected.json`` from the current engine (review the diff before committing).

    python scripts/update_expected.py

Each expected file lists the findings of its sample (rule, severity, element, line,
column, waived) so that CI notices any change in what rulecheck reports.
"""

from __future__ import annotations

import json
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from rulecheck.pipeline import check_file  # noqa: E402


def expected_for(sample: Path) -> list[dict[str, object]]:
    result = check_file(sample)
    return [
        {
            "rule": f.rule,
            "severity": f.severity,
            "element": f.element,
            "line": f.line,
            "column": f.column,
            "waived": f.waived is not None,
        }
        for f in result.findings
    ]


def main() -> None:
    for sample in sorted((ROOT / "samples").glob("*.yaml")):
        target = sample.with_suffix(".expected.json")
        text = json.dumps(expected_for(sample.relative_to(ROOT)), indent=1) + "\n"
        target.write_text(text, encoding="utf-8")
        print(f"wrote {target.relative_to(ROOT)}")


if __name__ == "__main__":
    main()
