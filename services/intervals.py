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

The filter's dP curve is fitted in ``services.filter_dp``; engine hours become dates, and
dates a status, in ``services.schedule`` (shared with ``services.water``).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from datetime import date, datetime, time, timedelta, tzinfo

from services.common import Basis, DueDate, DueStatus, Projection, TaskKind, UsageForecast
from services.filter_dp import DpFit, DpReading, dp_fit_inputs, dp_limit
from services.filter_inputs import FilterPlan, Loading, door_check
from services.filter_life import LifeBudget, life_inputs
from services.filter_status import check_sentence, estimate_checked, hard_limit_passed
from services.schedule import (
    due_status,
    earliest_due,
    estimate_only,
    fmt_hours,
    json_number,
    plural,
    sentence,
)

# --------------------------------------------------------------------------- projection


def last_change(
    *,
    changed_at: datetime | None,
    changed_meter: float | None,
    fitted_on: date,
    fitted_meter: float,
    tz: tzinfo | None,
) -> tuple[datetime, float]:
    """(moment, hour meter) a filter's life is counted from: its last recorded change.

    With no change on record, the day the filter was fitted (at the start of that day, in
    ``tz``) and the meter when fitted; a change recorded without a meter reading keeps the
    fitted meter value (common practice: the conservative choice, as it counts more hours).
    """
    if changed_at is None:
        return datetime.combine(fitted_on, time.min, tzinfo=tz), fitted_meter
    return changed_at, fitted_meter if changed_meter is None else changed_meter


# Litres burned that show as at least "1 L" (rounded): less of a fueling is not named.
SHOWN_LITRES = 0.5

RAISED_SENTENCE = (
    "Raised one step in urgency by a recent engine event (high filter dP or low supply pressure)."
)


@dataclass(frozen=True, slots=True)
class _Spend:
    """How much of the contaminant budget the fuel since the change has spent."""

    budget: float
    loading: float
    litres_since: float
    remaining: float
    budget_hours: float  # engine hours at which the rest is spent by the fuel now in use
    percent_used: float
    notes: list[str]  # what was assumed


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
    life: LifeBudget | None = None,
    loading_at_latest_dp: float | None = None,
) -> Projection:
    """Project the next change of one filter: the earliest of its limits.

    ``life`` is the element's life the budget is stated in (services.filter_life: fitted
    from the changes on record, or the plan's estimate); without it, the plan's hours.

    Raises ValueError, naming the field, for a number that is not finite or out of range
    (a plan's interval or reference fuel not positive) and for anything dated after ``now``.
    """
    door_check(
        numbers=(current_concentration_per_ml, burn_l_per_h, last_change_hours),
        dated=(last_change_at, loadings, dp_readings),
        now=now,
    )
    since = [ld for ld in loadings if ld.at >= last_change_at]
    used_hours = max(0.0, forecast.current_hours - last_change_hours)
    burn, burn_source, burn_sentence = _burn(burn_l_per_h=burn_l_per_h, plan=plan)
    spend = _spend(
        plan=plan,
        since=since,
        used_hours=used_hours,
        burn=burn,
        current=current_concentration_per_ml,
        current_assumed=current_reference_assumed,
        current_hours=forecast.current_hours,
        life_hours=life.hours if life is not None else plan.interval_hours,
    )
    limits = _limits(
        plan=plan,
        spend=spend,
        burn=burn,
        current_hours=forecast.current_hours,
        dp_readings=dp_readings,
        last_change=(last_change_at, last_change_hours),
        checked=estimate_checked(plan, dp_readings, loading_at_latest_dp, spend.budget),
    )
    calendar = (last_change_at + timedelta(days=plan.interval_days)).date()
    basis, due = earliest_due(hour_limits=limits.hours, calendar=calendar, forecast=forecast)
    status = _status(
        plan=plan, due=due, limits=limits, calendar=calendar, forecast=forecast, now=now,
        dp_readings=dp_readings, priority_raised=priority_raised,
    )  # fmt: skip
    explanation = [
        *(
            [check_sentence(spend.percent_used, limits.plan_hours)]
            if status is DueStatus.CHECK
            else []
        ),
        _governs_sentence(basis, due, plan, limits.plan_hours, calendar, spend.percent_used),
        _band_sentence(due),
        f"{spend.percent_used:.0f} % of the filter's contaminant budget is used since the "
        f"change at {fmt_hours(last_change_hours)} on {last_change_at.date().isoformat()}.",
        *([life.sentence] if life is not None else []),
        *_fuel_sentences(since=since, plan=plan, current=current_concentration_per_ml),
        burn_sentence,
        sentence(f"Usage: {forecast.note}"),
        *([limits.dp_sentence] if limits.dp_sentence else []),
        *([limits.checked] if limits.checked else []),
        *spend.notes,
        *([RAISED_SENTENCE] if priority_raised else []),
    ]
    inputs = _inputs(
        spend=spend,
        burn=(burn, burn_source),
        plan=plan,
        current=current_concentration_per_ml,
        used_hours=used_hours,
        limits=limits,
        calendar=calendar,
        since=since,
    )
    inputs["priority_raised"] = priority_raised
    inputs["life"] = life_inputs(life) if life is not None else None
    return Projection(task, due, status, basis, explanation, inputs)


