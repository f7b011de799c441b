"""Water separator drain projection.

Free water in the fuel (water above the fuel's saturation) is what a separator
can remove; it settles in the collector bowl. The drain falls due when the
projected water reaches the drain level (ISO 16332:2018 drains the collector in
its test at 80 % full), or at the plan's interval, whichever comes first.

The water rate in the bowl (mL per engine hour) is a blend of two things:

* the sample estimate: burn [L/h] x density [kg/L] x free water [mg/kg] gives mg
  of water per hour; water is 1 g/mL, so mL/h = mg/h / 1000; times the
  separator's efficiency (the fraction of free water it removes);
* the rates observed at past drains: water drained / engine hours since the
  drain before. A drain recorded with no amount empties the bowl (the next interval
  starts there) but gives no rate: an amount nobody wrote down is not 0 mL.

The water in the bowl since the last drain comes from all the fuel burned since then
(engine hours since the drain x the burn rate), carrying the volume-weighted free water of
the fuel put in since the drain (or the current fuel's, with none put in), blended with the
rates past drains measured by the same rule: fuel delivered but not yet burned has not
passed the separator, and measured drains outweigh a sample.

Observed rates are weighted by recency (the most recent weighs 1, each older one
``RECENCY_DECAY`` times the next newer). The sample estimate weighs 1/(1 + n)
and the observations together n/(1 + n), where n is the number of observed
rates: with no drains on record the estimate stands alone; after one drain it
counts half; after four, a fifth. Real drains outweigh a sample taken once, and
the estimate still steadies the blend when drains are few.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from datetime import date, datetime, timedelta

from services.common import (
    Basis,
    DueDate,
    DueStatus,
    Projection,
    TaskKind,
    UsageForecast,
    amount_check,
    moment_check,
)
from services.schedule import (
    due_status,
    earliest_due,
    fmt_hours,
    more_urgent,
    plural,
    sentence,
)
from services.water_inputs import DrainPlan as DrainPlan
from services.water_inputs import DrainRecord as DrainRecord
from services.water_inputs import WaterIntake as WaterIntake

RECENCY_DECAY = 0.7  # weight of an observed rate relative to the next newer one


def water_ml_from_fuel(*, litres: float, free_water_mg_kg: float, density_kg_l: float) -> float:
    """Free water carried by a volume of fuel, in mL.

    litres x density [kg/L] = kg of fuel; x mg/kg = mg of water; water is 1 g/mL,
    so mL = mg / 1000.
    """
    return litres * density_kg_l * free_water_mg_kg / 1000.0


def observed_rates(*, records: Sequence[DrainRecord]) -> list[float]:
    """mL per engine hour between consecutive drains, oldest first.

    A drain's water accumulated since the drain before it; pairs with no hours
    between them (or a meter going backwards) are skipped, and so is a drain with no
    amount recorded (it still starts the next interval).
    """
    ordered = sorted(set(records), key=lambda r: (r.hours, r.at))
    rates: list[float] = []
    for before, after in zip(ordered, ordered[1:], strict=False):
        run = after.hours - before.hours
        if run > 0 and after.water_ml is not None:
            rates.append(max(0.0, after.water_ml) / run)
    return rates


def blended_rate(*, estimate_ml_h: float, observed: Sequence[float]) -> tuple[float, float]:
    """Blend the sample estimate with observed rates; returns (rate, estimate weight)."""
    n = len(observed)
    if n == 0:
        return estimate_ml_h, 1.0
    weights = [RECENCY_DECAY ** (n - 1 - i) for i in range(n)]  # newest last, weight 1
    observed_mean = sum(w * r for w, r in zip(weights, observed, strict=True)) / sum(weights)
    w_est = 1.0 / (1 + n)
    return w_est * estimate_ml_h + (1 - w_est) * observed_mean, w_est


@dataclass(frozen=True, slots=True)
class _Rate:
    """The water rate into the bowl (mL per engine hour) and what it was made of."""

    estimate: float  # from the fuel sample alone
    observed: list[float]  # from past drains, oldest first
    rate: float  # the blend
    estimate_weight: float


def drain_projection(
    *,
    plan: DrainPlan,
    last_drain: DrainRecord | None,
    history: Sequence[DrainRecord],
    intakes: Sequence[WaterIntake],
    burn_l_per_h: float,
    current_free_water_mg_kg: float,
    density_kg_l: float,
    forecast: UsageForecast,
    water_in_fuel_since_drain: bool,
    now: datetime,
) -> Projection:
    """Project the next separator drain: the earliest of water level and interval.

    Drains and fuel inputs after ``now``, and NaN, infinite or negative amounts, are refused.
    """
    for record in [*history, *([last_drain] if last_drain else [])]:
        moment_check(name="drain performed_at", at=record.at, now=now)
    for i in intakes:
        moment_check(name="fueling fueled_at", at=i.at, now=now)
    amount_check(name="burn_l_per_h", value=burn_l_per_h)
    amount_check(name="current_free_water_mg_kg", value=current_free_water_mg_kg)
    amount_check(name="density_kg_l", value=density_kg_l)
    efficiency = min(1.0, max(0.0, plan.separator_efficiency))
    drain_level = plan.drain_level_fraction * plan.bowl_capacity_ml
    rate = _water_rate(
        sample=(current_free_water_mg_kg, burn_l_per_h, efficiency, density_kg_l),
        records=[*history, *([last_drain] if last_drain else [])],
    )
    blended = rate.rate
    if last_drain is None:
        return _first_drain(
            rate=rate, drain_level=drain_level, water_event=water_in_fuel_since_drain, now=now
        )
    since = [i for i in intakes if i.at >= last_drain.at]
    water_so_far, collected = _collected(
        since=since,
        efficiency=efficiency,
        fuel=(burn_l_per_h, current_free_water_mg_kg, density_kg_l),
        records=[*history, last_drain],
        last_drain=last_drain,
        current_hours=forecast.current_hours,
    )
    hour_limits, plan_hours, level_hours = _hour_limits(
        plan=plan,
        last_drain_hours=last_drain.hours,
        current_hours=forecast.current_hours,
        to_go_ml=drain_level - water_so_far,
        rate=blended,
    )
    calendar = (last_drain.at + timedelta(days=plan.drain_interval_days)).date()
    basis, due = earliest_due(hour_limits=hour_limits, calendar=calendar, forecast=forecast)
    status = due_status(
        due=due,
        current_hours=forecast.current_hours,
        now=now,
        soon_days=plan.soon_days,
        due_days=plan.due_days,
    )
    explanation = _explanation(
        basis=basis,
        due=due,
        plan=plan,
        drain_level=drain_level,
        water_event=water_in_fuel_since_drain,
        collected=collected,
        rate=rate,
        sample=(current_free_water_mg_kg, burn_l_per_h, efficiency),
        since=since,
        forecast=forecast,
    )
    inputs: dict[str, object] = {
        "sample_rate_ml_h": rate.estimate,
        "observed_rates_ml_h": rate.observed,
        "estimate_weight": rate.estimate_weight,
        "blended_rate_ml_h": blended,
        "water_so_far_ml": water_so_far,
        "drain_level_ml": drain_level,
        "limits": {
            "water_level": level_hours,
            "plan_hours": plan_hours,
            "plan_days": calendar.isoformat(),
        },
        "intake_labels": [i.label for i in since],
        "water_event": water_in_fuel_since_drain,
    }
    projection = Projection(TaskKind.SEPARATOR_DRAIN, due, status, basis, explanation, inputs)
    return _after_alarm(projection, today=now.date()) if water_in_fuel_since_drain else projection


def _after_alarm(projection: Projection, *, today: date) -> Projection:
    """A water-in-fuel alarm makes the drain due today, whatever the projection said (which
    stays in the inputs, as ``projected``)."""
    due = projection.due
    inputs = {
        **projection.inputs,
        "projected": {"basis": str(projection.basis), "on": due.on.isoformat(), "hours": due.hours},
    }
    return Projection(
        projection.task,
        DueDate(hours=None, on=min(today, due.on), earliest=min(today, due.on), latest=today),
        more_urgent(DueStatus.DUE, projection.status),
        Basis.WATER_EVENT,
        projection.explanation,
        inputs,
    )


def _water_rate(
    *, sample: tuple[float, float, float, float], records: Sequence[DrainRecord]
) -> _Rate:
    """The sample's estimate (free water mg/kg, burn L/h, efficiency, density kg/L) blended
    with the rates seen at past drains."""
    free_water, burn, efficiency, density = sample
    estimate_ml_h = efficiency * water_ml_from_fuel(
        litres=max(0.0, burn), free_water_mg_kg=max(0.0, free_water), density_kg_l=density
    )
    observed = observed_rates(records=records)
    blended, w_est = blended_rate(estimate_ml_h=estimate_ml_h, observed=observed)
    return _Rate(estimate=estimate_ml_h, observed=observed, rate=blended, estimate_weight=w_est)


def _hour_limits(
    *, plan: DrainPlan, last_drain_hours: float, current_hours: float, to_go_ml: float, rate: float
) -> tuple[list[tuple[Basis, float]], float | None, float | None]:
    """(hour limits, the plan's hour limit, the hours at which the bowl reaches its drain
    level): the plan's first, as it wins a tie; a bowl already at its level is due now."""
    limits: list[tuple[Basis, float]] = []
    plan_hours = None
    if plan.drain_interval_hours is not None:
        plan_hours = last_drain_hours + plan.drain_interval_hours
        limits.append((Basis.PLAN_HOURS, plan_hours))
    level_hours: float | None = None
    if to_go_ml <= 0:
        level_hours = current_hours
    elif rate > 0:
        level_hours = current_hours + to_go_ml / rate
    if level_hours is not None:
        limits.append((Basis.WATER_LEVEL, level_hours))
    return limits, plan_hours, level_hours


