"""Hostile and implausible values (issue 10, sections 2, 3 and 5): each is an input error.

Every row asserts exit status 2, ``file:line:column`` at the offending node (found in
the input text with ``conftest.locate``, never read back from rulecheck), a message
that says what to write, and no traceback. A run that would hang is stopped by a
generous alarm (30 s; the real figure is well under a second), so a regression fails
instead of stalling the suite.

- Unit text is a number and a unit: pint evaluates what it is given, so arithmetic
  ("45 ft*9^9^9") must never reach it.
- Values outside ``rulecheck.plausible.BOUNDS`` are refused at their node, in layouts
  and in ``rulecheck.toml`` limits.
- A pipe drawn against the flow is one problem that names the reversed pipe; its echoes
  (the fixture below it "on no network") are not reported.
- A bare closure time that could be milliseconds or seconds needs its unit.
"""

from __future__ import annotations

import re
import signal
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any

import pytest
import yaml
from conftest import CASES, MINIMAL, REPO, SAMPLES, locate, tweak

from rulecheck.errors import EXIT_INPUT
from rulecheck.input.plausible import BOUNDS, markdown_table
from rulecheck.units import QuantityError, to_si

Cli = Callable[..., tuple[int, str, str]]
P1 = (
    "  - {id: P1, from: SVC, to: J1, material: copper-l, size: 3/4, length: 20 ft, service: cold}\n"
)
J1 = "  - {id: J1, elevation: 0 ft}\n"
WC1 = (
    "  - {id: WC1, type: water-closet-tank, cold: J1, valve: {closing: slow, closure_time: 10 s}}\n"
)


@pytest.fixture(autouse=True)
def _no_hang() -> Iterator[None]:
    """Fail a test that runs for 30 s (each finishes in well under one)."""

    def stop(signum: int, frame: Any) -> None:
        raise TimeoutError("hung: an input took more than 30 s")

    previous = signal.signal(signal.SIGALRM, stop)
    signal.alarm(30)
    try:
        yield
    finally:
        signal.alarm(0)
        signal.signal(signal.SIGALRM, previous)


def _assert_input_error(
    rc: int, out: str, err: str, path: Path | str, text: str, needle: str, *fragments: str
) -> str:
    """Exit 2, an error at ``needle``'s position holding every fragment; return that line."""
    assert "Traceback" not in out + err
    assert rc == EXIT_INPUT, (rc, out, err)
    line, column = locate(text, needle)
    prefix = f"{path}:{line}:{column}: error: "
    matching = [x for x in err.splitlines() if x.startswith(prefix)]
    assert matching, (prefix, err)
    assert any(all(f in x for f in fragments) for x in matching), (fragments, err)
    return matching[0]


# ---- 1. unit text is a number and a unit ----------------------------------------------

ARITHMETIC = [
    ("length: 20 ft", "length: 45 ft*9^9^9"),
    ("length: 20 ft", "length: 45 ft**9**9"),
    ("length: 20 ft", "length: 20 ft^9^9"),
    ("length: 20 ft", "length: 20 ft*1e300"),
    ("length: 20 ft", "length: '20 (ft*9)'"),
    ("length: 20 ft", "length: 20 ft/s/s"),
    ("length: 20 ft", "length: 20 ft + 5 ft"),
    ("pressure: 60 psi", "pressure: 60 psi*9^9^9"),
    ("closure_time: 10 s", "closure_time: 10 s*9^9^9"),
]


@pytest.mark.parametrize(("old", "new"), ARITHMETIC, ids=[n for _, n in ARITHMETIC])
def test_arithmetic_in_a_unit_is_refused(
    write_layout: Callable[..., Path], cli: Cli, old: str, new: str
) -> None:
    text = tweak(MINIMAL, (old, new))
    path = write_layout(text)
    value = new.split(": ", 1)[1]
    rc, out, err = cli("check", path)
    _assert_input_error(rc, out, err, path, text, value, "no arithmetic", "such as '")


