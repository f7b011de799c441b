"""The unit page's SVG charts: x labels inside the picture and each date once, the forecast
band visible at a year's scale, dates in the depot's style."""

from __future__ import annotations

import re
from datetime import UTC, datetime, timedelta
from types import SimpleNamespace

from fleetfuel.pages.charts import BAND_MIN_PX, Chart, Series, W, chart_svg

CHICAGO = SimpleNamespace(display_style="en-US", time_zone="America/Chicago")
LABEL = re.compile(r'<text x="([\d.]+)" y="[\d.]+" text-anchor="(\w+)">([^<]*)</text>')
START = datetime(2025, 12, 2, 12, tzinfo=UTC)


def date_labels(svg: str) -> list[tuple[float, str, str]]:
    # The y-axis labels are numbers anchored at the end; date labels hold a month name.
    return [
        (float(x), a, t)
        for x, a, t in LABEL.findall(svg)
        if re.search(r"[A-Z][a-z]{2}", t) and not t.startswith(("forecast", "recorded"))
    ]


def label_extent_ok(x: float, anchor: str, text: str) -> bool:
    """Inside the viewBox, at 11px text about 6.5px per character (common practice)."""
    width = len(text) * 6.5
    left = {"start": x, "middle": x - width / 2, "end": x - width}[anchor]
    return left >= 0 and left + width <= W


def test_a_year_of_hours_labels_inside_the_picture_each_date_once() -> None:
    points = [(START + timedelta(days=d), 1000 + 10.0 * d) for d in range(0, 366, 7)]
    svg = chart_svg(Chart(title="hours", y_label="h", series=[Series(points=points)]))
    labels = date_labels(svg)
    assert len(labels) >= 3
    assert all(label_extent_ok(x, a, t) for x, a, t in labels), labels
    texts = [t for _, _, t in labels]
    assert len(texts) == len(set(texts))


def test_a_few_days_of_dp_never_repeat_a_date() -> None:
    # Readings over two and a half days: quarter-span ticks would fall twice on one day.
    points = [(START + timedelta(hours=h), 0.2 + h / 100) for h in range(0, 61, 6)]
    svg = chart_svg(Chart(title="dP", y_label="bar", series=[Series(points=points, css="dot")]))
    texts = [t for _, _, t in date_labels(svg)]
    assert texts and len(texts) == len(set(texts)), texts


def test_the_forecast_band_shows_at_a_years_scale() -> None:
    history = [(START + timedelta(days=d), 1000 + 10.0 * d) for d in range(0, 366, 7)]
    end = START + timedelta(days=365)
    band = [
        (end + timedelta(days=d), 4650 + 10.0 * d - 0.5, 4650 + 10.0 * d + 0.5) for d in range(31)
    ]
    svg = chart_svg(Chart(title="hours", y_label="h", series=[Series(points=history)], band=band))
    polygon = re.search(r'<polygon class="band" points="([^"]+)"', svg)
    assert polygon
    ys = [float(p.split(",")[1]) for p in polygon.group(1).split()]
    half = len(ys) // 2
    # Upper edge first, lower edge reversed: each x's two edges at least BAND_MIN_PX apart.
    gaps = [low - high for high, low in zip(ys[:half], reversed(ys[half:]), strict=True)]
    assert min(gaps) >= BAND_MIN_PX - 0.11


def test_axis_dates_in_the_depots_style() -> None:
    points = [(START + timedelta(days=d), float(d)) for d in range(0, 40)]
    svg = chart_svg(Chart(title="t", y_label="y", series=[Series(points=points)]), CHICAGO)
    texts = [t.replace("\u00a0", " ") for _, _, t in date_labels(svg)]
    assert texts and all(re.fullmatch(r"[A-Z][a-z]{2} \d{1,2}, \d{4}", t) for t in texts), texts
