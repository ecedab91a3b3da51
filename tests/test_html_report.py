"""``check --format html``: the file itself (self-contained, deterministic, escaped) and
the same file in a real browser (Debian's chromium, headless).

The browser tests skip where no chromium is found (``apt-get install chromium`` on
Debian/Ubuntu, or set RULECHECK_CHROMIUM to a Chromium/Chrome binary); under ``CI=true``
a missing browser is a failure. Screenshots and PDFs stay in the test's tmp folder.
"""

from __future__ import annotations

import json
import os
import re
import shutil
import subprocess
from collections.abc import Callable
from html.parser import HTMLParser
from pathlib import Path

import pytest
from conftest import MINIMAL, SAMPLES

Cli = Callable[..., tuple[int, str, str]]
PINNED = "1700000000"  # 2023-11-14 UTC


@pytest.fixture(autouse=True)
def _pinned_date(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("SOURCE_DATE_EPOCH", PINNED)


class _Dom(HTMLParser):
    """The few things the tests read from a page: headings, finding rows, marked elements,
    plots, and every URL-bearing attribute."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.h2: list[str] = []
        self.finding_rows: list[str] = []  # data-element of each finding row
        self.marked: set[str] = set()  # data-element of marked drawing groups
        self.drawn: set[str] = set()
        self.plots: list[str] = []  # class of each plot svg
        self.urls: list[str] = []
        self.scripts = 0
        self._in_h2 = False
        self._text = ""

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        a = {k: v or "" for k, v in attrs}
        classes = a.get("class", "").split()
        if tag == "h2":
            self._in_h2, self._text = True, ""
        if tag == "tr" and "finding" in classes:
            self.finding_rows.append(a.get("data-element", ""))
        if tag == "g" and "el" in classes:
            self.drawn.add(a["data-element"])
            if "marked" in classes:
                self.marked.add(a["data-element"])
        if tag == "svg" and "plot" in classes:
            self.plots.append(" ".join(classes))
        if tag == "script":
            self.scripts += 1
        for key in ("src", "href", "xlink:href", "data"):
            if key in a:
                self.urls.append(a[key])

    def handle_endtag(self, tag: str) -> None:
        if tag == "h2" and self._in_h2:
            self.h2.append(self._text.strip())
            self._in_h2 = False

    def handle_data(self, data: str) -> None:
        if self._in_h2:
            self._text += data


def _dom(text: str) -> _Dom:
    dom = _Dom()
    dom.feed(text)
    return dom


def _report(cli: Cli, tmp_path: Path, layout: Path, *extra: str) -> tuple[Path, dict]:
    out = tmp_path / f"{layout.stem}.html"
    rc, _, err = cli("check", layout, "--format", "html", "--output", out, *extra)
    assert rc in (0, 1), err
    rc, text, _ = cli("check", layout, "--format", "json", *extra)
    return out, json.loads(text)


SECTIONS = ["Project", "Summary", "Network", "Findings", "Pipes and points", "Water hammer"]


def _check_page(dom: _Dom, document: dict, transient: bool) -> None:
    findings = document["files"][0]["findings"]
    expected = SECTIONS + (["Transient runs"] if transient else []) + ["References"]
    assert dom.h2 == expected
    assert len(dom.finding_rows) == len(findings)
    assert sorted(dom.finding_rows) == sorted(f["element"] for f in findings)
    assert {f["element"] for f in findings} <= dom.marked
    # only in-page links: nothing to fetch
    assert dom.scripts == 0
    assert all(u.startswith("#") for u in dom.urls), [u for u in dom.urls if not u.startswith("#")]


def test_clinic_report_sections_rows_marks_and_plots(cli: Cli, tmp_path: Path) -> None:
    out, document = _report(cli, tmp_path, SAMPLES / "fernhill-clinic.yaml", "--transient")
    text = out.read_text(encoding="utf-8")
    dom = _dom(text)
    _check_page(dom, document, transient=True)
    # the clinic's LE4A/LE4B valves have violations: each side plotted, time and envelope
    assert dom.plots.count("plot time") == dom.plots.count("plot envelope") >= 2
    # the caution of engineering-basis §11, in full
    from rulecheck.report import CAUTION

    assert CAUTION.endswith("verify critical cases with a detailed transient analysis.")
    assert CAUTION.replace("'", "&#39;") in text
    assert "2023-11-14" in text
    # the drawing holds every pipe, point, fixture and arrester of the layout
    for element in ("MAIN", "M1", "WH1", "CR4", "WC4A", "AE4H", "PRV1", "HE4B"):
        assert element in dom.drawn


def test_report_without_transient_has_no_plot_section(cli: Cli, tmp_path: Path) -> None:
    out, document = _report(cli, tmp_path, SAMPLES / "corner-bistro.yaml")
    dom = _dom(out.read_text(encoding="utf-8"))
    _check_page(dom, document, transient=False)
    assert dom.plots == []


def test_same_input_same_bytes(cli: Cli, tmp_path: Path) -> None:
    layout = SAMPLES / "two-bath-house.yaml"
    first = tmp_path / "a.html"
    second = tmp_path / "b.html"
    for out in (first, second):
        cli("check", layout, "--transient", "--format", "html", "--output", out)
    assert first.read_bytes() == second.read_bytes()


def test_output_folder_gets_a_default_name(cli: Cli, tmp_path: Path) -> None:
    folder = tmp_path / "out"
    folder.mkdir()
    rc, _, err = cli(
        "check", SAMPLES / "two-bath-house.yaml", "--format", "html", "--output", folder
    )
    assert rc in (0, 1), err
    assert (
        (folder / "two-bath-house.html").read_text(encoding="utf-8").startswith("<!DOCTYPE html>")
    )
    # a second run replaces its own report (it is recognised as ours)
    rc, _, err = cli(
        "check", SAMPLES / "two-bath-house.yaml", "--format", "html", "--output", folder
    )
    assert rc in (0, 1), err


def test_foreign_html_is_not_replaced(cli: Cli, tmp_path: Path) -> None:
    page = tmp_path / "index.html"
    page.write_text("<!DOCTYPE html><html><body>mine</body></html>\n", encoding="utf-8")
    rc, _, err = cli("check", SAMPLES / "two-bath-house.yaml", "--format", "html", "--output", page)
    assert rc == 2
    assert "refusing to replace" in err
    assert "mine" in page.read_text(encoding="utf-8")


@pytest.mark.parametrize(
    "name",
    ['<script>alert("x")</script>', 'Tom & Jerry\'s "<b>bold</b>"', "]]></svg><img src=x>"],
)
def test_layout_text_is_escaped(cli: Cli, tmp_path: Path, name: str) -> None:
    layout = tmp_path / "hostile.yaml"
    layout.write_text(
        MINIMAL.replace("name: Minimal test layout", f"name: {json.dumps(name)}"), encoding="utf-8"
    )
    out = tmp_path / "hostile.html"
    rc, _, err = cli("check", layout, "--format", "html", "--output", out)
    assert rc in (0, 1), err
    text = out.read_text(encoding="utf-8")
    assert name not in text
    dom = _dom(text)
    assert dom.scripts == 0
    assert all(u.startswith("#") for u in dom.urls)


def test_bad_source_date_epoch_is_a_usage_error(
    cli: Cli, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "yesterday")
    rc, _, err = cli("check", SAMPLES / "two-bath-house.yaml", "--format", "html")
    assert rc == 2
    assert "SOURCE_DATE_EPOCH" in err
    assert "Traceback" not in err


def test_input_errors_are_in_the_report(cli: Cli, tmp_path: Path) -> None:
    bad = tmp_path / "bad.yaml"
    bad.write_text(MINIMAL.replace("length: 20 ft", "length: -20 ft"), encoding="utf-8")
    out = tmp_path / "bad.html"
    rc, _, _ = cli(
        "check", bad, SAMPLES / "two-bath-house.yaml", "--format", "html", "--output", out
    )
    assert rc == 2
    dom = _dom(out.read_text(encoding="utf-8"))
    assert "Input errors" in dom.h2


# --- in a real browser ---------------------------------------------------------------


def _chromium() -> str:
    for candidate in (os.environ.get("RULECHECK_CHROMIUM"), "chromium", "chromium-browser"):
        if candidate and (found := shutil.which(candidate)):
            return found
    if os.environ.get("CI") == "true":
        pytest.fail("CI=true but no chromium found: .ci/run installs Debian's chromium")
    pytest.skip(
        "no chromium found: install Debian's (apt-get install chromium) or set "
        "RULECHECK_CHROMIUM to a Chromium or Chrome binary"
    )


def _browse(tmp_path: Path, page: Path, *mode: str) -> subprocess.CompletedProcess[str]:
    profile = tmp_path / f"profile-{len(list(tmp_path.glob('profile-*')))}"
    return subprocess.run(
        [
            _chromium(),
            "--headless",
            "--no-sandbox",
            "--disable-gpu",
            "--disable-background-networking",
            "--disable-component-update",
            "--disable-sync",
            "--no-first-run",
            "--enable-logging=stderr",
            "--v=0",
            f"--user-data-dir={profile}",
            "--window-size=1280,1800",
            *mode,
            page.as_uri(),
        ],
        capture_output=True,
        text=True,
        timeout=120,
        check=False,
    )


#: what chromium's log says when a page logs an error or fails to fetch something
CONSOLE_TROUBLE = re.compile(
    r"CONSOLE[:(]|Uncaught|Failed to load resource|net::ERR_|Not allowed to load", re.I
)


@pytest.mark.parametrize(
    "sample,transient,pages",
    [
        ("fernhill-clinic", True, (10, 22)),  # 15 pages on A4/Letter (2026-12-02)
        ("corner-bistro", True, (6, 20)),
        ("two-bath-house", False, (5, 14)),  # 8 pages
    ],
)
def test_in_chromium(
    cli: Cli, tmp_path: Path, sample: str, transient: bool, pages: tuple[int, int]
) -> None:
    _chromium()
    extra = ("--transient",) if transient else ()
    out, document = _report(cli, tmp_path, SAMPLES / f"{sample}.yaml", *extra)
    dumped = _browse(tmp_path, out, "--dump-dom")
    assert dumped.returncode == 0, dumped.stderr[-2000:]
    assert not CONSOLE_TROUBLE.search(dumped.stderr), dumped.stderr[-2000:]
    dom = _dom(dumped.stdout)  # the page as the browser built it
    _check_page(dom, document, transient)
    if transient:
        assert dom.plots.count("plot time") >= 1
    shot = tmp_path / f"{sample}.png"
    taken = _browse(tmp_path, out, f"--screenshot={shot}")
    assert taken.returncode == 0, taken.stderr[-2000:]
    assert shot.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    pdf = tmp_path / f"{sample}.pdf"
    printed = _browse(tmp_path, out, f"--print-to-pdf={pdf}", "--no-pdf-header-footer")
    assert printed.returncode == 0, printed.stderr[-2000:]
    data = pdf.read_bytes()
    assert data.startswith(b"%PDF-")
    count = len(re.findall(rb"/Type\s*/Page(?![a-z])", data))
    assert pages[0] <= count <= pages[1], count


def test_simulate_html_plot_with_the_run_parameters(cli: Cli, tmp_path: Path) -> None:
    args = ("simulate", SAMPLES / "corner-bistro.yaml", "--valve", "DW1", "--format")
    rc, page, err = cli(*args, "html")
    assert rc == 0, err
    assert cli(*args, "html")[1] == page  # same input, same bytes
    rc, raw, _ = cli(*args, "json")
    run = json.loads(raw)
    dom = _dom(page)
    assert dom.plots == ["plot time", "plot envelope"]
    assert dom.scripts == 0 and all(u.startswith("#") for u in dom.urls)
    assert f"dt {run['dt'] * 1000:.3f} ms" in page
    assert "largest wave-speed adjustment" in page and "reaches" in page
    # the envelope names every pipe of the path the JSON lists
    for pipe in run["path"]:
        assert f">{pipe}</text>" in page
    out = tmp_path / "dw1.html"
    out.write_text(page, encoding="utf-8")
    _chromium()
    shown = _browse(tmp_path, out, "--dump-dom")
    assert shown.returncode == 0 and not CONSOLE_TROUBLE.search(shown.stderr)
    assert _dom(shown.stdout).plots == ["plot time", "plot envelope"]


def test_the_console_check_catches_an_error(tmp_path: Path) -> None:
    """The console check can fail: a page that logs an error is caught (and a page of
    ours has no URL to fetch at all, checked on every report above)."""
    _chromium()
    bad = tmp_path / "bad.html"
    bad.write_text(
        '<!DOCTYPE html><html><body><script>console.error("boom")</script></body></html>',
        encoding="utf-8",
    )
    shown = _browse(tmp_path, bad, "--dump-dom")
    assert CONSOLE_TROUBLE.search(shown.stderr), shown.stderr[-1000:]


def test_several_files_have_their_own_anchors(cli: Cli, tmp_path: Path) -> None:
    out = tmp_path / "all.html"
    rc, _, err = cli("check", SAMPLES, "--format", "html", "--output", out)
    assert rc == 1, err
    text = out.read_text(encoding="utf-8")
    ids = re.findall(r'\bid="([^"]+)"', text)
    assert len(ids) == len(set(ids))  # no anchor twice
    targets = set(re.findall(r'href="#([^"]+)"', text))
    assert targets and targets <= set(ids)  # every link lands


def test_only_unreadable_files_still_give_a_report(cli: Cli, tmp_path: Path) -> None:
    out = tmp_path / "none.html"
    rc, _, _ = cli("check", tmp_path / "missing.yaml", "--format", "html", "--output", out)
    assert rc == 2
    dom = _dom(out.read_text(encoding="utf-8"))
    assert "Input errors" in dom.h2