def _first_drain(
    *, rate: _Rate, drain_level: float, water_event: bool, now: datetime
) -> Projection:
    """No drain on record: due now, so the water found can start the projection."""
    today = now.date()
    explanation = [
        "Due now: no drain of this separator is on record. Drain it and record the "
        "water found, so the next drain can be projected."
    ]
    if water_event:
        explanation.append("A water-in-fuel alarm has also been raised.")
    inputs: dict[str, object] = {
        "sample_rate_ml_h": rate.estimate,
        "observed_rates_ml_h": rate.observed,
        "blended_rate_ml_h": rate.rate,
        "drain_level_ml": drain_level,
        "water_event": water_event,
    }
    return Projection(
        TaskKind.SEPARATOR_DRAIN,
        DueDate(hours=None, on=today, earliest=today, latest=today),
        DueStatus.DUE,
        Basis.WATER_EVENT if water_event else Basis.PLAN_DAYS,
        explanation,
        inputs,
    )


def _collected(
    *,
    since: Sequence[WaterIntake],
    efficiency: float,
    fuel: tuple[float, float, float],  # burn L/h, current free water mg/kg, density kg/L
    records: Sequence[DrainRecord],
    last_drain: DrainRecord,
    current_hours: float,
) -> tuple[float, str]:
    """(mL of water in the bowl since the last drain, the sentence that says how much).

    All the fuel burned since the drain (hours since x burn) carries the volume-weighted
    free water of the fuel put in since (the current fuel's when none was put in); that
    estimate is blended with the rates past drains measured, as the rate ahead is.
    """
    burn, current_free_water, density = fuel
    hours_since = max(0.0, current_hours - last_drain.hours)
    litres_in = sum(i.litres for i in since)
    if litres_in > 0:
        free_water = sum(i.litres * i.free_water_mg_kg for i in since) / litres_in
        kg_per_l = sum(i.litres * i.density_kg_l for i in since) / litres_in
        of = f"free water {free_water:,.0f} mg/kg from {plural(len(since), 'fuel input')}"
    else:
        free_water, kg_per_l = current_free_water, density
        of = f"free water {free_water:,.0f} mg/kg of the current fuel (no fuel inputs)"
    rate = _water_rate(sample=(free_water, burn, efficiency, kg_per_l), records=records)
    water = rate.rate * hours_since
    how = (
        f"{hours_since * burn:,.0f} L burned over {fmt_hours(hours_since)} at {burn:.1f} L/h, {of}"
    )
    if rate.observed:
        how += f"; {rate.rate:.2f} mL/h with the rates past drains measured"
    return water, (
        f"About {water:,.0f} mL collected since the drain at {fmt_hours(last_drain.hours)} "
        f"on {last_drain.at.date().isoformat()} ({how})."
    )


