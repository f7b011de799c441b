"""services.display: one date, time and number form per depot style.

Outside references: Django's own locale data (django/conf/locale/<lang>/formats.py, rendered
by django.utils.dateformat and django.utils.numberformat), Python's datetime.isoformat and
time.strftime in the C locale, and Django's ``pluralize`` filter.
"""

from __future__ import annotations

import datetime as dt
import time

import pytest
from django.conf.locale.de import formats as de_formats
from django.conf.locale.en_GB import formats as en_gb_formats
from django.template.defaultfilters import pluralize
from django.utils import dateformat, numberformat

from services import display

NBSP = "\u00a0"
DAY = dt.date(2026, 12, 2)
AFTERNOON = dt.datetime(2026, 12, 2, 14, 5)
MORNING = dt.datetime(2026, 3, 1, 9, 7)


def plain(text: str) -> str:
    return text.replace(NBSP, " ")


@pytest.mark.parametrize("value", [DAY, dt.date(2021, 3, 1), dt.date(1999, 1, 31)])
def test_en_gb_day_is_djangos_en_gb_date_format(value: dt.date) -> None:
    # Django's en_GB locale: DATE_FORMAT = "j M Y" -> "2 Dec 2026".
    expected = dateformat.format(value, en_gb_formats.DATE_FORMAT)
    assert plain(display.day_text(value, "en-GB")) == expected


@pytest.mark.parametrize("value", [DAY, dt.date(2021, 3, 1)])
def test_de_day_is_djangos_german_short_date(value: dt.date) -> None:
    # Django's de locale: SHORT_DATE_FORMAT = "d.m.Y" -> "02.12.2026".
    assert display.day_text(value, "de-DE") == dateformat.format(
        value, de_formats.SHORT_DATE_FORMAT
    )


def test_iso_day_is_pythons_isoformat() -> None:
    # ISO 8601:2019 clause 5.2.2.1 calendar date, extended format YYYY-MM-DD.
    assert display.day_text(DAY, "iso") == DAY.isoformat() == "2026-12-02"
    assert display.iso_day(dt.date(2021, 3, 1)) == "2021-03-01"


def test_en_us_day_month_first_as_c_locale_strftime() -> None:
    # Month-day-year with the abbreviated month, as CLDR's en medium date "MMM d, y"
    # (from memory); the month abbreviation is the C locale's %b.
    expected = f"{time.strftime('%b', DAY.timetuple())} {DAY.day}, {DAY.year}"
    assert plain(display.day_text(DAY, "en-US")) == expected == "Dec 2, 2026"


def test_clock_24_hour_is_strftime_h_m() -> None:
    for code in ("en-GB", "de-DE", "iso"):
        assert display.clock_text(AFTERNOON, code) == AFTERNOON.strftime("%H:%M") == "14:05"
        assert display.clock_text(MORNING, code) == MORNING.strftime("%H:%M") == "09:07"


@pytest.mark.parametrize(
    "value",
    [AFTERNOON, MORNING, dt.datetime(2026, 1, 1, 0, 30), dt.datetime(2026, 1, 1, 12, 0)],
)
def test_clock_12_hour_is_c_locale_strftime(value: dt.datetime) -> None:
    # C locale %I:%M %p, leading zero dropped: 00:30 is 12:30 AM, noon is 12:00 PM.
    expected = value.strftime("%I:%M %p").lstrip("0")
    assert plain(display.clock_text(value, "en-US")) == expected


def test_when_joins_day_and_clock() -> None:
    assert plain(display.when_text(AFTERNOON, "en-GB")) == "2 Dec 2026, 14:05"
    assert plain(display.when_text(AFTERNOON, "iso")) == "2026-12-02 14:05"


@pytest.mark.parametrize("code, sep, dec", [("en-GB", ",", "."), ("de-DE", ".", ",")])
@pytest.mark.parametrize("value", [12269, 1234567.5, 999, 0, 1000])
def test_numbers_grouped_as_djangos_numberformat(
    code: str, sep: str, dec: str, value: float
) -> None:
    # Django's numberformat with the locale's THOUSAND_SEPARATOR/DECIMAL_SEPARATOR
    # (en_GB: ",", "."; de: ".", ",") and NUMBER_GROUPING 3.
    fmts = en_gb_formats if code == "en-GB" else de_formats
    assert (sep, dec) == (fmts.THOUSAND_SEPARATOR, fmts.DECIMAL_SEPARATOR)
    expected = numberformat.format(
        value, dec, decimal_pos=1, grouping=3, thousand_sep=sep, force_grouping=True
    )
    assert display.number_text(value, code, places=1) == expected


def test_hours_nbsp_before_unit_and_half_rounds_up() -> None:
    assert display.hours_text(12269.4, "en-GB") == f"12,269{NBSP}h"
    assert display.hours_text(12269.5, "en-GB") == f"12,270{NBSP}h"  # half away from zero
    assert display.hours_text(-0.2, "en-GB") == f"0{NBSP}h"  # never "-0"
    assert display.meter_text(12269.4, "en-GB") == f"12,269.4{NBSP}h"
    assert display.meter_text(12269.0, "de-DE") == f"12.269{NBSP}h"


@pytest.mark.parametrize("n", [0, 1, 2, 11])
def test_count_noun_plural_as_djangos_pluralize(n: int) -> None:
    assert display.count_noun(n, "pumping-imbalance event") == (
        f"{n} pumping-imbalance event{pluralize(n)}"
    )
    assert display.count_noun(n, "entry,entries") == f"{n} entr{pluralize(n, 'y,ies')}"


def test_spelling_follows_unit_system() -> None:
    # British and US spellings: common practice (Oxford / Merriam-Webster headwords).
    assert display.spelled("Tire size", "metric") == "Tyre size"
    assert display.spelled("Tyre size", "us") == "Tire size"
    assert display.spelled("Litres fuelled", "us") == "Liters fueled"
    assert display.spelled("hour meter", "metric") == "hour meter"


def test_unknown_style_falls_back_to_default() -> None:
    assert display.day_text(DAY, "xx") == display.day_text(DAY, display.DEFAULT_STYLE)
