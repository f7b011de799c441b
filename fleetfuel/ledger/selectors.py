"""Reads of the service history: one place per query shape, a fixed number of queries."""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import UTC, date, datetime, time, timedelta
from typing import Any

from django.db.models import Exists, OuterRef, Q, QuerySet

from fleetfuel.accounts.access import site_ids_for_user
from fleetfuel.dbrouters import history_alias
from fleetfuel.fleet.models import Site, Unit

from .models import ExportLog, ServiceEvent

PAGE_SIZE = 50
_EPOCH = datetime(1970, 1, 1, tzinfo=UTC)
_MICRO = timedelta(microseconds=1)


def day_start(day: date) -> datetime:
    """Dates in filters are UTC calendar days."""
    return datetime.combine(day, time.min, tzinfo=UTC)


@dataclass(frozen=True)
class HistoryScope:
    """Which part of the history a person asked for, within the sites they may see.

    ``allowed_site_ids`` None means every site (the command line); ``kind`` narrows the page
    only: exports always hold every kind, so the chain can be checked.
    """

    allowed_site_ids: tuple[int, ...] | None
    site: Site | None = None
    fleet_numbers: tuple[str, ...] = ()
    date_from: date | None = None
    date_to: date | None = None
    kind: str = ""

    def describe(self) -> dict[str, Any]:
        """The filters in words and ISO dates, for the export log and the manifest."""
        return {
            "site": self.site.name if self.site else None,
            "units": list(self.fleet_numbers),
            "from": self.date_from.isoformat() if self.date_from else None,
            "to": self.date_to.isoformat() if self.date_to else None,
            "dates": "UTC calendar days, both ends included",
        }

    def units(self) -> QuerySet[Unit]:
        units = Unit.objects.all()
        if self.allowed_site_ids is not None:
            units = units.filter(site_id__in=self.allowed_site_ids)
        if self.site is not None:
            units = units.filter(site_id=self.site.pk)
        if self.fleet_numbers:
            units = units.filter(fleet_number__in=self.fleet_numbers)
        return units

    def events(self, *, with_kind: bool = True) -> QuerySet[ServiceEvent]:
        events = ServiceEvent.objects.all()
        if self.allowed_site_ids is not None or self.site is not None or self.fleet_numbers:
            events = events.filter(unit__in=self.units().values("pk"))
        if self.date_from:
            events = events.filter(performed_at__gte=day_start(self.date_from))
        if self.date_to:
            events = events.filter(performed_at__lt=day_start(self.date_to + timedelta(days=1)))
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


def history_page(
    *, scope: HistoryScope, older_than: str = "", newer_than: str = "", size: int = PAGE_SIZE
) -> HistoryPage:
    """One page, newest first, by keyset (no count of the table): one query."""
    rows = (
        scope.events()
        .using(history_alias())
        .select_related("unit", "unit__site", "recorded_by", "work_order", "corrects")
    )
    rows = rows.annotate(
        is_corrected=Exists(ServiceEvent.objects.filter(corrects_id=OuterRef("pk")))
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
