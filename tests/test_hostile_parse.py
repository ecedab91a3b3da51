"""Hostile and mistaken input to the readers (issue 10, sections 2, 3 and 5).

Every row: exit status 2, ``file:line:column`` where the input has a position, a
message in plain words, no traceback. Expected positions come from the input text
(:func:`conftest.locate` or arithmetic on the text written), never from rulecheck's
own output. The alias bombs run in a subprocess under a generous timeout, to catch a
hang (the speed budget itself is measured in benchmarks/, not here).
"""

from __future__ import annotations

import json
import re
import subprocess
import sys
from collections.abc import Callable
from pathlib import Path

import pytest
import yaml
from conftest import MINIMAL, SAMPLES, locate, tweak

from rulecheck.errors import EXIT_INPUT, visible
from rulecheck.suggest import SHOWN, suggest

ERROR_LINE = re.compile(r"^(?P<path>.+):(?P<line>\d+):(?P<col>\d+): error: (?P<text>.*)$")
ESC_KEY = "col\x1b]0;pwned\x07our\x1b[2J"
FIVE_THOUSAND = "7" * 5000  # past Python's 4300-digit limit on int("...")


def errors_of(err: str) -> list[tuple[str, int, int, str]]:
    """(path, line, column, text) of every ``error:`` line on stderr."""
    found = []
    for line in err.splitlines():
        m = ERROR_LINE.match(line)
        if m:
            found.append((m["path"], int(m["line"]), int(m["col"]), m["text"]))
    return found


def assert_error_at(
    rc: int, out: str, err: str, path: Path, line: int, col: int, *fragments: str
) -> str:
    """Exactly one error, at ``path:line:col``, holding every fragment; returns its text."""
    assert "Traceback" not in out + err
    assert rc == EXIT_INPUT, (out, err)
    found = errors_of(err)
    assert len(found) == 1, err
    got_path, got_line, got_col, text = found[0]
    assert (got_path, got_line, got_col) == (str(path), line, col), err
    for fragment in fragments:
        assert fragment in text, (fragment, err)
    return text


# ---- §2 alias bombs -------------------------------------------------------------------


def _chain(open_: str, close: str, item: Callable[[int, int], str], base: str) -> str:
    """Nine anchors, each holding nine copies of the one before (9**9 nodes expanded)."""
    lines = [f"a0: &a0 {base}"]
    for level in range(1, 10):
        body = ", ".join(item(level, j) for j in range(9))
        lines.append(f"a{level}: &a{level} {open_}{body}{close}")
    return "\n".join(lines) + "\n"


BOMBS = {
    "sequences": _chain("[", "]", lambda i, j: f"*a{i - 1}", "[x, y, z]"),
    "mappings": _chain("{", "}", lambda i, j: f"k{j}: *a{i - 1}", "{k: v}"),
    "aliases as keys": _chain("{", "}", lambda i, j: f"? *a{i - 1} : {j}", "[x, y, z]"),
    "merge keys": _chain("[", "]", lambda i, j: f"{{<<: *a{i - 1}, z{j}: 1}}", "{k: v}"),
    "inside a valid layout": tweak(
        MINIMAL,
        (
            "  profile: ipc\n",
            "  profile: ipc\n"
            + "".join(
                "  " + line + "\n"
                for line in _chain("[", "]", lambda i, j: f"*a{i - 1}", "[x]").splitlines()
            ),
        ),
    ),
}


@pytest.mark.parametrize("text", list(BOMBS.values()), ids=list(BOMBS))
def test_alias_bomb_stops_at_an_alias(tmp_path: Path, text: str) -> None:
    path = tmp_path / "bomb.yaml"
    path.write_text(text, encoding="utf-8")
    run = subprocess.run(
        [sys.executable, "-m", "rulecheck", "check", str(path)],
        capture_output=True,
        text=True,
        timeout=10,  # catches a hang; unprotected, these ran past 30 s at 3.8-5.2 GB
        check=False,
    )
    assert "Traceback" not in run.stdout + run.stderr
    assert run.returncode == EXIT_INPUT, run.stderr
    found = errors_of(run.stderr)
    assert len(found) == 1, run.stderr
    _, line, col, message = found[0]
    assert "alias" in message and "repeat" in message
    # the position is an alias in the file: '*' followed by the anchor the message names
    written = text.splitlines()[line - 1][col - 1 :]
    name = re.search(r"\*(\w+)", message)
    assert name and written.startswith(f"*{name[1]}"), (written, message)