def _status(
    *,
    plan: FilterPlan,
    due: DueDate,
    limits: _Limits,
    calendar: date,
    forecast: UsageForecast,
    now: datetime,
    dp_readings: Sequence[DpReading],
    priority_raised: bool,
) -> DueStatus:
    """Where the item stands; only a hard limit makes it overdue (the estimate alone: check)."""
    status = due_status(
        due=due,
        current_hours=forecast.current_hours,
        now=now,
        soon_days=plan.soon_days,
        due_days=plan.due_days,
        raise_one_step=priority_raised,
    )
    return estimate_only(
        status=status,
        hard_limit_passed=hard_limit_passed(
            plan=plan, plan_hours=limits.plan_hours, volume_hours=limits.volume_hours,
            calendar=calendar, current_hours=forecast.current_hours, now=now,
            dp_readings=dp_readings,
        ),
    )  # fmt: skip


@dataclass(frozen=True, slots=True)
class _Limits:
    """A filter's hour limits (engine hours; the plan's first, as it wins a tie)."""

    hours: list[tuple[Basis, float]]
    plan_hours: float
    volume_hours: float | None
    fit: DpFit | None
    dp_sentence: str | None
    checked: str | None = None  # why the dirt estimate no longer governs (a dP check)


def _limits(
    *,
    plan: FilterPlan,
    spend: _Spend,
    burn: float,
    current_hours: float,
    dp_readings: Sequence[DpReading],
    last_change: tuple[datetime, float],
    checked: str | None = None,
) -> _Limits:
    last_change_at, last_change_hours = last_change
    plan_hours = last_change_hours + plan.interval_hours
    hours: list[tuple[Basis, float]] = [(Basis.PLAN_HOURS, plan_hours)]
    volume_hours: float | None = None
    if plan.interval_litres is not None:
        left = max(0.0, plan.interval_litres - spend.litres_since)
        volume_hours = current_hours + left / burn
        hours.append((Basis.FUEL_VOLUME, volume_hours))
    if checked is None:  # a dP check below the limit after the estimate ran out re-bases it
        hours.append((Basis.CONTAMINANT_BUDGET, spend.budget_hours))
    fit, dp_sentence = dp_limit(
        limit_bar=plan.dp_limit_bar,
        readings=dp_readings,
        last_change_at=last_change_at,
        h0=last_change_hours,
    )
    if fit is not None and fit.crossing_hours is not None:
        hours.append((Basis.DIFFERENTIAL_PRESSURE, fit.crossing_hours))
    return _Limits(hours, plan_hours, volume_hours, fit, dp_sentence, checked)


def _burn(*, burn_l_per_h: float | None, plan: FilterPlan) -> tuple[float, str, str]:
    """(burn rate in L/h, where it came from, the sentence that says so)."""
    if burn_l_per_h is not None and burn_l_per_h > 0:
        return (
            burn_l_per_h,
            "measured",
            f"Burn rate {burn_l_per_h:.1f} L/h, from the unit's fuel records.",
        )
    burn = plan.reference_burn_l_per_h
    return (
        burn,
        "plan_reference",
        f"Burn rate {burn:.1f} L/h: the plan's reference, as no measured burn rate was given.",
    )


