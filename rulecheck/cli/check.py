"""``rulecheck check PATH...``: check layouts against the rules, report in one of the formats."""

from __future__ import annotations

import argparse
import sys
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import TYPE_CHECKING, Any

from rulecheck.cli.common import UsageError, print_input_error
from rulecheck.cli.outputs import LAYOUT_SUFFIXES, REPLACE_OPTION, OutputRefused, guard_outputs
from rulecheck.cli.report_data import file_detail, output_in_folder, report_date
from rulecheck.engine.config import FAIL_ON, load_config
from rulecheck.engine.context import Settings
from rulecheck.errors import EXIT_FINDINGS, EXIT_INPUT, EXIT_OK, InputError
from rulecheck.files import UnreadableFile, atomic_output
from rulecheck.findings import SEVERITY_RANK, Finding
from rulecheck.input.profiles import profile_ids
from rulecheck.report.formats import FORMATS, CheckReport
from rulecheck.report.terminal import surely_not_terminal

if TYPE_CHECKING:  # rich is imported only by the text output
    from rich.console import Console


def add_parser(sub: argparse._SubParsersAction) -> None:
    check = sub.add_parser("check", help="check layouts against the design rules")
    check.add_argument("paths", nargs="+", metavar="PATH", help="layout files or folders")
    check.add_argument(
        "--format",
        choices=tuple(FORMATS),
        default="text",
        help="; ".join(f"{f.name}: {f.summary}" for f in FORMATS.values()),
    )
    check.add_argument(
        "--output",
        metavar="FILE",
        help="write the report to FILE, not stdout (html: a folder gets <layout>.html)",
    )
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
        "--jobs",
        type=_jobs,
        default=None,
        metavar="N",
        help="check the files on N processes (default: all usable cores; the report "
        "is the same on any number)",
    )
    check.add_argument(
        "--transient",
        action="store_true",
        help="simulate every quick-closing valve (method of characteristics) "
        "and judge surge peak and column separation on the simulation",
    )


def _jobs(text: str) -> int:
    if not text.isdigit() or not 1 <= int(text) <= 256:
        raise argparse.ArgumentTypeError(f"expected a whole number from 1 to 256, got {text!r}")
    return int(text)


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


def reaches(finding: Finding, fail_on: str) -> bool:
    if fail_on == "never" or finding.waived is not None:
        return False
    return SEVERITY_RANK[finding.severity] <= SEVERITY_RANK[fail_on]


def run(args: argparse.Namespace, console: Console) -> int:
    if args.transient:  # a first run's compiler works while the rest loads and reads
        from rulecheck.physics.transient import start_step_loop

        start_step_loop()
    from rulecheck.analysis import AnalysisOptions
    from rulecheck.engine import baseline
    from rulecheck.folder import check_files

    config = load_config(args.config)
    settings = config.apply(Settings(honour_waivers=not args.no_waivers))
    options = AnalysisOptions(transient=args.transient)
    fail_on = args.fail_on or config.fail_on or "violation"
    known = baseline.read_baseline(args.baseline) if args.baseline else None
    results: list[tuple[str, str, list[Finding]]] = []
    errors: list[InputError] = []
    paths = collect_paths(args.paths, config.excluded)
    if not paths:
        raise UsageError("rulecheck check: no layout files (*.yaml, *.yml) found")
    chosen = FORMATS[args.format]
    if chosen.detail:  # a folder gets <layout>.html (other formats name their file)
        args.output = output_in_folder(args.output, paths, chosen.suffix)
    refuse_overwrite(args, paths, config.path)
    date = report_date() if chosen.detail else ""
    details: dict[str, Any] = {}
    unread = 0
    profile_for = (lambda _path: args.profile) if args.profile else config.profile_for
    outcomes = (
        _with_details(paths, settings, profile_for, options, details)
        if chosen.detail  # the HTML report draws each file's analysis: kept in this process
        else check_files(paths, settings, profile_for, options, args.jobs)
    )
    for outcome in outcomes:
        if isinstance(outcome, InputError):
            errors.append(outcome)
            unread += isinstance(outcome, UnreadableFile)
            if not FORMATS[args.format].carries_errors:
                print_input_error(outcome)
            continue
        results.append(outcome)
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
    report = CheckReport(results, errors, hidden, unread, details, fail_on, date)
    write_report(args, console, report)
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


def _with_details(
    paths: list[Path],
    settings: Settings,
    profile_for: Callable[[Path], str | None],
    options: Any,
    details: dict[str, Any],
) -> Iterator[tuple[str, str, list[Finding]] | InputError]:
    """Check ``paths`` one by one in this process, keeping what the HTML report draws of
    each (its analysis, hash and plot traces) in ``details``."""
    from rulecheck import pipeline

    for path in paths:
        try:
            result = pipeline.check_file(path, settings, profile_for(path), options)
        except InputError as exc:
            yield exc
            continue
        details[result.path] = file_detail(result)
        yield result.path, result.profile, result.findings


def write_report(args: argparse.Namespace, console: Console, report: CheckReport) -> None:
    """The report in ``--format`` to standard output, or to ``--output`` replaced atomically
    (UTF-8, ``\\n`` line ends; colour only on a terminal, never in a file)."""
    write = FORMATS[args.format].write
    if args.output is None:
        # only the text output uses escape codes (formats.py): the others never ask rich,
        # nor does text to a pipe or a file (report/terminal.py)
        colour = (
            args.format == "text"
            and not surely_not_terminal(sys.stdout)
            and console.is_terminal
            and console.color_system is not None
        )
        write(report, sys.stdout, colour)
        return
    with atomic_output(args.output) as handle:
        write(report, handle, False)
