"""Command line: ``rulecheck check | analyze | rules | explain | schema``.

``main(argv) -> int`` never raises for user mistakes: input errors print
``file:line:col: error: …`` and return :data:`~rulecheck.errors.EXIT_INPUT`.
"""

from __future__ import annotations

import argparse
import os
import sys
import traceback
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import TextIO

from rich.console import Console

from rulecheck import __version__
from rulecheck.config import FAIL_ON, load_config
from rulecheck.engine import Settings
from rulecheck.errors import (
    EXIT_FINDINGS,
    EXIT_INPUT,
    EXIT_INTERNAL,
    EXIT_INTERRUPTED,
    EXIT_OK,
    InputError,
    visible,
)
from rulecheck.files import OutputError, UnreadableFile, atomic_output
from rulecheck.findings import SEVERITY_RANK, Finding
from rulecheck.outputs import LAYOUT_SUFFIXES, REPLACE_OPTION, OutputRefused, guard_outputs
from rulecheck.profiles import default_profile_id, profile_ids
from rulecheck.report import CAUTION
from rulecheck.report.explain import rules_table
from rulecheck.report.json_report import analysis_document, check_document, dumps
from rulecheck.report.text import render_check
from rulecheck.rulebook import rule_specs
from rulecheck.suggest import suggest

DEBUG_OPTION = "--debug"


class UsageError(Exception):
    """A mistake in the command line itself."""


class _Parser(argparse.ArgumentParser):
    def error(self, message: str) -> None:  # type: ignore[override]
        raise UsageError(f"{self.prog}: {message}")


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(
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
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)

    check = sub.add_parser("check", help="check layouts against the design rules")
    check.add_argument("paths", nargs="+", metavar="PATH", help="layout files or folders")
    check.add_argument("--format", choices=("text", "json", "sarif"), default="text")
    check.add_argument("--output", metavar="FILE", help="write the report to FILE, not stdout")
    check.add_argument(
        "--fail-on",
        choices=FAIL_ON,
        default=None,
        help="lowest severity that makes the exit status 1 "
        "(default: fail-on in rulecheck.toml, else violation)",
    )
    check.add_argument(
        "--config",
        metavar="FILE",
        help="configuration file (default: the nearest rulecheck.toml upwards)",
    )
    baseline = check.add_mutually_exclusive_group()
    baseline.add_argument(
        "--baseline", metavar="FILE", help="report only findings not recorded in this baseline"
    )
    baseline.add_argument(
        "--write-baseline",
        metavar="FILE",
        help="record the current findings as the baseline in FILE",
    )
    check.add_argument(
        REPLACE_OPTION,
        action="store_true",
        help="let --output and --write-baseline replace an existing file that is not "
        "a rulecheck report or baseline (inputs and the config are never replaced)",
    )
    check.add_argument("--profile", choices=profile_ids(), help="override the layout's profile")
    check.add_argument(
        "--no-waivers", action="store_true", help="audit mode: ignore the layouts' waivers"
    )
    check.add_argument(
        "--transient",
        action="store_true",
        help="simulate every quick-closing valve (method of characteristics) "
        "and judge surge peak and column separation on the simulation",
    )

    analyze = sub.add_parser("analyze", help="print flows, velocities and pressures")
    analyze.add_argument("path", metavar="FILE")
    analyze.add_argument("--format", choices=("text", "json"), default="text")
    analyze.add_argument("--profile", choices=profile_ids())

    simulate = sub.add_parser("simulate", help="transient simulation of one valve closing")
    simulate.add_argument("path", metavar="FILE")
    simulate.add_argument(
        "--valve",
        required=True,
        metavar="FIXTURE[:side]",
        help="the fixture whose valve closes, and its side (cold or hot)",
    )
    simulate.add_argument(
        "--duration",
        type=float,
        metavar="S",
        help="simulated time in seconds (default: closure + the longer of 10 round trips and "
        "one arrester-column period, run on while an extreme is on the last step)",
    )
    simulate.add_argument("--format", choices=("text", "json", "csv"), default="text")
    simulate.add_argument("--profile", choices=profile_ids())

    sub.add_parser("rules", help="list the rules")
    explain = sub.add_parser("explain", help="why a rule exists, its formula, limits and source")
    explain.add_argument("rule", metavar="RULE")
    explain.add_argument("--profile", choices=profile_ids(), default=default_profile_id())
    explain.add_argument("--units", choices=("us", "si"), default="us")
    sub.add_parser("schema", help="print the path of the installed layout JSON Schema")
    return parser


def collect_paths(raw: list[str], skip: Callable[[Path], bool] | None = None) -> list[Path]:
    """Expand folders into the layout files below them (sorted, ``skip`` left out); keep files."""
    found: list[Path] = []
    for item in raw:
        path = Path(item)
        if path.is_dir():
            found.extend(
                sorted(
                    p
                    for p in path.rglob("*")
                    if p.suffix in LAYOUT_SUFFIXES and p.is_file() and not (skip and skip(p))
                )
            )
        else:
            found.append(path)
    return found


def print_input_error(error: InputError) -> None:
    for problem in error.problems:
        print(problem.render(), file=sys.stderr)
    if error.omitted:
        print(
            visible(f"… and {error.omitted} more problems in {error.problems[0].path}"),
            file=sys.stderr,
        )


def reaches(finding: Finding, fail_on: str) -> bool:
    if fail_on == "never" or finding.waived is not None:
        return False
    return SEVERITY_RANK[finding.severity] <= SEVERITY_RANK[fail_on]


