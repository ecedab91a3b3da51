"""Input errors: exit status 2, ``path:line:col: error: ...`` at the offending node, no traceback.

The contract is layout-format.md ("Quantities": a unit of the wrong kind, a
negative or zero length, a non-finite number or an unknown unit is an input
error reported with its file, line and column; every id is unique across the
file) and the exit codes of ``rulecheck.errors``. Expected positions are
computed from the layout text with :func:`conftest.locate`, never read back from
rulecheck's own output.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

import pytest
from conftest import MINIMAL, locate, tweak

from rulecheck.errors import EXIT_INPUT

HUGE = "1" + "0" * 400  # a YAML integer far beyond the float range (1e400)

# (case id, replacements, text appended, needle whose first character is the reported node,
#  occurrence of the needle, message fragment)
CASES: list[tuple[str, list[tuple[str, str]], str, str, int, str]] = [
    (
        "unknown key (points at the key)",
        [("service: cold}", "service: cold, colour: red}")],
        "",
        "colour",
        1,
        "unknown key 'colour'",
    ),
    (
        "unknown key inside a supply pressure mapping (points at the key)",
        [("pressure: 60 psi", "pressure: {min: 50 psi, max: 70 psi, avg: 60 psi}")],
        "",
        "avg",
        1,
        "unknown key 'avg'",
    ),
    (
        "unknown key inside a fixture's wsfu mapping (points at the key)",
        [("cold: J1,", "cold: J1, wsfu: {cold: 1, warm: 2},")],
        "",
        "warm",
        1,
        "unknown key 'warm'",
    ),
    ("huge integer length", [("length: 20 ft", f"length: {HUGE}")], "", HUGE, 1, ""),
    ("huge integer pressure", [("pressure: 60 psi", f"pressure: {HUGE}")], "", HUGE, 1, ""),
    ("huge integer wsfu", [("cold: J1,", f"cold: J1, wsfu: {HUGE},")], "", HUGE, 1, ""),
    (
        "huge integer arrester rating",
        [],
        f"arresters:\n  - {{id: A1, at: J1, rating: {HUGE}}}\n",
        HUGE,
        1,
        "",
    ),
    (
        "control character (points at it)",
        [("Minimal test layout", "Minimal\x07layout")],
        "",
        "\x07",
        1,
        "control",
    ),
    (
        "project-local fixture type clashing with a built-in id",
        [],
        "fixture_types:\n  - {id: lavatory, wsfu: {cold: 1}, flow: 1 gpm, min_pressure: 8 psi, "
        "source: x}\n",
        "lavatory,",
        1,
        "'lavatory' is a built-in fixture type id",
    ),
    ("unknown top-level key", [], "extras: 1\n", "extras", 1, "unknown key 'extras'"),
    (
        "missing required key (points at the mapping)",
        [(", service: cold}", "}")],
        "",
        "{id: P1",
        1,
        "missing the required key 'service'",
    ),
    (
        "wrong type",
        [("name: Minimal test layout", "name: 12")],
        "",
        "12",
        1,
        "should be text, not a number",
    ),
    (
        "wrong type of a section",
        [("points:\n  - {id: J1, elevation: 0 ft}", "points: {id: J1}")],
        "",
        "{id: J1}",
        1,
        "should be a list",
    ),
    (
        "wrong enum",
        [("service: cold", "service: cool")],
        "",
        "cool",
        1,
        "expected one of: cold, hot, hot-return",
    ),
    (
        "wrong enum of units",
        [("units: us", "units: imperial")],
        "",
        "imperial",
        1,
        "expected one of: us, si",
    ),
    ("bad id pattern", [("{id: P1,", "{id: 9P,")], "", "9P", 1, "is not a valid id"),
    ("bad reference pattern", [("to: J1,", "to: J 1,")], "", "J 1", 1, "is not a valid id"),
    (
        "wrong kind of unit",
        [("length: 20 ft", "length: 5 psi")],
        "",
        "5 psi",
        1,
        "not a unit of length",
    ),
    (
        "unknown unit",
        [("length: 20 ft", "length: 20 furlongz")],
        "",
        "20 furlongz",
        1,
        "unknown unit 'furlongz'",
    ),
    (
        "unbalanced parenthesis in a unit",
        [("length: 20 ft", "length: 20 (ft")],
        "",
        "20 (ft",
        1,
        "unknown unit",
    ),
    ("nan ft", [("length: 20 ft", "length: nan ft")], "", "nan ft", 1, "length"),
    ("YAML .nan length", [("length: 20 ft", "length: .nan")], "", ".nan", 1, "finite"),
    ("YAML .inf pressure", [("pressure: 60 psi", "pressure: .inf")], "", ".inf", 1, "finite"),
    ("negative length", [("length: 20 ft", "length: -5 ft")], "", "-5 ft", 1, "greater than zero"),
    (
        "zero length",
        [("length: 20 ft", "length: 0 ft")],
        "",
        "0 ft, service",
        1,
        "greater than zero",
    ),
    (
        "negative supply pressure",
        [("pressure: 60 psi", "pressure: -3 psi")],
        "",
        "-3 psi",
        1,
        "must not be negative",
    ),
    (
        "duplicate id across kinds",
        [],
        "arresters:\n  - {id: SVC, at: J1, rating: A}\n",
        "SVC",
        3,
        "id 'SVC' is used twice (first at line 7)",
    ),
    ("unknown material", [("copper-l", "brass-x")], "", "brass-x", 1, "unknown material 'brass-x'"),
    (
        "unknown size",
        [("size: 3/4", "size: 7/8")],
        "",
        "7/8",
        1,
        "size '7/8' is not in the copper-l table",
    ),
    (
        "unknown fixture type",
        [("water-closet-tank", "jacuzzi")],
        "",
        "jacuzzi",
        1,
        "unknown fixture type 'jacuzzi'",
    ),
    (
        "dangling reference",
        [("to: J1,", "to: J9,")],
        "",
        "J9",
        1,
        "'to: J9' names no point in this file",
    ),
    (
        "dangling fixture side",
        [("cold: J1,", "cold: J7,")],
        "",
        "J7",
        1,
        "'cold: J7' names no point",
    ),
    (
        "waiver without reason",
        [],
        "waivers:\n  - rule: velocity-limit\n    element: P1\n",
        "rule: velocity-limit",
        1,
        "missing the required key 'reason'",
    ),
    (
        "waiver with a blank reason",
        [],
        "waivers:\n  - {rule: velocity-limit, element: P1, reason: '   '}\n",
        "'   '",
        1,
        "a waiver needs a non-empty 'reason'",
    ),
    (
        "waiver for an unknown rule",
        [],
        "waivers:\n  - {rule: speed-limit, element: P1, reason: accepted}\n",
        "speed-limit",
        1,
        "unknown rule 'speed-limit'",
    ),
    (
        "waiver for an unknown element",
        [],
        "waivers:\n  - {rule: velocity-limit, element: P99, reason: accepted}\n",
        "P99",
        1,
        "'element: P99' names nothing in this file",
    ),
    (
        "duplicate key",
        [("    elevation: 0 ft\n", "    elevation: 0 ft\n    elevation: 2 ft\n")],
        "",
        "elevation: 2 ft",
        1,
        "key 'elevation' appears twice in this mapping (first at line 9)",
    ),
    (
        "YAML syntax error",
        [("name: Minimal test layout", "name: @bad")],
        "",
        "@bad",
        1,
        "YAML syntax",
    ),
    (
        "heater outlet names a pipe",
        [],
        "heaters:\n  - {id: WH1, inlet: J1, outlet: P1}\n",
        "P1}",
        1,
        "'outlet: P1' names no point",
    ),
    (
        "pressure-reducing device without set pressure",
        [],
        "devices:\n  - {id: PRV1, kind: pressure-reducing, on: P1}\n",
        "{id: PRV1",
        1,
        "needs 'set_pressure'",
    ),
    (
        "supply min above max",
        [("pressure: 60 psi", "pressure: {min: 70 psi, max: 60 psi}")],
        "",
        "{min: 70 psi",
        1,
        "'min' is above 'max'",
    ),
    (
        "unknown profile",
        [("profile: ipc", "profile: nspc-1999")],
        "",
        "nspc-1999",
        1,
        "unknown profile 'nspc-1999'",
    ),
    ("wrong version", [("version: 1", "version: 2")], "", "2", 1, "must be 1"),
    (
        "temperature outside liquid water",
        [],
        "water:\n  hot_temperature: 250 degF\n",
        "250 degF",
        1,
        "outside liquid water",
    ),
]


def _assert_one_error(
    rc: int, out: str, err: str, path: Path, line: int, col: int, fragment: str
) -> None:
    assert "Traceback" not in out + err
    assert rc == EXIT_INPUT, (out, err)
    lines = [x for x in err.splitlines() if ": error: " in x]
    expected = f"{path}:{line}:{col}: error: "
    assert len(lines) == 1, f"expected exactly one error, got:\n{err}"
    assert lines[0].startswith(expected) and fragment in lines[0], (expected, fragment, err)


@pytest.mark.parametrize(
    ("replacements", "append", "needle", "occurrence", "fragment"),
    [pytest.param(r, a, n, o, f, id=i) for i, r, a, n, o, f in CASES],
)
def test_input_error_names_file_line_column(
    write_layout: Callable[..., Path],
    cli: Callable[..., tuple[int, str, str]],
    replacements: list[tuple[str, str]],
    append: str,
    needle: str,
    occurrence: int,
    fragment: str,
) -> None:
    text = tweak(MINIMAL, *replacements, append=append)
    path = write_layout(text)
    line, col = locate(text, needle, occurrence)
    rc, out, err = cli("check", path)
    _assert_one_error(rc, out, err, path, line, col, fragment)


@pytest.mark.parametrize(
    "body", ["", "\n\n", "# only a comment\n"], ids=["empty", "blank", "comment"]
)
def test_empty_file(tmp_path: Path, cli: Callable[..., tuple[int, str, str]], body: str) -> None:
    path = tmp_path / "empty.yaml"
    path.write_text(body, encoding="utf-8")
    rc, out, err = cli("check", path)
    _assert_one_error(rc, out, err, path, 1, 1, "the file is empty")


def test_not_utf8(tmp_path: Path, cli: Callable[..., tuple[int, str, str]]) -> None:
    """A Latin-1 byte (0xE9, 'é') in the project name: reported at its byte's line and column."""
    text = MINIMAL.replace("Minimal test layout", "Caf\xe9 layout")
    path = tmp_path / "latin1.yaml"
    path.write_bytes(text.encode("latin-1"))
    line, col = locate(text, "\xe9")
    rc, out, err = cli("check", path)
    _assert_one_error(rc, out, err, path, line, col, "not UTF-8")


