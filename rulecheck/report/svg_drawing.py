"""A schematic drawing of the network as inline SVG, from its topology and elevations.

Supplies are the roots; every pipe hangs from the node nearer the source, drawn as an
elbow (across at the parent's height, then up or down to the child's elevation); a
heater joins its cold inlet to its hot outlet; fixtures and arresters hang below their
points as symbols of our own (a fixture under each side it draws from). Each node's
subtree takes a band of columns; a node sits above its largest branch, so risers run
straight. Heights follow elevation. Elements with findings carry a halo in the colour of
their worst severity and link to their findings (``#el-<id>``); every drawn element
carries ``data-element``. Output is deterministic: same layout, same bytes.
"""

from __future__ import annotations

import math
import re
from collections.abc import Iterator, Mapping
from dataclasses import dataclass, field
from html import escape
from itertools import chain

from rulecheck.findings import SEVERITY_RANK
from rulecheck.input.model import Layout, Pipe
from rulecheck.report.svg_labels import Placer, Spot, text_width

#: colours of our own, also used by the page's stylesheet (report/templates)
SEVERITY_COLOUR = {
    "hazard": "#8e2c8e",
    "violation": "#c8102e",
    "caution": "#c77800",
    "advisory": "#2f6db5",
}
WAIVED_COLOUR = "#8c9099"
SERVICE_COLOUR = {"cold": "#16708a", "hot": "#b5451b", "hot-return": "#b5451b"}

COLUMN = 44.0  # px per leaf column
PER_METRE = 34.0  # px per metre of elevation
HANG = 30.0  # px a fixture or arrester hangs below its point
MARGIN = 40.0


@dataclass
class _Node:
    id: str
    kind: str  # supply | point | fixture | arrester
    elevation: float = 0.0  # [m] (points and supplies)
    y: float = 0.0
    x: float = 0.0
    children: list[tuple[str, str]] = field(default_factory=list)  # (edge id, child node key)


def _key(kind: str, ident: str, side: str = "") -> str:
    return f"{kind}:{ident}:{side}"


def drawing(layout: Layout, marked: Mapping[str, str], prefix: str = "") -> list[tuple[str, str]]:
    """The sheets of ``layout`` as (supply, SVG), one per supply (a riser system) and one
    for points no supply feeds; ``marked`` maps element id -> its worst severity; links go
    to ``#<prefix>el-<id>``."""
    nodes: dict[str, _Node] = {}
    edges: dict[str, tuple[str, str, str, str]] = {}  # edge key -> (kind, id, service, label)
    for s in layout.supplies:
        nodes[_key("n", s.id)] = _Node(s.id, "supply", s.elevation)
    for p in layout.points:
        nodes[_key("n", p.id)] = _Node(p.id, "point", p.elevation)
    has_parent: set[str] = set()
    for pipe in layout.pipes:
        a, b = _key("n", pipe.start), _key("n", pipe.end)
        if pipe.service == "hot-return" or a not in nodes or b not in nodes or b in has_parent:
            continue
        edge = _key("pipe", pipe.id)
        edges[edge] = ("pipe", pipe.id, pipe.service, f"{pipe.id} {pipe.size} {pipe.material.id}")
        nodes[a].children.append((edge, b))
        has_parent.add(b)
    for heater in layout.heaters:
        a, b = _key("n", heater.inlet), _key("n", heater.outlet)
        if a in nodes and b in nodes and b not in has_parent:
            edge = _key("heater", heater.id)
            edges[edge] = ("heater", heater.id, "hot", heater.id)
            nodes[a].children.append((edge, b))
            has_parent.add(b)
    for fixture in layout.fixtures:
        for side, point in (("cold", fixture.cold), ("hot", fixture.hot)):
            if point is None or _key("n", point) not in nodes:
                continue
            key = _key("fixture", fixture.id, side)
            nodes[key] = _Node(fixture.id, "fixture")
            nodes[_key("n", point)].children.append(("", key))
    for arrester in layout.arresters:
        if _key("n", arrester.at) not in nodes:
            continue
        key = _key("arrester", arrester.id)
        nodes[key] = _Node(arrester.id, "arrester")
        nodes[_key("n", arrester.at)].children.append(("", key))

    roots = [_key("n", s.id) for s in layout.supplies]
    orphans = [k for k, n in nodes.items() if n.kind == "point" and k not in has_parent]
    groups = [[r] for r in roots] + ([orphans] if orphans else [])
    pipes = {p.id: p for p in layout.pipes}
    sheets = []
    for group in groups:
        order = _order(nodes, group)
        inside = set(order)
        name = nodes[group[0]].id if len(group) == 1 else "points without a supply"
        svg = _sheet(layout, nodes, edges, group, order, inside, pipes, marked)
        if prefix:  # our own anchors only: ids inside attributes are escaped, no '"' in them
            svg = svg.replace('href="#el-', f'href="#{escape(prefix)}el-')
        sheets.append((name, svg))
    return sheets


