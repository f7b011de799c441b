"""Filter change projection: the filter's dirt-holding budget, spent by the fuel it sees.

A filter plan names an interval (hours, days, optionally litres) that the plan
expects a filter to last on fuel of a reference cleanliness at a reference burn
rate. That gives the filter a contaminant budget

    B = interval_hours x reference_burn [L/h] x reference_concentration [particles/mL]

in litre-particles-per-mL (litres of fuel times its particle concentration in the
filter's size channel). Each litre of fuel burned since the change spends
``litres x concentration`` of it. This is the mass balance of filter life: hours =
capacity / (flow x concentration x capture efficiency); the capture efficiency
cancels because the plan's reference and the fuel seen pass the same filter.
With a return-flow fuel system the fuel *burned* is what counts, since returned
fuel has already been filtered.

The projection only ever brings a change forward: dirty fuel shortens the
interval, clean fuel never stretches it past the plan's limits.

Also here: two small helpers shared with ``services.water`` (turning engine hours
into calendar dates from a usage forecast, and grading a due date into a status).
"""

from __future__ import annotations

import math
import statistics
from collections.abc import Sequence
from dataclasses import dataclass
from datetime import date, datetime, timedelta

from services.common import Basis, DueDate, Projection, TaskKind, UsageForecast
from services.schedule import (
    MIN_DP_READINGS,
    due_status,
    earliest_due,
    fmt_hours,
    json_number,
    plural,
    sentence,
)


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


@dataclass(frozen=True, slots=True)
class Loading:
    """Fuel burned through the filter, with its particle concentration."""

    at: datetime
    litres: float
    concentration_per_ml: float
    reference_assumed: bool
    label: str  # e.g. "42 L from Bulk tank B on 2026-03-04, sample S-0142: 21/19/16"


@dataclass(frozen=True, slots=True)
class DpReading:
    """A differential-pressure reading across the filter."""

    at: datetime
    hours: float  # engine hours
    dp_bar: float


@dataclass(frozen=True, slots=True)
class DpFit:
    """dp = a * exp(b * (h - h0)), fitted by least squares on log(dp)."""

    a: float
    b: float
    h0: float
    readings: int
    crossing_hours: float | None  # engine hours at the limit; None if the fit does not rise


# --------------------------------------------------------------------------- dP curve


def dp_fit(*, readings: Sequence[DpReading], limit_bar: float, h0: float) -> DpFit | None:
    """Fit a rising exponential to dP readings and find where it meets the limit.

    Why exponential: clogging curves are flat, then rise steeply, so a straight line
    extrapolates optimistically (late). ln(dp) = ln(a) + b*(h - h0) is a straight line
    in log space: two parameters, fits from three points, rises without ever turning
    back down (a quadratic can bend over and never reach the limit), and its
    steepening is the conservative direction. Readings <= 0 bar carry no log and are
    left out. Returns None with fewer than three usable readings.
    """
    usable = sorted((r for r in readings if r.dp_bar > 0), key=lambda r: r.hours)
    if len(usable) < MIN_DP_READINGS:
        return None
    xs = [r.hours - h0 for r in usable]
    ys = [math.log(r.dp_bar) for r in usable]
    try:
        slope, intercept = statistics.linear_regression(xs, ys)
    except statistics.StatisticsError:  # all readings at the same hours
        return None
    a = math.exp(intercept)
    if slope <= 0:
        return DpFit(a=a, b=slope, h0=h0, readings=len(usable), crossing_hours=None)
    reached = [r for r in usable if r.dp_bar >= limit_bar]
    if reached:
        crossing = reached[0].hours  # observed, not projected
    else:
        # The limit has not been seen yet, so it lies beyond the last reading even
        # where the fitted curve would put it earlier.
        crossing = max(h0 + (math.log(limit_bar) - intercept) / slope, usable[-1].hours)
    return DpFit(a=a, b=slope, h0=h0, readings=len(usable), crossing_hours=crossing)


# --------------------------------------------------------------------------- projection