def test_arithmetic_in_a_config_limit_is_refused(tmp_path: Path, cli: Cli) -> None:
    """The same grammar guards rulecheck.toml: "8 ft/s*9^9^9" hung before it."""
    layout = tmp_path / "layout.yaml"
    layout.write_text(MINIMAL, encoding="utf-8")
    text = '[rules.velocity-limit]\nlimits = { cold = "8 ft/s*9^9^9" }\n'
    config = tmp_path / "strict.toml"
    config.write_text(text, encoding="utf-8")
    rc, out, err = cli("check", "--config", config, layout)
    _assert_input_error(rc, out, err, config, text, "cold", "no arithmetic", "'8 ft/s'")


DOCUMENTED = [  # layout-format.md, "Quantities", and the units each kind is shown in
    ("12 ft", "length"),
    ("3.6 m", "length"),
    ("450 kPa", "pressure"),
    ("65 psi", "pressure"),
    ("30 ms", "time"),
    ("2.5 gpm", "flow"),
    ("0.2 L/s", "flow"),
    ("55 degF", "temperature"),
    ("13 degC", "temperature"),
    ("8 ft/s", "velocity"),
    ("0.625 in", "diameter"),
    ("1 L", "volume"),
    ("117 GPa", "pressure"),
    ("55 °F", "temperature"),
    ("2 lbf/in^2", "pressure"),  # a unit's own small power is a unit, not arithmetic
    ("0.001 m³/s", "flow"),
    ("2 ft / s", "velocity"),
]


@pytest.mark.parametrize(("text", "kind"), DOCUMENTED)
def test_documented_spellings_parse(text: str, kind: str) -> None:
    assert to_si(text, kind, "us") > 0


@pytest.mark.parametrize("size", ["1/2", "3/4", "1-1/4", "1/2 in"])
def test_size_labels_are_not_quantities(size: str) -> None:
    """layout-format.md: "Pipe size is a label from the material's size table, not a length"."""
    with pytest.raises(QuantityError):
        to_si(size, "length", "us")


QUANTITY_KEYS = {
    "length",
    "elevation",
    "pressure",
    "min",
    "max",
    "flow",
    "min_pressure",
    "closure_time",
    "temperature",
    "cold_temperature",
    "hot_temperature",
    "loss",
    "set_pressure",
    "gas_volume",
    "precharge",
    "modulus",
    "roughness",
    "outside_diameter",
    "wall",
    "demand",
    "fittings",
    "arrester_distance",
    "surge_limit",
}
_UNIT_PART = re.compile(r"^\s*[-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?\s*(\S.*?)\s*$")


def _quantity_texts(node: Any, key: str = "") -> Iterator[str]:
    """Every string under a quantity key, and every "number unit" string of a rule limit."""
    if isinstance(node, dict):
        for k, v in node.items():
            yield from _quantity_texts(v, "limit" if k == "limits" else key if key else str(k))
            if isinstance(v, str) and (k in QUANTITY_KEYS or key == "limit"):
                yield v
    elif isinstance(node, list):
        for item in node:
            yield from _quantity_texts(item, key)


def test_every_unit_spelling_in_the_repository_still_parses() -> None:
    """samples/, rules/ and tests/cases: each quantity text converts with one of the kinds."""
    files = [*SAMPLES.glob("*.yaml"), *(REPO / "rules").rglob("*.yaml"), *CASES.rglob("*.yaml")]
    units: set[str] = set()
    for file in files:
        for text in _quantity_texts(yaml.safe_load(file.read_text(encoding="utf-8"))):
            match = _UNIT_PART.match(text)
            if not match:
                continue  # a bare number in a string, or a fraction label
            kinds = [
                k
                for k in (
                    "length",
                    "pressure",
                    "time",
                    "flow",
                    "velocity",
                    "temperature",
                    "volume",
                    "diameter",
                )
                if _converts(text, k)
            ]
            assert kinds, f"{file}: {text!r} no longer parses"
            units.add(match.group(1))
    # The spellings the repository uses today (a new one is fine; a lost one is not).
    assert {
        "ft",
        "in",
        "psi",
        "kPa",
        "GPa",
        "gpm",
        "ms",
        "s",
        "degF",
        "degC",
        "mm",
        "ft/s",
    } <= units


def _converts(text: str, kind: str) -> bool:
    try:
        to_si(text, kind, "us")
    except QuantityError:
        return False
    return True


