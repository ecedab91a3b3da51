"""A crash is not a finding: internal errors have their own exit status and message.

An uncaught exception used to end the process with status 1, the status of
"findings reached --fail-on", so a CI gate read a bug as an ordinary failed
check. Now it is :data:`~rulecheck.errors.EXIT_INTERNAL` with one paragraph
(what failed, that it is a bug, how to report it); the traceback only with
``rulecheck --debug``. The crash is simulated by making a pipeline stage raise.
"""

from __future__ import annotations

import re
from collections.abc import Callable
from pathlib import Path

import pytest
from conftest import MINIMAL, REPO

from rulecheck import errors
from rulecheck.errors import EXIT_FINDINGS, EXIT_INPUT, EXIT_INTERNAL, EXIT_OK

Cli = Callable[..., tuple[int, str, str]]


def _crash(*args: object, **kwargs: object) -> None:
    raise RuntimeError("simulated failure \x1b[2J in a stage")


@pytest.fixture
def layout(tmp_path: Path) -> Path:
    path = tmp_path / "house.yaml"
    path.write_text(MINIMAL, encoding="utf-8")
    return path


@pytest.fixture
def crashing(monkeypatch: pytest.MonkeyPatch) -> None:
    import rulecheck.pipeline

    monkeypatch.setattr(rulecheck.pipeline, "check_file", _crash)
    monkeypatch.setattr(rulecheck.pipeline, "analyse_file", _crash)


def test_exit_statuses_are_distinct() -> None:
    codes = [v for k, v in vars(errors).items() if k.startswith("EXIT_")]
    assert len(codes) == len(set(codes)) >= 5
    assert EXIT_INTERNAL not in (EXIT_OK, EXIT_FINDINGS, EXIT_INPUT)


@pytest.mark.parametrize("command", [["check"], ["analyze"]])
def test_crash_gets_its_own_status_and_one_paragraph(
    cli: Cli, layout: Path, crashing: None, command: list[str]
) -> None:
    rc, out, err = cli(*command, layout)
    assert rc == EXIT_INTERNAL
    assert "Traceback" not in out + err
    paragraph = err.strip()
    assert "\n" not in paragraph, err
    assert f"internal error in '{command[0]}': RuntimeError: simulated failure" in paragraph
    assert "This is a bug in rulecheck" in paragraph and "Please report it" in paragraph
    assert "--debug" in paragraph
    assert "\x1b" not in err and "\\x1b[2J" in err  # the text of the error is shown escaped


def test_debug_adds_the_traceback(cli: Cli, layout: Path, crashing: None) -> None:
    rc, out, err = cli("--debug", "check", layout)
    assert rc == EXIT_INTERNAL
    assert "This is a bug in rulecheck" in err
    assert "Traceback (most recent call last)" in err and "_crash" in err


def test_debug_changes_nothing_when_all_is_well(cli: Cli, layout: Path) -> None:
    assert cli("--debug", "check", layout)[:2] == cli("check", layout)[:2]


def test_readme_documents_every_exit_status() -> None:
    text = (REPO / "README.md").read_text(encoding="utf-8")
    section = re.search(r"Exit status:(.*?)\n\n", text, re.DOTALL)
    assert section, "README.md has no 'Exit status:' paragraph"
    for name, value in vars(errors).items():
        if name.startswith("EXIT_"):
            assert re.search(rf"\b{value}\b", section[1]), f"{name} = {value} is not documented"


def test_a_reader_that_closes_the_pipe_early_is_not_a_bug(tmp_path: Path) -> None:
    """`rulecheck explain … | head -0`: the reader is gone before anything is written;
    rulecheck stops quietly with 128 + SIGPIPE, no traceback, no internal-error paragraph."""
    import os
    import subprocess
    import sys

    env = {**os.environ, "PYTHONPATH": str(REPO)}
    writer = subprocess.Popen(
        [sys.executable, "-m", "rulecheck", "explain", "surge-peak"],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        cwd=tmp_path,
        env=env,
    )
    assert writer.stdout is not None and writer.stderr is not None
    writer.stdout.close()  # the reader goes away before the text is written
    err = writer.stderr.read().decode()
    code = writer.wait(timeout=60)
    assert "Traceback" not in err and "internal error" not in err
    assert code == errors.EXIT_BROKEN_PIPE
