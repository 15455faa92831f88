"""Inline SVG charts for the reports: no scripts, no external resources.

Each function takes plain numbers and returns a complete ``<svg>`` element as a string;
every label passes through ``markupsafe.escape``. Coordinates are computed here so that the
templates do no arithmetic.
"""

from __future__ import annotations

import math
from typing import Callable, Sequence

import numpy as np
from markupsafe import Markup, escape

from ._formatting import format_number
from ._streaming import Binned

__all__ = ["bar_chart", "histogram", "points_with_bars", "trend_plot"]

_W, _FONT = 640, 11
_AXIS = "#5b6770"
_BAR = "#b8612c"
_NEG = "#4d7f8c"


def _svg(width: float, height: float, body: list[str], label: str,
         kind: str = "plot") -> Markup:
    """``kind``: "plot" (drawn to a fixed height, capped on paper) or "bars" (one row each)."""
    return Markup(f'<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {width:.0f} '
                  f'{height:.0f}" width="100%" class="chart {kind}" role="img" '
                  f'aria-label="{escape(label)}" '
                  f'font-size="{_FONT}" font-family="inherit"><title>{escape(label)}</title>'
                  + "".join(body) + "</svg>")


def _text(x: float, y: float, text: str, anchor: str = "start", extra: str = "") -> str:
    return (f'<text x="{x:.1f}" y="{y:.1f}" text-anchor="{anchor}" {extra}>'
            f"{escape(text)}</text>")


def _label(x: float, y: float, name: str, room: float, anchor: str, size: float = _FONT,
           extra: str = "") -> str:
    """A name in at most ``room`` pixels: cut with "…" when longer (an average glyph is
    taken as 0.62 em), the whole name kept as the label's tooltip."""
    fits = max(4, int(room / (0.62 * size)))
    if len(name) <= fits:
        return _text(x, y, name, anchor, extra)
    return (f'<text x="{x:.1f}" y="{y:.1f}" text-anchor="{anchor}" {extra}>'
            f"<title>{escape(name)}</title>{escape(name[:fits - 1])}…</text>")


def bar_chart(rows: Sequence[tuple[str, float]], unit: str = "%",
              label: str = "contributions") -> Markup:
    """Horizontal bars, one per (name, value); negative values drawn leftwards."""
    rows = [r for r in rows if r[1] != 0 and math.isfinite(r[1])]
    if not rows:
        return _svg(_W, 30, [_text(10, 20, "no input contributes to the uncertainty")], label)
    height = 22 * len(rows) + 30
    left = min(260, 20 + 7 * max(len(name) for name, _ in rows))
    right = _W - 70
    top = max([abs(v) for _, v in rows] + [1e-300])
    has_negative = any(v < 0 for _, v in rows)
    zero = (left + right) / 2 if has_negative else left
    scale = (right - zero) / top
    body = []
    for i, (name, value) in enumerate(rows):
        y = 10 + 22 * i
        x = zero if value >= 0 else zero + value * scale
        body.append(_label(left - 8, y + 13, name, left - 12, "end"))
        body.append(f'<rect x="{x:.1f}" y="{y + 3:.1f}" width="{abs(value) * scale:.1f}" '
                    f'height="14" fill="{_BAR if value >= 0 else _NEG}"/>')
        tx = zero + value * scale + (6 if value >= 0 else -6)
        body.append(_text(tx, y + 13, f"{format_number(value, 3)} {unit}",
                          "start" if value >= 0 else "end"))
    body.append(f'<line x1="{zero:.1f}" y1="6" x2="{zero:.1f}" y2="{height - 20:.1f}" '
                f'stroke="{_AXIS}"/>')
    return _svg(_W, height, body, label, "bars")


def _binned_quantiles(binned: Binned, p: tuple[float, float]) -> tuple[float, float]:
    """Quantiles to within one fine bin (the upper edge of the bin that holds them)."""
    below = binned.below + np.cumsum(binned.counts)
    total = below[-1] + binned.above
    found = [float(binned.edges[min(int(np.searchsorted(below, q * total)) + 1,
                                    binned.edges.size - 1)]) for q in p]
    return found[0], found[1]