# ---- 2. implausible values, at their node ----------------------------------------------

PIPE2 = (
    "  - {id: P2, from: J1, to: J2, material: copper-l, size: 3/4, length: 20 ft, service: cold}\n"
)
IMPLAUSIBLE: list[tuple[str, list[tuple[str, str]], str, str, list[str]]] = [
    # (id, replacements, appended text, needle, fragments)
    ("length 1e14 ft", [("length: 20 ft", "length: 1e14 ft")], "", "1e14 ft", ["above 10 km"]),
    ("length 1e9 ft", [("length: 20 ft", "length: 1e9 ft")], "", "1e9 ft", ["above 10 km"]),
    ("length 1e-300 ft", [("length: 20 ft", "length: 1e-300 ft")], "", "1e-300", ["below 1 mm"]),
    ("bare length 1e14", [("length: 20 ft", "length: 1e14")], "", "1e14", ["pipe length"]),
    (
        "closure 1e12 s",
        [("closure_time: 10 s", "closure_time: 1e12 s")],
        "",
        "1e12 s",
        ["above 1 h"],
    ),
    (
        "closure 1e-12 s",
        [("closure_time: 10 s", "closure_time: 1e-12 s")],
        "",
        "1e-12",
        ["below 1 ms"],
    ),
    ("supply 1e11 psi", [("pressure: 60 psi", "pressure: 1e11 psi")], "", "1e11", ["above 10 MPa"]),
    (
        "supply max 1e11 psi",
        [("pressure: 60 psi", "pressure: {min: 50 psi, max: 1e11 psi}")],
        "",
        "1e11",
        ["above 10 MPa"],
    ),
    (
        "point elevation 1e14 ft",
        [(J1, "  - {id: J1, elevation: 1e14 ft}\n")],
        "",
        "1e14",
        ["elevation"],
    ),
    (
        "supply elevation 1e14 ft",
        [("    elevation: 0 ft\n", "    elevation: 1e14 ft\n")],
        "",
        "1e14",
        ["above 9 km"],
    ),
    (
        "fixture flow 1e6 gpm",
        [("cold: J1,", "cold: J1, flow: 1e6 gpm,")],
        "",
        "1e6",
        ["fixture flow"],
    ),
    (
        "fixture flow 1e-300 gpm",
        [("cold: J1,", "cold: J1, flow: 1e-300 gpm,")],
        "",
        "1e-300",
        ["below"],
    ),
    (
        "pipe demand 1e6 gpm",
        [("service: cold}", "service: cold, demand: 1e6 gpm}")],
        "",
        "1e6",
        ["design flow"],
    ),
    (
        "fittings 1e14 ft",
        [("service: cold}", "service: cold, fittings: 1e14 ft}")],
        "",
        "1e14",
        ["fittings"],
    ),
    (
        "fixture pressure 1e9 psi",
        [("cold: J1,", "cold: J1, min_pressure: 1e9 psi,")],
        "",
        "1e9",
        ["10 MPa"],
    ),
    (
        "supply 0 psi above every point",
        [("pressure: 60 psi", "pressure: 0 psi")],
        "",
        "0 psi",
        ["supply SVC has no pressure above atmospheric", "no water flows", "tank above"],
    ),
    (
        "supply max 0 psi",
        [("pressure: 60 psi", "pressure: {min: 0 psi, max: 0 psi}")],
        "",
        "0 psi}",
        ["no pressure above atmospheric"],
    ),
    (
        "arrester gas volume 1e9 gal",
        [],
        "arresters:\n  - {id: A1, at: J1, rating: A, gas_volume: 1e9 gal}\n",
        "1e9 gal",
        ["arrester gas volume", "surge tank"],
    ),
    (
        "reducing valve set at 0 psi",
        [],
        "devices:\n  - {id: PRV1, kind: pressure-reducing, on: P1, set_pressure: 0 psi}\n",
        "0 psi}",
        ["at or below 0 kPa", "delivers no water"],
    ),
    (
        "meter loss 1e9 psi",
        [],
        "devices:\n  - {id: M1, kind: meter, on: P1, loss: 1e9 psi}\n",
        "1e9 psi",
        ["pressure loss", "above 10 MPa"],
    ),
    (
        "hot water at 1e6 degF",
        [],
        "water:\n  hot_temperature: 1e6 degF\n",
        "1e6 degF",
        ["outside liquid water"],
    ),
    (
        "project fixture type closing in 1e-12 s",
        [
            ("type: water-closet-tank", "type: my-valve"),
            ("valve: {closing: slow, closure_time: 10 s}", "valve: {}"),
        ],
        "fixture_types:\n  - {id: my-valve, wsfu: {cold: 1}, flow: 2 gpm, min_pressure: 8 psi,"
        " valve: {closing: quick, closure_time: 1e-12 s}, source: invented}\n",
        "1e-12 s",
        ["valve closure time", "below 1 ms"],
    ),
]


