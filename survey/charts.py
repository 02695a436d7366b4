"""Small charts drawn on the server as SVG, readable in a browser and in the PDF report.

No JavaScript and no style attributes: colours are SVG presentation attributes, which the
page's Content-Security-Policy allows and WeasyPrint draws.
"""

from __future__ import annotations

import datetime
import math
from html import escape

from survey.thermal.drawing import nice_step, nice_ticks

INK = "#1d2430"
MUTED = "#5b6472"
GRID = "#d5dae1"
LINE = "#0b5c8a"
THRESHOLD = "#a1162b"


def _x_positions(xs: list, left: float, right: float) -> list[float]:
    if len(xs) == 1:
        return [(left + right) / 2]
    if all(isinstance(x, datetime.date) for x in xs):
        days = [x.toordinal() for x in xs]
        first, last = min(days), max(days)
        if last > first:
            return [left + (d - first) / (last - first) * (right - left) for d in days]
    step = (right - left) / (len(xs) - 1)
    return [left + i * step for i in range(len(xs))]


def _label(x) -> str:
    if isinstance(x, datetime.date):
        return x.isoformat()
    return str(x)


def trend_svg(
    points,
    width: int = 480,
    height: int = 220,
    unit: str = "K",
    *,
    title: str = "",
    thresholds=(),
) -> str:
    """An SVG line chart of values across visits.

    Parameters
    ----------
    points : sequence of (x, value)
        x is a date (placed by time) or a label (placed evenly); value may be None for a
        visit without a reading, which leaves a gap.
    width, height : int
        Size in CSS pixels.
    unit : str
        Unit shown on the value axis.
    thresholds : sequence of (value, label)
        Horizontal reference lines, e.g. the lower bound of a severity band.

    Returns
    -------
    str
        A complete ``<svg>`` element.
    """
    points = list(points)
    thresholds = [(float(v), str(label)) for v, label in thresholds]
    left, right, top, bottom = 52.0, width - 12.0, 24.0 if title else 12.0, height - 40.0
    parts = [
        f'<svg xmlns="http://www.w3.org/2000/svg" width="{width}" height="{height}" '
        f'viewBox="0 0 {width} {height}" role="img" font-family="DejaVu Sans, sans-serif" '
        f'font-size="11" class="trend-chart">'
    ]
    aria = title or f"Trend in {unit}"
    parts.append(f"<title>{escape(aria)}</title>")
    if title:
        parts.append(f'<text x="{left}" y="14" fill="{INK}" font-size="12">{escape(title)}</text>')
    values = [float(v) for _, v in points if v is not None and math.isfinite(float(v))]
    if not values:
        parts.append(
            f'<text x="{width / 2}" y="{height / 2}" text-anchor="middle" fill="{MUTED}">'
            "No readings to chart yet.</text></svg>"
        )
        return "".join(parts)

    scale_values = values + [v for v, _ in thresholds]
    low, high = min(scale_values + [0.0]), max(scale_values)
    if high - low < 1e-9:
        high = low + 1.0
    step = nice_step(low, high)
    low = math.floor(low / step) * step
    high = math.ceil(high / step) * step

    def y_of(value: float) -> float:
        return bottom - (value - low) / (high - low) * (bottom - top)

    for tick in nice_ticks(low, high, step=step):
        y = y_of(tick)
        parts.append(
            f'<line x1="{left}" y1="{y:.1f}" x2="{right}" y2="{y:.1f}" stroke="{GRID}" '
            'stroke-width="1"/>'
        )
        parts.append(
            f'<text x="{left - 6}" y="{y + 4:.1f}" text-anchor="end" fill="{MUTED}">{tick:g}</text>'
        )
    parts.append(
        f'<text x="12" y="{(top + bottom) / 2:.1f}" fill="{MUTED}" text-anchor="middle" '
        f'transform="rotate(-90 12 {(top + bottom) / 2:.1f})">{escape(unit)}</text>'
    )
    for value, label in thresholds:
        y = y_of(value)
        parts.append(
            f'<line x1="{left}" y1="{y:.1f}" x2="{right}" y2="{y:.1f}" stroke="{THRESHOLD}" '
            'stroke-width="1" stroke-dasharray="5 3"/>'
        )
        parts.append(
            f'<text x="{right}" y="{y - 3:.1f}" text-anchor="end" fill="{THRESHOLD}">'
            f"{escape(label)}</text>"
        )

    xs = _x_positions([x for x, _ in points], left + 10, right - 10)
    segment: list[str] = []
    segments: list[list[str]] = []
    for x, (_, value) in zip(xs, points, strict=True):
        if value is None or not math.isfinite(float(value)):
            if segment:
                segments.append(segment)
            segment = []
            continue
        segment.append(f"{x:.1f},{y_of(float(value)):.1f}")
    if segment:
        segments.append(segment)
    for seg in segments:
        if len(seg) > 1:
            parts.append(
                f'<polyline points="{" ".join(seg)}" fill="none" stroke="{LINE}" stroke-width="2"/>'
            )
    for x, (label, value) in zip(xs, points, strict=True):
        parts.append(
            f'<text x="{x:.1f}" y="{bottom + 16}" text-anchor="middle" fill="{MUTED}">'
            f"{escape(_label(label))}</text>"
        )
        if value is None or not math.isfinite(float(value)):
            parts.append(
                f'<text x="{x:.1f}" y="{bottom - 4}" text-anchor="middle" fill="{MUTED}">–</text>'
            )
            continue
        y = y_of(float(value))
        parts.append(f'<circle cx="{x:.1f}" cy="{y:.1f}" r="3.5" fill="{LINE}"/>')
        parts.append(
            f'<text x="{x:.1f}" y="{y - 7:.1f}" text-anchor="middle" fill="{INK}">'
            f"{float(value):.1f}</text>"
        )
    parts.append(
        f'<line x1="{left}" y1="{bottom}" x2="{right}" y2="{bottom}" stroke="{MUTED}" '
        'stroke-width="1"/>'
    )
    parts.append("</svg>")
    return "".join(parts)
