"""Command line: ``rulecheck check | analyze | simulate | rules | explain | schema``.

One module per command (``check``, ``analyze``, ``simulate``, ``size``, ``explain``,
``info``, ``catalog``), each with ``add_parser(sub)`` and ``run(args, console) -> int``,
listed in :data:`COMMANDS`. A command's module is imported only when that command runs:
the parser gets the chosen command's full sub-parser and, for the others, a bare one with
the same one-line help (all that ``rulecheck --help`` and a wrong command name show).
``main(argv) -> int`` never raises: input errors print ``file:line:col: error: …`` and
return :data:`~rulecheck.errors.EXIT_INPUT`; a bug returns
:data:`~rulecheck.errors.EXIT_INTERNAL` with a one-paragraph message.
"""

from __future__ import annotations

import argparse
import importlib
import os
import sys
from collections.abc import Callable
from typing import TYPE_CHECKING, NamedTuple, cast

import rulecheck.cli.startup as startup  # first of ours (see its docstring)
from rulecheck import __version__
from rulecheck.cli.common import (
    DEBUG_OPTION,
    LazyConsole,
    Parser,
    UsageError,
    print_input_error,
)
from rulecheck.errors import (
    EXIT_BROKEN_PIPE,
    EXIT_INPUT,
    EXIT_INTERNAL,
    EXIT_INTERRUPTED,
    InputError,
    visible,
)
from rulecheck.files import OutputError
from rulecheck.report import CAUTION

if TYPE_CHECKING:
    from rich.console import Console

Run = Callable[[argparse.Namespace, "Console"], int]


class Command(NamedTuple):
    """Where a command lives: ``rulecheck.cli.<module>``, the names of its add-parser and
    run functions there, and its one-line help (the same text its add-parser gives; a
    test holds the two equal)."""

    module: str
    add: str
    run: str
    help: str


#: command name -> where it lives, in the order ``--help`` lists them
COMMANDS: dict[str, Command] = {
    "check": Command("check", "add_parser", "run", "check layouts against the design rules"),
    "analyze": Command("analyze", "add_parser", "run", "print flows, velocities and pressures"),
    "simulate": Command(
        "simulate", "add_parser", "run", "transient simulation of one valve closing"
    ),
    "size": Command(
        "size",
        "add_parser",
        "run",
        "size the pipes (least material) and add the arresters a layout needs",
    ),
    "rules": Command("info", "add_rules_parser", "run_rules", "list the rules"),
    "explain": Command(
        "explain", "add_parser", "run", "why a rule exists, its formula, limits and source"
    ),
    "schema": Command(
        "info",
        "add_schema_parser",
        "run_schema",
        "print the path of the installed layout JSON Schema",
    ),
    "catalog": Command(
        "catalog",
        "add_parser",
        "run",
        "list the materials, a material's sizes, or the fixture types",
    ),
}


def command_function(name: str, which: str) -> Callable[..., object]:
    """The add-parser (``which="add"``) or run function of command ``name``, its module
    imported now."""
    command = COMMANDS[name]
    module = importlib.import_module(f"rulecheck.cli.{command.module}")
    return cast("Callable[..., object]", getattr(module, getattr(command, which)))


def chosen_command(argv: list[str]) -> str | None:
    """The command ``argv`` names (the first word that is not an option: the top-level
    options take no value), or None."""
    word = next((a for a in argv if not a.startswith("-")), None)
    return word if word in COMMANDS else None


def names_only(argv: list[str], command: str | None) -> bool:
    """Whether ``argv`` can show nothing of the commands but ``command``: it names that
    command, and nothing before it but ``--debug`` (``--help`` or ``--version`` there, or
    any abbreviation of them, is the top-level parser's, which lists every command)."""
    return command is not None and all(a == DEBUG_OPTION for a in argv[: argv.index(command)])


