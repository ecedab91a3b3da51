"""The command line imports a command's module only when that command runs, and builds only
the chosen command's options; the help it prints is the help of the full parser."""

from __future__ import annotations

import contextlib
import io
import subprocess
import sys

import pytest
from conftest import REPO, SAMPLES

from rulecheck.cli import COMMANDS, build_parser, chosen_command, main


def _help(parser_argv: list[str], only: str | None, every: bool) -> str:
    out = io.StringIO()
    with contextlib.redirect_stdout(out), pytest.raises(SystemExit):
        build_parser(only, every=every).parse_args(parser_argv)
    return out.getvalue()


def test_top_help_is_the_full_parsers() -> None:
    full = _help(["--help"], None, True)
    assert all(name in full for name in COMMANDS)
    assert _help(["--help"], None, False) == full


@pytest.mark.parametrize("name", list(COMMANDS))
def test_command_help_is_the_full_parsers(name: str) -> None:
    full = _help([name, "--help"], None, True)
    assert full.startswith(f"usage: rulecheck {name}")
    assert _help([name, "--help"], name, False) == full


@pytest.mark.parametrize("name", list(COMMANDS))
def test_table_help_matches_the_commands_own(name: str) -> None:
    """The help line of a bare sub-parser (COMMANDS) is the one the command's module gives."""
    full = build_parser(every=True)
    sub = next(a for a in full._actions if a.dest == "command")
    own = {c.dest: c.help for c in sub._choices_actions}  # type: ignore[attr-defined]
    assert own[name] == COMMANDS[name].help


def test_chosen_command() -> None:
    assert chosen_command(["--debug", "check", "a.yaml"]) == "check"
    assert chosen_command(["explain", "check"]) == "explain"
    assert chosen_command(["--help"]) is None
    assert chosen_command(["chek", "x"]) is None


def test_wrong_command_lists_every_choice(capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["chek", "x"]) == 2
    err = capsys.readouterr().err
    assert "invalid choice: 'chek'" in err
    assert all(f"'{name}'" in err for name in COMMANDS)


def test_check_imports_no_other_command() -> None:
    code = (
        "import sys; from rulecheck.cli import main; "
        f"main(['check', {str(SAMPLES / 'two-bath-house.yaml')!r}, '--format', 'json']); "
        "print(sorted(m for m in sys.modules if m.startswith('rulecheck.cli.')))"
    )
    done = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, cwd=REPO, check=False
    )
    loaded = done.stdout.strip().splitlines()[-1]
    for other in ("explain", "simulate", "size", "catalog", "info"):
        assert f"'rulecheck.cli.{other}'" not in loaded
    assert "'rulecheck.cli.check'" in loaded


ARGVS = [
    ["check", "--help"],
    ["--debug", "check", "--help"],
    ["check"],
    ["check", "--bogus", "a.yaml"],
    ["check", "--format", "nope", "a.yaml"],
    ["check", "a.yaml", "analyze"],
    ["--he", "check"],
    ["--help", "check"],
    ["--version", "check"],
    ["--bogus", "check", "a.yaml"],
    ["size", "--help"],
    ["explain"],
]


@pytest.mark.parametrize("argv", ARGVS, ids=" ".join)
def test_only_the_named_command_gives_the_same_output(
    argv: list[str], capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch
) -> None:
    """A command line that names its command builds no other sub-parser; what it prints
    (help, usage errors, the version) is what the parser with every command prints."""

    def outcome() -> tuple[object, str, str]:
        try:
            rc: object = main(argv)
        except SystemExit as exc:  # --help, --version
            rc = ("exit", exc.code)
        out, err = capsys.readouterr()
        return rc, out, err

    capsys.readouterr()
    lean = outcome()
    import rulecheck.cli as cli

    monkeypatch.setattr(cli, "names_only", lambda argv, command: False)
    assert outcome() == lean
    assert lean[1] + lean[2]  # it said something


def test_names_only() -> None:
    from rulecheck.cli import names_only

    assert names_only(["check", "a.yaml"], "check")
    assert names_only(["--debug", "check", "--help"], "check")
    assert not names_only(["--help", "check"], "check")
    assert not names_only(["--he", "check"], "check")
    assert not names_only(["--version", "check"], "check")
    assert not names_only(["chek"], None)
