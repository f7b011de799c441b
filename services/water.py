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
  drain before.

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
from datetime import datetime, timedelta

from services.common import Basis, DueDate, DueStatus, Projection, TaskKind, UsageForecast
from services.schedule import (
    due_status,
    earliest_due,
    fmt_hours,
    more_urgent,
    plural,
    sentence,
)

RECENCY_DECAY = 0.7  # weight of an observed rate relative to the next newer one


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


@dataclass(frozen=True, slots=True)
class DrainRecord:
    """A drain done: when, at what engine hours, and how much water came out."""

    at: datetime
    hours: float
    water_ml: float


@dataclass(frozen=True, slots=True)
class WaterIntake:
    """Fuel burned since the last drain, with its free water."""

    at: datetime
    litres: float
    free_water_mg_kg: float
    density_kg_l: float
    label: str


def water_ml_from_fuel(*, litres: float, free_water_mg_kg: float, density_kg_l: float) -> float:
    """Free water carried by a volume of fuel, in mL.

    litres x density [kg/L] = kg of fuel; x mg/kg = mg of water; water is 1 g/mL,
    so mL = mg / 1000.
    """
    return litres * density_kg_l * free_water_mg_kg / 1000.0


def observed_rates(*, records: Sequence[DrainRecord]) -> list[float]:
    """mL per engine hour between consecutive drains, oldest first.

    A drain's water accumulated since the drain before it; pairs with no hours
    between them (or a meter going backwards) are skipped.
    """
    ordered = sorted(set(records), key=lambda r: (r.hours, r.at))
    rates: list[float] = []
    for before, after in zip(ordered, ordered[1:], strict=False):
        run = after.hours - before.hours
        if run > 0:
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
    """Project the next separator drain: the earliest of water level and interval."""
    task = TaskKind.SEPARATOR_DRAIN
    today = now.date()
    current_hours = forecast.current_hours
    efficiency = min(1.0, max(0.0, plan.separator_efficiency))
    drain_level = plan.drain_level_fraction * plan.bowl_capacity_ml

    estimate = efficiency * water_ml_from_fuel(
        litres=max(0.0, burn_l_per_h),
        free_water_mg_kg=max(0.0, current_free_water_mg_kg),
        density_kg_l=density_kg_l,
    )
    records = list(history) + ([last_drain] if last_drain is not None else [])
    rates = observed_rates(records=records)
    rate, w_est = blended_rate(estimate_ml_h=estimate, observed=rates)

    if last_drain is None:
        due = DueDate(hours=None, on=today, earliest=today, latest=today)
        status = DueStatus.DUE
        basis = Basis.WATER_EVENT if water_in_fuel_since_drain else Basis.PLAN_DAYS
        first_explanation = [
            "Due now: no drain of this separator is on record. Drain it and record the "
            "water found, so the next drain can be projected."
        ]
        if water_in_fuel_since_drain:
            first_explanation.append("A water-in-fuel alarm has also been raised.")
        inputs: dict[str, object] = {
            "sample_rate_ml_h": estimate,
            "observed_rates_ml_h": rates,
            "blended_rate_ml_h": rate,
            "drain_level_ml": drain_level,
            "water_event": water_in_fuel_since_drain,
        }
        return Projection(task, due, status, basis, first_explanation, inputs)

    # Water collected since the last drain.
    since = [i for i in intakes if i.at >= last_drain.at]
    hours_since = max(0.0, current_hours - last_drain.hours)
    if since:
        water_so_far = efficiency * sum(
            water_ml_from_fuel(
                litres=i.litres, free_water_mg_kg=i.free_water_mg_kg, density_kg_l=i.density_kg_l
            )
            for i in since
        )
        so_far_source = f"from {plural(len(since), 'fuel input')} since the drain"
    else:
        water_so_far = rate * hours_since
        so_far_source = (
            f"estimated at {rate:.2f} mL/h over {fmt_hours(hours_since)} (no fuel inputs)"
        )

    # Hour limits, as engine hours.
    hour_limits: list[tuple[Basis, float]] = []
    if plan.drain_interval_hours is not None:
        hour_limits.append((Basis.PLAN_HOURS, last_drain.hours + plan.drain_interval_hours))
    level_hours: float | None = None
    if water_so_far >= drain_level:
        level_hours = current_hours
    elif rate > 0:
        level_hours = current_hours + (drain_level - water_so_far) / rate
    if level_hours is not None:
        hour_limits.append((Basis.WATER_LEVEL, level_hours))

    calendar = (last_drain.at + timedelta(days=plan.drain_interval_days)).date()
    basis, due = earliest_due(hour_limits=hour_limits, calendar=calendar, forecast=forecast)
    status = due_status(
        due=due,
        current_hours=current_hours,
        now=now,
        soon_days=plan.soon_days,
        due_days=plan.due_days,
    )

    explanation: list[str] = []
    if water_in_fuel_since_drain:
        explanation.append(
            "Due now: a water-in-fuel alarm was raised since the last drain. Drain the "
            "separator, record the water found and check the fuel source."
        )
    governs = _governs_sentence(basis, due, plan, drain_level)
    if water_in_fuel_since_drain:
        governs = "Without the alarm: " + governs[0].lower() + governs[1:]
    explanation.append(governs)
    if due.earliest != due.latest:
        explanation.append(
            f"Expected around {due.on.isoformat()} (between {due.earliest.isoformat()} and "
            f"{due.latest.isoformat()} as usage varies)."
        )
    explanation.append(
        f"About {water_so_far:,.0f} mL collected since the drain at "
        f"{fmt_hours(last_drain.hours)} on {last_drain.at.date().isoformat()} ({so_far_source})."
    )
    if rates:
        explanation.append(
            f"Water rate {rate:.2f} mL/h: the rates seen over "
            f"{plural(len(rates), 'drain interval')} count for {(1 - w_est) * 100:.0f} %, "
            f"the sample estimate of {estimate:.2f} mL/h for {w_est * 100:.0f} %."
        )
    else:
        explanation.append(
            f"Water rate {rate:.2f} mL/h from the fuel sample alone "
            f"({current_free_water_mg_kg:g} mg/kg free water at {burn_l_per_h:.1f} L/h, "
            f"{efficiency * 100:.0f} % separated); no drains with water amounts yet."
        )
    wettest = sorted(since, key=lambda i: i.free_water_mg_kg, reverse=True)[:3]
    if wettest and wettest[0].free_water_mg_kg > 0:
        parts = [f"{i.label} ({i.free_water_mg_kg:g} mg/kg)" for i in wettest]
        explanation.append("Wettest fuel since the drain: " + "; ".join(parts) + ".")
    explanation.append(sentence(f"Usage: {forecast.note}"))

    inputs = {
        "sample_rate_ml_h": estimate,
        "observed_rates_ml_h": rates,
        "estimate_weight": w_est,
        "blended_rate_ml_h": rate,
        "water_so_far_ml": water_so_far,
        "drain_level_ml": drain_level,
        "limits": {
            "water_level": level_hours,
            "plan_hours": (
                last_drain.hours + plan.drain_interval_hours
                if plan.drain_interval_hours is not None
                else None
            ),
            "plan_days": calendar.isoformat(),
        },
        "intake_labels": [i.label for i in since],
        "water_event": water_in_fuel_since_drain,
    }
    if water_in_fuel_since_drain:
        inputs["projected"] = {"basis": str(basis), "on": due.on.isoformat(), "hours": due.hours}
        status = more_urgent(DueStatus.DUE, status)
        basis = Basis.WATER_EVENT
        due = DueDate(hours=None, on=min(today, due.on), earliest=min(today, due.on), latest=today)
    return Projection(task, due, status, basis, explanation, inputs)


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