def _spend(
    *,
    plan: FilterPlan,
    since: Sequence[Loading],
    used_hours: float,
    burn: float,
    current: float,
    current_assumed: bool,
    current_hours: float,
    life_hours: float,
) -> _Spend:
    """The contaminant budget, what the fuel since the change spent, and when the rest goes.

    The budget is ``life_hours`` (the plan's interval, or the life fitted from the changes on
    record) at the plan's reference burn and reference fuel.
    """
    ref_conc = plan.reference_concentration_per_ml
    budget = life_hours * plan.reference_burn_l_per_h * ref_conc
    notes: list[str] = []
    if since:
        loading = sum(ld.litres * ld.concentration_per_ml for ld in since)
        litres_since = sum(ld.litres for ld in since)
        assumed = [ld for ld in since if ld.reference_assumed]
        if assumed:
            notes.append(
                f"The plan's reference cleanliness was assumed for {len(assumed)} of "
                f"{plural(len(since), 'fuel input')} that had no sample."
            )
    else:
        litres_since = used_hours * burn
        loading = litres_since * ref_conc
        notes.append(
            "No fuel inputs are recorded since the change: the plan's reference cleanliness "
            f"was assumed for the {fmt_hours(used_hours)} run so far."
        )
    if current_assumed:
        notes.append(
            "The plan's reference cleanliness was assumed for the fuel now in use (no sample)."
        )
    remaining = max(0.0, budget - loading)
    budget_hours = current_hours + remaining / (burn * current) if current > 0 else math.inf
    return _Spend(
        budget=budget,
        loading=loading,
        litres_since=litres_since,
        remaining=remaining,
        budget_hours=budget_hours,
        percent_used=100.0 * loading / budget if budget > 0 else 100.0,
        notes=notes,
    )


def _fuel_sentences(*, since: Sequence[Loading], plan: FilterPlan, current: float) -> list[str]:
    """The dirtiest fuel since the change, grouped by where it came from, and today's fuel."""
    ref_conc = plan.reference_concentration_per_ml
    out: list[str] = []
    groups: dict[tuple[str, float], list[Loading]] = {}
    for ld in since:
        if ld.concentration_per_ml > ref_conc:
            groups.setdefault((ld.label, ld.concentration_per_ml), []).append(ld)
    # Dirtiest first; fuels alike to nine figures (one delivery's, rounded differently on the
    # way) keep their order, oldest first.
    # Fuel of which under half a litre was burned since the change (it shows as "0 L") is
    # not named: a trace of an old fueling says nothing about what the filter has taken.
    named = [(k, v) for k, v in groups.items() if sum(ld.litres for ld in v) >= SHOWN_LITRES]
    dirty = sorted(named, key=lambda kv: -float(f"{kv[0][1]:.9g}"))[:3]
    if dirty:
        parts = []
        for (label, conc), loads in dirty:
            litres = sum(ld.litres for ld in loads)  # burned since the change (the labels say
            # which fueling or delivery it came from and how much of it is burned in all)
            parts.append(f"{litres:,.0f} L of {label} ({conc / ref_conc:.1f}x the reference)")
        out.append("Dirtiest fuel burned since the change: " + "; ".join(parts) + ".")
    elif since:
        out.append("All fuel since the change was at or cleaner than the plan's reference.")
    if current > 0:
        out.append(f"The fuel now in use is {current / ref_conc:.1f}x the reference concentration.")
    return out


def _inputs(
    *,
    spend: _Spend,
    burn: tuple[float, str],
    plan: FilterPlan,
    current: float,
    used_hours: float,
    limits: _Limits,
    calendar: date,
    since: Sequence[Loading],
) -> dict[str, object]:
    """The figures behind a projection (JSON-safe), for its explanation page and audit."""
    fit = limits.fit
    return {
        "budget": spend.budget,
        "loading": spend.loading,
        "remaining_budget": spend.remaining,
        "percent_used": spend.percent_used,
        "burn_l_per_h": burn[0],
        "burn_source": burn[1],
        "current_concentration_per_ml": current,
        "reference_concentration_per_ml": plan.reference_concentration_per_ml,
        "litres_since_change": spend.litres_since,
        "hours_since_change": used_hours,
        "limits": {
            "plan_hours": limits.plan_hours,
            "plan_days": calendar.isoformat(),
            "contaminant_budget": json_number(spend.budget_hours),
            "fuel_volume": limits.volume_hours,
            "differential_pressure": fit.crossing_hours if fit else None,
        },
        "sample_labels": [ld.label for ld in since if ld.litres >= SHOWN_LITRES],
        "reference_assumed": bool(spend.notes),
        "dp_fit": dp_fit_inputs(fit),
    }


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
            f"Due at {at} by the dirt estimate: by the fuel it has burned, the filter has used "
            f"{percent_used:.0f} % of its estimated budget, before {interval}. An estimate, "
            "not a measurement: a differential-pressure reading confirms or re-bases it."
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