def _rebinned(binned: Binned, low: float, high: float, bins: int
              ) -> tuple[np.ndarray, np.ndarray]:
    """Densities of about ``bins`` bins over [low, high], each a whole number of fine bins."""
    edges, counts = binned.edges, binned.counts
    width = float(edges[1] - edges[0])
    first = max(0, int(math.floor((low - edges[0]) / width)))
    last = min(counts.size, int(math.ceil((high - edges[0]) / width)))
    if last <= first:  # the range lies outside the fine bins: show them all
        first, last = 0, counts.size
    factor = max(1, round((last - first) / bins))
    last = first + (last - first) // factor * factor
    merged = counts[first:last].reshape(-1, factor).sum(axis=1)
    total = float(binned.below + counts.sum() + binned.above)
    return merged / (total * width * factor), edges[first:last + 1:factor]


def histogram(samples: np.ndarray | Binned, *, estimate: float, u: float, dof: float,
              gum_interval: tuple[float, float], interval: tuple[float, float],
              shortest: tuple[float, float], unit: str, label: str) -> Markup:
    """Monte Carlo histogram with the GUM density and the three intervals overlaid; from
    every value, or from the fine histogram of a streamed run (whole fine bins merged)."""
    low, high = (np.quantile(samples, [0.0005, 0.9995]) if isinstance(samples, np.ndarray)
                 else _binned_quantiles(samples, (0.0005, 0.9995)))
    low = min(low, gum_interval[0], interval[0])
    high = max(high, gum_interval[1], interval[1])
    span = high - low
    if not math.isfinite(span) or span <= 1e-12 * max(abs(low), abs(high)):
        return _svg(_W, 30, [_text(10, 20, "the Monte Carlo values do not spread enough "
                                           "for a histogram")], label)
    pad = 0.04 * span
    low, high = low - pad, high + pad
    counts, edges = (np.histogram(samples, bins=70, range=(low, high), density=True)
                     if isinstance(samples, np.ndarray) else _rebinned(samples, low, high, 70))
    grid = np.linspace(low, high, 241)
    density = _gum_density(grid, estimate, u, dof)
    peak = max(float(counts.max()), float(density.max()), 1e-300)
    left, right, top, bottom = 40, _W - 20, 14, 210
    sx: Callable[[float], float] = lambda x: left + (x - low) / (high - low) * (right - left)  # noqa: E731
    sy: Callable[[float], float] = lambda d: bottom - d / peak * (bottom - top)  # noqa: E731
    body = [f'<rect x="{sx(a):.2f}" y="{sy(c):.2f}" width="{sx(b) - sx(a):.2f}" '
            f'height="{bottom - sy(c):.2f}" fill="#d9c4b0"/>'
            for a, b, c in zip(edges[:-1], edges[1:], counts)]
    path = " ".join(f"{'M' if i == 0 else 'L'}{sx(x):.1f},{sy(d):.1f}"
                    for i, (x, d) in enumerate(zip(grid, density)))
    body.append(f'<path d="{path}" fill="none" stroke="#1f4e5f" stroke-width="1.6"/>')
    for (a, b), colour, dash, name, row in ((gum_interval, "#1f4e5f", "6 3", "GUM y ± U", 0),
                                            (interval, _BAR, "", "MC symmetric", 1),
                                            (shortest, "#7a4a8c", "2 2", "MC shortest", 2)):
        for x in (a, b):
            body.append(f'<line x1="{sx(x):.1f}" y1="{top:.1f}" x2="{sx(x):.1f}" '
                        f'y2="{bottom:.1f}" stroke="{colour}" stroke-width="1.3" '
                        f'stroke-dasharray="{dash}"/>')
        body.append(f'<line x1="{left + 8:.1f}" y1="{top + 6 + 14 * row:.1f}" '
                    f'x2="{left + 30:.1f}" y2="{top + 6 + 14 * row:.1f}" stroke="{colour}" '
                    f'stroke-width="1.6" stroke-dasharray="{dash}"/>')
        body.append(_text(left + 36, top + 10 + 14 * row, name))
    body.append(f'<line x1="{left}" y1="{bottom}" x2="{right}" y2="{bottom}" '
                f'stroke="{_AXIS}"/>')
    for x in np.linspace(low + pad, high - pad, 5):
        body.append(_text(sx(x), bottom + 14, format_number(float(x), 6), "middle"))
    body.append(_text((left + right) / 2, bottom + 30, unit, "middle"))
    return _svg(_W, bottom + 38, body, label)


def _gum_density(grid: np.ndarray, estimate: float, u: float, dof: float) -> np.ndarray:
    if u <= 0:
        return np.zeros_like(grid)
    z = (grid - estimate) / u
    if math.isinf(dof) or dof > 1e6:
        return np.exp(-0.5 * z * z) / (u * math.sqrt(2 * math.pi))
    log_c = math.lgamma((dof + 1) / 2) - math.lgamma(dof / 2) - 0.5 * math.log(dof * math.pi)
    return np.exp(log_c - (dof + 1) / 2 * np.log1p(z * z / dof)) / u


