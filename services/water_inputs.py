"""What a separator drain projection takes: the plan, the drains done, the fuel put in.

Each refuses NaN, infinity and negative amounts with a ValueError naming the field
(services/water.py refuses moments after ``now``, which these do not know).
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime

from services.common import amount_check


@dataclass(frozen=True, slots=True)
class DrainPlan:
    """How a unit's separator is drained."""

    bowl_capacity_ml: float
    drain_level_fraction: float  # e.g. 0.8: ISO 16332:2018 drains the collector at 80 % full
    drain_interval_days: int
    drain_interval_hours: float | None
    separator_efficiency: float  # 0..1, fraction of free water removed
    soon_days: int
    due_days: int

    def __post_init__(self) -> None:
        amount_check(name="bowl_capacity_ml", value=self.bowl_capacity_ml)
        amount_check(name="drain_interval_hours", value=self.drain_interval_hours)
        for name in ("drain_level_fraction", "separator_efficiency"):
            amount_check(name=name, value=getattr(self, name))
            if getattr(self, name) > 1:
                raise ValueError(
                    f"{name} must be a fraction from 0 to 1, got {getattr(self, name)}"
                )
        for name in ("drain_interval_days", "soon_days", "due_days"):
            amount_check(name=name, value=getattr(self, name))


@dataclass(frozen=True, slots=True)
class DrainRecord:
    """A drain done: when, at what engine hours, and how much water came out (None: the
    amount was not recorded; the bowl was still emptied)."""

    at: datetime
    hours: float
    water_ml: float | None

    def __post_init__(self) -> None:
        amount_check(name="drain hours", value=self.hours)
        amount_check(name="drain water_ml", value=self.water_ml)


@dataclass(frozen=True, slots=True)
class WaterIntake:
    """Fuel burned since the last drain, with its free water."""

    at: datetime
    litres: float
    free_water_mg_kg: float
    density_kg_l: float
    label: str

    def __post_init__(self) -> None:
        amount_check(name="fueling litres", value=self.litres)
        amount_check(name="free_water_mg_kg", value=self.free_water_mg_kg)
        amount_check(name="density_kg_l", value=self.density_kg_l)
