"""The network drawing's labels are readable: no two text labels overlap, no label sits on
a symbol, and every element with a finding is still marked (no browser needed).

A label's box is estimated from its font size and character count: 0.6 em per character
(common practice for a proportional sans-serif, a little wide for most letters), from
0.8 em above the baseline to 0.2 em below it. Rotated labels are boxes turned with them;
two boxes overlap when no separating axis parts them (the separating axis theorem for
convex polygons). Symbols are the boxes of their shapes (point dot, supply triangle,
fixture, arrester, device, heater box). The font sizes are the report's stylesheet's.
"""

from __future__ import annotations

import json
import math
import re
import xml.etree.ElementTree as ET
from collections.abc import Callable
from pathlib import Path

import pytest
from conftest import SAMPLES

Cli = Callable[..., tuple[int, str, str]]
SVG = "{http://www.w3.org/2000/svg}"
EM_PER_CHAR = 0.6
GAP = 0.5  # [px] boxes closer than touching by less than this still count as apart
FONT = {"lbl": 9.0, "default": 10.0}  # px, report/templates/style.css.j2 (svg .lbl, svg text)

Matrix = tuple[float, float, float, float, float, float]  # a b c d e f, as in SVG
Poly = list[tuple[float, float]]
IDENTITY: Matrix = (1.0, 0.0, 0.0, 1.0, 0.0, 0.0)


def _mul(m: Matrix, n: Matrix) -> Matrix:
    a, b, c, d, e, f = m
    a2, b2, c2, d2, e2, f2 = n
    return (
        a * a2 + c * b2,
        b * a2 + d * b2,
        a * c2 + c * d2,
        b * c2 + d * d2,
        a * e2 + c * f2 + e,
        b * e2 + d * f2 + f,
    )


def _transform(text: str) -> Matrix:
    m = IDENTITY
    for name, args in re.findall(r"(translate|rotate)\(([^)]*)\)", text):
        v = [float(t) for t in re.split(r"[\s,]+", args.strip())]
        if name == "translate":
            m = _mul(m, (1, 0, 0, 1, v[0], v[1] if len(v) > 1 else 0.0))
        else:
            r = math.radians(v[0])
            cx, cy = (v[1], v[2]) if len(v) == 3 else (0.0, 0.0)
            m = _mul(m, (1, 0, 0, 1, cx, cy))
            m = _mul(m, (math.cos(r), math.sin(r), -math.sin(r), math.cos(r), 0, 0))
            m = _mul(m, (1, 0, 0, 1, -cx, -cy))
    return m


def _apply(m: Matrix, pts: Poly) -> Poly:
    a, b, c, d, e, f = m
    return [(a * x + c * y + e, b * x + d * y + f) for x, y in pts]


def _rect(x0: float, y0: float, x1: float, y1: float) -> Poly:
    return [(x0, y0), (x1, y0), (x1, y1), (x0, y1)]


def _path_points(d: str) -> Poly:
    """The vertices of an absolute M/L/H/V/Z path (all our symbols are drawn so)."""
    pts: Poly = []
    x = y = 0.0
    for cmd, args in re.findall(r"([MLHVZ])([^MLHVZ]*)", d):
        v = [float(t) for t in re.findall(r"-?\d+(?:\.\d+)?", args)]
        if cmd in "ML":
            x, y = v[0], v[1]
        elif cmd == "H":
            x = v[0]
        elif cmd == "V":
            y = v[0]
        else:
            continue
        pts.append((x, y))
    return pts


def _bounds(pts: Poly) -> Poly:
    xs, ys = [p[0] for p in pts], [p[1] for p in pts]
    return _rect(min(xs), min(ys), max(xs), max(ys))


