"""Reads of the service history: one place per query shape, a fixed number of queries."""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, field
from datetime import UTC, date, datetime, time, timedelta
from typing import Any
from zoneinfo import ZoneInfo

from django.contrib.auth import get_user_model
from django.db.models import Exists, OuterRef, Q, QuerySet, Subquery

from fleetfuel.accounts.access import site_ids_for_user
from fleetfuel.dbrouters import history_alias
from fleetfuel.fleet.models import Site, Unit

from .effective import in_effect, with_effective_kind
from .models import ExportLog, ServiceEvent

PAGE_SIZE = 50
_EPOCH = datetime(1970, 1, 1, tzinfo=UTC)
_MICRO = timedelta(microseconds=1)


def day_start(day: date, zone: str = "UTC") -> datetime:
    """The first instant of ``day`` in the time zone ``zone``."""
    return datetime.combine(day, time.min, tzinfo=ZoneInfo(zone))


def _days_condition(zones: Iterable[str], date_from: date | None, date_to: date | None) -> Q:
    """Entries done on the days ``date_from`` to ``date_to`` (both included) as the calendar
    of each unit's depot counts them: one condition per depot time zone."""
    condition = Q(pk__in=[])
    for zone in zones:
        in_zone = Q(unit__site__time_zone=zone)
        if date_from:
            in_zone &= Q(performed_at__gte=day_start(date_from, zone))
        if date_to:
            in_zone &= Q(performed_at__lt=day_start(date_to + timedelta(days=1), zone))
        condition |= in_zone
    return condition


@dataclass(frozen=True)
class HistoryScope:
    """Which part of the history a person asked for, within the sites they may see.

    ``allowed_site_ids`` None means every site (the command line); ``kind`` and ``recorded``
    (every entry as recorded, not the corrected view) are the page's only: exports always
    hold every entry, so the chain can be checked. Dates are depot calendar days: each entry
    is taken by the day in its unit's depot time zone, the time base the page shows.
    """

    allowed_site_ids: tuple[int, ...] | None
    site: Site | None = None
    fleet_numbers: tuple[str, ...] = ()
    date_from: date | None = None
    date_to: date | None = None
    kind: str = ""
    recorded: bool = False

    def describe(self) -> dict[str, Any]:
        """The filters in words and ISO dates, for the export log and the manifest."""
        return {
            "site": self.site.name if self.site else None,
            "units": list(self.fleet_numbers),
            "from": self.date_from.isoformat() if self.date_from else None,
            "to": self.date_to.isoformat() if self.date_to else None,
            "dates": "calendar days in each unit's depot time zone, both ends included",
        }

    def _unit_condition(self, path: str = "") -> Q:
        """The scope's units, as a condition on the unit at ``path`` ("" on Unit itself)."""
        condition = Q()
        if self.allowed_site_ids is not None:
            condition &= Q(**{f"{path}site_id__in": self.allowed_site_ids})
        if self.site is not None:
            condition &= Q(**{f"{path}site_id": self.site.pk})
        if self.fleet_numbers:
            condition &= Q(**{f"{path}fleet_number__in": self.fleet_numbers})
        return condition

    def units(self) -> QuerySet[Unit]:
        return Unit.objects.filter(self._unit_condition())

    def events(self, *, with_kind: bool = True, joined: bool = False) -> QuerySet[ServiceEvent]:
        """The scope's entries. ``joined``: the units are picked on the join to the unit that
        the caller selects anyway (the history page), not by a subquery of unit ids (the
        exports, whose plans were measured with it)."""
        events = ServiceEvent.objects.all()
        if self.allowed_site_ids is not None or self.site is not None or self.fleet_numbers:
            if joined:
                events = events.filter(self._unit_condition("unit__"))
            else:
                events = events.filter(unit__in=self.units().values("pk"))
        if self.date_from or self.date_to:
            zones = Site.objects.filter(pk__in=self.units().values("site_id"))
            zones = zones.order_by().values_list("time_zone", flat=True).distinct()
            events = events.filter(_days_condition(list(zones), self.date_from, self.date_to))
        if with_kind and self.kind:
            events = events.filter(kind=self.kind)
        return events


def filter_sites(*, user: Any) -> QuerySet[Site]:
    """The sites a person may pick in the history's filters and exports, from the site ids
    cached on the user for the request."""
    return Site.objects.filter(pk__in=site_ids_for_user(user))


def cursor_make(event: ServiceEvent) -> str:
    return f"{(event.performed_at - _EPOCH) // _MICRO}-{event.pk}"


def cursor_parse(text: str) -> tuple[datetime, int] | None:
    try:
        micros, pk = (int(part) for part in text.split("-", 1))
        return _EPOCH + micros * _MICRO, pk
    except (ValueError, OverflowError):
        return None


