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


INSIDE = "#0b5c8a"
OUTSIDE = "#a04a00"
CAPTURE = "#5b6472"
# Steps of the time axis, hours: whole hours, quarter and half days, days, weeks.
TIME_STEPS_H = (1, 2, 3, 6, 12, 24, 48, 72, 168)
MAX_CHART_POINTS = 1200
MAX_CAPTURE_LABELS = 30


def _time_step(span_h: float, target: int = 6) -> float:
    raw = span_h / max(target - 1, 1)
    return min(TIME_STEPS_H, key=lambda step: abs(math.log(step / max(raw, 1e-9))))


def _thinned(times, values, limit: int = MAX_CHART_POINTS):
    """At most about `limit` points: each bucket's lowest and highest reading, in time order,
    so that a long log's extremes survive in the drawing."""
    pairs = [(float(t), float(v)) for t, v in zip(times, values, strict=True)]
    if len(pairs) <= limit:
        return pairs
    size = math.ceil(len(pairs) / (limit // 2))
    kept = []
    for start in range(0, len(pairs), size):
        bucket = [p for p in pairs[start : start + size] if math.isfinite(p[1])]
        if not bucket:
            kept.append(pairs[start])
            continue
        low = min(bucket, key=lambda p: p[1])
        high = max(bucket, key=lambda p: p[1])
        kept.extend(sorted({low, high}))
    return kept


def logger_svg(
    series,
    captures,
    *,
    zone: datetime.tzinfo,
    unit: str = "C",
    width: int = 640,
    height: int = 240,
    title: str = "",
    max_gap_s: float = 7200.0,
) -> str:
    """An SVG chart of logged air temperatures with the thermograms' capture times marked.

    Parameters
    ----------
    series : sequence of (label, times_s, values_c, role)
        POSIX seconds and °C (NaN for no reading); role "inside" or "outside" picks the colour.
    captures : sequence of (time_s, label)
        Capture times, drawn as dashed vertical lines with their label.
    zone : tzinfo
        Local time of the axis labels.
    unit : "C" or "F"
        Unit of the value axis.
    max_gap_s : float
        Readings further apart than this are not joined (as the interpolation does).
    """
    from survey.thermal import units

    series = [(label, list(t), list(v), role) for label, t, v, role in series]
    left, right, top, bottom = 52.0, width - 14.0, 30.0, height - 44.0
    aria = title or "Logged air temperatures with the thermograms' capture times"
    parts = [
        f'<svg xmlns="http://www.w3.org/2000/svg" width="{width}" height="{height}" '
        f'viewBox="0 0 {width} {height}" role="img" font-family="DejaVu Sans, sans-serif" '
        f'font-size="11" class="logger-chart">',
        f"<title>{escape(aria)}</title>",
    ]
    if title:
        parts.append(f'<text x="{left}" y="14" fill="{INK}" font-size="12">{escape(title)}</text>')
    times = [t for _, ts, _, _ in series for t in ts] + [t for t, _ in captures]
    values = [
        float(units.from_celsius(v, unit))
        for _, _, vs, _ in series
        for v in vs
        if v is not None and math.isfinite(v)
    ]
    if not times or not values:
        parts.append(
            f'<text x="{width / 2}" y="{height / 2}" text-anchor="middle" fill="{MUTED}">'
            "Nothing logged to chart.</text></svg>"
        )
        return "".join(parts)
    start, end = min(times), max(times)
    if end - start < 3600:
        start, end = start - 1800, end + 1800
    low, high = min(values), max(values)
    if high - low < 1e-9:
        low, high = low - 1.0, high + 1.0
    step = nice_step(low, high, 5)
    low, high = math.floor(low / step) * step, math.ceil(high / step) * step

    def x_of(t: float) -> float:
        return left + (t - start) / (end - start) * (right - left)

    def y_of(value: float) -> float:
        return bottom - (value - low) / (high - low) * (bottom - top)

    for tick in nice_ticks(low, high, step=step):
        y = y_of(tick)
        parts.append(
            f'<line x1="{left}" y1="{y:.1f}" x2="{right}" y2="{y:.1f}" stroke="{GRID}" '
            'stroke-width="1"/>'
            f'<text x="{left - 6}" y="{y + 4:.1f}" text-anchor="end" fill="{MUTED}">'
            f"{tick:g}</text>"
        )
    symbol = units.symbol(unit)
    parts.append(
        f'<text x="12" y="{(top + bottom) / 2:.1f}" fill="{MUTED}" text-anchor="middle" '
        f'transform="rotate(-90 12 {(top + bottom) / 2:.1f})">{escape(symbol)}</text>'
    )
    offset_h = (
        zone.utcoffset(datetime.datetime.fromtimestamp(start, datetime.UTC)) or datetime.timedelta()
    ).total_seconds() / 3600.0
    span_h = (end - start) / 3600.0
    hour_step = _time_step(span_h)
    first_local_h = start / 3600.0 + offset_h
    previous_day = None
    for tick_h in nice_ticks(first_local_h, first_local_h + span_h, step=hour_step):
        t = (tick_h - offset_h) * 3600.0
        x = x_of(t)
        local = datetime.datetime.fromtimestamp(t, datetime.UTC).astimezone(zone)
        label = local.strftime("%H:%M")
        if local.date() != previous_day:
            label = f"{local.day} {local:%b %H:%M}" if hour_step < 24 else f"{local.day} {local:%b}"
            previous_day = local.date()
        parts.append(
            f'<line x1="{x:.1f}" y1="{bottom}" x2="{x:.1f}" y2="{bottom + 4}" stroke="{MUTED}"/>'
            f'<text x="{x:.1f}" y="{bottom + 16}" text-anchor="middle" fill="{MUTED}">'
            f"{escape(label)}</text>"
        )
    for index, (capture_s, label) in enumerate(sorted(captures)):
        x = x_of(capture_s)
        parts.append(
            f'<line x1="{x:.1f}" y1="{top}" x2="{x:.1f}" y2="{bottom}" stroke="{CAPTURE}" '
            'stroke-width="1" stroke-dasharray="3 3"/>'
        )
        if len(captures) <= MAX_CAPTURE_LABELS:
            y = top - 4 - (index % 2) * 9
            parts.append(
                f'<text x="{x:.1f}" y="{y:.1f}" text-anchor="middle" fill="{CAPTURE}" '
                f'font-size="9">{escape(str(label))}</text>'
            )
    legend_x = left
    for label, ts, vs, role in series:
        colour = INSIDE if role == "inside" else OUTSIDE
        segment: list[str] = []
        previous_t = None
        for t, value in _thinned(ts, vs):
            if (
                value is None
                or not math.isfinite(value)
                or (previous_t is not None and t - previous_t > max_gap_s)
            ):
                if len(segment) > 1:
                    parts.append(_polyline(segment, colour))
                segment = []
            if value is not None and math.isfinite(value):
                y = y_of(float(units.from_celsius(value, unit)))
                segment.append(f"{x_of(t):.1f},{y:.1f}")
                previous_t = t
        if len(segment) > 1:
            parts.append(_polyline(segment, colour))
        parts.append(
            f'<line x1="{legend_x}" y1="{height - 8}" x2="{legend_x + 18}" y2="{height - 8}" '
            f'stroke="{colour}" stroke-width="2"/>'
            f'<text x="{legend_x + 22}" y="{height - 4}" fill="{INK}">{escape(label)}</text>'
        )
        legend_x += 30 + 6.5 * len(label)
    if captures:
        parts.append(
            f'<line x1="{legend_x}" y1="{height - 12}" x2="{legend_x}" y2="{height - 2}" '
            f'stroke="{CAPTURE}" stroke-dasharray="3 3"/>'
            f'<text x="{legend_x + 6}" y="{height - 4}" fill="{INK}">thermograms</text>'
        )
    parts.append(
        f'<line x1="{left}" y1="{bottom}" x2="{right}" y2="{bottom}" stroke="{MUTED}" '
        'stroke-width="1"/></svg>'
    )
    return "".join(parts)


def _polyline(points: list[str], colour: str) -> str:
    return (
        f'<polyline points="{" ".join(points)}" fill="none" stroke="{colour}" stroke-width="1.5"/>'
    )


def profile_svg(
    distances,
    values,
    width: int = 480,
    height: int = 170,
    unit: str = "°C",
    distance_unit: str = "px",
    *,
    title: str = "",
) -> str:
    """An SVG chart of temperatures along a line mark, distance from its start across.

    `values` may hold None where a pixel has no reading (a gap in the line). Axis ticks are
    round numbers; the hottest and coldest samples are labelled with their value.
    """
    pairs = [
        (float(d), None if v is None or not math.isfinite(float(v)) else float(v))
        for d, v in zip(distances, values, strict=True)
    ]
    left, right, top, bottom = 52.0, width - 14.0, 24.0 if title else 12.0, height - 34.0
    parts = [
        f'<svg xmlns="http://www.w3.org/2000/svg" width="{width}" height="{height}" '
        f'viewBox="0 0 {width} {height}" role="img" font-family="DejaVu Sans, sans-serif" '
        f'font-size="11" class="profile-chart">',
        f"<title>{escape(title or 'Line profile')}</title>",
    ]
    if title:
        parts.append(f'<text x="{left}" y="14" fill="{INK}" font-size="12">{escape(title)}</text>')
    known = [(d, v) for d, v in pairs if v is not None]
    if len(known) < 2:
        parts.append(
            f'<text x="{width / 2}" y="{height / 2}" text-anchor="middle" fill="{MUTED}">'
            "No readings along this line.</text></svg>"
        )
        return "".join(parts)
    low, high = min(v for _, v in known), max(v for _, v in known)
    if high - low < 0.2:
        low, high = low - 0.1, high + 0.1
    step = nice_step(low, high, target=4)
    low, high = math.floor(low / step) * step, math.ceil(high / step) * step
    d_low, d_high = pairs[0][0], pairs[-1][0]
    if d_high - d_low < 1e-9:
        d_high = d_low + 1.0

    def x_of(d: float) -> float:
        return left + (d - d_low) / (d_high - d_low) * (right - left)

    def y_of(v: float) -> float:
        return bottom - (v - low) / (high - low) * (bottom - top)

    def number(value: float) -> str:
        return f"{value:g}".replace("-", "−")

    for tick in nice_ticks(low, high, step=step):
        y = y_of(tick)
        parts.append(
            f'<line x1="{left}" y1="{y:.1f}" x2="{right}" y2="{y:.1f}" stroke="{GRID}" '
            'stroke-width="1"/>'
            f'<text x="{left - 6}" y="{y + 4:.1f}" text-anchor="end" fill="{MUTED}">'
            f"{number(tick)}</text>"
        )
    for tick in nice_ticks(d_low, d_high, target=6):
        x = x_of(tick)
        parts.append(
            f'<text x="{x:.1f}" y="{bottom + 15}" text-anchor="middle" fill="{MUTED}">'
            f"{number(tick)}</text>"
        )
    parts.append(
        f'<text x="{right}" y="{height - 4}" text-anchor="end" fill="{MUTED}">'
        f"distance along the line, {escape(distance_unit)}</text>"
        f'<text x="12" y="{(top + bottom) / 2:.1f}" fill="{MUTED}" text-anchor="middle" '
        f'transform="rotate(-90 12 {(top + bottom) / 2:.1f})">{escape(unit)}</text>'
    )
    segment: list[str] = []
    for d, v in pairs:
        if v is None:
            if len(segment) > 1:
                parts.append(_polyline(segment, LINE))
            segment = []
            continue
        segment.append(f"{x_of(d):.1f},{y_of(v):.1f}")
    if len(segment) > 1:
        parts.append(_polyline(segment, LINE))
    for d, v in (max(known, key=lambda p: p[1]), min(known, key=lambda p: p[1])):
        parts.append(
            f'<circle cx="{x_of(d):.1f}" cy="{y_of(v):.1f}" r="3" fill="{THRESHOLD}"/>'
            f'<text x="{min(max(x_of(d), left + 20), right - 20):.1f}" '
            f'y="{max(y_of(v) - 6, top + 10):.1f}" text-anchor="middle" fill="{INK}">'
            f"{number(round(v, 1))}</text>"
        )
    parts.append(
        f'<line x1="{left}" y1="{bottom}" x2="{right}" y2="{bottom}" stroke="{MUTED}" '
        'stroke-width="1"/></svg>'
    )
    return "".join(parts)