def _sheet(
    layout: Layout,
    nodes: dict[str, _Node],
    edges: dict[str, tuple[str, str, str, str]],
    roots: list[str],
    order: list[str],
    inside: set[str],
    pipes: Mapping[str, Pipe],
    marked: Mapping[str, str],
) -> str:
    """One sheet: the tree below ``roots``."""
    heights = [nodes[k].elevation for k in order if nodes[k].kind in ("point", "supply")]
    placed = _place(nodes, roots, max(heights, default=0.0))
    width = max(MARGIN * 2 + placed * COLUMN, 12 * 92 + 24.0)
    height = max(nodes[k].y for k in order) + MARGIN + 40.0 if order else 2 * MARGIN
    labels = Placer()
    labels.block((0.0, 0.0, width, 30.0))  # the legend
    parts: list[str] = []
    for parent_key in order:
        parent = nodes[parent_key]
        for edge, child_key in parent.children:
            child = nodes[child_key]
            if edge:
                parts.append(_edge(parent, child, edges[edge], marked, labels))
            else:
                parts.append(_hanger(parent, child))
    for pipe in layout.pipes:
        a, b = _key("n", pipe.start), _key("n", pipe.end)
        if pipe.service == "hot-return" and a in inside and b in inside:
            parts.append(_return(pipe.id, nodes[a], nodes[b], marked))
    on_pipe: dict[str, list[str]] = {}
    for device in layout.devices:
        on_pipe.setdefault(device.on, []).append(device.id)
    for device in layout.devices:
        carrier = pipes.get(device.on)
        if carrier is None or _key("n", carrier.start) not in inside:
            continue
        parts.append(
            _device(device.id, device.kind, carrier, on_pipe[device.on], nodes, marked, labels)
        )
    for key in order:
        parts.append(_symbol(nodes[key], marked, labels))
    texts = labels.place()
    width = max(width, labels.extent[0] + 12.0)
    height = max(height, labels.extent[1] - 18.0)
    body = re.sub(r"<<LBL(\d+)>>", lambda m: texts[int(m[1])], "".join(p for p in parts if p))
    legend = _legend()
    return (
        f'<svg xmlns="http://www.w3.org/2000/svg" class="network" role="img" '
        f'aria-label="Schematic of the network" width="{width:.0f}" height="{height + 30:.0f}" '
        f'viewBox="0 0 {width:.0f} {height + 30:.0f}">' + body + legend + "</svg>"
    )


def _order(nodes: dict[str, _Node], roots: list[str]) -> list[str]:
    """Node keys parents first (iterative, each once)."""
    seen: set[str] = set()
    out: list[str] = []
    stack = list(reversed(roots))
    while stack:
        key = stack.pop()
        if key in seen:
            continue
        seen.add(key)
        out.append(key)
        stack.extend(reversed([c for _, c in nodes[key].children]))
    return out


