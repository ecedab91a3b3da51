"""``rulecheck simulate FILE --valve FIXTURE[:side]``: one valve event through the MOC solver."""

from __future__ import annotations

import argparse
import csv
import io
import sys
import time
from typing import TYPE_CHECKING, Any

from rulecheck.cli.common import UsageError
from rulecheck.errors import EXIT_OK, InputError, Position
from rulecheck.findings import _clean
from rulecheck.input.profiles import profile_ids
from rulecheck.suggest import suggest
from rulecheck.units import fmt

if TYPE_CHECKING:  # rich is imported only when something is shown with it
    from rich.console import Console


def _pick_event(analysis: Any, spec: str) -> Any:
    fixture, _, side = spec.partition(":")
    events = [
        e for e in analysis.surge.events if e.fixture.id == fixture and (not side or e.side == side)
    ]
    if not events:
        sides = sorted({f"{e.fixture.id}:{e.side}" for e in analysis.surge.events})
        raise InputError.at(
            analysis.layout.path,
            Position(1, 1),
            f"--valve {spec}: no such fixture side in this layout",
            suggest(spec, sides, "the fixtures in this file", what="valves"),
        )
    if len(events) > 1:
        raise InputError.at(
            analysis.layout.path,
            events[0].fixture.pos,
            f"fixture {fixture} has a cold and a hot valve",
            f"name the side: --valve {fixture}:cold or {fixture}:hot",
        )
    return events[0]


def add_parser(sub: argparse._SubParsersAction) -> None:
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
    simulate.add_argument(
        "--format",
        choices=("text", "json", "csv", "html"),
        default="text",
        help="html: a self-contained page with the plot at the valve and the envelope",
    )
    simulate.add_argument("--profile", choices=profile_ids())


def run(args: argparse.Namespace, console: Console) -> int:
    if args.duration is not None and not 0 < args.duration < float("inf"):
        raise UsageError(
            "rulecheck simulate: --duration must be a positive, finite number of seconds"
        )
    from rulecheck.analysis.transient_limits import RunRefused
    from rulecheck.analysis.transient_model import run_event
    from rulecheck.pipeline import analyse_file

    analysis = analyse_file(args.path, args.profile)
    event = _pick_event(analysis, args.valve)
    if args.duration is not None and args.duration < event.closure_time:
        raise InputError.at(
            analysis.layout.path,
            event.fixture.pos,
            f"--duration {args.duration:g} s is shorter than the closure of {event.fixture.id} "
            f"({event.closure_time:g} s): the run would end before the valve has closed",
            f"give --duration {event.closure_time:g} or more, or leave it out to let the "
            "run length follow the system's round trips and arrester oscillation",
        )
    started = time.monotonic()
    bar: dict[str, Any] = {}

    def progress(fraction: float) -> None:  # a bar only for runs longer than a second
        if "p" not in bar and time.monotonic() - started > 1.0 and console.is_terminal:
            from rich.console import Console
            from rich.progress import Progress

            bar["p"] = Progress(console=Console(stderr=True), transient=True)
            bar["p"].start()
            bar["task"] = bar["p"].add_task("simulating", total=1.0)
        if "p" in bar:
            bar["p"].update(bar["task"], completed=fraction)

    model = f"whole {event.side} tree"
    try:
        try:
            run = run_event(analysis, event, args.duration, progress)
        except RunRefused as whole:
            # a pipe off the valve's path may be what passed a bound: the path model
            run = run_event(analysis, event, args.duration, progress, whole_tree=False)
            model = "path model"
            run.notes.insert(0, f"the whole tree was not simulated: {whole.reason}")
    except RunRefused as refusal:
        raise InputError.at(
            analysis.layout.path,
            _position(analysis, refusal.element, event),
            f"valve {event.fixture.id} ({event.side}) not simulated: {refusal.reason}",
            refusal.hint or "its screening numbers are in the report of rulecheck check",
        ) from None
    finally:
        if "p" in bar:
            bar["p"].stop()
    result, units = run.result, analysis.layout.units
    if args.format == "html":
        from rulecheck.analysis.result import METHOD_PATH, METHOD_WHOLE
        from rulecheck.analysis.traces import trace_of
        from rulecheck.cli.report_data import digest, report_date
        from rulecheck.report.html import render_simulation

        method = METHOD_PATH if model == "path model" else METHOD_WHOLE
        render_simulation(
            sys.stdout,
            analysis,
            trace_of(analysis, run, method),
            model,
            digest(analysis.layout.path),
            _cavities_line(run.cavities, units),
            report_date(),
        )
    elif args.format == "json":
        from rulecheck.report.json_report import dumps

        sys.stdout.write(dumps({**_document(run), "model": model}))
    elif args.format == "csv":
        out = io.StringIO()
        writer = csv.writer(out, lineterminator="\n")
        writer.writerow(["t_s", "p_Pa"])
        writer.writerows(
            (f"{t:.6g}", f"{p:.6g}") for t, p in zip(result.t, result.valve_pressure, strict=True)
        )
        sys.stdout.write(out.getvalue())
    else:
        lines = [
            f"valve {event.fixture.id} ({event.side}) at {event.point}, closes in "
            f"{event.closure_time * 1000:.0f} ms; {model} simulated, "
            f"dt {result.dt * 1000:.3f} ms, largest wave-speed adjustment "
            f"{result.max_wave_speed_adjustment * 100:.2f} %",
            f"peak {fmt(run.peak, 'pressure', units)} at t = {result.time_of_peak * 1000:.1f} ms "
            f"(screening said {fmt(event.unprotected_peak, 'pressure', units)}); minimum "
            f"{fmt(run.minimum, 'pressure', units)}",
            _cavities_line(run.cavities, units),
        ]
        lines += [f"note: {note}" for note in run.notes]
        for arrester, volume in sorted(run.sized_arresters.items()):
            lines.append(
                f"arrester {arrester}: no gas_volume given; an equivalent "
                f"{volume * 1e6:.0f} mL was sized from its class by the energy method"
            )
        if run.unstopped_arresters:
            lines.append(
                "arresters without a precharge (each a gas volume without a piston stop): "
                + ", ".join(sorted(run.unstopped_arresters))
            )
        lines.append("along the path (max / min):")
        lines += [
            f"  {pid}: {fmt(run.path_max[pid], 'pressure', units)} / "
            f"{fmt(run.path_min[pid], 'pressure', units)}"
            for pid in run.path_max
        ]
        console.print("\n".join(lines), soft_wrap=True, highlight=False, markup=False)
    return EXIT_OK


