"""Placing the network drawing's text labels so that none covers another or a symbol.

Each label comes with a short list of candidate spots (text, x, y, turn), best first; the
placer takes the labels in order of importance and gives each the first spot whose box
is free, keeping the boxes it has given out in a grid of cells so that a look-up only
reads the few cells a box touches. A box is estimated from the font size and character
count, 0.6 em per character (common practice for a proportional sans-serif; generous for
most letters), 0.8 em above the baseline and 0.2 em below. A turned label is held as the
upright box around its turned box, which is never smaller. The work is bounded: each
label tries at most its own candidates, each against the boxes in the cells it touches.
A label with no free spot takes its first one (the drawing is never refused).
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import dataclass
from html import escape

FONT_PX = 9.0  # svg .lbl in report/templates/style.css.j2
EM_PER_CHAR = 0.6
PAD = 1.5  # [px] air kept around every label
CELL = 48.0  # [px] side of a grid cell

Box = tuple[float, float, float, float]  # x0 y0 x1 y1


@dataclass(frozen=True)
class Spot:
    """A place for a label: its text, its anchor point and how it is turned.

    ``turn`` 0: left end of the baseline at (x, y); -90: the middle of the baseline at
    (x, y), reading upwards; 60: the left end at (x, y), falling to the right."""

    text: str
    x: float
    y: float
    turn: int = 0


def text_width(text: str) -> float:
    return EM_PER_CHAR * FONT_PX * len(text)


def spot_box(spot: Spot) -> Box:
    w = text_width(spot.text)
    up, down = 0.8 * FONT_PX, 0.2 * FONT_PX
    if spot.turn == 0:
        return (spot.x, spot.y - up, spot.x + w, spot.y + down)
    if spot.turn == -90:
        return (spot.x - up, spot.y - w / 2, spot.x + down, spot.y + w / 2)
    r = math.radians(spot.turn)
    c, s = math.cos(r), math.sin(r)
    corners = [(0.0, -up), (w, -up), (w, down), (0.0, down)]
    xs = [spot.x + c * u - s * v for u, v in corners]
    ys = [spot.y + s * u + c * v for u, v in corners]
    return (min(xs), min(ys), max(xs), max(ys))


def spot_svg(spot: Spot, cls: str) -> str:
    text = escape(spot.text)
    if spot.turn == 0:
        return f'<text class="{cls}" x="{spot.x:.1f}" y="{spot.y:.1f}">{text}</text>'
    anchor = ' text-anchor="middle"' if spot.turn == -90 else ""
    return (
        f'<text class="{cls}" transform="translate({spot.x:.1f} {spot.y:.1f}) '
        f'rotate({spot.turn})"{anchor}>{text}</text>'
    )


class Placer:
    """Collects symbols (fixed) and label requests, then places the labels."""

    def __init__(self) -> None:
        self._cells: dict[tuple[int, int], list[Box]] = {}
        self._requests: list[tuple[int, int, str, Iterable[Spot]]] = []
        self.extent = (0.0, 0.0)  # right and bottom edge of everything placed

    def block(self, box: Box) -> None:
        """Keep labels off ``box`` (a symbol, the legend)."""
        for cell in self._cells_of(box):
            self._cells.setdefault(cell, []).append(box)

    def request(self, rank: int, cls: str, spots: Iterable[Spot]) -> str:
        """A placeholder for a label to place; lower ``rank`` is placed first."""
        n = len(self._requests)
        self._requests.append((rank, n, cls, spots))
        return f"<<LBL{n}>>"

    def place(self) -> dict[int, str]:
        """The SVG text of every requested label, by request number."""
        out: dict[int, str] = {}
        right = bottom = 0.0
        for _, n, cls, spots in sorted(self._requests, key=lambda r: r[:2]):
            tried = iter(spots)
            first = next(tried)
            chosen = first
            if not self._free(spot_box(first)):
                chosen = next((s for s in tried if self._free(spot_box(s))), first)
            box = spot_box(chosen)
            self.block(box)
            right, bottom = max(right, box[2]), max(bottom, box[3])
            out[n] = spot_svg(chosen, cls)
        self.extent = (right, bottom)
        return out

    def _free(self, box: Box) -> bool:
        x0, y0, x1, y1 = box[0] - PAD, box[1] - PAD, box[2] + PAD, box[3] + PAD
        if x0 < 2.0 or y0 < 2.0:
            return False
        for cell in self._cells_of(box):
            for a0, b0, a1, b1 in self._cells.get(cell, ()):
                if x0 < a1 and a0 < x1 and y0 < b1 and b0 < y1:
                    return False
        return True

    @staticmethod
    def _cells_of(box: Box) -> list[tuple[int, int]]:
        i0, i1 = int((box[0] - PAD) // CELL), int((box[2] + PAD) // CELL)
        j0, j1 = int((box[1] - PAD) // CELL), int((box[3] + PAD) // CELL)
        return [(i, j) for i in range(i0, i1 + 1) for j in range(j0, j1 + 1)]