def test_utf8_with_bom_is_accepted(
    tmp_path: Path, cli: Callable[..., tuple[int, str, str]]
) -> None:
    path = tmp_path / "bom.yaml"
    path.write_bytes(b"\xef\xbb\xbf" + MINIMAL.encode("utf-8"))
    rc, out, err = cli("check", path)
    assert rc == 0, err


def test_missing_file(tmp_path: Path, cli: Callable[..., tuple[int, str, str]]) -> None:
    path = tmp_path / "nowhere.yaml"
    rc, out, err = cli("check", path)
    _assert_one_error(rc, out, err, path, 1, 1, "no such file")


def test_several_errors_reported_at_once_schema(
    write_layout: Callable[..., Path], cli: Callable[..., tuple[int, str, str]]
) -> None:
    """Three independent schema errors in one file: all three printed, in file order."""
    text = tweak(
        MINIMAL,
        ("units: us", "units: imperial"),
        ("service: cold", "service: cool"),
        ("cold: J1,", "cold: J1, colour: red,"),
    )
    path = write_layout(text)
    rc, out, err = cli("check", path)
    assert rc == EXIT_INPUT and "Traceback" not in out + err
    errors = [x for x in err.splitlines() if ": error: " in x]
    assert len(errors) == 3, err
    expected = [locate(text, "imperial"), locate(text, "cool"), locate(text, "colour")]
    assert [x.split(": error: ")[0] for x in errors] == [f"{path}:{a}:{b}" for a, b in expected]