def build_parser(
    only: str | None = None, *, every: bool = True, others: bool = True
) -> argparse.ArgumentParser:
    """The command-line parser: every command's options (``every``), or only those of the
    command ``only`` (the others bare, with their help line; left out altogether when not
    ``others``, for a command line that names ``only`` and can show nothing else)."""
    parser = Parser(
        prog="rulecheck",
        description="Design-rule checks for building water-supply layouts (YAML).",
        epilog=CAUTION,
    )
    parser.add_argument("--version", action="version", version=f"rulecheck {__version__}")
    parser.add_argument(
        DEBUG_OPTION,
        action="store_true",
        help="on an internal error (a bug), print the Python traceback too",
    )
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=Parser)
    for name, command in COMMANDS.items():
        if every or name == only:
            command_function(name, "add")(sub)
        elif others:
            sub.add_parser(name, help=command.help)
    return parser


def main(argv: list[str] | None = None) -> int:
    """Run the command line; return the exit status (see :mod:`rulecheck.errors`)."""
    argv = sys.argv[1:] if argv is None else list(argv)
    try:
        return _run(argv)
    except KeyboardInterrupt:
        print("rulecheck: interrupted", file=sys.stderr)
        return EXIT_INTERRUPTED
    except BrokenPipeError:  # `rulecheck check … | head`: the reader has all it wanted
        # point stdout at nothing, so that the interpreter's final flush does not fail again
        devnull = os.open(os.devnull, os.O_WRONLY)
        try:
            os.dup2(devnull, sys.stdout.fileno())
        except (OSError, ValueError):  # stdout is not a real file (a test's capture)
            pass
        finally:
            os.close(devnull)
        return EXIT_BROKEN_PIPE
    except Exception as exc:  # a bug: say so plainly, never as a finding or an input error
        print(internal_error_message(exc, argv), file=sys.stderr)
        if DEBUG_OPTION in argv:
            import traceback

            traceback.print_exception(exc, file=sys.stderr)
        return EXIT_INTERNAL


def internal_error_message(exc: BaseException, argv: list[str]) -> str:
    """One paragraph: what failed, that it is a bug, how to report it."""
    command = next((a for a in argv if not a.startswith("-")), "rulecheck")
    what = "".join(c if c.isprintable() else repr(c)[1:-1] for c in str(exc))[:300]
    return (
        f"rulecheck: internal error in '{command}': {type(exc).__name__}"
        f"{': ' + what if what else ''}. This is a bug in rulecheck {__version__}, not a "
        "problem with your files, and the run was not completed (exit status "
        f"{EXIT_INTERNAL}). Please report it to the rulecheck maintainers with the command "
        f"you ran, the input files if you can share them, and the output of the same "
        f"command with '{DEBUG_OPTION}' before the command name, which adds the traceback."
    )


def _run(argv: list[str]) -> int:
    # NO_COLOR (https://no-color.org): no escape codes at all, bold included
    console = cast(
        "Console",
        LazyConsole(highlight=False, color_system=None if os.environ.get("NO_COLOR") else "auto"),
    )
    try:
        only = chosen_command(argv)
        args = build_parser(only, every=False, others=not names_only(argv, only)).parse_args(argv)
        if args.command is None:
            build_parser(every=False).print_help()
            return EXIT_INPUT
        run = cast("Run", command_function(args.command, "run"))
        return run(args, console)
    except UsageError as exc:
        print(f"{visible(str(exc))}\nTry 'rulecheck --help'.", file=sys.stderr)
        return EXIT_INPUT
    except InputError as exc:
        print_input_error(exc)
        return EXIT_INPUT
    except OutputError as exc:
        print(f"rulecheck: {exc}", file=sys.stderr)
        return EXIT_INPUT
    return EXIT_INPUT


def main_entry() -> None:
    """Console-script entry point (and ``python -m rulecheck``). The command runs with room
    on the Python stack (``startup.call_with_room``). Everything is frozen out of the
    garbage collector before the interpreter exits, so that its last collection does not
    walk the whole heap once more (some 30 ms of a small check; atexit handlers and
    buffered output are not affected, ``benchmarks/README.md``)."""
    status = startup.call_with_room(main)
    import gc

    gc.freeze()
    sys.exit(status)