def _place(nodes: dict[str, _Node], roots: list[str], top: float) -> int:
    """Give every node x (columns) and y (elevation); return the number of columns."""
    order = _order(nodes, roots)
    size: dict[str, int] = {}
    for key in reversed(order):  # children before parents
        kids = nodes[key].children
        size[key] = max(1, sum(size.get(c, 1) for _, c in kids))
    column = 0
    parent_y: dict[str, float] = {}
    for key in order:
        node = nodes[key]
        if node.kind in ("point", "supply"):
            node.y = MARGIN + 30.0 + (top - node.elevation) * PER_METRE
        else:
            node.y = parent_y.get(key, MARGIN) + HANG
        for _, child in node.children:
            parent_y[child] = node.y
    # columns: leaves left to right in drawing order; a node above its largest branch
    x: dict[str, float] = {}
    for key in order:
        if not nodes[key].children:
            x[key] = MARGIN + (column + 0.5) * COLUMN
            column += 1
    for key in reversed(order):
        below = [c for _, c in nodes[key].children]
        if below:  # the largest branch, the first of equals
            widest = max(range(len(below)), key=lambda k: (size[below[k]], -k))
            x[key] = x[below[widest]]
    for key in order:
        nodes[key].x = x[key]
    return column


def _halo(element: str, marked: Mapping[str, str], shape: str) -> str:
    severity = marked.get(element)
    if severity is None:
        return ""
    return shape.replace("CLASS", f"halo sev-{severity}").replace(
        "COLOUR", SEVERITY_COLOUR.get(severity, WAIVED_COLOUR)
    )


def _wrap(element: str, kind: str, body: str, marked: Mapping[str, str], title: str) -> str:
    """An element's group: ``data-element``, its title, and a link to its findings."""
    e = escape(element)
    severity = marked.get(element)
    cls = f"el {kind}" + (f" marked sev-{severity}" if severity else "")
    inner = f"<title>{escape(title)}</title>{body}"
    if severity:
        inner = f'<a href="#el-{e}">{inner}</a>'
    return f'<g class="{cls}" data-element="{e}">{inner}</g>'


def _edge(
    parent: _Node,
    child: _Node,
    edge: tuple[str, str, str, str],
    marked: Mapping[str, str],
    labels: Placer,
) -> str:
    kind, ident, service, label = edge
    colour = SERVICE_COLOUR[service]
    d = f"M{parent.x:.1f} {parent.y:.1f}H{child.x:.1f}V{child.y:.1f}"
    halo = _halo(ident, marked, f'<path class="CLASS" d="{d}" stroke="COLOUR"/>')
    body = halo + f'<path class="pipe {service}" d="{d}" stroke="{colour}"/>'
    if kind == "heater":
        mx, my = child.x, (parent.y + child.y) / 2
        body += (
            f'<rect class="heater-box" x="{mx - 11:.1f}" y="{my - 9:.1f}" width="22" '
            f'height="18" rx="3"/><path class="heater-coil" d="M{mx - 7:.1f} {my + 3:.1f}'
            f'l3.5 -6 3.5 6 3.5 -6 3.5 6"/>'
        )
        labels.block((mx - 11, my - 9, mx + 11, my + 9))
        text = labels.request(2, "lbl", _beside(label, mx, my, 14.0))
        return _wrap(ident, "heater", body + text, marked, f"heater {ident}")
    text = labels.request(3, "lbl", _along(label, ident, parent, child))
    return _wrap(ident, "pipe", body + text, marked, f"pipe {label} ({service})")


def _beside(text: str, x: float, y: float, gap: float, first: Spot | None = None) -> Iterator[Spot]:
    """Spots around a symbol at (x, y), ``gap`` px from its centre (after ``first``):
    right, left, below, above, a row lower or higher on either side, then on widening
    rings. Made one at a time: a label in the clear never reads past its first."""
    if first is not None:
        yield first
    w = text_width(text)
    yield Spot(text, x + gap, y + 3)
    yield Spot(text, x - gap - w, y + 3)
    for dy in (gap + 8, -gap - 1, gap + 17, -gap - 10, gap + 26, -gap - 19):
        yield Spot(text, x + 5, y + dy)
        yield Spot(text, x - 5 - w, y + dy)
    yield from _ring(text, x, y)