@pytest.mark.parametrize(
    ("replacements", "append", "needle", "fragments"),
    [pytest.param(r, a, n, f, id=i) for i, r, a, n, f in IMPLAUSIBLE],
)
@pytest.mark.parametrize(
    "command", [("check",), ("check", "--transient"), ("simulate", "--valve", "WC1")]
)
def test_implausible_values_are_refused_at_their_node(
    write_layout: Callable[..., Path],
    cli: Cli,
    command: tuple[str, ...],
    replacements: list[tuple[str, str]],
    append: str,
    needle: str,
    fragments: list[str],
) -> None:
    """Refused before any computation: plain check, check --transient and simulate alike."""
    text = tweak(MINIMAL, *replacements, append=append)
    path = write_layout(text)
    rc, out, err = cli(*command, path)
    _assert_input_error(rc, out, err, path, text, needle, *fragments)


def test_every_bound_message_gives_the_range(write_layout: Callable[..., Path], cli: Cli) -> None:
    text = tweak(MINIMAL, ("length: 20 ft", "length: 1e9 ft"))
    path = write_layout(text)
    rc, out, err = cli("check", path)
    assert "the plausible range is 1 mm to 10 km; check the number and its unit" in err


@pytest.mark.parametrize(
    ("replacements", "append"),
    [
        # A roof tank at 0 psi gauge above the point it feeds: static head by elevation alone.
        (
            [
                ("pressure: 60 psi", "pressure: 0 psi"),
                ("    elevation: 0 ft\n", "    elevation: 80 ft\n"),
            ],
            "",
        ),
        ([("length: 20 ft", "length: 0.01 ft")], ""),  # 3 mm: a short nipple, not a typo
        ([("closure_time: 10 s", "closure_time: 2 ms")], ""),
        ([("closure_time: 10 s", "closure_time: 0.5")], ""),  # bare below 1: seconds (format)
        ([("pressure: 60 psi", "pressure: 1400 psi")], ""),  # below 10 MPa: a finding, not an error
        ([(J1, "  - {id: J1, elevation: -300 ft}\n")], ""),
    ],
    ids=["tank at 0 psi", "3 mm pipe", "2 ms closure", "bare 0.5 s", "1400 psi", "-300 ft"],
)
def test_plausible_edges_are_accepted(
    write_layout: Callable[..., Path], cli: Cli, replacements: list[tuple[str, str]], append: str
) -> None:
    path = write_layout(tweak(MINIMAL, *replacements, append=append))
    rc, out, err = cli("check", path, "--fail-on", "never")
    assert rc == 0, err
    assert "Traceback" not in out + err


def test_every_bound_has_a_reason_and_an_ordered_range() -> None:
    """Each side of each bound says why, tagged with how we know it."""
    tags = ("[physical]", "[common practice", "[from memory", "[S:", "[D]")
    for role, bound in BOUNDS.items():
        assert bound.low_si < bound.high_si, role
        for why in (bound.low_why, bound.high_why):
            assert any(tag in why for tag in tags), (role, why)


def test_developers_md_shows_the_table() -> None:
    """DEVELOPERS.md carries the bounds as the code holds them (one table, no drift)."""
    text = (REPO / "DEVELOPERS.md").read_text(encoding="utf-8")
    assert markdown_table() in text


# ---- 3. rulecheck.toml limits are range-checked -----------------------------------------

