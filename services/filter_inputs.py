"""What a filter projection takes in (services.intervals), and its checks at the door.

Every figure is refused by name when it is NaN, infinite or negative (a plan's figures when
not positive): a NaN compares false with everything and would silently switch a limit off.
Anything dated after ``now`` is refused too (services/inputs.py).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from datetime import datetime

from services.filter_dp import DpReading
from services.inputs import dates_check, number_check


@dataclass(frozen=True, slots=True)
class FilterPlan:
    """The plan's limits for one filter, and the fuel they assume."""

    interval_hours: float
    interval_days: int
    interval_litres: float | None
    reference_concentration_per_ml: float  # in the filter's size channel
    reference_burn_l_per_h: float
    dp_limit_bar: float | None
    soon_days: int
    due_days: int

    def __post_init__(self) -> None:
        """A NaN must never switch a limit off: every figure is a positive number or None."""
        for name in ("interval_hours", "reference_concentration_per_ml", "reference_burn_l_per_h"):
            number_check(f"plan {name}", getattr(self, name), positive=True)
        number_check("plan interval_litres", self.interval_litres, positive=True)
        number_check("plan dp_limit_bar", self.dp_limit_bar, positive=True)


@dataclass(frozen=True, slots=True)
class Loading:
    """Fuel burned through the filter, with its particle concentration."""

    at: datetime
    litres: float
    concentration_per_ml: float
    reference_assumed: bool
    label: str  # e.g. "42 L from Bulk tank B on 2026-03-04, sample S-0142: 21/19/16"

    def __post_init__(self) -> None:
        number_check(f"{self.label}: litres", self.litres)
        number_check(f"{self.label}: concentration_per_ml", self.concentration_per_ml)


def door_check(
    *,
    numbers: tuple[float, float | None, float],
    dated: tuple[datetime, Sequence[Loading], Sequence[DpReading]],
    now: datetime,
) -> None:
    """filter_projection's own numbers and dates, refused by name."""
    names = ("current_concentration_per_ml", "burn_l_per_h", "last_change_hours")
    for name, value in zip(names, numbers, strict=True):
        number_check(name, value)
    changed_at, loadings, dp_readings = dated
    dates_check(
        items=[("last_change_at", changed_at)]
        + [(f"loading {ld.label}", ld.at) for ld in loadings]
        + [(f"dP reading at {r.hours:g} h", r.at) for r in dp_readings],
        now=now,
    )
