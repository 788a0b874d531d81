"""Small inline SVG plots with labelled axes: grouped bars, histograms, log-log scatters.

Each function returns one ``<svg class="plot">`` element as text; no scripts, no fonts to
fetch, deterministic output (numbers printed with fixed precision).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from html import escape

import numpy as np

PALETTE = ("#3b6ea8", "#e07b39", "#5a9e6f", "#b04a5a", "#7d68a8", "#8c8c3a")
W, H = 520, 290
LEFT, RIGHT, TOP, BOTTOM = 64, 16, 34, 52


def _fmt(value: float) -> str:
    if value == 0:
        return "0"
    if abs(value) >= 10_000 or abs(value) < 0.01:
        return f"{value:.1e}".replace("e+0", "e").replace("e-0", "e-")
    return f"{value:,.2f}".rstrip("0").rstrip(".")


def nice_ticks(low: float, high: float, count: int = 5) -> list[float]:
    """Round tick values covering [low, high]."""
    if high <= low:
        high = low + 1.0
    raw = (high - low) / count
    step = 10 ** math.floor(math.log10(raw))
    step *= next(m for m in (1, 2, 2.5, 5, 10) if m * step >= raw)
    start = math.floor(low / step) * step
    ticks = [start + i * step for i in range(math.ceil((high - start) / step) + 1)]
    return [round(t, 10) for t in ticks]


def _frame(
    title: str, x_label: str, y_label: str, plot_id: str, legend: Sequence[str]
) -> list[str]:
    parts = [
        f'<svg class="plot" data-plot="{escape(plot_id)}" xmlns="http://www.w3.org/2000/svg" '
        f'viewBox="0 0 {W} {H}" width="{W}" height="{H}" role="img" '
        f'aria-label="{escape(title)}">',
        f'<rect x="0" y="0" width="{W}" height="{H}" fill="#ffffff"/>',
        f'<text x="{W / 2}" y="20" text-anchor="middle" class="t">{escape(title)}</text>',
        f'<text x="{LEFT + (W - LEFT - RIGHT) / 2}" y="{H - 10}" text-anchor="middle" '
        f'class="a">{escape(x_label)}</text>',
        f'<text transform="translate(14 {TOP + (H - TOP - BOTTOM) / 2}) rotate(-90)" '
        f'text-anchor="middle" class="a">{escape(y_label)}</text>',
    ]
    for i, name in enumerate(legend if len(legend) > 1 else ()):
        x = W - RIGHT - 120
        y = TOP + 4 + 16 * i
        colour = PALETTE[i % len(PALETTE)]
        parts.append(f'<rect x="{x}" y="{y}" width="10" height="10" fill="{colour}"/>')
        parts.append(f'<text x="{x + 14}" y="{y + 9}" class="l">{escape(name)}</text>')
    return parts


def _y_axis(parts: list[str], ticks: list[float], scale: object, labels: list[str]) -> None:
    for tick, label in zip(ticks, labels, strict=True):
        y = scale(tick)  # type: ignore[operator]
        parts.append(
            f'<line x1="{LEFT}" x2="{W - RIGHT}" y1="{y:.1f}" y2="{y:.1f}" class="g"/>'
            f'<text x="{LEFT - 6}" y="{y + 4:.1f}" text-anchor="end" class="k">{label}</text>'
        )
    parts.append(f'<line x1="{LEFT}" x2="{LEFT}" y1="{TOP}" y2="{H - BOTTOM}" class="x"/>')
    parts.append(
        f'<line x1="{LEFT}" x2="{W - RIGHT}" y1="{H - BOTTOM}" y2="{H - BOTTOM}" class="x"/>'
    )


def bars(
    categories: Sequence[str],
    series: dict[str, Sequence[float]],
    *,
    title: str,
    x_label: str,
    y_label: str,
    plot_id: str,
) -> str:
    """Grouped vertical bars: one group per category, one bar per series."""
    top = max([max(v, default=0) for v in series.values()] + [1])
    ticks = nice_ticks(0, float(top))
    span = ticks[-1] or 1.0
    inner_w, inner_h = W - LEFT - RIGHT, H - TOP - BOTTOM

    def scale(v: float) -> float:
        return H - BOTTOM - inner_h * v / span

    parts = _frame(title, x_label, y_label, plot_id, list(series))
    _y_axis(parts, ticks, scale, [_fmt(t) for t in ticks])
    group = inner_w / max(len(categories), 1)
    bar = group * 0.8 / max(len(series), 1)
    for i, name in enumerate(categories):
        x0 = LEFT + group * i + group * 0.1
        for j, values in enumerate(series.values()):
            v = float(values[i])
            y = scale(v)
            parts.append(
                f'<rect x="{x0 + bar * j:.1f}" y="{y:.1f}" width="{max(bar - 1, 1):.1f}" '
                f'height="{H - BOTTOM - y:.1f}" fill="{PALETTE[j % len(PALETTE)]}">'
                f"<title>{escape(name)}: {_fmt(v)}</title></rect>"
            )
        label = name if len(name) <= 14 else name[:13] + "…"
        parts.append(
            f'<text x="{LEFT + group * (i + 0.5):.1f}" y="{H - BOTTOM + 16}" '
            f'text-anchor="middle" class="k">{escape(label)}</text>'
        )
    return "".join(parts) + "</svg>"


def histogram(values: np.ndarray, *, title: str, x_label: str, plot_id: str, bins: int = 20) -> str:
    """A histogram of finite ``values`` with ``bins`` equal-width bins."""
    counts, edges = np.histogram(values, bins=bins) if len(values) else (np.zeros(1), [0, 1])
    ticks_y = nice_ticks(0, float(max(counts.max(), 1)))
    lo, hi = float(edges[0]), float(edges[-1])
    hi = hi if hi > lo else lo + 1.0
    inner_w, inner_h = W - LEFT - RIGHT, H - TOP - BOTTOM

    def sy(v: float) -> float:
        return H - BOTTOM - inner_h * v / (ticks_y[-1] or 1.0)

    def sx(v: float) -> float:
        return LEFT + inner_w * (v - lo) / (hi - lo)

    parts = _frame(title, x_label, "vertices", plot_id, ())
    _y_axis(parts, ticks_y, sy, [_fmt(t) for t in ticks_y])
    for i, n in enumerate(counts):
        x, x2, y = sx(float(edges[i])), sx(float(edges[i + 1])), sy(float(n))
        parts.append(
            f'<rect x="{x:.1f}" y="{y:.1f}" width="{max(x2 - x - 1, 1):.1f}" '
            f'height="{H - BOTTOM - y:.1f}" fill="{PALETTE[0]}"/>'
        )
    for t in (t for t in nice_ticks(lo, hi) if lo <= t <= hi):
        parts.append(
            f'<text x="{sx(float(t)):.1f}" y="{H - BOTTOM + 16}" text-anchor="middle" '
            f'class="k">{_fmt(float(t))}</text>'
        )
    return "".join(parts) + "</svg>"


def loglog(
    series: dict[str, tuple[np.ndarray, np.ndarray]],
    *,
    title: str,
    x_label: str,
    y_label: str,
    plot_id: str,
) -> str:
    """Points (x, y > 0) on log-scaled axes, one colour per series."""
    xs = np.concatenate([x for x, _ in series.values()] + [np.array([1.0])])
    ys = np.concatenate([y for _, y in series.values()] + [np.array([1.0])])
    x_hi = math.ceil(math.log10(max(float(xs.max()), 10.0)))
    y_hi = math.ceil(math.log10(max(float(ys.max()), 10.0)))
    inner_w, inner_h = W - LEFT - RIGHT, H - TOP - BOTTOM

    def sx(v: float) -> float:
        return LEFT + inner_w * math.log10(v) / x_hi

    def sy(v: float) -> float:
        return H - BOTTOM - inner_h * math.log10(v) / y_hi

    parts = _frame(title, x_label, y_label, plot_id, list(series))
    ticks = [10.0**k for k in range(y_hi + 1)]
    _y_axis(parts, ticks, sy, [_fmt(t) for t in ticks])
    for k in range(x_hi + 1):
        parts.append(
            f'<text x="{sx(10.0**k):.1f}" y="{H - BOTTOM + 16}" text-anchor="middle" '
            f'class="k">{_fmt(10.0**k)}</text>'
        )
    for j, (name, (x, y)) in enumerate(series.items()):
        colour = PALETTE[j % len(PALETTE)]
        for a, b in zip(x.tolist(), y.tolist(), strict=True):
            parts.append(
                f'<circle cx="{sx(a):.1f}" cy="{sy(b):.1f}" r="3" fill="{colour}" '
                f'fill-opacity="0.75"><title>{escape(name)}: degree {a}, {b} vertices</title>'
                "</circle>"
            )
    return "".join(parts) + "</svg>"