LIMITS = [
    (
        "static-pressure",
        'max_static = "-80 psi"',
        "max_static",
        ["below a perfect vacuum", "gauge"],
    ),
    ("static-pressure", 'max_static = "0 psi"', "max_static", ["at or below 0 kPa"]),
    ("static-pressure", 'max_static = "1e9 psi"', "max_static", ["above 10 MPa"]),
    ("velocity-limit", 'cold = "0 ft/s"', "cold", ["at or below 0 m/s", "every pipe"]),
    ("velocity-limit", 'cold = "-8 ft/s"', "cold", ["velocity limit"]),
    ("velocity-limit", 'cold = "100 ft/s"', "cold", ["above 15 m/s"]),
    (
        "velocity-limit",
        'hot_copper_threshold = "-1000 degF"',
        "hot_copper_threshold",
        ["below absolute zero"],
    ),
    (
        "velocity-limit",
        'hot_copper_threshold = "300 degF"',
        "hot_copper_threshold",
        ["liquid water"],
    ),
]


@pytest.mark.parametrize(
    ("rule", "setting", "needle", "fragments"), LIMITS, ids=[s for _, s, _, _ in LIMITS]
)
def test_config_limits_are_range_checked(
    tmp_path: Path, cli: Cli, rule: str, setting: str, needle: str, fragments: list[str]
) -> None:
    layout = tmp_path / "layout.yaml"
    layout.write_text(MINIMAL, encoding="utf-8")
    text = f"# team limits\n[rules.{rule}]\nlimits = {{ {setting} }}\n"
    config = tmp_path / "team.toml"
    config.write_text(text, encoding="utf-8")
    rc, out, err = cli("check", "--config", config, layout)
    line = _assert_input_error(rc, out, err, config, text, needle, *fragments)
    assert "the plausible range is" in line


# ---- 4. a pipe drawn against the flow: one cause, no echoes -------------------------------


def _pipe(ident: str, start: str, end: str) -> str:
    return (
        f"  - {{id: {ident}, from: {start}, to: {end}, material: copper-l, size: 3/4, "
        "length: 10 ft, service: cold}\n"
    )


def _fixture(ident: str, point: str) -> str:
    valve = "{closing: slow, closure_time: 2 s}"
    return f"  - {{id: {ident}, type: lavatory, cold: {point}, valve: {valve}}}\n"


def _points(*ids: str) -> str:
    return J1 + "".join(f"  - {{id: {i}, elevation: 0 ft}}\n" for i in ids)


def _errors(err: str) -> list[str]:
    return [x for x in err.splitlines() if ": error: " in x]


@pytest.mark.parametrize("first", [False, True], ids=["listed after P1", "listed before P1"])
def test_reversed_pipe_is_one_problem_naming_the_fix(
    write_layout: Callable[..., Path], cli: Cli, first: bool
) -> None:
    """P2 drawn from J2 to J1 (J1 already fed by P1), fixture KS1 at J2, and P3 below J2."""
    extra = _pipe("P2", "J2", "J1")
    pipes = extra + P1 if first else P1 + extra
    text = tweak(
        MINIMAL,
        (J1, _points("J2", "J3")),
        (P1, pipes + _pipe("P3", "J2", "J3")),
        append=_fixture("KS1", "J2") + _fixture("KS2", "J3"),
    )
    path = write_layout(text)
    rc, out, err = cli("check", path)
    line = _assert_input_error(
        rc, out, err, path, text, "{id: P2", "'from' is the upstream end", "'from: J1, to: J2'"
    )
    assert "against the flow" in line
    assert _errors(err) == [line]  # not "KS1 is on no network", nor "P3 hangs from J2"
    assert "hot-return" not in err


def test_pipe_into_a_supply_names_the_fix(write_layout: Callable[..., Path], cli: Cli) -> None:
    text = tweak(MINIMAL, (P1, P1.replace("from: SVC, to: J1", "from: J1, to: SVC")))
    path = write_layout(text)
    rc, out, err = cli("check", path)
    line = _assert_input_error(
        rc, out, err, path, text, "SVC, material", "runs into supply SVC", "'from: SVC, to: J1'"
    )
    assert _errors(err) == [line]


