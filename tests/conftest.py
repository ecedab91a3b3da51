"""Shared helpers for the foundation tests: small layouts as YAML text, and the CLI in-process.

``MINIMAL`` is the smallest layout the format accepts that still exercises the
pipeline: one supply, one point, one cold pipe, one fixture. Its fixture closes
slowly over a long time on purpose, so that surge screening has nothing to say
about it and the hydraulic rules can be tested on their own.

Positions in tests are derived from the YAML text itself (:func:`locate`), not
from rulecheck's output, so that a wrong line or column is caught.
"""

from __future__ import annotations

import os
import re
import tempfile
from collections.abc import Callable
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parent.parent
SAMPLES = REPO / "samples"
CASES = Path(__file__).resolve().parent / "cases"
ANSI = re.compile(r"\x1b\[[0-9;?]*[A-Za-z]")

MINIMAL = """\
version: 1
project:
  name: Minimal test layout
  units: us
  profile: ipc
supplies:
  - id: SVC
    pressure: 60 psi
    elevation: 0 ft
points:
  - {id: J1, elevation: 0 ft}
pipes:
  - {id: P1, from: SVC, to: J1, material: copper-l, size: 3/4, length: 20 ft, service: cold}
fixtures:
  - {id: WC1, type: water-closet-tank, cold: J1, valve: {closing: slow, closure_time: 10 s}}
"""


def pytest_configure(config: pytest.Config) -> None:
    config.addinivalue_line(
        "markers", "slow: builds and installs a wheel (runs by default; -m 'not slow' skips it)"
    )


def tweak(text: str, *replacements: tuple[str, str], append: str = "") -> str:
    """Replace each ``old`` by ``new`` exactly once in ``text`` (fail loudly if absent)."""
    for old, new in replacements:
        assert text.count(old) == 1, f"{old!r} occurs {text.count(old)} times in the layout"
        text = text.replace(old, new)
    return text + append


def locate(text: str, needle: str, occurrence: int = 1) -> tuple[int, int]:
    """1-based (line, column) where the ``occurrence``-th ``needle`` starts in ``text``."""
    start = -1
    for _ in range(occurrence):
        start = text.index(needle, start + 1)
    line = text.count("\n", 0, start) + 1
    column = start - (text.rfind("\n", 0, start) + 1) + 1
    return line, column


@pytest.fixture
def write_layout(tmp_path: Path) -> Callable[..., Path]:
    """Write layout text (default :data:`MINIMAL`, tweaked) to a file in ``tmp_path``."""

    def write(
        text: str = MINIMAL,
        *replacements: tuple[str, str],
        append: str = "",
        name: str = "layout.yaml",
    ) -> Path:
        path = tmp_path / name
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(tweak(text, *replacements, append=append), encoding="utf-8")
        return path

    return write


@pytest.fixture
def cli(
    capsys: pytest.CaptureFixture[str], tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> Callable[..., tuple[int, str, str]]:
    """Run ``rulecheck.cli.main(argv)`` in-process; return (exit code, stdout, stderr).

    The working folder is the test's scratch folder, so that no ``rulecheck.toml`` found
    upwards from the repository changes the outcome; pass absolute paths.
    """
    from rulecheck.cli import main

    monkeypatch.chdir(tmp_path)

    def run(*argv: str | Path) -> tuple[int, str, str]:
        capsys.readouterr()
        rc = main([str(a) for a in argv])
        out, err = capsys.readouterr()
        return rc, out, err

    return run


# The compiled step loop (rulecheck/physics/moc_kernel.c) is built once per test session
# into a folder of its own, not into the user's cache; subprocesses inherit the setting.
os.environ.setdefault("RULECHECK_CACHE_DIR", tempfile.mkdtemp(prefix="rulecheck-kernel-"))
