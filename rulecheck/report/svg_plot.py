"""Small line plots as inline SVG: pressure at a valve against time, and the pressure
envelope along a valve's path. Written here (no plotting library): a few polylines,
axes with round ticks and horizontal limit lines; same data, same bytes."""

from __future__ import annotations

import math
from collections.abc import Sequence
from html import escape

import numpy as np

from rulecheck.report.svg_drawing import SEVERITY_COLOUR

W, H = 640.0, 300.0
LEFT, RIGHT, TOP, BOTTOM = 64.0, 178.0, 16.0, 42.0
#: a trace is thinned to at most this many columns (each keeps its min and max, so no
#: peak is lost) before it becomes a polyline
MOST_COLUMNS = 600

TRACE = "#1d3f6e"
LIMIT = SEVERITY_COLOUR["violation"]
RATING = SEVERITY_COLOUR["hazard"]
MIN_COLOUR = "#16708a"


def nice_ticks(low: float, high: float, count: int = 6) -> list[float]:
    """Round tick values covering [low, high] (1, 2, 2.5 or 5 times a power of ten)."""
    if not (math.isfinite(low) and math.isfinite(high)) or high <= low:
        high = low + 1.0
    raw = (high - low) / max(count - 1, 1)
    power = 10 ** math.floor(math.log10(raw))
    step = next(m * power for m in (1, 2, 2.5, 5, 10) if m * power >= raw)
    first = math.floor(low / step) * step
    ticks = []
    value = first
    for _ in range(count * 3):  # bounded
        ticks.append(round(value, 10))
        if value >= high:
            break
        value += step
    return ticks


def thin(
    x: np.ndarray, y: np.ndarray, columns: int = MOST_COLUMNS
) -> tuple[np.ndarray, np.ndarray]:
    """At most ``2·columns`` points: per column its minimum and maximum in time order."""
    n = len(x)
    if n <= 2 * columns:
        return x, y
    edges = np.linspace(0, n, columns + 1).astype(int)
    xs: list[float] = []
    ys: list[float] = []
    for a, b in zip(edges[:-1], edges[1:], strict=True):
        seg = y[a:b]
        i, j = int(np.argmin(seg)), int(np.argmax(seg))
        for k in sorted((i, j)):
            xs.append(float(x[a + k]))
            ys.append(float(seg[k]))
    return np.array(xs), np.array(ys)


class _Frame:
    def __init__(self, x0: float, x1: float, y0: float, y1: float) -> None:
        self.xt = nice_ticks(x0, x1)
        self.yt = nice_ticks(y0, y1)
        self.x0, self.x1 = self.xt[0], self.xt[-1]
        self.y0, self.y1 = self.yt[0], self.yt[-1]

    def px(self, x: float) -> float:
        return LEFT + (x - self.x0) / (self.x1 - self.x0) * (W - LEFT - RIGHT)

    def py(self, y: float) -> float:
        return H - BOTTOM - (y - self.y0) / (self.y1 - self.y0) * (H - TOP - BOTTOM)

    def axes(self, xlabel: str, ylabel: str) -> str:
        out = [
            f'<rect class="plot-area" x="{LEFT}" y="{TOP}" width="{W - LEFT - RIGHT}" '
            f'height="{H - TOP - BOTTOM}"/>'
        ]
        for v in self.xt:
            x = self.px(v)
            out.append(
                f'<path class="grid" d="M{x:.1f} {TOP}V{H - BOTTOM}"/>'
                f'<text class="tick" x="{x:.1f}" y="{H - BOTTOM + 14:.1f}" '
                f'text-anchor="middle">{_num(v)}</text>'
            )
        for v in self.yt:
            y = self.py(v)
            out.append(
                f'<path class="grid" d="M{LEFT} {y:.1f}H{W - RIGHT}"/>'
                f'<text class="tick" x="{LEFT - 5:.1f}" y="{y + 4:.1f}" '
                f'text-anchor="end">{_num(v)}</text>'
            )
        out.append(
            f'<text class="axis" x="{(LEFT + W - RIGHT) / 2:.1f}" y="{H - 6:.1f}" '
            f'text-anchor="middle">{escape(xlabel)}</text>'
            f'<text class="axis" transform="translate(14 {(TOP + H - BOTTOM) / 2:.1f}) '
            f'rotate(-90)" text-anchor="middle">{escape(ylabel)}</text>'
        )
        return "".join(out)

    def hline(self, value: float, cls: str, colour: str) -> str:
        if not (self.y0 <= value <= self.y1):
            return ""
        y = self.py(value)
        return f'<path class="{cls}" d="M{LEFT} {y:.1f}H{W - RIGHT}" stroke="{colour}"/>'


def _num(v: float) -> str:
    text = f"{v:.6g}"
    return "0" if text in ("-0", "0") else text