def _position(analysis: Any, element: str | None, event: Any) -> Position:
    """Where the layout writes ``element`` (a pipe, point, fixture or arrester id), else
    the event's fixture."""
    layout = analysis.layout
    groups = (layout.pipes, layout.fixtures, layout.arresters, layout.points, layout.supplies)
    for group in groups:
        for item in group:
            if item.id == element:
                return item.pos  # type: ignore[no-any-return]
    return event.fixture.pos  # type: ignore[no-any-return]


#: Cavities named in the text report; the JSON lists them all.
_CAVITIES_SHOWN = 5


def _cavities_line(cavities: list[Any], units: str) -> str:
    """``vapour cavities: 3 (at H1 48.4-52.0 ms; in P4 at 1.20 ft 50.1-51.0 ms; ...)``."""
    if not cavities:
        return "vapour cavities: none"
    parts = []
    for c in cavities[:_CAVITIES_SHOWN]:
        where = f"at {c.point}" if c.point else f"in {c.pipe} at {fmt(c.distance, 'length', units)}"
        until = f"-{c.collapsed * 1000:.1f} ms" if c.collapsed is not None else " ms, still open"
        parts.append(f"{where} {c.formed * 1000:.1f}{until}")
    more = len(cavities) - _CAVITIES_SHOWN
    tail = f"; and {more} more" if more > 0 else ""
    return f"vapour cavities: {len(cavities)} ({'; '.join(parts)}{tail})"


def _document(run: Any) -> dict[str, Any]:
    r, e = run.result, run.event
    return {
        "version": 1,
        "valve": e.fixture.id,
        "side": e.side,
        "peak_pressure": _clean(run.peak),
        "min_pressure": _clean(run.minimum),
        "time_of_peak": _clean(float(r.time_of_peak)),
        "cavitation": bool(r.cavitation),
        "dt": _clean(float(r.dt)),
        "max_wave_speed_adjustment": _clean(float(r.max_wave_speed_adjustment)),
        "duration": _clean(float(r.t[-1])),
        "notes": list(run.notes),
        "sized_arresters": {k: _clean(v) for k, v in sorted(run.sized_arresters.items())},
        "arresters_without_precharge": sorted(run.unstopped_arresters),
        "cavities": [
            {
                **(
                    {"point": c.point}
                    if c.point
                    else {"pipe": c.pipe, "distance": _clean(c.distance)}
                ),
                "formed": _clean(c.formed),
                "collapsed": None if c.collapsed is None else _clean(c.collapsed),
            }
            for c in run.cavities
        ],
        "path": {
            pid: {
                "max_pressure": _clean(run.path_max[pid]),
                "min_pressure": _clean(run.path_min[pid]),
            }
            for pid in run.path_max
        },
        "trace": {
            "t": [_clean(float(t)) for t in r.t],
            "p": [_clean(float(p)) for p in r.valve_pressure],
        },
    }