def filter_projection(
    *,
    task: TaskKind,
    plan: FilterPlan,
    last_change_at: datetime,
    last_change_hours: float,
    loadings: Sequence[Loading],
    current_concentration_per_ml: float,
    current_reference_assumed: bool,
    burn_l_per_h: float | None,
    dp_readings: Sequence[DpReading],
    forecast: UsageForecast,
    now: datetime,
    priority_raised: bool = False,
) -> Projection:
    """Project the next change of one filter: the earliest of its limits.

    Raises ValueError for a plan whose interval or reference fuel is not positive.
    """
    if (
        min(plan.interval_hours, plan.reference_burn_l_per_h, plan.reference_concentration_per_ml)
        <= 0
    ):
        raise ValueError(
            "a filter plan needs a positive interval, reference burn and concentration"
        )
    current_hours = forecast.current_hours
    used_hours = max(0.0, current_hours - last_change_hours)
    since = [ld for ld in loadings if ld.at >= last_change_at]
    assumed_notes: list[str] = []

    # Burn rate.
    if burn_l_per_h is not None and burn_l_per_h > 0:
        burn, burn_source = burn_l_per_h, "measured"
        burn_sentence = f"Burn rate {burn:.1f} L/h, from the unit's fuel records."
    else:
        burn, burn_source = plan.reference_burn_l_per_h, "plan_reference"
        burn_sentence = (
            f"Burn rate {burn:.1f} L/h: the plan's reference, as no measured burn rate was given."
        )

    # Contaminant budget.
    ref_conc = plan.reference_concentration_per_ml
    budget = plan.interval_hours * plan.reference_burn_l_per_h * ref_conc
    if since:
        loading = sum(ld.litres * ld.concentration_per_ml for ld in since)
        litres_since = sum(ld.litres for ld in since)
        assumed = [ld for ld in since if ld.reference_assumed]
        if assumed:
            assumed_notes.append(
                f"The plan's reference cleanliness was assumed for {len(assumed)} of "
                f"{plural(len(since), 'fuel input')} that had no sample."
            )
    else:
        litres_since = used_hours * burn
        loading = litres_since * ref_conc
        assumed_notes.append(
            "No fuel inputs are recorded since the change: the plan's reference cleanliness "
            f"was assumed for the {fmt_hours(used_hours)} run so far."
        )
    if current_reference_assumed:
        assumed_notes.append(
            "The plan's reference cleanliness was assumed for the fuel now in use (no sample)."
        )
    remaining = max(0.0, budget - loading)
    if current_concentration_per_ml > 0:
        budget_hours = current_hours + remaining / (burn * current_concentration_per_ml)
    else:
        budget_hours = math.inf
    percent_used = 100.0 * loading / budget if budget > 0 else 100.0

    # Hour limits, as engine hours.
    plan_hours = last_change_hours + plan.interval_hours
    hour_limits: list[tuple[Basis, float]] = [
        (Basis.PLAN_HOURS, plan_hours),  # first: the plan wins a tie
    ]
    volume_hours: float | None = None
    if plan.interval_litres is not None:
        volume_hours = current_hours + max(0.0, plan.interval_litres - litres_since) / burn
        hour_limits.append((Basis.FUEL_VOLUME, volume_hours))
    hour_limits.append((Basis.CONTAMINANT_BUDGET, budget_hours))

    fit: DpFit | None = None
    dp_sentence: str | None = None
    dp_since = [r for r in dp_readings if r.at >= last_change_at]
    if plan.dp_limit_bar is not None and len(dp_since) >= MIN_DP_READINGS:
        fit = dp_fit(readings=dp_since, limit_bar=plan.dp_limit_bar, h0=last_change_hours)
        if fit is None:
            dp_sentence = "The dP readings since the change could not be fitted; no dP projection."
        elif fit.crossing_hours is None:
            dp_sentence = (
                f"The {fit.readings} dP readings since the change do not rise, so the fit "
                "was ignored and no dP projection was made."
            )
        else:
            hour_limits.append((Basis.DIFFERENTIAL_PRESSURE, fit.crossing_hours))
            per_100h = (math.exp(fit.b * 100) - 1) * 100
            dp_sentence = (
                f"Filter dP fitted on {plural(fit.readings, 'reading')} rises about "
                f"{per_100h:.0f} % per 100 h and reaches the {plan.dp_limit_bar:g} bar limit at "
                f"{fmt_hours(fit.crossing_hours)}."
            )

    calendar = (last_change_at + timedelta(days=plan.interval_days)).date()
    basis, due = earliest_due(hour_limits=hour_limits, calendar=calendar, forecast=forecast)

    status = due_status(
        due=due,
        current_hours=current_hours,
        now=now,
        soon_days=plan.soon_days,
        due_days=plan.due_days,
        raise_one_step=priority_raised,
    )

    # Explanation, most important first.
    explanation = [
        _governs_sentence(basis, due, plan, plan_hours, calendar, percent_used),
        _band_sentence(due),
        f"{percent_used:.0f} % of the filter's contaminant budget is used since the change "
        f"at {fmt_hours(last_change_hours)} on {last_change_at.date().isoformat()}.",
    ]
    # The dirtiest fuel, grouped by where it came from (a label names the source and sample).
    groups: dict[tuple[str, float], list[Loading]] = {}
    for ld in since:
        if ld.concentration_per_ml > ref_conc:
            groups.setdefault((ld.label, ld.concentration_per_ml), []).append(ld)
    dirty = sorted(groups.items(), key=lambda kv: kv[0][1], reverse=True)[:3]
    if dirty:
        parts = []
        for (label, conc), loads in dirty:
            litres = sum(ld.litres for ld in loads)
            first, last = min(ld.at for ld in loads).date(), max(ld.at for ld in loads).date()
            when = f"on {first.isoformat()}" if first == last else f"{first} to {last}"
            parts.append(
                f"{litres:,.0f} L in {len(loads)} fueling{'s' if len(loads) > 1 else ''} {when}, "
                f"{label} ({conc / ref_conc:.1f}x the reference)"
            )
        explanation.append("Dirtiest fuel since the change: " + "; ".join(parts) + ".")
    elif since:
        explanation.append("All fuel since the change was at or cleaner than the plan's reference.")
    if current_concentration_per_ml > 0:
        explanation.append(
            f"The fuel now in use is {current_concentration_per_ml / ref_conc:.1f}x the "
            "reference concentration."
        )
    explanation.append(burn_sentence)
    explanation.append(sentence(f"Usage: {forecast.note}"))
    if dp_sentence:
        explanation.append(dp_sentence)
    explanation.extend(assumed_notes)
    if priority_raised:
        explanation.append(
            "Raised one step in urgency by a recent engine event (high filter dP or low "
            "supply pressure)."
        )

    limits: dict[str, object] = {
        "plan_hours": plan_hours,
        "plan_days": calendar.isoformat(),
        "contaminant_budget": json_number(budget_hours),
        "fuel_volume": volume_hours,
        "differential_pressure": fit.crossing_hours if fit else None,
    }
    inputs: dict[str, object] = {
        "budget": budget,
        "loading": loading,
        "remaining_budget": remaining,
        "percent_used": percent_used,
        "burn_l_per_h": burn,
        "burn_source": burn_source,
        "current_concentration_per_ml": current_concentration_per_ml,
        "reference_concentration_per_ml": ref_conc,
        "litres_since_change": litres_since,
        "hours_since_change": used_hours,
        "limits": limits,
        "sample_labels": [ld.label for ld in since],
        "reference_assumed": bool(assumed_notes),
        "dp_fit": (
            {"a_bar": fit.a, "b_per_h": fit.b, "h0": fit.h0, "readings": fit.readings}
            if fit
            else None
        ),
        "priority_raised": priority_raised,
    }
    return Projection(
        task=task,
        due=due,
        status=status,
        basis=basis,
        explanation=explanation,
        inputs=inputs,
    )


