"""What the detailed formats (``--format html``) show beyond the findings, prepared here.

The reporters only format: the file's hash, the report's date and the pressure traces of
the valve sides a report plots (re-run with the one-event model, ``analysis.traces``) are
gathered on the command line's side and handed over in the check report.
"""

from __future__ import annotations

import hashlib
import os
import time
from pathlib import Path
from typing import Any

from rulecheck.cli.common import UsageError
from rulecheck.findings import Finding

#: a hash of a file this large is not worth a second read (the loader refuses larger ones)
_HASH_LIMIT = 1 << 30


def report_date() -> str:
    """Today (UTC), or the date ``SOURCE_DATE_EPOCH`` pins (reproducible builds' convention)."""
    raw = os.environ.get("SOURCE_DATE_EPOCH", "").strip()
    if raw:
        try:
            stamp = int(raw)
        except ValueError:
            raise UsageError(
                f"rulecheck: SOURCE_DATE_EPOCH={raw!r} is not a whole number of seconds "
                "since 1970-01-01 UTC; set it to one (e.g. $(git log -1 --format=%ct)) or unset it"
            ) from None
        if not 0 <= stamp < 253402300800:  # up to 9999-12-31
            raise UsageError(f"rulecheck: SOURCE_DATE_EPOCH={raw} is out of range")
        return time.strftime("%Y-%m-%d", time.gmtime(stamp))
    return time.strftime("%Y-%m-%d", time.gmtime())


def digest(path: str) -> str:
    """SHA-256 of the file's bytes (hex), or why there is none."""
    sha = hashlib.sha256()
    try:
        with open(path, "rb") as handle:
            read = 0
            while chunk := handle.read(1 << 20):
                sha.update(chunk)
                read += len(chunk)
                if read > _HASH_LIMIT:
                    return "not computed (file over 1 GiB)"
    except OSError as exc:
        return f"not computed ({exc.strerror or exc})"
    return sha.hexdigest()


def file_detail(result: Any) -> Any:
    """The HTML report's view of one checked file: its analysis, hash and plot traces."""
    from rulecheck.analysis.traces import valve_traces
    from rulecheck.report.html import FileDetail

    analysis = result.analysis
    if not analysis.options.transient:
        return FileDetail(analysis, digest(result.path))
    traces = valve_traces(analysis, flagged_fixtures(result.findings))
    return FileDetail(analysis, digest(result.path), traces)


def flagged_fixtures(findings: list[Finding]) -> set[str]:
    """Elements of the violations and hazards in force (the fixtures among them are plotted)."""
    return {
        f.element for f in findings if f.waived is None and f.severity in ("hazard", "violation")
    }


def output_in_folder(output: str | None, paths: list[Path], suffix: str) -> str | None:
    """``--output`` as given, or inside a folder it names: ``<layout>.<suffix>`` for one
    layout, ``rulecheck-report<suffix>`` for several."""
    if output is None or not Path(output).is_dir():
        return output
    name = f"{paths[0].stem}{suffix}" if len(paths) == 1 else f"rulecheck-report{suffix}"
    return str(Path(output) / name)