def _shapes(svg: ET.Element) -> tuple[list[tuple[str, Poly]], list[tuple[str, Poly]]]:
    """(labels, symbols) of one drawing sheet as (name, polygon in sheet coordinates)."""
    labels: list[tuple[str, Poly]] = []
    symbols: list[tuple[str, Poly]] = []

    def walk(el: ET.Element, m: Matrix) -> None:
        m = _mul(m, _transform(el.get("transform", "")))
        tag, cls = el.tag.replace(SVG, ""), el.get("class", "").split()
        if tag == "text":
            words = "".join(el.itertext())
            size = FONT["lbl"] if "lbl" in cls else FONT["default"]
            w = EM_PER_CHAR * size * len(words)
            x, y = float(el.get("x", 0)), float(el.get("y", 0))
            x0 = {"start": x, "middle": x - w / 2, "end": x - w}[el.get("text-anchor", "start")]
            labels.append((words, _apply(m, _rect(x0, y - 0.8 * size, x0 + w, y + 0.2 * size))))
            return
        if "halo" not in cls:
            if tag == "circle" and "node" in cls:
                cx, cy, r = (float(el.get(k, 0)) for k in ("cx", "cy", "r"))
                symbols.append(("point", _apply(m, _rect(cx - r, cy - r, cx + r, cy + r))))
            elif tag == "rect" and set(cls) & {"arrester", "device", "heater-box"}:
                x, y, w, h = (float(el.get(k, 0)) for k in ("x", "y", "width", "height"))
                symbols.append((cls[0], _apply(m, _rect(x, y, x + w, y + h))))
            elif tag == "path" and set(cls) & {"fixture", "supply"}:
                symbols.append((cls[0], _apply(m, _bounds(_path_points(el.get("d", ""))))))
        for child in el:
            walk(child, m)

    walk(svg, IDENTITY)
    return labels, symbols


def _apart(p: Poly, q: Poly) -> bool:
    """True when a separating axis parts the convex polygons ``p`` and ``q`` (by > GAP)."""
    for poly in (p, q):
        for i in range(len(poly)):
            (x0, y0), (x1, y1) = poly[i], poly[(i + 1) % len(poly)]
            nx, ny = y0 - y1, x1 - x0
            norm = math.hypot(nx, ny)
            if norm == 0:
                continue
            nx, ny = nx / norm, ny / norm
            a = [nx * x + ny * y for x, y in p]
            b = [nx * x + ny * y for x, y in q]
            if max(a) <= min(b) + GAP or max(b) <= min(a) + GAP:
                return True
    return False


def _sheets(page: str) -> list[ET.Element]:
    found = re.findall(
        r'<svg xmlns="http://www.w3.org/2000/svg" class="network".*?</svg>', page, re.S
    )
    return [ET.fromstring(s) for s in found]


def clashes(page: str) -> tuple[list[tuple[str, str]], list[tuple[str, str]]]:
    """(label pairs that overlap, (label, symbol) pairs where a label sits on a symbol)."""
    text_text: list[tuple[str, str]] = []
    text_symbol: list[tuple[str, str]] = []
    for svg in _sheets(page):
        labels, symbols = _shapes(svg)
        for i, (a, p) in enumerate(labels):
            text_text += [(a, b) for b, q in labels[i + 1 :] if not _apart(p, q)]
            text_symbol += [(a, s) for s, q in symbols if not _apart(p, q)]
    return text_text, text_symbol


def _marked(page: str) -> set[str]:
    return set(re.findall(r'<g class="el [a-z]+ marked [^"]*" data-element="([^"]+)"', page))


def test_the_overlap_estimate_sees_an_overlap() -> None:
    """The measure itself: two labels on one baseline, a turned label rising into a third."""
    svg = (
        '<svg xmlns="http://www.w3.org/2000/svg" class="network">'
        '<text class="lbl" x="10" y="20">HB 3/4 copper-l</text>'
        '<text class="lbl" x="60" y="22">HT4</text>'
        '<text class="lbl" x="200" y="20">far</text>'
        '<text class="lbl" transform="translate(215 40) rotate(-90)">turned</text>'
        '<circle class="node" cx="15" cy="17" r="3.2"/></svg>'
    )
    text_text, text_symbol = clashes(svg)
    assert text_text == [("HB 3/4 copper-l", "HT4"), ("far", "turned")]
    assert text_symbol == [("HB 3/4 copper-l", "point")]


@pytest.mark.parametrize(
    "sample", ["fernhill-clinic", "corner-bistro", "two-bath-house", "lindenhof-flats"]
)
def test_no_label_overlaps_another_or_a_symbol(cli: Cli, tmp_path: Path, sample: str) -> None:
    out = tmp_path / f"{sample}.html"
    rc, _, err = cli("check", SAMPLES / f"{sample}.yaml", "--format", "html", "--output", out)
    assert rc in (0, 1), err
    page = out.read_text(encoding="utf-8")
    assert _sheets(page), "no network drawing in the page"
    text_text, text_symbol = clashes(page)
    assert text_text == [], f"{len(text_text)} overlapping labels: {text_text[:12]}"
    assert text_symbol == [], f"{len(text_symbol)} labels on symbols: {text_symbol[:12]}"
    rc, text, _ = cli("check", SAMPLES / f"{sample}.yaml", "--format", "json")
    elements = {f["element"] for f in json.loads(text)["files"][0]["findings"]}
    assert elements <= _marked(page), sorted(elements - _marked(page))
