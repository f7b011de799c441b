"""Value types shared by the computations in ``services``.

Kept deliberately small: each computation module defines its own inputs;
what crosses module boundaries lives here.
"""

from __future__ import annotations

import enum
import math
from dataclasses import dataclass, field
from datetime import date, datetime


class TaskKind(enum.StrEnum):
    """A recurring fuel-system task the engine projects."""

    PRIMARY_FILTER = "primary_filter", "Change primary filter / water separator element"
    FINE_FILTER = "fine_filter", "Change pressure-side (fine) filter"
    SEPARATOR_DRAIN = "separator_drain", "Drain water separator"

    def __new__(cls, value: str, label: str) -> TaskKind:
        obj = str.__new__(cls, value)
        obj._value_ = value
        obj.label = label  # type: ignore[attr-defined]
        return obj


class DueStatus(enum.StrEnum):
    """Where a projected task stands today. Ordered from most to least urgent.

    ``CHECK``: only an estimate (a filter's dirt budget) has run out, no hard limit has; the
    filter's differential pressure or restriction indicator is to be checked before a change.
    """

    OVERDUE = "overdue"
    CHECK = "check"
    DUE = "due"
    SOON = "soon"
    OK = "ok"


class Basis(enum.StrEnum):
    """What governs a projected due point: the earliest limit wins."""

    CONTAMINANT_BUDGET = "contaminant_budget"  # dirt loading of the filter
    PLAN_HOURS = "plan_hours"  # the plan's hour interval
    PLAN_DAYS = "plan_days"  # the plan's calendar interval
    FUEL_VOLUME = "fuel_volume"  # the plan's fuel-volume interval
    DIFFERENTIAL_PRESSURE = "differential_pressure"  # projected dP reaches the limit
    WATER_LEVEL = "water_level"  # projected water reaches the drain level
    WATER_EVENT = "water_event"  # a water-in-fuel alarm makes the drain due now


@dataclass(frozen=True, slots=True)
class UsageForecast:
    """How fast a unit's hour meter runs, with a band.

    ``current_hours`` is the meter value (corrected for meter replacements, i.e.
    engine hours) at ``as_of``. Rates are engine hours per calendar day.
    ``rate_low`` <= ``rate`` <= ``rate_high`` bound the band used for due dates.
    """

    as_of: datetime
    current_hours: float
    rate: float
    rate_low: float
    rate_high: float
    basis: str  # "readings" or "class_default" or "idle"
    note: str  # one sentence a manager reads, e.g. "14.2 h/day from 23 readings over 90 days"
    # The last hour-meter reading (None: none on record), and the moment the hours were
    # carried forward to: before ``as_of`` when no evidence says the unit ran since.
    last_reading_at: datetime | None = None
    carried_to: datetime | None = None
    # A large drop in the readings with no meter replacement recorded: (moment of the first
    # low reading, engine hours before it, the meter value read). For the manager to confirm.
    probable_meter_change: tuple[datetime, float, float] | None = None


@dataclass(frozen=True, slots=True)
class DueDate:
    """A due point in engine hours and in calendar days, with the band from usage."""

    hours: float | None  # engine hours at which the task falls due (None: calendar only)
    on: date  # the central estimate
    earliest: date  # band: if the unit runs at rate_high
    latest: date  # band: if the unit runs at rate_low (never after a calendar limit)


@dataclass(frozen=True, slots=True)
class Projection:
    """One projected task for one component of one unit."""

    task: TaskKind
    due: DueDate
    status: DueStatus
    basis: Basis
    explanation: list[str] = field(default_factory=list)  # sentences, most important first
    inputs: dict[str, object] = field(default_factory=dict)  # JSON-safe numbers and labels


# --------------------------------------------------------------------------- validation


def amount_check(*, name: str, value: float | None, negative: bool = False) -> None:
    """Refuse NaN, infinity and (unless ``negative``) a negative amount, naming the field.

    ``None`` (not recorded) passes: the caller decides what a missing amount means.
    """
    if value is None:
        return
    if isinstance(value, bool) or not isinstance(value, int | float):
        raise ValueError(f"{name} must be a number, got {value!r}")
    if not math.isfinite(value):
        raise ValueError(f"{name} must be a finite number, got {value!r}")
    if not negative and value < 0:
        raise ValueError(f"{name} cannot be negative, got {value!r}")


def moment_check(*, name: str, at: datetime | None, now: datetime) -> None:
    """Refuse a moment after ``now``, naming the field (``None`` passes)."""
    if at is not None and at > now:
        raise ValueError(f"{name} is after now ({at.isoformat()} > {now.isoformat()})")
