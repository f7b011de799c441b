"""Writes of the fleet app."""

from __future__ import annotations

from collections.abc import Callable, Mapping
from datetime import date

from .models import PER_CYLINDER_KINDS, Component, ComponentKind, Unit

# Typical filter ratings (um): a coarse primary filter / separator and a fine pressure-side
# filter (common practice); a shop edits the real part's rating afterwards.
DEFAULT_RATINGS = {ComponentKind.PRIMARY_FILTER: 10.0, ComponentKind.FINE_FILTER: 4.0}


def unit_fuel_system_fit(
    *,
    unit: Unit,
    installed_on: date,
    installed_hours: float = 0.0,
    filters_installed_on: date | None = None,
    filters_installed_hours: float | None = None,
    part_numbers: Mapping[str, str] | None = None,
    serial: Callable[[str, int | None], str] | None = None,
) -> list[Component]:
    """Fit a unit with every fuel-system part fleetfuel tracks, one per cylinder where the
    part is per cylinder, in fuel-flow order. Filters may carry their own (last change) date
    and hours. ``serial(kind, cylinder)`` names each part's serial, if known."""
    rows = []
    for kind in ComponentKind:
        positions = range(1, unit.cylinders + 1) if kind in PER_CYLINDER_KINDS else [None]
        is_filter = kind in DEFAULT_RATINGS
        on = (filters_installed_on or installed_on) if is_filter else installed_on
        hours = installed_hours
        if is_filter and filters_installed_hours is not None:
            hours = filters_installed_hours
        for position in positions:
            rows.append(
                Component(
                    unit=unit,
                    kind=kind,
                    position=position,
                    part_number=(part_numbers or {}).get(kind, ""),
                    serial=serial(kind, position) if serial else "",
                    rating_um=DEFAULT_RATINGS.get(kind),
                    installed_on=on,
                    installed_hours=hours,
                )
            )
    return Component.objects.bulk_create(rows)