def test_aliases_reused_a_few_times_pass(
    cli: Callable[..., tuple[int, str, str]], write_layout: Callable[..., Path]
) -> None:
    """Shared blocks are ordinary YAML: an anchor reused by a few fixtures is no bomb."""
    path = write_layout(
        MINIMAL,
        (
            "valve: {closing: slow, closure_time: 10 s}",
            "valve: &v {closing: slow, closure_time: 10 s}",
        ),
        append="".join(
            f"  - {{id: WC{n}, type: water-closet-tank, cold: J1, valve: *v}}\n"
            for n in range(2, 6)
        ),
    )
    rc, out, err = cli("check", path)
    assert "Traceback" not in out + err
    assert rc in (0, 1) and not errors_of(err), err


# ---- §3 numbers past Python's digit limit, nesting past the stack ---------------------


def test_huge_integer_in_a_layout(
    cli: Callable[..., tuple[int, str, str]], write_layout: Callable[..., Path]
) -> None:
    text = tweak(MINIMAL, ("length: 20 ft", f"length: {FIVE_THOUSAND}"))
    path = write_layout(text)
    rc, out, err = cli("check", path)
    assert_error_at(rc, out, err, path, *locate(text, FIVE_THOUSAND), "too large", "5000 digits")


CONFIGS = {
    "5,000-digit limit": (
        f"[rules.velocity-limit]\nlimits = {{ cold = {FIVE_THOUSAND} }}\n",
        lambda text: locate(text, FIVE_THOUSAND),
        "digits",
    ),
    "array nested 5,000 deep": (
        "x = " + "[" * 5000 + "]" * 5000 + "\n",
        lambda text: (1, len("x = ") + 101),  # the first bracket past depth 100
        "nested too deeply",
    ),
}


@pytest.mark.parametrize(("text", "where", "fragment"), list(CONFIGS.values()), ids=list(CONFIGS))
def test_hostile_config(
    cli: Callable[..., tuple[int, str, str]],
    tmp_path: Path,
    write_layout: Callable[..., Path],
    text: str,
    where: Callable[[str], tuple[int, int]],
    fragment: str,
) -> None:
    config = tmp_path / "rulecheck.toml"
    config.write_text(text, encoding="utf-8")
    rc, out, err = cli("check", "--config", config, write_layout())
    assert_error_at(rc, out, err, config, *where(text), fragment)


BASELINES = {
    "5,000-digit count": (
        '{"version": 1, "findings": [\n  {"path": "a.yaml", "rule": "velocity-limit", '
        f'"element": "P1", "count": {FIVE_THOUSAND}}}\n]}}\n',
        lambda text: locate(text, FIVE_THOUSAND),
        "digits",
    ),
    "100,000 '['": ("[" * 100_000, lambda text: (1, 101), "nested too deeply"),
}


@pytest.mark.parametrize(
    ("text", "where", "fragment"), list(BASELINES.values()), ids=list(BASELINES)
)
def test_hostile_baseline(
    cli: Callable[..., tuple[int, str, str]],
    tmp_path: Path,
    write_layout: Callable[..., Path],
    text: str,
    where: Callable[[str], tuple[int, int]],
    fragment: str,
) -> None:
    baseline = tmp_path / "known.json"
    baseline.write_text(text, encoding="utf-8")
    rc, out, err = cli("check", "--baseline", baseline, write_layout())
    assert_error_at(rc, out, err, baseline, *where(text), fragment)


# ---- §5 terminal escapes --------------------------------------------------------------


def test_escape_in_a_key_is_shown_not_obeyed(
    cli: Callable[..., tuple[int, str, str]], write_layout: Callable[..., Path]
) -> None:
    escaped = ESC_KEY.replace("\x1b", "\\e").replace("\x07", "\\a")
    text = tweak(MINIMAL, ("{id: P1,", f'{{id: P1, "{escaped}": 1,'))
    path = write_layout(text)
    rc, out, err = cli("check", path)
    message = assert_error_at(rc, out, err, path, *locate(text, f'"{escaped}"'), "unknown key")
    assert "\x1b" not in err and "\x07" not in err
    assert visible(ESC_KEY) in message and "\\x1b]0;pwned\\x07" in message


def test_escape_in_a_waiver_reason_text_and_json(
    cli: Callable[..., tuple[int, str, str]], tmp_path: Path
) -> None:
    source = (SAMPLES / "corner-bistro.yaml").read_text(encoding="utf-8")
    old = "reason: Hand-sink hot branch"
    assert source.count(old) == 1
    path = tmp_path / "bistro.yaml"
    path.write_text(
        source.replace(old, 'reason: "\\e]0;pwned\\a\\e[2J Hand-sink hot branch').replace(
            "accepted at design review.", 'accepted at design review."', 1
        ),
        encoding="utf-8",
    )
    rc, out, err = cli("check", path)
    assert "Traceback" not in out + err and rc in (0, 1), err
    assert "\x1b" not in out + err and "\x07" not in out
    assert "waived: \\x1b]0;pwned\\x07\\x1b[2J Hand-sink" in out
    rc, out, _ = cli("check", "--format", "json", path)
    assert "\\u001b]0;pwned\\u0007" in out  # JSON keeps its own escapes
    reasons = [
        (f.get("waived") or {}).get("reason", "") for f in json.loads(out)["files"][0]["findings"]
    ]
    assert any(r.startswith("\x1b]0;pwned\x07") for r in reasons), reasons