def _legend(entries: Sequence[tuple[str, str, str]]) -> str:
    out = []
    for k, (cls, colour, label) in enumerate(entries):
        y = TOP + 10 + k * 18
        out.append(
            f'<path class="{cls}" d="M{W - RIGHT + 10} {y}h20" stroke="{colour}"/>'
            f'<text class="key" x="{W - RIGHT + 34}" y="{y + 4}">{escape(label)}</text>'
        )
    return "".join(out)


def _svg(kind: str, title: str, body: str) -> str:
    return (
        f'<svg xmlns="http://www.w3.org/2000/svg" class="plot {kind}" role="img" '
        f'aria-label="{escape(title)}" width="{W:.0f}" height="{H:.0f}" '
        f'viewBox="0 0 {W:.0f} {H:.0f}"><title>{escape(title)}</title>{body}</svg>'
    )


def time_plot(
    title: str,
    t_ms: np.ndarray,
    p: np.ndarray,
    peak: float,
    limit: float,
    rating: float,
    unit: str,
) -> str:
    """The pressure at a valve against time [ms] with the judged peak, the design limit
    and the pipe rating (all in the display unit ``unit``)."""
    xs, ys = thin(np.asarray(t_ms, float), np.asarray(p, float))
    levels = [float(np.min(ys)), float(np.max(ys)), peak, limit]
    if math.isfinite(rating) and rating < 2.0 * max(levels):
        levels.append(rating)
    frame = _Frame(float(xs[0]), float(xs[-1]), min(levels + [0.0]), max(levels))
    points = " ".join(f"{frame.px(x):.1f},{frame.py(y):.1f}" for x, y in zip(xs, ys, strict=True))
    body = frame.axes("time [ms]", f"pressure at the valve [{unit}]")
    body += frame.hline(limit, "limit", LIMIT)
    body += frame.hline(rating, "rating", RATING) if math.isfinite(rating) else ""
    body += frame.hline(peak, "peak", TRACE)
    body += f'<polyline class="trace" points="{points}" stroke="{TRACE}"/>'
    body += _legend(
        [
            ("trace", TRACE, "as simulated"),
            ("peak", TRACE, "judged peak"),
            ("limit", LIMIT, f"design limit {limit:.0f}"),
            ("rating", RATING, _rating_key(rating, frame)),
        ]
    )
    return _svg("time", title, body)


def _rating_key(rating: float, frame: _Frame) -> str:
    if not math.isfinite(rating):
        return "pipe rating: none"
    shown = f"pipe rating {rating:.0f}"
    return shown if rating <= frame.y1 else shown + " (above)"


def envelope_plot(
    title: str,
    pipes: Sequence[tuple[str, float, float, float, float, float]],
    limit: float,
    length_unit: str,
    pressure_unit: str,
) -> str:
    """Max and min pressure along a path, root (0) to the valve: per pipe
    (id, start, end, max, min, rating), drawn as steps, with the design limit and each
    pipe's own rating."""
    x0 = pipes[0][1]
    x1 = pipes[-1][2]
    values = [v for p in pipes for v in (p[3], p[4])] + [limit, 0.0]
    ratings = [p[5] for p in pipes if math.isfinite(p[5]) and p[5] < 2.0 * max(values)]
    frame = _Frame(x0, x1, min(values), max(values + ratings))
    body = frame.axes(f"distance from the root [{length_unit}]", f"pressure [{pressure_unit}]")
    body += frame.hline(limit, "limit", LIMIT)

    def steps(column: int) -> str:
        pts = []
        for p in pipes:
            value = float(p[column])
            if not math.isfinite(value) or not frame.y0 <= value <= frame.y1:
                continue
            pts.append(f"M{frame.px(p[1]):.1f} {frame.py(value):.1f}H{frame.px(p[2]):.1f}")
        return "".join(pts)

    body += f'<path class="rating" d="{steps(5)}" stroke="{RATING}"/>'
    body += f'<path class="env-max" d="{steps(3)}" stroke="{TRACE}"/>'
    body += f'<path class="env-min" d="{steps(4)}" stroke="{MIN_COLOUR}"/>'
    for p in pipes:
        x = (frame.px(p[1]) + frame.px(p[2])) / 2
        body += (
            f'<text class="seg" x="{x:.1f}" y="{H - BOTTOM - 4:.1f}" '
            f'text-anchor="middle">{escape(p[0])}</text>'
        )
    body += _legend(
        [
            ("env-max", TRACE, "maximum"),
            ("env-min", MIN_COLOUR, "minimum"),
            ("limit", LIMIT, f"design limit {limit:.0f}"),
            ("rating", RATING, _rating_key(min(p[5] for p in pipes), frame)),
        ]
    )
    return _svg("envelope", title, body)
