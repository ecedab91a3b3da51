"""The terminal report: width, word wrapping, grouping, sources once, waived dim, colour
switches, and the one-line form for editors."""

from __future__ import annotations

import io
import re
from collections.abc import Callable
from pathlib import Path

import pytest
from conftest import ANSI, SAMPLES
from rich.console import Console

from rulecheck.pipeline import check_file
from rulecheck.report import CAUTION
from rulecheck.report.text import FIX_MARK, render_check

Cli = Callable[..., tuple[int, str, str]]
BISTRO = SAMPLES / "corner-bistro.yaml"


def _render(width: int, colour: bool = False) -> str:
    result = check_file(BISTRO)
    stream = io.StringIO()
    console = Console(
        file=stream,
        width=width,
        color_system="truecolor" if colour else None,
        force_terminal=colour,
        highlight=False,
    )
    render_check(console, [(result.path, result.findings)], [])
    return stream.getvalue()


@pytest.mark.parametrize("width", [100, 60])
def test_bistro_fits_the_width_without_split_words(width: int) -> None:
    text = _render(width)
    wide = _render(10_000)
    too_long = [line for line in text.splitlines() if len(line) > width]
    assert not too_long, too_long
    # the same words in the same order as unwrapped: no word was cut in two
    assert text.split() == wide.split()
    assert not ANSI.search(text)
    assert len(text.splitlines()) > len(wide.splitlines())  # it did wrap


def test_grouping_sources_once_fix_and_waived() -> None:
    text = _render(100)
    result = check_file(BISTRO)
    sources = {f.source for f in result.findings}
    body, _, tail = text.partition("\nSources\n")
    for source in sources:  # each source once, in the list at the end, not in the findings
        assert " ".join(source.split()) not in " ".join(body.split())
        assert " ".join(tail.split()).count(" ".join(source.split())) == 1
    assert len(re.findall(r"^  \[\d+\] ", tail, re.M)) == len(sources)
    # each element is a heading once, with its line
    for f in result.findings:
        assert len(re.findall(rf"^{re.escape(f.element)}  line {f.line}$", text, re.M)) == 1
    # the fix on its own line, after our marker
    fixes = [f for f in result.findings if f.fix]
    assert len(re.findall(rf"^    {FIX_MARK} ", text, re.M)) == len(fixes)
    # the summary and the caution come last
    assert " ".join(tail.split()).endswith(f"Caution: {CAUTION}")
    assert "waived: Hand-sink hot branch" in " ".join(text.split())


def test_waived_is_dim_never_in_its_severity_colour() -> None:
    coloured = _render(100, colour=True)
    block = coloured[coloured.index("P13") : coloured.index("P15")]
    caution_line = next(line for line in block.splitlines() if "velocity-limit" in line)
    assert "\x1b[2m" in caution_line  # dim
    assert "\x1b[1;33m" not in block  # never bold yellow (the caution colour)
    other = coloured[coloured.index("P10") : coloured.index("P11")]
    assert "\x1b[1;33m" in other  # an active caution is


def test_force_color_when_piped(cli: Cli, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.delenv("NO_COLOR", raising=False)
    monkeypatch.delenv("FORCE_COLOR", raising=False)
    rc, plain, _ = cli("check", BISTRO)
    assert not ANSI.search(plain)
    monkeypatch.setenv("FORCE_COLOR", "1")
    monkeypatch.setenv("TERM", "xterm-256color")
    rc, forced, _ = cli("check", BISTRO)
    assert ANSI.search(forced)
    assert ANSI.sub("", forced).split() == plain.split()


def test_piped_text_file_has_no_escape_codes(
    cli: Cli, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setenv("FORCE_COLOR", "1")
    out = tmp_path / "report.txt"
    cli("check", BISTRO, "--output", out)
    text = out.read_text(encoding="utf-8")
    assert not ANSI.search(text)
    assert all(len(line) <= 80 for line in text.splitlines())


def test_lines_format(cli: Cli) -> None:
    rc, out, _ = cli("check", BISTRO, "--format", "lines")
    result = check_file(BISTRO)
    rows = [line for line in out.splitlines() if re.match(r"^[^:]+:\d+:\d+: ", line)]
    assert len(rows) == len(result.findings)
    pattern = re.compile(
        r"^(?P<path>.+?):(?P<line>\d+):(?P<col>\d+): (?P<sev>\w+): (?P<rule>[\w-]+): .+$"
    )
    parsed = [pattern.match(r) for r in rows]
    assert all(parsed)
    got = sorted((int(m["line"]), int(m["col"]), m["sev"], m["rule"]) for m in parsed if m)
    assert got == sorted((f.line, f.column, f.severity, f.rule) for f in result.findings)
    assert out.rstrip().endswith(CAUTION)
    assert not ANSI.search(out)


def test_analyze_fits_100_columns(cli: Cli) -> None:
    for sample in sorted(SAMPLES.glob("*.yaml")):
        rc, out, _ = cli("analyze", sample)
        # every line but the title, which holds the file's path (as long as the user's)
        lines = [line for line in out.splitlines() if str(sample) not in line]
        assert max(len(line) for line in lines) <= 100, sample.name


def test_analyze_with_a_hot_return_fits_100_columns(cli: Cli, tmp_path: Path) -> None:
    source = (SAMPLES / "two-bath-house.yaml").read_text(encoding="utf-8")
    anchor = "  - {id: P12, from: H1, to: HL,"
    assert source.count(anchor) == 1
    layout = tmp_path / "x.yaml"
    layout.write_text(
        source.replace(
            anchor,
            "  - {id: RET1, from: HL, to: H0, material: pex-sdr9, size: 1/2, length: 30 ft, "
            "service: hot-return}\n" + anchor,
        ),
        encoding="utf-8",
    )
    rc, out, err = cli("analyze", layout)
    assert rc == 0, err
    assert "RET1  hot-return" in out
    lines = [line for line in out.splitlines() if str(layout) not in line]
    assert max(len(line) for line in lines) <= 100
