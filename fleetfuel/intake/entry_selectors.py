"""Reads of the entry pages: the sites a manager enters data for, a depot's units with their
last reading, its fuel sources, and what was entered lately."""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date, datetime
from typing import Any

from django.db.models import OuterRef, Q, QuerySet, Subquery

from fleetfuel.accounts.access import sites_for_user
from fleetfuel.fleet.models import (
    Delivery,
    EngineEvent,
    Fueling,
    FuelSample,
    FuelSource,
    MeterReading,
    Site,
    Unit,
)

RECENT = 8  # rows of "entered lately" under each form


def entry_sites(user: Any) -> list[Site]:
    """The sites the person may enter data for, by name."""
    return list(sites_for_user(user).order_by("name"))


def entry_site_pick(sites: list[Site], code: str | None) -> Site | None:
    """The site named by ``code`` among ``sites``, else the first; None when there is none
    or the code names a site the person may not see."""
    if not code:
        return sites[0] if sites else None
    return next((s for s in sites if s.code == code), None)


def active_units(*, site: Site, today: date) -> QuerySet[Unit]:
    """The site's units in service on ``today`` (not disposed of), by fleet number."""
    return (
        Unit.objects.filter(site=site, in_service_on__lte=today)
        .filter(Q(disposed_on__isnull=True) | Q(disposed_on__gt=today))
        .order_by("fleet_number")
    )


@dataclass(frozen=True)
class RoundRow:
    unit_id: int
    fleet_number: str
    description: str
    last_hours: float | None
    last_at: datetime | None


def round_rows(*, site: Site, today: date) -> list[RoundRow]:
    """Every active unit of the site with its latest reading: one query."""
    latest = MeterReading.objects.filter(unit_id=OuterRef("pk")).order_by("-taken_at", "-pk")
    rows = active_units(site=site, today=today).annotate(
        last_hours=Subquery(latest.values("hours")[:1]),
        last_at=Subquery(latest.values("taken_at")[:1]),
    )
    return [
        RoundRow(
            unit_id=u.pk,
            fleet_number=u.fleet_number,
            description=f"{u.make} {u.model}",
            last_hours=u.last_hours,  # type: ignore[attr-defined]
            last_at=u.last_at,  # type: ignore[attr-defined]
        )
        for u in rows
    ]


def site_sources(*, site: Site) -> QuerySet[FuelSource]:
    """The fuel sources a site's units fill from: its own, and those tied to no site."""
    return FuelSource.objects.filter(Q(site=site) | Q(site__isnull=True)).order_by("name")


def site_deliveries(*, site: Site) -> QuerySet[Delivery]:
    """Deliveries into the site's sources, latest first."""
    return (
        Delivery.objects.filter(source__in=site_sources(site=site))
        .select_related("source")
        .order_by("-delivered_at")
    )


def recent_fuelings(*, site: Site) -> list[Fueling]:
    rows = Fueling.objects.filter(unit__site=site).select_related("unit", "source")
    return list(rows.order_by("-fueled_at", "-pk")[:RECENT])


def recent_deliveries(*, site: Site) -> list[Delivery]:
    return list(site_deliveries(site=site)[:RECENT])


def recent_samples(*, site: Site) -> list[FuelSample]:
    rows = FuelSample.objects.filter(
        Q(unit__site=site) | Q(source__in=site_sources(site=site))
    ).select_related("unit", "source", "delivery")
    return list(rows.order_by("-sampled_at", "-pk")[:RECENT])


def recent_events(*, site: Site) -> list[EngineEvent]:
    rows = EngineEvent.objects.filter(unit__site=site).select_related("unit")
    return list(rows.order_by("-occurred_at", "-pk")[:RECENT])
