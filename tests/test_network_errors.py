"""Topology errors (layout-format.md, "Pipes" and "Fixtures"): exit 2, the elements named, the line.

Within one service the pipes form a tree rooted at a supply (cold) or a heater
outlet (hot); a loop, a point no source reaches, a second feed, hot water
without a heater and a fixture side on the wrong network are input errors.
Every case starts from ``MINIMAL`` (SVC -> P1 -> J1, fixture WC1 at J1).
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

import pytest
from conftest import MINIMAL, locate, tweak

from rulecheck.errors import EXIT_INPUT

P1 = (
    "  - {id: P1, from: SVC, to: J1, material: copper-l, size: 3/4, length: 20 ft, service: cold}\n"
)
J1 = "  - {id: J1, elevation: 0 ft}\n"


def pipe(ident: str, start: str, end: str, service: str = "cold") -> str:
    return (
        f"  - {{id: {ident}, from: {start}, to: {end}, material: copper-l, size: 3/4, "
        f"length: 10 ft, service: {service}}}\n"
    )


def points(*ids: str) -> str:
    return J1 + "".join(f"  - {{id: {i}, elevation: 0 ft}}\n" for i in ids)


HEATER = "heaters:\n  - {id: WH1, inlet: J1, outlet: H0}\n"

# (case id, extra points, extra pipes, extra text, needle of the reported element,
#  fragments the message must contain; "{P1}" stands for the line of pipe P1)
CASES = [
    (
        "loop detached from the supply",
        points("J2", "J3"),
        pipe("P2", "J2", "J3") + pipe("P3", "J3", "J2"),
        "",
        "{id: P2",
        ["the cold pipes", "form a loop", "P2", "P3"],
    ),
    (
        "loop back to the main (second feed)",
        points("J2", "J3"),
        pipe("P2", "J1", "J2") + pipe("P3", "J2", "J3") + pipe("P4", "J3", "J1"),
        "",
        "{id: P4",
        ["point J1 is fed by two cold pipes", "P1 (line {P1})", "P4"],
    ),
    (
        "second feed from a second supply",
        "",
        pipe("P2", "SVC2", "J1"),
        "",
        "{id: P2",
        ["point J1 is fed by two cold pipes", "P1", "P2"],
    ),
    (
        "hot pipe hanging from a cold point without a heater",
        points("H1"),
        pipe("P2", "J1", "H1", "hot"),
        "",
        "{id: P2",
        ["hot pipe P2 hangs from J1", "no heater outlet feeds", "heater upstream"],
    ),
    (
        "hot pipe starting at a supply",
        points("H1"),
        pipe("P2", "SVC", "H1", "hot"),
        "",
        "{id: P2",
        ["hot pipe P2 is fed from SVC", "not a heater outlet"],
    ),
    (
        "unreachable cold pipe",
        points("J5", "J6"),
        pipe("P2", "J5", "J6"),
        "",
        "{id: P2",
        ["cold pipe P2 hangs from J5", "no supply feeds"],
    ),
    (
        "point with no pipe",
        points("J9"),
        "",
        "",
        "{id: J9",
        ["point J9 is not connected to any pipe"],
    ),
    (
        "fixture cold side on a hot point",
        points("H0", "H1"),
        pipe("P2", "H0", "H1", "hot"),
        HEATER + "  - {id: L9, type: lavatory, cold: H1, valve: {closing: slow}}\n",
        "{id: L9",
        ["fixture L9: its cold side is at H1", "on the hot network"],
    ),
    (
        "fixture hot side on a cold point",
        points("H0", "H1"),
        pipe("P2", "H0", "H1", "hot"),
        HEATER + "  - {id: L9, type: lavatory, hot: J1, valve: {closing: slow}}\n",
        "{id: L9",
        ["fixture L9: its hot side is at J1", "on the cold network"],
    ),
    (
        "pipe from a point to itself",
        "",
        pipe("P2", "J1", "J1"),
        "",
        "{id: P2",
        ["pipe P2 starts and ends at J1"],
    ),
    (
        "hot pipe running into the heater outlet",
        points("H0", "H1"),
        pipe("P2", "H0", "H1", "hot") + pipe("P3", "H1", "H0", "hot"),
        HEATER,
        "{id: P3",
        ["hot pipe P3 runs into H0", "source of the hot service"],
    ),
    (
        "point joining cold and hot pipes",
        points("H0", "H1"),
        pipe("P2", "H0", "H1", "hot") + pipe("P3", "J1", "H1", "cold"),
        HEATER,
        "{id: H1",
        ["point H1 joins cold and hot pipes"],
    ),
    (
        "one outlet fed by two heaters (second feed)",
        points("H0", "H1"),
        pipe("P2", "H0", "H1", "hot"),
        "heaters:\n  - {id: WH1, inlet: J1, outlet: H0}\n  - {id: WH2, inlet: J1, outlet: H0}\n",
        "{id: WH2",
        ["H0", "WH1", "WH2"],
    ),
    (
        "heater inlet not on the cold network",
        points("H0", "H1", "J5"),
        pipe("P2", "H0", "H1", "hot"),
        "heaters:\n  - {id: WH1, inlet: J5, outlet: H0}\n",
        "{id: WH1",
        ["heater WH1 inlet J5 is not on the cold network"],
    ),
]


def _layout(extra_points: str, extra_pipes: str, extra: str) -> str:
    text = tweak(
        MINIMAL, (J1, points() if not extra_points else extra_points), (P1, P1 + extra_pipes)
    )
    if "SVC2" in extra_pipes:
        text = tweak(
            text,
            ("    elevation: 0 ft\n", "    elevation: 0 ft\n  - {id: SVC2, pressure: 50 psi}\n"),
        )
    if extra.startswith("heaters:") and "  - {id: L9" in extra:
        heater, fixture = extra.split("  - {id: L9", 1)
        text = tweak(text, ("fixtures:\n", "fixtures:\n  - {id: L9" + fixture), append=heater)
    else:
        text += extra
    return text


@pytest.mark.parametrize(
    ("extra_points", "extra_pipes", "extra", "needle", "fragments"),
    [pytest.param(p, q, e, n, f, id=i) for i, p, q, e, n, f in CASES],
)
def test_topology_error(
    write_layout: Callable[..., Path],
    cli: Callable[..., tuple[int, str, str]],
    extra_points: str,
    extra_pipes: str,
    extra: str,
    needle: str,
    fragments: list[str],
) -> None:
    text = _layout(extra_points, extra_pipes, extra)
    path = write_layout(text)
    line, col = locate(text, needle)
    rc, out, err = cli("check", path)
    assert "Traceback" not in out + err
    assert rc == EXIT_INPUT, (out, err, text)
    expected = f"{path}:{line}:{col}: error: "
    matching = [x for x in err.splitlines() if x.startswith(expected)]
    assert matching, (expected, err)
    fragments = [f.format(P1=locate(text, "{id: P1")[0]) for f in fragments]
    assert any(all(f in x for f in fragments) for x in matching), (fragments, err)


def test_each_topology_problem_is_reported_once(
    write_layout: Callable[..., Path], cli: Callable[..., tuple[int, str, str]]
) -> None:
    """A detached two-pipe loop is one problem, not one per pipe; a separate unconnected
    point in the same file is reported beside it (all problems at once)."""
    text = _layout(points("J2", "J3", "J9"), pipe("P2", "J2", "J3") + pipe("P3", "J3", "J2"), "")
    path = write_layout(text)
    rc, out, err = cli("check", path)
    assert rc == EXIT_INPUT
    errors = [x for x in err.splitlines() if ": error: " in x]
    assert len(errors) == 2, err
    assert sum("form a loop" in x for x in errors) == 1
    assert sum("point J9 is not connected" in x for x in errors) == 1


def test_hot_return_may_close_a_loop(
    write_layout: Callable[..., Path], cli: Callable[..., tuple[int, str, str]]
) -> None:
    """layout-format.md: "hot-return pipes may close loops and are left out of the demand tree"."""
    text = _layout(
        points("H0", "H1"),
        pipe("P2", "H0", "H1", "hot") + pipe("R1", "H1", "H0", "hot-return"),
        HEATER,
    )
    path = write_layout(text)
    rc, out, err = cli("check", path, "--fail-on", "never")
    assert rc == 0, err
