"""The fmt template filters: the depot's style and zone, through a real template."""

from __future__ import annotations

import datetime as dt
from types import SimpleNamespace

from django.template import Context, Template

NBSP = "\u00a0"
LONDON = SimpleNamespace(display_style="en-GB", time_zone="Europe/London", unit_system="metric")
CHICAGO = SimpleNamespace(display_style="en-US", time_zone="America/Chicago", unit_system="us")


def render(source: str, **context: object) -> str:
    return Template("{% load fmt %}" + source).render(Context(context)).replace(NBSP, " ")


def test_datetime_is_shown_in_the_depots_zone() -> None:
    # 2026-07-01 03:30 UTC is 2026-06-30 22:30 CDT (UTC-5 in summer: IANA tz database).
    at = dt.datetime(2026, 7, 1, 3, 30, tzinfo=dt.UTC)
    assert render("{{ at|when:site }}", at=at, site=CHICAGO) == "Jun 30, 2026, 10:30 PM"
    # London in summer is UTC+1 (BST): IANA tz database.
    assert render("{{ at|when:site }}", at=at, site=LONDON) == "1 Jul 2026, 04:30"
    assert render("{{ at|day:site }} {{ at|clock:site }}", at=at, site=LONDON) == (
        "1 Jul 2026 04:30"
    )


def test_object_with_a_site_stands_for_its_depot() -> None:
    unit = SimpleNamespace(site=CHICAGO)
    assert render("{{ d|day:unit }}", d=dt.date(2026, 12, 2), unit=unit) == "Dec 2, 2026"


def test_no_depot_means_default_style_utc_and_none_is_empty() -> None:
    at = dt.datetime(2026, 12, 2, 23, 59, tzinfo=dt.UTC)
    assert render("{{ at|when }}", at=at) == "2 Dec 2026, 23:59"
    assert render("[{{ x|day:site }}{{ x|hours:site }}{{ x|meter }}]", x=None, site=LONDON) == "[]"


def test_hours_count_and_spelling_filters() -> None:
    assert render("{{ v|hours:site }}", v=12269.4, site=LONDON) == "12,269 h"
    assert render("{{ v|meter:site }}", v=12269.4, site=LONDON) == "12,269.4 h"
    assert render('{{ n|count_noun:"event" }}', n=1) == "1 event"
    assert render('{{ n|count_noun:"event" }}', n=3) == "3 events"
    assert render('{{ "Tyre size"|spelled:site }}', site=CHICAGO) == "Tire size"
    assert (
        render(
            "{{ at|iso_day:site }}", at=dt.datetime(2026, 7, 1, 3, 30, tzinfo=dt.UTC), site=CHICAGO
        )
        == "2026-06-30"
    )