def _along(label: str, ident: str, parent: _Node, child: _Node) -> Iterator[Spot]:
    """Spots for a pipe's label: along its riser (turned) when it has a long one, along
    its run, beside its short riser; then the same with the pipe id alone (the full label
    stays in the element's title and in the pipes table); then the id in rings."""
    rise = abs(child.y - parent.y)
    my = (parent.y + child.y) / 2
    run = abs(child.x - parent.x)
    lo, hi = sorted((parent.x, child.x))
    for text in (label, ident):
        w = text_width(text)
        if rise >= w + 16:
            yield Spot(text, child.x - 4, my, -90)
            yield Spot(text, child.x + 12, my, -90)
        if run >= w + 12:
            for x in ((lo + hi - w) / 2, hi - 6 - w, lo + 6):
                yield Spot(text, x, parent.y - 4)
                yield Spot(text, x, parent.y + 12)
        if rise >= 8:
            yield Spot(text, child.x + 6, my + 3)
            yield Spot(text, child.x - 6 - w, my + 3)
        if rise >= 24:
            yield Spot(text, child.x - 4, my, -90)
            yield Spot(text, child.x + 12, my, -90)
    # crowded: the id alone, in rings around the middle of the run and of the riser
    yield from _ring(ident, (parent.x + child.x) / 2, parent.y)
    yield from _ring(ident, child.x, my)


#: unit steps of a ring: eight directions
_COMPASS = [(math.cos(k * math.pi / 4), math.sin(k * math.pi / 4)) for k in range(8)]


def _ring(text: str, x: float, y: float) -> Iterator[Spot]:
    """Spots on widening rings around (x, y): 7 rings of 8 (bounded)."""
    w = text_width(text)
    for r in (10.0, 18.0, 28.0, 40.0, 54.0, 72.0, 94.0):
        for cx, cy in _COMPASS:
            dx = r * cx
            yield Spot(text, x + dx - (w if dx < -1 else w / 2 if dx <= 1 else 0.0), y + r * cy + 3)


def _hanger(parent: _Node, child: _Node) -> str:
    d = f"M{parent.x:.1f} {parent.y:.1f}H{child.x:.1f}V{child.y - 7:.1f}"
    return f'<path class="hanger" d="{d}"/>'


def _return(ident: str, a: _Node, b: _Node, marked: Mapping[str, str]) -> str:
    d = f"M{a.x:.1f} {a.y + 4:.1f}L{b.x:.1f} {b.y + 4:.1f}"
    halo = _halo(ident, marked, f'<path class="CLASS" d="{d}" stroke="COLOUR"/>')
    body = halo + f'<path class="pipe hot-return" d="{d}" stroke="{SERVICE_COLOUR["hot"]}"/>'
    return _wrap(ident, "pipe", body, marked, f"pipe {ident} (hot-return)")


def _device(
    ident: str,
    kind: str,
    pipe: Pipe,
    same: list[str],
    nodes: dict[str, _Node],
    marked: Mapping[str, str],
    labels: Placer,
) -> str:
    on = pipe.id
    a, b = nodes.get(_key("n", pipe.start)), nodes.get(_key("n", pipe.end))
    if a is None or b is None:
        return ""
    k = same.index(ident)
    # along the horizontal run of the elbow when there is one, else along the riser
    if abs(b.x - a.x) > 1:
        x, y = a.x + (b.x - a.x) * (k + 1) / (len(same) + 1), a.y
    else:
        x, y = a.x, a.y + (b.y - a.y) * (k + 1) / (len(same) + 1)
    halo = _halo(ident, marked, f'<circle class="CLASS" cx="{x:.1f}" cy="{y:.1f}" r="10"/>')
    body = (
        halo + f'<rect class="device" x="{x - 5:.1f}" y="{y - 5:.1f}" width="10" height="10" '
        f'transform="rotate(45 {x:.1f} {y:.1f})"/>'
        + labels.request(2, "lbl dev", _beside(ident, x, y, 10.0, Spot(ident, x + 8, y + 13)))
    )
    labels.block((x - 7.1, y - 7.1, x + 7.1, y + 7.1))
    return _wrap(ident, "device", body, marked, f"{kind} {ident} on {on}")