def test_several_errors_reported_at_once_build(
    write_layout: Callable[..., Path], cli: Callable[..., tuple[int, str, str]]
) -> None:
    """Four problems found while building the model: all reported, sorted by position."""
    text = tweak(
        MINIMAL,
        ("pressure: 60 psi", "pressure: 60 furlongz"),
        ("to: J1,", "to: J9,"),
        ("length: 20 ft", "length: -4 ft"),
        ("water-closet-tank", "jacuzzi"),
    )
    path = write_layout(text)
    rc, out, err = cli("check", path)
    assert rc == EXIT_INPUT and "Traceback" not in out + err
    errors = [x for x in err.splitlines() if ": error: " in x]
    assert len(errors) == 4, err
    expected = [
        locate(text, "60 furlongz"),
        locate(text, "J9"),
        locate(text, "-4 ft"),
        locate(text, "jacuzzi"),
    ]
    assert [x.split(": error: ")[0] for x in errors] == [f"{path}:{a}:{b}" for a, b in expected]


def test_many_errors_are_capped_and_counted(
    write_layout: Callable[..., Path], cli: Callable[..., tuple[int, str, str]]
) -> None:
    """60 unknown keys: the first 50 (rulecheck.errors.MAX_PROBLEMS) are printed with their
    positions, and the other 10 are counted, not dropped silently."""
    from rulecheck.errors import MAX_PROBLEMS

    extra = ", ".join(f"k{i:02d}: 1" for i in range(60))
    text = tweak(MINIMAL, ("service: cold}", f"service: cold, {extra}}}"))
    path = write_layout(text)
    rc, out, err = cli("check", path)
    assert rc == EXIT_INPUT and "Traceback" not in out + err
    errors = [x for x in err.splitlines() if ": error: " in x]
    assert MAX_PROBLEMS == 50 and len(errors) == 50
    line, col = locate(text, "k00")
    assert errors[0].startswith(f"{path}:{line}:{col}: error: unknown key 'k00'")
    assert "and 10 more problems" in err


