"""Template filters for showing things one way per depot: ``{% load fmt %}``.

Each filter takes the depot as its argument: a Site, or anything with a ``site`` (a unit, a
work order). Without one, the default style and UTC are used.

    {{ wo.due_on|day:site }}        2 Dec 2026 (the depot's date style)
    {{ e.performed_at|when:site }}  2 Dec 2026, 14:05 (in the depot's time zone)
    {{ saved_at|clock:site }}       14:05
    {{ reading.hours|meter:site }}  12,269.4 h (no-break space before h)
    {{ item.due_hours|hours:site }} 12,270 h
    {{ n|count_noun:"event" }}      1 event, 2 events ("entry,entries" for other plurals)
    {{ "Tyre size"|spelled:site }}  Tire size at a US-customary depot
    {{ at|iso_day }}                2026-12-02 (exports)

The same functions serve Python code (emails, charts, prints): ``day(value, site)``.
"""

from __future__ import annotations

import datetime as dt
import zoneinfo
from typing import Any

from django import template
from django.utils import timezone

from services import display

register = template.Library()


def depot_of(obj: Any) -> Any:
    """The depot an object belongs to: the object when it is one, else its ``site``."""
    if obj is None or obj == "":
        return None
    if hasattr(obj, "display_style") and hasattr(obj, "time_zone"):
        return obj
    return getattr(obj, "site", None)


def style_code(obj: Any) -> str:
    depot = depot_of(obj)
    return getattr(depot, "display_style", None) or display.DEFAULT_STYLE


def local(value: dt.datetime, obj: Any) -> dt.datetime:
    """An aware datetime in the depot's zone (UTC without a depot); naive ones as they are."""
    if timezone.is_naive(value):
        return value
    depot = depot_of(obj)
    try:
        zone = zoneinfo.ZoneInfo(getattr(depot, "time_zone", None) or "UTC")
    except (zoneinfo.ZoneInfoNotFoundError, ValueError):
        zone = zoneinfo.ZoneInfo("UTC")
    return value.astimezone(zone)


@register.filter
def day(value: dt.date | dt.datetime | None, site: Any = None) -> str:
    """The date in the depot's style; a datetime is first put in the depot's zone."""
    if value is None or value == "":
        return ""
    if isinstance(value, dt.datetime):
        value = local(value, site).date()
    return display.day_text(value, style_code(site))


@register.filter
def clock(value: dt.datetime | dt.time | None, site: Any = None) -> str:
    """The time of day in the depot's style and zone."""
    if value is None or value == "":
        return ""
    if isinstance(value, dt.datetime):
        value = local(value, site)
    return display.clock_text(value, style_code(site))


@register.filter
def when(value: dt.datetime | dt.date | None, site: Any = None) -> str:
    """Date and time in the depot's style and zone (a plain date shows as ``day``)."""
    if value is None or value == "":
        return ""
    if not isinstance(value, dt.datetime):
        return day(value, site)
    return display.when_text(local(value, site), style_code(site))


@register.filter
def iso_day(value: dt.date | dt.datetime | None, site: Any = None) -> str:
    """ISO 8601 date for exports; a datetime in the depot's zone (UTC without one)."""
    if value is None or value == "":
        return ""
    if isinstance(value, dt.datetime):
        value = local(value, site).date()
    return display.iso_day(value)


@register.filter
def hours(value: float | None, site: Any = None) -> str:
    """Engine hours, whole and grouped, no-break space before 'h'."""
    if value is None or value == "":
        return ""
    return display.hours_text(float(value), style_code(site))


@register.filter
def meter(value: float | None, site: Any = None) -> str:
    """An hour-meter reading: grouped, a tenth only when it has one, no-break space, 'h'."""
    if value is None or value == "":
        return ""
    return display.meter_text(float(value), style_code(site))


@register.filter
def num(value: float | None, site: Any = None) -> str:
    """A whole number grouped by thousands in the depot's style."""
    if value is None or value == "":
        return ""
    return display.number_text(float(value), style_code(site))


@register.filter
def count_noun(value: int | None, forms: str) -> str:
    """'1 event', '3 events'; ``forms`` is 'event' or 'entry,entries'."""
    return display.count_noun(int(value or 0), forms)


@register.filter
def spelled(text: str, site: Any = None) -> str:
    """The text in the depot's spelling (US spelling at a US-customary depot)."""
    depot = depot_of(site)
    return display.spelled(str(text), getattr(depot, "unit_system", None))