def _symbol(node: _Node, marked: Mapping[str, str], labels: Placer) -> str:
    x, y, ident = node.x, node.y, node.id
    if node.kind == "supply":
        labels.block((x - 11, y - 11, x + 11, y + 9))
        halo = _halo(ident, marked, f'<circle class="CLASS" cx="{x:.1f}" cy="{y:.1f}" r="16"/>')
        body = (
            halo + f'<path class="supply" d="M{x - 11:.1f} {y + 9:.1f}L{x:.1f} {y - 11:.1f}'
            f'L{x + 11:.1f} {y + 9:.1f}Z"/>'
            + labels.request(1, "lbl id", _beside(ident, x, y, 14, Spot(ident, x + 14, y - 6)))
        )
        return _wrap(ident, "supply", body, marked, f"supply {ident}")
    if node.kind == "point":
        labels.block((x - 3.2, y - 3.2, x + 3.2, y + 3.2))
        halo = _halo(ident, marked, f'<circle class="CLASS" cx="{x:.1f}" cy="{y:.1f}" r="9"/>')
        body = (
            halo
            + f'<circle class="node" cx="{x:.1f}" cy="{y:.1f}" r="3.2"/>'
            + labels.request(1, "lbl id", _beside(ident, x, y, 5, Spot(ident, x + 5, y + 11)))
        )
        return _wrap(ident, "point", body, marked, f"point {ident}")
    hung = chain(
        [Spot(ident, x + 3, y + 10, 60), Spot(ident, x + 3, y + 22, 60)], _ring(ident, x, y)
    )
    if node.kind == "arrester":
        labels.block((x - 4, y - 10, x + 4, y + 6))
        halo = _halo(ident, marked, f'<circle class="CLASS" cx="{x:.1f}" cy="{y - 2:.1f}" r="12"/>')
        body = (
            halo + f'<rect class="arrester" x="{x - 4:.1f}" y="{y - 10:.1f}" width="8" height="16" '
            'rx="4"/>' + labels.request(0, "lbl sym", hung)
        )
        return _wrap(ident, "arrester", body, marked, f"arrester {ident}")
    halo = _halo(ident, marked, f'<circle class="CLASS" cx="{x:.1f}" cy="{y:.1f}" r="12"/>')
    body = (
        halo + f'<path class="fixture" d="M{x - 7:.1f} {y - 6:.1f}H{x + 7:.1f}L{x + 4:.1f} '
        f'{y + 6:.1f}H{x - 4:.1f}Z"/>' + labels.request(0, "lbl sym", hung)
    )
    labels.block((x - 7, y - 6, x + 7, y + 6))
    return _wrap(ident, "fixture", body, marked, f"fixture {ident}")


def _legend() -> str:
    items = [
        ('<path class="pipe cold" d="M0 0h22" stroke="#16708a"/>', "cold"),
        ('<path class="pipe hot" d="M0 0h22" stroke="#b5451b"/>', "hot"),
        ('<path class="pipe hot-return" d="M0 0h22" stroke="#b5451b"/>', "hot return"),
        ('<path class="supply" d="M4 7L11 -6L18 7Z"/>', "supply"),
        ('<path class="fixture" d="M4 -5H18L15 6H7Z"/>', "fixture"),
        ('<rect class="arrester" x="7" y="-8" width="8" height="16" rx="4"/>', "arrester"),
        ('<rect class="device" x="6" y="-5" width="10" height="10"/>', "device"),
        ('<rect class="heater-box" x="0" y="-8" width="22" height="16" rx="3"/>', "heater"),
    ]
    items += [
        (f'<circle class="halo sev-{s}" cx="11" cy="0" r="7" stroke="{c}"/>', s)
        for s, c in sorted(SEVERITY_COLOUR.items(), key=lambda kv: SEVERITY_RANK[kv[0]])
    ]
    out = ['<g class="legend" transform="translate(12 18)">']
    for k, (shape, name) in enumerate(items):
        out.append(
            f'<g transform="translate({k * 92} 0)">{shape}'
            f'<text class="lbl" x="26" y="4">{escape(name)}</text></g>'
        )
    out.append("</g>")
    return "".join(out)