def _explanation(
    *,
    basis: Basis,
    due: DueDate,
    plan: DrainPlan,
    drain_level: float,
    water_event: bool,
    collected: str,
    rate: _Rate,
    sample: tuple[float, float, float],  # free water mg/kg, burn L/h, efficiency
    since: Sequence[WaterIntake],
    forecast: UsageForecast,
) -> list[str]:
    out: list[str] = []
    governs = _governs_sentence(basis, due, plan, drain_level)
    if water_event:
        out.append(
            "Due now: a water-in-fuel alarm was raised since the last drain. Drain the "
            "separator, record the water found and check the fuel source."
        )
        governs = "Without the alarm: " + governs[0].lower() + governs[1:]
    out.append(governs)
    if due.earliest != due.latest:
        out.append(
            f"Expected around {due.on.isoformat()} (between {due.earliest.isoformat()} and "
            f"{due.latest.isoformat()} as usage varies)."
        )
    out.append(collected)
    if rate.observed:
        out.append(
            f"Water rate {rate.rate:.2f} mL/h: the rates seen over "
            f"{plural(len(rate.observed), 'drain interval')} count for "
            f"{(1 - rate.estimate_weight) * 100:.0f} %, the sample estimate of "
            f"{rate.estimate:.2f} mL/h for {rate.estimate_weight * 100:.0f} %."
        )
    else:
        free_water, burn, efficiency = sample
        out.append(
            f"Water rate {rate.rate:.2f} mL/h from the fuel sample alone "
            f"({free_water:g} mg/kg free water at {burn:.1f} L/h, "
            f"{efficiency * 100:.0f} % separated); no drains with water amounts yet."
        )
    wettest = sorted(since, key=lambda i: i.free_water_mg_kg, reverse=True)
    if wettest and wettest[0].free_water_mg_kg > 0:
        # Two fuelings from one delivery carry the same sample: name each fuel once.
        parts = dict.fromkeys(
            f"{i.label} ({i.free_water_mg_kg:.0f} mg/kg free water)" for i in wettest
        )
        out.append("Wettest fuel since the drain: " + "; ".join(list(parts)[:3]) + ".")
    out.append(sentence(f"Usage: {forecast.note}"))
    return out


def _governs_sentence(basis: Basis, due: DueDate, plan: DrainPlan, drain_level: float) -> str:
    at = fmt_hours(due.hours) if due.hours is not None else ""
    if basis is Basis.WATER_LEVEL:
        return (
            f"Drain at {at}, when the bowl reaches {plan.drain_level_fraction * 100:.0f} % of "
            f"its {plan.bowl_capacity_ml:,.0f} mL ({drain_level:,.0f} mL)."
        )
    if basis is Basis.PLAN_HOURS:
        return f"Drain at {at} by the plan's {fmt_hours(plan.drain_interval_hours or 0)} interval."
    return (
        f"Drain by {due.on.isoformat()}, the end of the plan's {plan.drain_interval_days}-day "
        "interval; the bowl is not projected to reach its drain level before then."
    )