@dataclass
class HistoryPage:
    events: list[ServiceEvent] = field(default_factory=list)
    newer: str | None = None  # cursor for the page of newer entries
    older: str | None = None  # cursor for the page of older entries

    @property
    def time_zones(self) -> list[str]:
        """The depot time zones the page's times are shown in, named once each."""
        return sorted({event.unit.site.time_zone for event in self.events})


def _person_and_order() -> dict[str, Subquery]:
    """What the history shows of the person who recorded an entry and of its work order
    (a model of a higher app, reached through the entry's key)."""
    people = get_user_model().objects.filter(pk=OuterRef("recorded_by_id"))
    orders = ServiceEvent._meta.get_field("work_order").related_model._default_manager
    order = orders.filter(pk=OuterRef("work_order_id"))
    return {
        "recorded_by_first_name": Subquery(people.values("first_name")),
        "recorded_by_last_name": Subquery(people.values("last_name")),
        "recorded_by_username": Subquery(people.values("username")),
        "work_order_number": Subquery(order.values("number")),
    }


def history_page(
    *, scope: HistoryScope, older_than: str = "", newer_than: str = "", size: int = PAGE_SIZE
) -> HistoryPage:
    """One page, newest first by the moment each entry was done, by keyset (no count of the
    table): one query (two with dates: their depots' time zones). The corrected view (each
    entry with its corrections applied: effective.py), or with ``scope.recorded`` every entry
    as recorded, each marked when a correction took its place."""
    rows = scope.events(with_kind=False, joined=True).using(history_alias())
    if scope.recorded:
        rows = with_effective_kind(rows.filter(kind=scope.kind) if scope.kind else rows)
    else:
        rows = in_effect(rows)
        if scope.kind == ServiceEvent.Kind.CORRECTION:
            rows = rows.filter(kind=scope.kind)
        elif scope.kind:
            # A row of another kind stands for its own (effective.py): said so first, so the
            # database works the kind out only for corrections.
            rows = rows.filter(
                Q(kind=scope.kind) | Q(kind=ServiceEvent.Kind.CORRECTION, effective_kind=scope.kind)
            )
    # Joined: the unit, its depot and the corrected entry (joined anyway for the kind). The
    # person and the work order's number come as subqueries: each join more multiplies the
    # orders PostgreSQL weighs in planning (about 17 ms of planning with them joined, 3 ms
    # without, on a 10,000-unit fleet), while a subquery is planned on its own.
    rows = rows.select_related("unit", "unit__site", "corrects")
    rows = rows.annotate(
        is_corrected=Exists(ServiceEvent.objects.filter(corrects_id=OuterRef("pk"))),
        **_person_and_order(),
    )
    after = cursor_parse(newer_than) if newer_than else None
    before = cursor_parse(older_than) if older_than and not after else None
    if after:
        at, pk = after
        rows = rows.filter(Q(performed_at__gt=at) | Q(performed_at=at, pk__gt=pk))
        found = list(rows.order_by("performed_at", "pk")[: size + 1])
        more = len(found) > size
        events = found[:size][::-1]
        return HistoryPage(
            events,
            newer=cursor_make(events[0]) if more else None,
            older=cursor_make(events[-1]) if events else None,
        )
    if before:
        at, pk = before
        rows = rows.filter(Q(performed_at__lt=at) | Q(performed_at=at, pk__lt=pk))
    found = list(rows.order_by("-performed_at", "-pk")[: size + 1])
    events = found[:size]
    return HistoryPage(
        events,
        newer=cursor_make(events[0]) if before and events else None,
        older=cursor_make(events[-1]) if len(found) > size else None,
    )


def exports_within_sites(rows: QuerySet[ExportLog], site_ids: list[int]) -> QuerySet[ExportLog]:
    """The exports among ``rows`` that cover no site outside ``site_ids``."""
    outside = ExportLog.sites.through.objects.exclude(site_id__in=site_ids)
    return rows.exclude(pk__in=outside.values("exportlog_id"))


def exports_for_user(
    *, user: Any, see_all: bool, site_ids: list[int], before: int | None, size: int
) -> list[ExportLog]:
    """The export log, newest first: everyone's for a manager, one's own otherwise; only the
    exports wholly within ``site_ids`` (the sites the person may see)."""
    rows = ExportLog.objects.select_related("requested_by").defer("manifest").order_by("-pk")
    rows = exports_within_sites(rows, site_ids)
    if not see_all:
        rows = rows.filter(requested_by=user)
    if before:
        rows = rows.filter(pk__lt=before)
    return list(rows[:size])
