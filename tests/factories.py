"""Small builders for test data. Invented values, for tests only."""

from __future__ import annotations

import itertools
from datetime import UTC, date, datetime, timedelta
from typing import Any

from django.contrib.auth.models import Group, User

from fleetfuel.accounts.models import Profile
from fleetfuel.fleet.actions import unit_fuel_system_fit
from fleetfuel.fleet.models import (
    ComponentKind,
    FuelSource,
    ServicePlan,
    Site,
    Unit,
    UnitClass,
)

_seq = itertools.count(1)
PASSWORD = "test-pass-4406"


def user_make(
    role: str | None, *, username: str | None = None, sites: list[Site] | None = None
) -> User:
    n = next(_seq)
    user = User.objects.create_user(
        username or f"{role or 'nobody'}{n}", f"u{n}@example.test", PASSWORD
    )
    if role:
        group, _ = Group.objects.get_or_create(name=role)
        user.groups.add(group)
    profile = Profile.objects.create(user=user)
    if sites:
        profile.sites.set(sites)
    return user


def site_make(**kw: Any) -> Site:
    n = next(_seq)
    defaults = {"name": f"Depot {n}", "code": f"depot-{n}", "time_zone": "Europe/London"}
    defaults.update(kw)
    return Site.objects.create(**defaults)


def unit_class_make(**kw: Any) -> UnitClass:
    n = next(_seq)
    defaults = {"name": f"Class {n}", "typical_hours_per_day": 8.0, "typical_burn_l_per_h": 20.0}
    defaults.update(kw)
    return UnitClass.objects.create(**defaults)


def plans_make(unit_class: UnitClass, **kw: Any) -> dict[str, ServicePlan]:
    primary = ServicePlan.objects.create(
        unit_class=unit_class,
        component_kind=ComponentKind.PRIMARY_FILTER,
        interval_hours=500,
        interval_days=180,
        reference_burn_l_per_h=20.0,
        dp_limit_bar=0.35,
        bowl_capacity_ml=250,
        drain_interval_days=7,
        drain_interval_hours=60,
        **kw,
    )
    fine = ServicePlan.objects.create(
        unit_class=unit_class,
        component_kind=ComponentKind.FINE_FILTER,
        interval_hours=500,
        interval_days=365,
        reference_burn_l_per_h=20.0,
        dp_limit_bar=1.0,
        **kw,
    )
    relief = ServicePlan.objects.create(
        unit_class=unit_class,
        component_kind=ComponentKind.RELIEF_VALVE,
        relief_window_days=7,
        relief_openings_to_flag=3,
        relief_lifetime_openings=25,
    )
    return {"primary": primary, "fine": fine, "relief": relief}


def unit_make(
    *,
    site: Site,
    unit_class: UnitClass,
    fleet_number: str | None = None,
    cylinders: int = 6,
    installed_on: date | None = None,
) -> Unit:
    n = next(_seq)
    unit = Unit.objects.create(
        site=site,
        unit_class=unit_class,
        fleet_number=fleet_number or f"T-{n:03d}",
        make="Testmake",
        model="TM-1",
        serial_number=f"SN{n:06d}",
        year=2020,
        cylinders=cylinders,
        in_service_on=date(2020, 1, 1),
    )
    unit_fuel_system_fit(
        unit=unit,
        installed_on=installed_on or date(2026, 1, 1),
        filters_installed_hours=1000,
        serial=lambda kind, cyl: f"I{n}-{cyl}" if kind == ComponentKind.INJECTOR else "",
    )
    return unit


def source_make(**kw: Any) -> FuelSource:
    n = next(_seq)
    defaults = {"name": f"Tank {n}", "kind": FuelSource.Kind.BULK_TANK}
    defaults.update(kw)
    return FuelSource.objects.create(**defaults)


def at(days_ago: float, *, now: datetime) -> datetime:
    return now - timedelta(days=days_ago)


NOW = datetime(2026, 6, 15, 12, 0, tzinfo=UTC)
