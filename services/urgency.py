"""What to do first: a due item's urgency tier and how far past (or ahead of) its due point it is.

The due list orders by the tier, then by how far past the due point an item is (earliest date
first, then most engine hours past), so its order is one indexed ordering in the database. The
tiers, most urgent first:

0. a water-in-fuel alarm (the drain it makes due now): free water reaching a common-rail
   injection system damages the pump and injectors (common practice);
1. a measured limit passed (a recorded differential pressure at or over the plan's limit);
2. an item that is past or near its due point on a unit with a flag that stands it down (a
   flag whose checks go to the high-pressure side: the checks start with the supply side,
   these same filters and their dP);
3. overdue (a hard limit passed) and 4. check dP first (only the dirt estimate has run out);
5. due, 6. soon, 7. ok.
"""

from __future__ import annotations

import enum
import math
from dataclasses import dataclass
from datetime import date, timedelta

from services.common import Basis, DueStatus
from services.display import NBSP, hours_text, number_text


class Tier(enum.IntEnum):
    WATER_ALARM = 0
    LIMIT_MEASURED = 1
    UNIT_STOOD_DOWN = 2
    OVERDUE = 3
    CHECK = 4
    DUE = 5
    SOON = 6
    OK = 7


_BY_STATUS = {
    DueStatus.OVERDUE: Tier.OVERDUE,
    DueStatus.CHECK: Tier.CHECK,
    DueStatus.DUE: Tier.DUE,
    DueStatus.SOON: Tier.SOON,
    DueStatus.OK: Tier.OK,
}
# Statuses at which a flag that stands the unit down brings the item forward.
_NEAR = (DueStatus.OVERDUE, DueStatus.CHECK, DueStatus.DUE)


def urgency_tier(*, status: DueStatus, basis: Basis, unit_stood_down: bool) -> Tier:
    """The tier of one due item (see the module's docstring for the order and its reasons)."""
    if basis is Basis.WATER_EVENT and status is not DueStatus.OK:
        return Tier.WATER_ALARM
    if basis is Basis.DIFFERENTIAL_PRESSURE and status is DueStatus.OVERDUE:
        return Tier.LIMIT_MEASURED
    if unit_stood_down and status in _NEAR:
        return Tier.UNIT_STOOD_DOWN
    return _BY_STATUS[status]


def estimate_overrun_hours(
    *,
    loading: float,
    budget: float,
    burn_l_per_h: float,
    concentration_per_ml: float,
    hours_since_change: float,
) -> float:
    """Engine hours since a filter's dirt estimate ran out, at today's fuel: the dirt taken
    beyond the budget over the dirt a running hour brings (burn x concentration), never more
    than the hours since the change. 0 when the budget is not used up or nothing is burned."""
    excess = loading - budget
    per_hour = burn_l_per_h * concentration_per_ml
    if excess <= 0 or per_hour <= 0 or not math.isfinite(excess):
        return 0.0
    return min(excess / per_hour, max(0.0, hours_since_change))


@dataclass(frozen=True, slots=True)
class Lateness:
    """How far past its due point an item is: ``hours`` engine hours (negative: ahead) and
    the date from which it is late (the due date, or when an estimate ran out)."""

    hours: float
    since: date


def lateness(
    *, due_on: date, hours_left: float, overrun_hours: float, rate: float, today: date
) -> Lateness:
    """An item's lateness: from its due point, or from an estimate's overrun (hours past at
    ``rate`` engine hours a day, so days = hours / rate; an idle unit: today)."""
    if overrun_hours > 0:
        days = math.floor(overrun_hours / rate) if rate > 0 else 0
        return Lateness(hours=round(overrun_hours, 1), since=today - timedelta(days=days))
    return Lateness(hours=round(-hours_left, 1), since=due_on)


def timing_words(
    *, days_late: int, hours_late: float, estimate: bool = False, style: str | None = None
) -> str:
    """'overdue by 3 d · 38 h', 'due in 5 d · 40 h' or 'due now': days and engine hours,
    whole numbers in the depot's display style, a no-break space before each unit (a part not
    past shows 0).
    ``estimate``: the overrun of an estimate, said as one."""
    if days_late > 0 or hours_late >= 0.5:
        days, hours = max(0, days_late), max(0.0, hours_late)
        lead = "est. overdue by" if estimate else "overdue by"
    else:
        days, hours, lead = -days_late, max(0.0, -hours_late), "due in"
        if days == 0 and hours < 0.5:  # "due in 0 d · 0 h" reads as a fault: it is due today
            return "due now"
    return f"{lead} {number_text(days, style)}{NBSP}d · {hours_text(hours, style)}"