def _frame(low: float, high: float, pad_share: float = 0.08) -> tuple[float, float]:
    span = (high - low) or abs(high) * 1e-6 or 1.0
    return low - pad_share * span, high + pad_share * span


def points_with_bars(rows: Sequence[tuple[str, float, float]], *, centre: float | None,
                     unit: str, label: str) -> Markup:
    """Values with ± bars (one per row), e.g. unit means or a comparison."""
    low, high = _frame(min(v - e for _, v, e in rows), max(v + e for _, v, e in rows))
    if centre is not None:
        low, high = min(low, centre), max(high, centre)
    left, right, top, bottom = 70, _W - 20, 12, 200
    sy: Callable[[float], float] = lambda v: bottom - (v - low) / (high - low) * (bottom - top)  # noqa: E731
    step = (right - left) / max(len(rows), 1)
    body = []
    if centre is not None:
        body.append(f'<line x1="{left}" y1="{sy(centre):.1f}" x2="{right}" '
                    f'y2="{sy(centre):.1f}" stroke="#1f4e5f" stroke-dasharray="5 3"/>')
    for i, (name, value, half) in enumerate(rows):
        x = left + step * (i + 0.5)
        body.append(f'<line x1="{x:.1f}" y1="{sy(value - half):.1f}" x2="{x:.1f}" '
                    f'y2="{sy(value + half):.1f}" stroke="{_AXIS}" stroke-width="1.3"/>')
        body.append(f'<circle cx="{x:.1f}" cy="{sy(value):.1f}" r="3.5" fill="{_BAR}"/>')
        body.append(_label(x, bottom + 14, name, step - 4, "middle", 9, 'font-size="9"'))
    body += _y_axis(low, high, left, top, bottom, sy, unit)
    return _svg(_W, bottom + 24, body, label)


def trend_plot(times: Sequence[float], values: Sequence[float], *, intercept: float,
               slope: float, band: Sequence[tuple[float, float, float]], unit: str,
               time_label: str, label: str) -> Markup:
    """Values against time with the fitted line and its confidence band."""
    lows = [b[1] for b in band] + list(values)
    highs = [b[2] for b in band] + list(values)
    low, high = _frame(min(lows), max(highs))
    t_low, t_high = _frame(min(times), max(times), 0.05)
    left, right, top, bottom = 70, _W - 20, 12, 200
    sx: Callable[[float], float] = lambda t: left + (t - t_low) / (t_high - t_low) * (right - left)  # noqa: E731
    sy: Callable[[float], float] = lambda v: bottom - (v - low) / (high - low) * (bottom - top)  # noqa: E731
    upper = " ".join(f"{sx(t):.1f},{sy(h):.1f}" for t, _, h in band)
    lower = " ".join(f"{sx(t):.1f},{sy(lo):.1f}" for t, lo, _ in reversed(band))
    body = [f'<polygon points="{upper} {lower}" fill="#1f4e5f" fill-opacity="0.12"/>',
            f'<line x1="{sx(band[0][0]):.1f}" y1="{sy(intercept + slope * band[0][0]):.1f}" '
            f'x2="{sx(band[-1][0]):.1f}" y2="{sy(intercept + slope * band[-1][0]):.1f}" '
            f'stroke="#1f4e5f" stroke-width="1.5"/>']
    body += [f'<circle cx="{sx(t):.1f}" cy="{sy(v):.1f}" r="3.2" fill="{_BAR}"/>'
             for t, v in zip(times, values)]
    body += _y_axis(low, high, left, top, bottom, sy, unit)
    for t in sorted(set(times)):
        body.append(_text(sx(t), bottom + 14, f"{t:g}", "middle"))
    body.append(_text((left + right) / 2, bottom + 28, time_label, "middle"))
    return _svg(_W, bottom + 34, body, label)


def _y_axis(low: float, high: float, left: float, top: float, bottom: float,
            sy: Callable[[float], float], unit: str) -> list[str]:
    body = [f'<line x1="{left}" y1="{top}" x2="{left}" y2="{bottom}" stroke="{_AXIS}"/>']
    for v in np.linspace(low, high, 5):
        body.append(_text(left - 6, sy(v) + 4, format_number(float(v), 6), "end",
                          'font-size="9"'))
    body.append(_text(8, top + 8, unit, "start", 'font-size="9"'))
    return body
