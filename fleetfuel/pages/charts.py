"""Small server-side SVG charts: no JavaScript, no CDN, readable when printed.

Each function takes plain points and returns safe SVG markup with labelled axes (units in
the axis title). Dates are plotted on a linear time axis.
"""

from __future__ import annotations

import math
import zoneinfo
from collections.abc import Sequence
from dataclasses import dataclass, field
from datetime import UTC, date, datetime, timedelta
from typing import Any

from django.utils.html import escape
from django.utils.safestring import SafeString, mark_safe

from fleetfuel.accounts.templatetags.fmt import day

W, H = 640, 240
LEFT, RIGHT, TOP, BOTTOM = 64, 16, 14, 40
LABEL_HALF_WIDTH = 40  # about half of '30 Sep 2026' at 11px: nearer an edge, align to it
BAND_MIN_PX = 6.0  # a forecast band narrower than this (a year's scale) is widened to show


@dataclass
class Series:
    points: Sequence[tuple[date | datetime, float]]
    css: str = "series"  # series, forecast, dot, bar, bad
    label: str = ""


@dataclass
class Chart:
    title: str
    y_label: str
    series: list[Series] = field(default_factory=list)
    band: Sequence[tuple[date | datetime, float, float]] = ()  # x, low, high
    limit: float | None = None
    limit_label: str = ""
    bars: bool = False


def _ts(x: date | datetime) -> float:
    if isinstance(x, datetime):
        return x.timestamp()
    return datetime(x.year, x.month, x.day).timestamp()


