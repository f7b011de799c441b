"""Small server-side SVG charts: no JavaScript, no CDN, readable when printed.

Each function takes plain points and returns safe SVG markup with labelled axes (units in
the axis title). Dates are plotted on a linear time axis.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field
from datetime import date, datetime

from django.utils.html import escape
from django.utils.safestring import SafeString, mark_safe

W, H = 640, 240
LEFT, RIGHT, TOP, BOTTOM = 64, 16, 14, 40


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


def chart_svg(chart: Chart) -> SafeString:
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
    for i in range(5):
        xt = x0 + (x1 - x0) * i / 4
        label = datetime.fromtimestamp(xt).strftime("%d %b %y")
        out.append(
            f'<text x="{px(xt):.1f}" y="{H - BOTTOM + 16}" text-anchor="middle">{label}</text>'
        )
    out.append(f'<line class="axis" x1="{LEFT}" x2="{LEFT}" y1="{TOP}" y2="{TOP + ph}"/>')
    out.append(f'<line class="axis" x1="{LEFT}" x2="{W - RIGHT}" y1="{TOP + ph}" y2="{TOP + ph}"/>')
    out.append(
        f'<text x="14" y="{TOP + ph / 2:.1f}" text-anchor="middle" '
        f'transform="rotate(-90 14 {TOP + ph / 2:.1f})">{escape(chart.y_label)}</text>'
    )
    if chart.band:
        upper = " ".join(f"{px(_ts(x)):.1f},{py(hi):.1f}" for x, _, hi in chart.band)
        lower = " ".join(f"{px(_ts(x)):.1f},{py(lo):.1f}" for x, lo, _ in reversed(chart.band))
        out.append(f'<polygon class="band" points="{upper} {lower}"/>')
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
