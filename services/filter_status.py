"""Which limits of a filter are hard, and what an item whose dirt estimate alone has run out
says ("check": services.common.DueStatus.CHECK).

Only a hard limit makes a filter overdue: the plan's hours, days or fuel volume, or a measured
dP at or over the plan's limit. The dirt estimate (services.intervals) asks for a dP or
restriction-indicator reading first (common practice: a fuel filter is changed on its
measured differential pressure, not on an estimate); a reading below the limit taken once the
estimate had run out re-bases it (measured beats estimated).
"""

from __future__ import annotations

from collections.abc import Sequence
from datetime import date, datetime

from services.filter_dp import DpReading
from services.filter_inputs import FilterPlan
from services.schedule import fmt_hours


def estimate_checked(
    plan: FilterPlan,
    dp_readings: Sequence[DpReading],
    loading_at_latest: float | None,
    budget: float,
) -> str | None:
    """The words when the latest dP reading, below the plan's limit, was taken once the dirt
    estimate had run out: the measurement shows life the estimate did not credit, so the
    estimate gives way to the plan's limits and the dP trend (measured beats estimated)."""
    if plan.dp_limit_bar is None or not dp_readings or loading_at_latest is None:
        return None
    latest = max(dp_readings, key=lambda r: (r.at, r.hours))
    if latest.dp_bar >= plan.dp_limit_bar or loading_at_latest < budget:
        return None
    return (
        f"A dP of {latest.dp_bar:.2f} bar at {fmt_hours(latest.hours)}, below the "
        f"{plan.dp_limit_bar:g} bar limit, was recorded after the dirt estimate had run out: "
        "the estimate no longer governs this filter; the plan's limits and its dP do."
    )


def hard_limit_passed(
    *,
    plan: FilterPlan,
    plan_hours: float,
    volume_hours: float | None,
    calendar: date,
    current_hours: float,
    now: datetime,
    dp_readings: Sequence[DpReading],
) -> bool:
    """Whether a limit that is not an estimate has been reached: the plan's hours, days or fuel
    volume, or the latest measured dP at or over the plan's limit."""
    hours = current_hours
    if hours >= plan_hours or now.date() >= calendar:
        return True
    if volume_hours is not None and hours >= volume_hours:
        return True
    if plan.dp_limit_bar is not None and dp_readings:
        latest = max(dp_readings, key=lambda r: (r.at, r.hours))
        return latest.dp_bar >= plan.dp_limit_bar
    return False


def check_sentence(percent_used: float, plan_hours: float) -> str:
    """The first sentence of an item at "check": what ran out, and what to do."""
    return (
        f"Check before changing: the estimate of the dirt the filter has taken has run out "
        f"({percent_used:.0f} % of its estimated budget), but no measured or planned limit has "
        f"been reached (the plan's hours fall at {fmt_hours(plan_hours)}). Read the "
        "filter's differential pressure or restriction indicator: at or over its limit, change "
        "it (a recorded reading there makes it overdue); below it, keep it and record the "
        "reading: the estimate then gives way to the plan's limits and the dP trend."
    )