def test_cold_loop_is_not_told_to_use_hot_return(
    write_layout: Callable[..., Path], cli: Cli
) -> None:
    """A detached cold loop with a fixture on it: one problem, cold words, no echo."""
    text = tweak(
        MINIMAL,
        (J1, _points("J2", "J3")),
        (P1, P1 + _pipe("P2", "J2", "J3") + _pipe("P3", "J3", "J2")),
        append=_fixture("KS1", "J3"),
    )
    path = write_layout(text)
    rc, out, err = cli("check", path)
    line = _assert_input_error(
        rc, out, err, path, text, "{id: P2", "form a loop", "cold water may not loop"
    )
    assert _errors(err) == [line]
    assert "hot-return" not in err


def test_fed_cold_loop_names_the_loop(write_layout: Callable[..., Path], cli: Cli) -> None:
    text = tweak(
        MINIMAL,
        (J1, _points("J2", "J3")),
        (P1, P1 + _pipe("P2", "J1", "J2") + _pipe("P3", "J2", "J3") + _pipe("P4", "J3", "J1")),
    )
    path = write_layout(text)
    rc, out, err = cli("check", path)
    _assert_input_error(
        rc, out, err, path, text, "{id: P4", "P2 → P3 → P4 close a loop back to J1", "may not loop"
    )
    assert "hot-return" not in err


def test_orphan_chain_is_reported_once(write_layout: Callable[..., Path], cli: Cli) -> None:
    """J5 → J6 → J7 fed by nothing, a fixture at J7: one problem at the top pipe."""
    text = tweak(
        MINIMAL,
        (J1, _points("J5", "J6", "J7")),
        (P1, P1 + _pipe("P3", "J6", "J7") + _pipe("P2", "J5", "J6")),
        append=_fixture("KS1", "J7"),
    )
    path = write_layout(text)
    rc, out, err = cli("check", path)
    line = _assert_input_error(rc, out, err, path, text, "{id: P2", "P2 hangs from J5")
    assert _errors(err) == [line]


# ---- 5. a bare closure time that may be ms or s -----------------------------------------------


@pytest.mark.parametrize("bare", ["20", "'20'", "1", "150"])
@pytest.mark.parametrize("units", ["us", "si"])
def test_ambiguous_bare_closure_time_needs_its_unit(
    write_layout: Callable[..., Path], cli: Cli, bare: str, units: str
) -> None:
    text = tweak(
        MINIMAL,
        ("units: us", f"units: {units}"),
        ("closure_time: 10 s", f"closure_time: {bare}"),
    )
    path = write_layout(text)
    rc, out, err = cli("check", path)
    number = bare.strip("'")
    _assert_input_error(
        rc,
        out,
        err,
        path,
        text,
        f"{bare}}}",  # the value, just before the closing brace
        "has no unit",
        f"'closure_time: {number} ms'",
        f"'closure_time: {number} s'",
    )


def test_ambiguous_bare_closure_time_in_a_project_fixture_type(
    write_layout: Callable[..., Path], cli: Cli
) -> None:
    text = tweak(
        MINIMAL,
        ("type: water-closet-tank", "type: my-solenoid"),
        ("valve: {closing: slow, closure_time: 10 s}", "valve: {}"),
        append="fixture_types:\n  - {id: my-solenoid, wsfu: {cold: 1}, flow: 2 gpm, "
        "min_pressure: 8 psi, valve: {closing: quick, closure_time: 20}, source: invented}\n",
    )
    path = write_layout(text)
    rc, out, err = cli("check", path)
    _assert_input_error(rc, out, err, path, text, "20}, source", "'closure_time: 20 ms'")


def test_a_closure_time_with_its_unit_is_screened(
    write_layout: Callable[..., Path], cli: Cli
) -> None:
    """Written with its unit, a solenoid-fast valve (20 ms, quick) keeps its arrester finding."""
    text = tweak(
        MINIMAL,
        (
            "type: water-closet-tank, cold: J1, valve: {closing: slow, closure_time: 10 s}",
            "type: lavatory, cold: J1, valve: {closing: quick, closure_time: 20 ms}",
        ),
    )
    path = write_layout(text)
    rc, out, err = cli("check", path, "--format", "json", "--fail-on", "never")
    assert rc == 0, err
    assert '"arrester-required"' in out