def cmd_check(args: argparse.Namespace, console: Console) -> int:
    from rulecheck import baseline
    from rulecheck.pipeline import check_file

    config = load_config(args.config)
    settings = config.apply(Settings(honour_waivers=not args.no_waivers, transient=args.transient))
    fail_on = args.fail_on or config.fail_on or "violation"
    known = baseline.read_baseline(args.baseline) if args.baseline else None
    results: list[tuple[str, str, list[Finding]]] = []
    errors: list[InputError] = []
    paths = collect_paths(args.paths, config.excluded)
    if not paths:
        raise UsageError("rulecheck check: no layout files (*.yaml, *.yml) found")
    refuse_overwrite(args, paths, config.path)
    unread = 0
    for path in paths:
        try:
            result = check_file(path, settings, args.profile or config.profile_for(path))
        except InputError as exc:
            errors.append(exc)
            unread += isinstance(exc, UnreadableFile)
            if args.format == "text":
                print_input_error(exc)
            continue
        results.append((result.path, result.profile, result.findings))
    if args.write_baseline and errors:
        print("rulecheck: baseline not written: fix the input errors first", file=sys.stderr)
    elif args.write_baseline:
        known = baseline.write_baseline(args.write_baseline, results)
        print(
            f"rulecheck: wrote the baseline {args.write_baseline} ({sum(known.values())} findings)",
            file=sys.stderr,
        )
    hidden = None
    if known is not None:
        results, hidden = baseline.apply_baseline(results, known)
    write_report(args, console, results, errors, hidden, unread)
    if errors:
        return EXIT_INPUT
    failing = any(reaches(f, fail_on) for _, _, fs in results for f in fs)
    return EXIT_FINDINGS if failing else EXIT_OK


def refuse_overwrite(args: argparse.Namespace, inputs: list[Path], config: Path | None) -> None:
    """Refuse outputs that would replace an input, the config, the baseline or each other."""
    outputs = [
        (option, target)
        for option, target in (("--output", args.output), ("--write-baseline", args.write_baseline))
        if target is not None
    ]
    protected: list[tuple[str, str | Path]] = [("layout", p) for p in inputs]
    if config is not None:
        protected.append(("configuration", config))
    if args.baseline is not None:
        protected.append(("baseline", args.baseline))
    try:
        guard_outputs(outputs, protected, replace_any=args.replace_any)
    except OutputRefused as exc:
        raise UsageError(f"rulecheck check: {exc}") from None


@contextmanager
def open_output(target: str | None) -> Iterator[TextIO]:
    """Standard output, or ``target`` replaced atomically (UTF-8, ``\\n`` line ends)."""
    if target is None:
        yield sys.stdout
        return
    with atomic_output(target) as handle:
        yield handle


def write_report(
    args: argparse.Namespace,
    console: Console,
    results: list[tuple[str, str, list[Finding]]],
    errors: list[InputError],
    hidden: int | None,
    unread: int = 0,
) -> None:
    with open_output(args.output) as handle:
        if args.format == "text":
            out = (
                console
                if args.output is None
                else Console(file=handle, color_system=None, highlight=False)
            )
            render_check(
                out,
                [(p, f) for p, _, f in results],
                [e.problems[0].path for e in errors],
                hidden or 0,
                unread,
            )
        elif args.format == "sarif":
            from rulecheck.report.sarif import sarif_document

            handle.write(dumps(sarif_document(results, errors, hidden)))
        else:
            handle.write(dumps(check_document(results, errors, hidden)))


def cmd_analyze(args: argparse.Namespace, console: Console) -> int:
    from rulecheck.pipeline import analyse_file
    from rulecheck.report.analysis_text import render_analysis

    analysis = analyse_file(args.path, args.profile)
    if args.format == "json":
        sys.stdout.write(dumps(analysis_document(analysis)))
    else:
        console.print(render_analysis(analysis), soft_wrap=True, highlight=False, markup=False)
    return EXIT_OK


def cmd_explain(args: argparse.Namespace) -> int:
    spec = rule_specs().get(args.rule)
    if spec is None:
        hint = suggest(args.rule, rule_specs(), "`rulecheck rules`")
        raise UsageError(f"rulecheck explain: unknown rule '{args.rule}' ({hint})")
    from rulecheck.explain_cmd import explain

    sys.stdout.write(explain(spec, args.profile, args.units))
    return EXIT_OK


def main(argv: list[str] | None = None) -> int:
    """Run the command line; return the exit status (see :mod:`rulecheck.errors`)."""
    argv = sys.argv[1:] if argv is None else list(argv)
    try:
        return _run(argv)
    except KeyboardInterrupt:
        print("rulecheck: interrupted", file=sys.stderr)
        return EXIT_INTERRUPTED
    except Exception as exc:  # a bug: say so plainly, never as a finding or an input error
        print(internal_error_message(exc, argv), file=sys.stderr)
        if DEBUG_OPTION in argv:
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
    console = Console(highlight=False, color_system=None if os.environ.get("NO_COLOR") else "auto")
    try:
        args = build_parser().parse_args(argv)
        if args.command is None:
            build_parser().print_help()
            return EXIT_INPUT
        if args.command == "check":
            return cmd_check(args, console)
        if args.command == "analyze":
            return cmd_analyze(args, console)
        if args.command == "simulate":
            from rulecheck.simulate_cmd import run_simulate

            if args.duration is not None and not 0 < args.duration < float("inf"):
                raise UsageError(
                    "rulecheck simulate: --duration must be a positive, finite number of seconds"
                )
            return run_simulate(args, console)
        if args.command == "rules":
            sys.stdout.write(rules_table())
            return EXIT_OK
        if args.command == "explain":
            return cmd_explain(args)
        if args.command == "schema":
            from rulecheck.schema import schema_path

            print(schema_path())
            return EXIT_OK
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
    """Console-script entry point."""
    sys.exit(main())
