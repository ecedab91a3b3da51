"""Command line: ``rulecheck check | analyze | rules | explain | schema``.

``main(argv) -> int`` never raises for user mistakes: input errors print
``file:line:col: error: …`` and return :data:`~rulecheck.errors.EXIT_INPUT`.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from rich.console import Console

from rulecheck import __version__
from rulecheck.engine import Settings
from rulecheck.errors import EXIT_FINDINGS, EXIT_INPUT, EXIT_OK, InputError
from rulecheck.findings import SEVERITY_RANK, Finding
from rulecheck.profiles import default_profile_id, profile_ids
from rulecheck.report import CAUTION
from rulecheck.report.explain import explain_text, rules_table
from rulecheck.report.json_report import analysis_document, check_document, dumps
from rulecheck.report.text import render_check
from rulecheck.rulebook import rule_specs

FAIL_ON = ("hazard", "violation", "caution", "advisory", "never")
LAYOUT_SUFFIXES = (".yaml", ".yml")


class UsageError(Exception):
    """A mistake in the command line itself."""


class _Parser(argparse.ArgumentParser):
    def error(self, message: str) -> None:  # type: ignore[override]
        raise UsageError(f"{self.prog}: {message}")


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(prog="rulecheck", description="Design-rule checks for building "
                     "water-supply layouts (YAML).", epilog=CAUTION)
    parser.add_argument("--version", action="version", version=f"rulecheck {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)

    check = sub.add_parser("check", help="check layouts against the design rules")
    check.add_argument("paths", nargs="+", metavar="PATH", help="layout files or folders")
    check.add_argument("--format", choices=("text", "json"), default="text")
    check.add_argument("--fail-on", choices=FAIL_ON, default="violation",
                       help="lowest severity that makes the exit status 1 (default: violation)")
    check.add_argument("--profile", choices=profile_ids(), help="override the layout's profile")
    check.add_argument("--no-waivers", action="store_true",
                       help="audit mode: ignore the layouts' waivers")

    analyze = sub.add_parser("analyze", help="print flows, velocities and pressures")
    analyze.add_argument("path", metavar="FILE")
    analyze.add_argument("--format", choices=("text", "json"), default="text")
    analyze.add_argument("--profile", choices=profile_ids())

    sub.add_parser("rules", help="list the rules")
    explain = sub.add_parser("explain", help="why a rule exists, its formula, limits and source")
    explain.add_argument("rule", metavar="RULE")
    explain.add_argument("--profile", choices=profile_ids(), default=default_profile_id())
    explain.add_argument("--units", choices=("us", "si"), default="us")
    sub.add_parser("schema", help="print the path of the installed layout JSON Schema")
    return parser


def collect_paths(raw: list[str]) -> list[Path]:
    """Expand folders into the layout files below them (sorted); keep files as given."""
    found: list[Path] = []
    for item in raw:
        path = Path(item)
        if path.is_dir():
            found.extend(sorted(p for p in path.rglob("*") if p.suffix in LAYOUT_SUFFIXES
                                and p.is_file()))
        else:
            found.append(path)
    return found


def print_input_error(error: InputError) -> None:
    for problem in error.problems:
        print(problem.render(), file=sys.stderr)
    if error.omitted:
        print(f"… and {error.omitted} more problems in {error.problems[0].path}", file=sys.stderr)


def reaches(finding: Finding, fail_on: str) -> bool:
    if fail_on == "never" or finding.waived is not None:
        return False
    return SEVERITY_RANK[finding.severity] <= SEVERITY_RANK[fail_on]


def cmd_check(args: argparse.Namespace, console: Console) -> int:
    from rulecheck.pipeline import check_file

    settings = Settings(honour_waivers=not args.no_waivers)
    results: list[tuple[str, str, list[Finding]]] = []
    errors: list[InputError] = []
    paths = collect_paths(args.paths)
    if not paths:
        raise UsageError("rulecheck check: no layout files (*.yaml, *.yml) found")
    for path in paths:
        try:
            result = check_file(path, settings, args.profile)
        except InputError as exc:
            errors.append(exc)
            if args.format == "text":
                print_input_error(exc)
            continue
        results.append((result.path, result.profile, result.findings))
    if args.format == "json":
        sys.stdout.write(dumps(check_document(results, errors)))
    else:
        render_check(console, [(p, f) for p, _, f in results],
                     [e.problems[0].path for e in errors])
    if errors:
        return EXIT_INPUT
    failing = any(reaches(f, args.fail_on) for _, _, fs in results for f in fs)
    return EXIT_FINDINGS if failing else EXIT_OK


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
        raise UsageError(f"rulecheck explain: unknown rule '{args.rule}' "
                         f"(known: {', '.join(rule_specs())})")
    from rulecheck.report.worked import worked_example

    sys.stdout.write(explain_text(spec, args.profile, args.units,
                                  worked_example(spec.id, args.units)))
    return EXIT_OK


def main(argv: list[str] | None = None) -> int:
    """Run the command line; return the exit status."""
    console = Console(highlight=False)
    try:
        args = build_parser().parse_args(argv)
        if args.command is None:
            build_parser().print_help()
            return EXIT_INPUT
        if args.command == "check":
            return cmd_check(args, console)
        if args.command == "analyze":
            return cmd_analyze(args, console)
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
        print(f"{exc}\nTry 'rulecheck --help'.", file=sys.stderr)
        return EXIT_INPUT
    except InputError as exc:
        print_input_error(exc)
        return EXIT_INPUT
    except KeyboardInterrupt:
        print("interrupted", file=sys.stderr)
        return 130
    return EXIT_INPUT


def main_entry() -> None:
    """Console-script entry point."""
    sys.exit(main())
