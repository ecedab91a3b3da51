"""``check --transient`` and ``simulate`` on mutated layouts never crash or hang (hypothesis).

Issue 10, "Done when": each example takes a small layout (the per-rule cases with a
valve and arresters, and the two-bath house), changes some of its numbers and units
(closure times, lengths, pressures, elevations, sizes, gas volumes), and runs
``rulecheck.cli.main`` in-process on ``check --transient`` and on ``simulate`` of one of
its valves (sometimes with a ``--duration``). Whatever the values, every run must end
within a generous alarm, exit 0, 1 or 2, and print no traceback and no internal error;
an uncaught exception fails the example. 200 examples under ``CI=true``, 25 locally.
"""

from __future__ import annotations

import contextlib
import io
import os
import re
import signal
import tempfile
from collections.abc import Iterator
from pathlib import Path

from conftest import CASES, SAMPLES
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from rulecheck.cli import main

SOURCES = [
    CASES / "surge-peak" / "fail.yaml",
    CASES / "surge-peak" / "pass.yaml",
    CASES / "closure-time" / "fail.yaml",
    CASES / "column-separation" / "fail.yaml",
    CASES / "arrester-required" / "fail.yaml",
    CASES / "arrester-capacity" / "fail.yaml",
    SAMPLES / "two-bath-house.yaml",
]
TEXTS = {p.name if p.parent == SAMPLES else f"{p.parent.name}/{p.name}": p for p in SOURCES}

#: A number with a unit, as the layouts write them (``50 ft``, ``10 ms``, ``60 psi``).
QUANTITY = re.compile(r"(?<![\w.])(-?\d+(?:\.\d+)?(?:e-?\d+)?) ?(ft|in|m|psi|kPa|ms|s|degF|mL|L)\b")
UNITS = {
    "ft": ["ft", "in", "m"],
    "in": ["in", "ft", "mm"],
    "m": ["m", "ft"],
    "psi": ["psi", "kPa", "bar"],
    "kPa": ["kPa", "psi"],
    "ms": ["ms", "s"],
    "s": ["s", "ms"],
    "degF": ["degF", "degC"],
    "mL": ["mL", "L"],
    "L": ["L", "mL"],
}
MAGNITUDES = st.sampled_from(
    ["0", "1e-300", "1e-12", "0.001", "0.1", "0.5", "1", "2", "7", "30", "100", "400",
     "1e3", "1e5", "1e9", "1e14", "-1", "-50"]
)  # fmt: skip
#: A valve added or changed on a fixture: the closure times issue 10 names, and more.
CLOSURES = st.sampled_from(
    ["0.001 ms", "1e-12 s", "0 ms", "1 ms", "5 ms", "30 ms", "2 s", "10000 s", "1e12 s"]
)
DURATIONS = st.sampled_from([None, None, "0.05", "0.3", "1", "3", "1e5", "1e9", "inf", "nan"])
ALARM_S = 60  # a hang, not a slow run [D]

SETTINGS = settings(
    max_examples=200 if os.environ.get("CI", "").lower() == "true" else 25,
    deadline=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large],
)


@contextlib.contextmanager
def _alarm(seconds: int) -> Iterator[None]:
    """Fail a run that hangs (SIGALRM; where there is none, no guard)."""
    if not hasattr(signal, "SIGALRM"):
        yield
        return

    def hung(signum: int, frame: object) -> None:
        raise TimeoutError(f"a run took more than {seconds} s")

    previous = signal.signal(signal.SIGALRM, hung)
    signal.alarm(seconds)
    try:
        yield
    finally:
        signal.alarm(0)
        signal.signal(signal.SIGALRM, previous)


def _run(argv: list[str]) -> tuple[int, str]:
    out, err = io.StringIO(), io.StringIO()
    with _alarm(ALARM_S), contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        code = main(argv)
    return code, out.getvalue() + err.getvalue()


@st.composite
def mutants(draw: st.DrawFn) -> tuple[str, str]:
    """A layout text with some quantities changed, and a valve of it to simulate."""
    text = TEXTS[draw(st.sampled_from(sorted(TEXTS)))].read_text(encoding="utf-8")
    quantities = list(QUANTITY.finditer(text))
    chosen = draw(st.sets(st.integers(0, len(quantities) - 1), min_size=1, max_size=3))
    for i in sorted(chosen, reverse=True):  # from the end, so the offsets stay valid
        m = quantities[i]
        number = draw(st.one_of(MAGNITUDES, st.just(m.group(1))))
        unit = draw(st.sampled_from(UNITS[m.group(2)]))
        text = text[: m.start()] + f"{number} {unit}" + text[m.end() :]
    fixtures = re.findall(r"\{id: (\w+), type: [\w-]+, (cold|hot): \w+", text)
    if fixtures and draw(st.booleans()):  # give (or replace) one fixture's valve
        name, _ = draw(st.sampled_from(fixtures))
        line = re.search(rf"\{{id: {name}, type: [^\n]*\}}", text)
        if line is not None and "valve:" not in line.group(0):
            closure = draw(CLOSURES)
            new = line.group(0)[:-1] + f", valve: {{closure_time: {closure}}}}}"
            text = text.replace(line.group(0), new, 1)
    valve = ":".join(draw(st.sampled_from(fixtures))) if fixtures else "NONE"
    return text, valve


def _survives(code: int, output: str) -> None:
    assert code in (0, 1, 2), output
    assert "Traceback" not in output, output
    assert "internal error" not in output, output


@SETTINGS
@given(mutants(), DURATIONS)
def test_transient_commands_survive_mutated_numbers(
    mutant: tuple[str, str], duration: str | None
) -> None:
    text, valve = mutant
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "mutant.yaml"
        path.write_text(text, encoding="utf-8")
        _survives(*_run(["check", str(path), "--transient"]))
        argv = ["simulate", str(path), "--valve", valve, "--format", "json"]
        code, output = _run([*argv, "--duration", duration] if duration else argv)
        _survives(code, output)
        if duration in ("inf", "nan", "1e9"):
            assert code == 2, output


def test_the_mutation_finds_quantities_in_every_source() -> None:
    for name, path in TEXTS.items():
        assert QUANTITY.search(path.read_text(encoding="utf-8")), name
