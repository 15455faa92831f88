"""Inline SVG of a fit: the data with the fitted curve above, the residuals below.

Records may hold 10⁵ readings; at most ``POINTS`` of them are drawn (every k-th reading,
the fitted curve through the same readings), which a reader cannot tell apart at this
size. Labels pass through ``markupsafe.escape`` as in ``svg.py``.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
from markupsafe import Markup

from ._fits import Fit
from ._svg import _AXIS, _BAR, _W, _frame, _svg, _text

__all__ = ["fit_chart", "POINTS"]

POINTS = 400


def _thinned(fit: Fit) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    order = np.argsort(fit.x, kind="stable")
    step = max(1, len(order) // POINTS)
    keep = order[::step]
    return fit.x[keep], fit.y[keep], fit.fitted[keep]


def fit_chart(fit: Fit, *, x_label: str, y_label: str, label: str) -> Markup:
    """Data and fitted curve (upper panel) and residuals (lower panel) on one x axis."""
    x, y, fitted = _thinned(fit)
    residuals = y - fitted
    x_low, x_high = _frame(float(x.min()), float(x.max()), 0.03)
    left, right = 78, _W - 20

    def sx(v: float) -> float:
        return left + (v - x_low) / (x_high - x_low) * (right - left)

    body: list[str] = []
    body += _panel(x, y, fitted, sx, (22.0, 180.0), left, right, y_label, curve=True)
    body += _panel(x, residuals, np.zeros_like(x), sx, (222.0, 300.0), left, right,
                   "residual", curve=False)
    for v in nice_ticks(x_low, x_high):
        body.append(_text(sx(v), 314, f"{v:g}", "middle"))
    body.append(_text((left + right) / 2, 330, x_label, "middle"))
    return _svg(_W, 338, body, label)


def _panel(x: np.ndarray, y: np.ndarray, line: np.ndarray, sx: Callable[[float], float],
           rows: tuple[float, float], left: float, right: float, unit: str,
           curve: bool) -> list[str]:
    top, bottom = rows
    low, high = _frame(float(min(y.min(), line.min())), float(max(y.max(), line.max())))

    def sy(v: float) -> float:
        return bottom - (v - low) / (high - low) * (bottom - top)

    radius = 2.6 if len(x) <= 60 else 1.4
    body = [f'<circle cx="{sx(float(a)):.1f}" cy="{sy(float(b)):.1f}" r="{radius}" '
            f'fill="{_BAR}"/>' for a, b in zip(x, y)]
    if curve:
        path = " ".join(f"{'M' if i == 0 else 'L'}{sx(float(a)):.1f},{sy(float(b)):.1f}"
                        for i, (a, b) in enumerate(zip(x, line)))
        body.append(f'<path d="{path}" fill="none" stroke="#1f4e5f" stroke-width="1.5"/>')
    else:
        body.append(f'<line x1="{left}" y1="{sy(0.0):.1f}" x2="{right}" y2="{sy(0.0):.1f}" '
                    f'stroke="#1f4e5f" stroke-dasharray="5 3"/>')
    body.append(f'<line x1="{left}" y1="{bottom}" x2="{right}" y2="{bottom}" '
                f'stroke="{_AXIS}"/>')
    body.append(_text(left + 4, top - 8, unit, "start", 'font-size="10"'))
    body.append(f'<line x1="{left}" y1="{top}" x2="{left}" y2="{bottom}" stroke="{_AXIS}"/>')
    for v in nice_ticks(low, high):
        body.append(_text(left - 6, sy(v) + 4, f"{v:g}", "end", 'font-size="9"'))
    return body


def nice_ticks(low: float, high: float, count: int = 5) -> list[float]:
    """Round tick values (1, 2 or 5 × 10ⁿ apart) inside [low, high]."""
    span = high - low
    if not span > 0 or not np.isfinite(span):
        return [low]
    raw = span / count
    power = 10.0 ** np.floor(np.log10(raw))
    step = min((m * power for m in (1.0, 2.0, 5.0, 10.0)),
               key=lambda candidate: abs(span / candidate - count))
    first = np.ceil(low / step) * step
    ticks = np.arange(first, high + step * 1e-9, step)
    return [float(np.round(t / step) * step) + 0.0 for t in ticks]  # + 0.0: no "-0"