def test_escape_in_a_file_name(cli: Callable[..., tuple[int, str, str]], tmp_path: Path) -> None:
    missing = tmp_path / "plan\x1b[2J.yaml"
    rc, out, err = cli("check", missing)
    assert "Traceback" not in out + err and rc == EXIT_INPUT
    assert "\x1b" not in err and "plan\\x1b[2J.yaml" in err


def test_visible_escapes_every_control_character() -> None:
    raw = "".join(chr(c) for c in (*range(0x20), 0x7F, *range(0x80, 0xA0), 0x202E, 0x2066))
    shown = visible("a" + raw + "b")
    assert shown.startswith("a\\x00\\x01") and shown.endswith("\\u202e\\u2066b")
    assert all(ch.isprintable() for ch in shown)
    assert visible("line 1\nline\x1b 2", keep_newlines=True) == "line 1\nline\\x1b 2"


# ---- §5 ids, YAML types, syntax errors ------------------------------------------------


def test_id_ending_in_a_newline(
    cli: Callable[..., tuple[int, str, str]], write_layout: Callable[..., Path]
) -> None:
    text = tweak(MINIMAL, ("{id: P1,", '{id: "P1\\n",'))
    path = write_layout(text)
    rc, out, err = cli("check", path)
    assert_error_at(rc, out, err, path, *locate(text, '"P1\\n"'), "not a valid id")


def test_compiled_check_agrees_with_jsonschema_on_a_final_newline() -> None:
    """Python's ``$`` matches before a final newline; both validity checks must refuse it."""
    from rulecheck.input.schema import _compiled_check, _validator

    validator = _validator()
    compiled = _compiled_check()
    assert compiled is not None
    data = yaml.safe_load(MINIMAL)
    assert compiled(data) and validator.is_valid(data)
    for bad in ("P1\n", "P1\n\n", "\nP1"):
        data["pipes"][0]["id"] = bad
        assert not compiled(data) and not validator.is_valid(data), repr(bad)


TYPES = {
    "!!binary": ("name: !!binary aGVsbG8=", "!!binary aGVsbG8=", ("binary data", "!!binary")),
    "timestamp": ("name: 2024-05-01", "2024-05-01", ("date or time", "'2024-05-01'")),
}


@pytest.mark.parametrize(("new", "needle", "fragments"), list(TYPES.values()), ids=list(TYPES))
def test_yaml_type_named_for_a_text_field(
    cli: Callable[..., tuple[int, str, str]],
    write_layout: Callable[..., Path],
    new: str,
    needle: str,
    fragments: tuple[str, ...],
) -> None:
    text = tweak(MINIMAL, ("name: Minimal test layout", new))
    path = write_layout(text)
    rc, out, err = cli("check", path)
    message = assert_error_at(rc, out, err, path, *locate(text, needle), *fragments)
    assert "not text" not in message


# (id, replacements, needle where the error is, its occurrence, fragments)
SYNTAX: list[tuple[str, list[tuple[str, str]], str, int, tuple[str, ...]]] = [
    (
        "tab in indentation",
        [("  name: Minimal", "\tname: Minimal")],
        "\tname",
        1,
        ("tab", "spaces"),
    ),
    (
        "key indented further than the key above",
        [("  units: us", "   units: us")],
        "units",
        1,
        ("indented further than the key above it (line 3)",),
    ),
    (
        "key indented less than the keys of its block",
        [("  units: us", " units: us")],
        "units",
        1,
        ("does not line up with the keys above",),
    ),
    (
        "missing colon after a key",
        [("points:\n", "points\n")],
        "points",
        1,
        ("without its colon",),
    ),
    (
        "unclosed quote",
        [("name: Minimal test layout", "name: 'Minimal test layout")],
        "'Minimal",
        1,
        ("quote", "never closes"),
    ),
    (
        "unclosed bracket",
        [("{id: J1, elevation: 0 ft}", "{id: J1, elevation: 0 ft")],
        "{id: J1",
        1,
        ("'{'", "not closed"),
    ),
    (
        "value starting with @",
        [("name: Minimal test layout", "name: @home")],
        "@home",
        1,
        ("cannot start with '@'", "quotes"),
    ),
]


