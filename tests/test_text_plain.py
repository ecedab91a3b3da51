"""The text report without rich (report/terminal.py, text.write_plain): where it is used,
its width and its bytes are rich's own. Checked against rich itself: a real
``rich.console.Console`` over the environment variables and terminals it reads, and the
command's output through rich (``FORCE_COLOR=""`` makes rich decide, with no colour) against
the output without it."""

from __future__ import annotations

import dataclasses
import fcntl
import io
import os
import pty
import struct
import subprocess
import sys
import termios
from pathlib import Path

import pytest
from conftest import SAMPLES
from rich.console import Console

from rulecheck.findings import Finding
from rulecheck.pipeline import check_file
from rulecheck.report.terminal import plain_width, surely_not_terminal
from rulecheck.report.text import check_lines, print_rich, write_plain

ENVIRONMENTS = [
    {},
    {"COLUMNS": "57"},
    {"COLUMNS": "0"},
    {"COLUMNS": "wide"},
    {"COLUMNS": "200", "LINES": "10"},
    {"TERM": "dumb"},
    {"FORCE_COLOR": ""},
    {"FORCE_COLOR": "1"},
    {"TTY_COMPATIBLE": "1"},
    {"TTY_COMPATIBLE": "0", "COLUMNS": "33"},
]
VARIABLES = ("COLUMNS", "LINES", "TERM", "FORCE_COLOR", "TTY_COMPATIBLE")


def _streams(tmp_path: Path) -> list[object]:
    """A memory stream, a real file, and the two ends of a terminal."""
    main, secondary = pty.openpty()
    fcntl.ioctl(secondary, termios.TIOCSWINSZ, struct.pack("HHHH", 24, 71, 0, 0))
    return [
        io.StringIO(),
        (tmp_path / "report.txt").open("w", encoding="utf-8"),
        os.fdopen(secondary, "w", encoding="utf-8"),
        os.fdopen(main, "w", encoding="utf-8"),
    ]


@pytest.mark.parametrize("environ", ENVIRONMENTS, ids=lambda e: repr(e) if e else "bare")
def test_agrees_with_rich(
    environ: dict[str, str], tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    for name in VARIABLES:
        monkeypatch.delenv(name, raising=False)
    for name, value in environ.items():
        monkeypatch.setenv(name, value)
    decided = 0
    for stream in _streams(tmp_path):
        console = Console(file=stream, highlight=False, color_system=None)  # type: ignore[arg-type]
        if surely_not_terminal(stream):  # type: ignore[arg-type]
            assert not console.is_terminal
            decided += 1
        width = plain_width(stream)  # type: ignore[arg-type]
        if width is not None:  # rich prints nothing at width 0 (COLUMNS=0): we take 80
            assert width == (console.width or 80)
        stream.close()  # type: ignore[attr-defined]
    # a bare environment decides the memory stream and the file without rich
    assert decided == (2 if not set(environ) & {"FORCE_COLOR", "TTY_COMPATIBLE"} else 0)


def _findings() -> list[tuple[str, list[Finding]]]:
    """Every sample's findings, and some made hard: a word longer than any line, wide
    characters, a long path, a waived finding."""
    results = []
    for sample in sorted(SAMPLES.glob("*.yaml")):
        result = check_file(sample)
        results.append((result.path, result.findings))
    base = results[-1][1][0] if results[-1][1] else next(f for _, fs in results for f in fs)
    hard = [
        dataclasses.replace(base, message="see " + "x" * 130 + " then more words after it"),
        dataclasses.replace(base, message="配管の圧力 " * 30, fix="水撃 " * 40),
        dataclasses.replace(base, waived="accepted by the reviewer " * 6),
        dataclasses.replace(base, element="E" * 90, source="S " + "y" * 120),
    ]
    results.append(("/a/very/long/folder/name/" * 6 + "plan.yaml", hard))
    return results


@pytest.mark.parametrize("width", [1, 20, 41, 80, 133])
def test_plain_bytes_are_rich_bytes(width: int) -> None:
    results = _findings()
    lines = check_lines(results, ["broken.yaml"], width, hidden=2, unread=0)
    plain = io.StringIO()
    write_plain(plain, lines)
    through_rich = io.StringIO()
    print_rich(Console(file=through_rich, width=width, color_system=None, highlight=False), lines)
    assert plain.getvalue() == through_rich.getvalue()
    text = plain.getvalue()
    assert "x" * 130 in text and "E" * 90 in text and "y" * 120 in text  # never cut
    assert "/a/very/long/folder/name/" * 6 + "plan.yaml" in text  # a path is never folded


def _run(env: dict[str, str], stdin: object = subprocess.DEVNULL) -> tuple[bytes, bool]:
    """The text report of the fernhill sample, and whether rich was imported for it."""
    code = (
        "import sys, runpy; sys.argv = ['rulecheck', 'check', sys.argv[1]]\n"
        "try:\n    runpy.run_module('rulecheck', run_name='__main__')\n"
        "except SystemExit:\n    pass\n"
        "sys.stderr.write(str('rich' in sys.modules))"
    )
    done = subprocess.run(
        [sys.executable, "-c", code, str(SAMPLES / "fernhill-clinic.yaml")],
        env=env,
        stdin=stdin,
        capture_output=True,
        check=False,
    )
    return done.stdout, done.stderr.decode().endswith("True")


def test_command_writes_the_bytes_rich_writes_without_importing_it() -> None:
    env = {k: v for k, v in os.environ.items() if k not in VARIABLES}
    outputs = []
    for extra in ({}, {"COLUMNS": "47"}):
        plain, imported = _run({**env, **extra})
        through_rich, imported_too = _run({**env, **extra, "FORCE_COLOR": ""})
        assert (imported, imported_too) == (False, True)
        assert plain == through_rich and b"Caution:" in plain
        outputs.append(plain)
    assert outputs[0] != outputs[1]  # the width was used


def test_width_of_the_terminal_on_standard_input() -> None:
    """Piped output from an interactive shell: rich (and we) wrap to the terminal's width."""
    main, secondary = pty.openpty()
    fcntl.ioctl(secondary, termios.TIOCSWINSZ, struct.pack("HHHH", 24, 64, 0, 0))
    env = {k: v for k, v in os.environ.items() if k not in VARIABLES}
    try:
        plain, imported = _run(env, stdin=secondary)
        through_rich, _ = _run({**env, "FORCE_COLOR": ""}, stdin=secondary)
    finally:
        os.close(main)
        os.close(secondary)
    assert not imported and plain == through_rich
    wide, _ = _run(env)  # 80 columns
    assert plain != wide