def _nice_ticks(lo: float, hi: float, n: int = 4) -> list[float]:
    if hi <= lo:
        hi = lo + 1
    raw = (hi - lo) / n
    mag = 10 ** len(str(int(raw))) / 10 if raw >= 1 else 10 ** -len(str(int(1 / raw)))
    step = next(m * mag for m in (1, 2, 2.5, 5, 10) if m * mag >= raw)
    start = (lo // step) * step
    ticks = []
    v = start
    while v <= hi + step * 0.001:
        if v >= lo - step * 0.001:
            ticks.append(round(v, 6))
        v += step
    return ticks


def _month_add(d: date, months: int) -> date:
    n = d.month - 1 + months
    return date(d.year + n // 12, n % 12 + 1, 1)


def x_ticks(x0: float, x1: float, depot: Any = None) -> list[tuple[float, date]]:
    """Ticks at local midnights of the depot, each date once: every few days over a short
    span, on the first of every few months over a long one."""
    try:
        zone: Any = zoneinfo.ZoneInfo(getattr(depot, "time_zone", None) or "UTC")
    except (zoneinfo.ZoneInfoNotFoundError, ValueError):
        zone = UTC
    d0 = datetime.fromtimestamp(x0, zone).date()
    d1 = datetime.fromtimestamp(x1, zone).date()
    span = (d1 - d0).days
    if span > 120:
        months = (d1.year - d0.year) * 12 + d1.month - d0.month
        step = max(1, math.ceil(months / 4))
        days = [_month_add(d0, k) for k in range(1, months + 1, step)]
    else:
        step = max(1, math.ceil(span / 4))
        days = [d0 + timedelta(days=k) for k in range(0, span + 1, step)]
    ticks = [(datetime(d.year, d.month, d.day, tzinfo=zone).timestamp(), d) for d in days]
    ticks = [(t, d) for t, d in ticks if x0 <= t <= x1]
    return ticks or [((x0 + x1) / 2, datetime.fromtimestamp((x0 + x1) / 2, zone).date())]


def _band(chart: Chart, px: Any, py: Any) -> str:
    """The forecast band, never thinner than BAND_MIN_PX so it shows at a year's scale."""
    top, bottom = [], []
    for x, lo, hi in chart.band:
        y_hi, y_lo = py(hi), py(lo)
        if y_lo - y_hi < BAND_MIN_PX:
            mid = (y_hi + y_lo) / 2
            y_hi, y_lo = mid - BAND_MIN_PX / 2, mid + BAND_MIN_PX / 2
        top.append(f"{px(_ts(x)):.1f},{y_hi:.1f}")
        bottom.append(f"{px(_ts(x)):.1f},{y_lo:.1f}")
    return f'<polygon class="band" points="{" ".join(top)} {" ".join(reversed(bottom))}"/>'


def chart_svg(chart: Chart, depot: Any = None) -> SafeString:
    """The chart as SVG; dates on the x axis in the depot's style and zone."""
    xs = [_ts(x) for s in chart.series for x, _ in s.points] + [_ts(b[0]) for b in chart.band]
    ys = [y for s in chart.series for _, y in s.points] + [v for b in chart.band for v in b[1:]]
    if chart.limit is not None:
        ys.append(chart.limit)
    if not xs:
        return mark_safe(f'<p class="muted small">{escape(chart.title)}: no data recorded yet.</p>')
    x0, x1 = min(xs), max(xs)
    if x1 == x0:
        x0, x1 = x0 - 86400, x1 + 86400
    y0 = 0.0 if chart.bars or min(ys) >= 0 else min(ys)
    y1 = max(ys) * 1.08 if max(ys) > 0 else 1.0
    if min(ys) > 0 and not chart.bars and (max(ys) - min(ys)) < 0.5 * max(ys):
        y0 = min(ys) - (max(ys) - min(ys)) * 0.15  # zoom in on a meter that only climbs
    pw, ph = W - LEFT - RIGHT, H - TOP - BOTTOM

    def px(x: float) -> float:
        return LEFT + (x - x0) / (x1 - x0) * pw

    def py(y: float) -> float:
        return TOP + ph - (y - y0) / (y1 - y0) * ph

    out = [
        f'<svg viewBox="0 0 {W} {H}" role="img" aria-label="{escape(chart.title)}" '
        f'xmlns="http://www.w3.org/2000/svg"><title>{escape(chart.title)}</title>'
    ]
    for t in _nice_ticks(y0, y1):
        out.append(
            f'<line class="grid" x1="{LEFT}" x2="{W - RIGHT}" y1="{py(t):.1f}" y2="{py(t):.1f}"/>'
        )
        digits = 0 if t >= 10 or t == 0 else 2
        out.append(
            f'<text x="{LEFT - 6}" y="{py(t) + 4:.1f}" text-anchor="end">{t:,.{digits}f}</text>'
        )
    for xt, tick_day in x_ticks(x0, x1, depot):
        x = px(xt)
        anchor = "middle"
        if x < LEFT + LABEL_HALF_WIDTH:
            anchor = "start"
        elif x > W - RIGHT - LABEL_HALF_WIDTH:
            anchor = "end"
        out.append(
            f'<line class="axis" x1="{x:.1f}" x2="{x:.1f}" y1="{TOP + ph}" y2="{TOP + ph + 4}"/>'
            f'<text x="{x:.1f}" y="{H - BOTTOM + 16}" text-anchor="{anchor}">'
            f"{escape(day(tick_day, depot))}</text>"
        )
    out.append(f'<line class="axis" x1="{LEFT}" x2="{LEFT}" y1="{TOP}" y2="{TOP + ph}"/>')
    out.append(f'<line class="axis" x1="{LEFT}" x2="{W - RIGHT}" y1="{TOP + ph}" y2="{TOP + ph}"/>')
    out.append(
        f'<text x="14" y="{TOP + ph / 2:.1f}" text-anchor="middle" '
        f'transform="rotate(-90 14 {TOP + ph / 2:.1f})">{escape(chart.y_label)}</text>'
    )
    if chart.band:
        out.append(_band(chart, px, py))
    if chart.limit is not None:
        out.append(
            f'<line class="limit" x1="{LEFT}" x2="{W - RIGHT}" y1="{py(chart.limit):.1f}" '
            f'y2="{py(chart.limit):.1f}"/><text x="{W - RIGHT - 4}" y="{py(chart.limit) - 4:.1f}" '
            f'text-anchor="end">{escape(chart.limit_label)}</text>'
        )
    for s in chart.series:
        pts = [(px(_ts(x)), py(y)) for x, y in s.points]
        if chart.bars:
            bw = max(3.0, min(14.0, pw / max(len(pts), 1) * 0.6))
            for (x, y), (_, v) in zip(pts, s.points, strict=True):
                out.append(
                    f'<rect class="{s.css}" x="{x - bw / 2:.1f}" y="{y:.1f}" width="{bw:.1f}" '
                    f'height="{TOP + ph - y:.1f}"><title>{v:,.0f}</title></rect>'
                )
        elif s.css == "dot":
            out.extend(f'<circle class="dot" cx="{x:.1f}" cy="{y:.1f}" r="3"/>' for x, y in pts)
        else:
            line = " ".join(f"{x:.1f},{y:.1f}" for x, y in pts)
            out.append(f'<polyline class="{s.css}" points="{line}"/>')
    legend = [s.label for s in chart.series if s.label]
    if legend:
        out.append(f'<text x="{LEFT + 4}" y="{TOP + 10}">{escape(" · ".join(legend))}</text>')
    out.append("</svg>")
    return mark_safe("".join(out))  # noqa: S308 - every text above is escaped