@pytest.mark.parametrize(
    ("replacements", "needle", "occurrence", "fragments"),
    [row[1:] for row in SYNTAX],
    ids=[row[0] for row in SYNTAX],
)
def test_yaml_syntax_in_plain_words(
    cli: Callable[..., tuple[int, str, str]],
    write_layout: Callable[..., Path],
    replacements: list[tuple[str, str]],
    needle: str,
    occurrence: int,
    fragments: tuple[str, ...],
) -> None:
    text = tweak(MINIMAL, *replacements)
    path = write_layout(text)
    rc, out, err = cli("check", path)
    line, col = locate(text, needle, occurrence)
    found = errors_of(err)
    assert "Traceback" not in out + err and rc == EXIT_INPUT and len(found) == 1, err
    _, got_line, got_col, message = found[0]
    for fragment in fragments:
        assert fragment in message, message
    assert "cannot start any token" not in message and "simple key" not in message
    if needle == "{id: J1":  # libyaml stops where the ',' or '}' was due: the next line
        assert got_line == line + 1 and f"line {line}" in message
    else:
        assert (got_line, got_col) == (line, col), (err, line, col)


# ---- §5 unknown names: closest first, then how many more and where --------------------

# (id, replacements, text appended, needle at the error, fragments of the message)
NAMES: list[tuple[str, list[tuple[str, str]], str, str, tuple[str, ...]]] = [
    (
        "fixture type by everyday word",
        [("type: water-closet-tank", "type: toilet")],
        "",
        "toilet",
        ("'water-closet-tank'", "'water-closet-flushometer'", "others: see", "fixture-types.yaml"),
    ),
    (
        "material misspelt",
        [("material: copper-l", "material: coper-l")],
        "",
        "coper-l",
        ("did you mean 'copper-l'",),
    ),
    ("size written with a dash", [("size: 3/4", "size: 3-4")], "", "3-4", ("did you mean '3/4'",)),
    ("point id", [("to: J1", "to: J2")], "", "J2", ("did you mean 'J1'",)),
    (
        "rule id in a waiver",
        [],
        "waivers:\n  - {rule: velocity, element: P1, reason: checked}\n",
        "velocity,",
        ("did you mean 'velocity-limit'", "others: see `rulecheck rules`"),
    ),
]


@pytest.mark.parametrize(
    ("replacements", "append", "needle", "fragments"),
    [row[1:] for row in NAMES],
    ids=[row[0] for row in NAMES],
)
def test_unknown_name_offers_the_closest(
    cli: Callable[..., tuple[int, str, str]],
    write_layout: Callable[..., Path],
    replacements: list[tuple[str, str]],
    append: str,
    needle: str,
    fragments: tuple[str, ...],
) -> None:
    text = tweak(MINIMAL, *replacements, append=append)
    path = write_layout(text)
    rc, out, err = cli("check", path)
    assert_error_at(rc, out, err, path, *locate(text, needle), *fragments)


def test_explain_unknown_rule(cli: Callable[..., tuple[int, str, str]]) -> None:
    rc, out, err = cli("explain", "velocity")
    assert rc == EXIT_INPUT and "Traceback" not in out + err
    assert "did you mean 'velocity-limit'" in err and "`rulecheck rules`" in err


def test_simulate_unknown_valve(cli: Callable[..., tuple[int, str, str]]) -> None:
    rc, out, err = cli("simulate", SAMPLES / "two-bath-house.yaml", "--valve", "DW9")
    assert rc == EXIT_INPUT and "Traceback" not in out + err
    assert "did you mean 'DW1:hot'" in err and "others: see the fixtures in this file" in err


def test_config_unknown_rule(
    cli: Callable[..., tuple[int, str, str]], tmp_path: Path, write_layout: Callable[..., Path]
) -> None:
    config = tmp_path / "rulecheck.toml"
    text = "[rules.velocity]\nenabled = false\n"
    config.write_text(text, encoding="utf-8")
    rc, out, err = cli("check", "--config", config, write_layout())
    assert_error_at(rc, out, err, config, 1, 1, "did you mean 'velocity-limit'")


def test_suggest_never_cuts_a_list_silently() -> None:
    many = [f"name{i:02d}" for i in range(30)]
    hint = suggest("zzz", many, "the list")
    assert "none of the 30 known names" in hint and "see the list" in hint
    hint = suggest("name", many, "the list")  # every name matches: SHOWN shown, rest counted
    assert hint.count("'name") == SHOWN and f"{30 - SHOWN} others: see the list" in hint
    short = ["copper-k", "copper-l", "pex-sdr9"]
    assert suggest("pex", short, "x") == "did you mean 'pex-sdr9'? the others: copper-k, copper-l"
    assert suggest("zzz", short, "x") == "known names: copper-k, copper-l, pex-sdr9"