def test_errors_in_one_file_do_not_hide_others(
    write_layout: Callable[..., Path], cli: Callable[..., tuple[int, str, str]]
) -> None:
    """A bad file and a good file: the bad one is reported, the run still exits 2."""
    bad = write_layout(tweak(MINIMAL, ("service: cold", "service: cool")), name="a-bad.yaml")
    good = write_layout(name="b-good.yaml")
    rc, out, err = cli("check", bad, good)
    assert rc == EXIT_INPUT and "Traceback" not in out + err
    assert f"{bad}:" in err and f"{good}:" not in err
    assert "2 files checked" in out


@pytest.mark.parametrize("size", ["1", "1.0", '"1"'])
def test_integer_size_is_a_label(
    write_layout: Callable[..., Path], cli: Callable[..., tuple[int, str, str]], size: str
) -> None:
    """``size: 1`` (a YAML integer) names the 1-in tube, like the string ``"1"``."""
    from rulecheck.pipeline import load_layout

    path = write_layout(MINIMAL, ("size: 3/4", f"size: {size}"))
    rc, out, err = cli("check", path)
    assert rc == 0, err
    pipe = load_layout(path).pipes[0]
    assert pipe.size == "1"
    # ASTM B88 type L, 1 in: OD 1.125 in, wall 0.050 in (materials.yaml [S: ASTM B88]).
    assert pipe.outside_diameter == pytest.approx(1.125 * 0.0254, rel=1e-12)
    assert pipe.wall == pytest.approx(0.050 * 0.0254, rel=1e-12)


def test_decimal_size_reads_as_fraction(
    write_layout: Callable[..., Path], cli: Callable[..., tuple[int, str, str]]
) -> None:
    from rulecheck.pipeline import load_layout

    path = write_layout(MINIMAL, ("size: 3/4", "size: 1.25"))
    assert cli("check", path)[0] == 0
    assert load_layout(path).pipes[0].size == "1-1/4"


@pytest.mark.parametrize(
    ("old", "new", "needle"),
    [
        ("size: 3/4", "size: .inf", ".inf"),
        ("size: 3/4", "size: .nan", ".nan"),
        ("service: cold}", "service: cold, fittings: .nan}", ".nan"),
        ("cold: J1,", "cold: J1, wsfu: .nan,", ".nan"),
        ("cold: J1,", "cold: J1, wsfu: .inf,", ".inf"),
    ],
    ids=["size-inf", "size-nan", "fittings-nan", "wsfu-nan", "wsfu-inf"],
)
def test_non_finite_bare_numbers_are_input_errors(
    write_layout: Callable[..., Path],
    cli: Callable[..., tuple[int, str, str]],
    old: str,
    new: str,
    needle: str,
) -> None:
    """layout-format.md: "a non-finite number ... is an input error, reported with its file,
    line and column" -- also for the keys that take a bare number (size, fittings, wsfu)."""
    text = tweak(MINIMAL, (old, new))
    path = write_layout(text)
    line, col = locate(text, needle)
    rc, out, err = cli("check", path, "--format", "json")
    assert "Traceback" not in out + err
    assert "NaN" not in out and "Infinity" not in out
    assert rc == EXIT_INPUT, out
    rc, out, err = cli("check", path)
    _assert_one_error(rc, out, err, path, line, col, "")


@pytest.mark.parametrize("opening", ["[", "{a: "], ids=["lists", "mappings"])
def test_very_deep_nesting_is_an_input_error(
    write_layout: Callable[..., Path], cli: Callable[..., tuple[int, str, str]], opening: str
) -> None:
    """3000 nested lists or mappings: refused as input (exit 2), not a RecursionError."""
    closing = "]" if opening == "[" else "}"
    path = write_layout(append="extra: " + opening * 3000 + "1" + closing * 3000 + "\n")
    rc, out, err = cli("check", path)
    assert "Traceback" not in out + err
    assert rc == EXIT_INPUT
    assert err.startswith(f"{path}:") and ": error: " in err


def test_json_format_reports_input_errors_with_positions(
    write_layout: Callable[..., Path], cli: Callable[..., tuple[int, str, str]]
) -> None:
    import json

    text = tweak(MINIMAL, ("service: cold", "service: cool"))
    path = write_layout(text)
    rc, out, err = cli("check", path, "--format", "json")
    assert rc == EXIT_INPUT and "Traceback" not in out + err
    document = json.loads(out)
    (entry,) = document["files"]
    assert entry["path"] == str(path)
    line, col = locate(text, "cool")
    assert [(e["line"], e["column"]) for e in entry["errors"]] == [(line, col)]