def _governs_sentence(
    basis: Basis,
    due: DueDate,
    plan: FilterPlan,
    plan_hours: float,
    calendar: date,
    percent_used: float,
) -> str:
    at = fmt_hours(due.hours) if due.hours is not None else ""
    interval = f"the plan's {fmt_hours(plan.interval_hours)} interval ({fmt_hours(plan_hours)})"
    if basis is Basis.CONTAMINANT_BUDGET and percent_used >= 100:
        return (
            f"Due at {at} by contaminant loading: the filter has already taken the dirt it is "
            f"rated for ({percent_used:.0f} % of its budget), before {interval}."
        )
    if basis is Basis.CONTAMINANT_BUDGET:
        return f"Due at {at} by contaminant loading, before {interval}."
    if basis is Basis.FUEL_VOLUME:
        return f"Due at {at} when {plan.interval_litres:,.0f} L have passed, before {interval}."
    if basis is Basis.DIFFERENTIAL_PRESSURE:
        return f"Due at {at} when the projected filter dP reaches its limit, before {interval}."
    if basis is Basis.PLAN_HOURS:
        return f"Due at {at} by {interval}; the fuel's dirt load does not bring it forward."
    return (
        f"Due on {calendar.isoformat()} by the plan's {plan.interval_days}-day calendar "
        "interval, before any hour limit is reached."
    )


def _band_sentence(due: DueDate) -> str:
    if due.earliest == due.latest:
        return f"Expected on {due.on.isoformat()}."
    return (
        f"Expected around {due.on.isoformat()} (between {due.earliest.isoformat()} and "
        f"{due.latest.isoformat()} as usage varies)."
    )
