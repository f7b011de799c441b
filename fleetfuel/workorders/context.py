"""What the task forms, the page and the close need to know about a work order's unit (loaded
once per request: selectors.task_context), and the adapters from a MeasurementLimit row to the
pure rules and texts of services/."""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

from fleetfuel.fleet.models import FILTER_KINDS, Component, MeasurementLimit
from services import rules, units

if TYPE_CHECKING:
    from .models import WorkOrderTask


@dataclass
class TaskContext:
    system: str  # the site's unit system: "metric" or "us"
    cylinders: int
    limits: dict[int, MeasurementLimit]
    components: list[Component]  # fitted now

    def component(self, kind: str, position: int | None = None) -> Component | None:
        """The fitted part of ``kind`` (at cylinder ``position`` when given)."""
        for c in self.components:
            if c.kind == kind and (position is None or c.position == position):
                return c
        return None

    def filters(self) -> list[Component]:
        return [c for c in self.components if c.kind in FILTER_KINDS]

    def limit_for(self, task: WorkOrderTask) -> MeasurementLimit | None:
        """The measurement a task records: the one chosen, else the one its description names
        (a planned measurement task names its limit in the description)."""
        limit_id = task.entry.get("limit_id")
        if isinstance(limit_id, int) and limit_id in self.limits:
            return self.limits[limit_id]
        wanted = task.description.strip().lower()
        return next((lim for lim in self.limits.values() if lim.name.lower() == wanted), None)


def limit_text(limit: MeasurementLimit, system: str) -> str:
    """'pass 4.0 – 7.0 bar(g)' and the like, in the site's units."""
    return units.limits_text(low=limit.low, high=limit.high, quantity=limit.quantity, system=system)


def limit_passed(value: float | None, limit: MeasurementLimit | None) -> bool | None:
    if limit is None:
        return None
    return rules.measurement_passed(value=value, low=limit.low, high=limit.high)


def limit_label(limit: MeasurementLimit) -> str:
    """'Supply pressure under load (bar gauge)': the limit's name with its stored unit."""
    return f"{limit.name} ({units.UNIT_WORDS.get(limit.quantity, limit.quantity)})"
