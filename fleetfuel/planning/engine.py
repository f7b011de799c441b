"""Turn one unit's stored inputs into services/ calls: projections and flags.

No queries here (everything comes from fleetfuel/planning/selectors.py) and no decisions of
the trade: this module maps rows to the dataclasses services/ takes. Which fuel is current,
where a filter's life starts, the relief-valve defaults and the usage forecast are decided
in services/.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import datetime, timedelta

from fleetfuel.fleet.models import Component, ComponentKind, ServicePlan
from services import filter_inputs, filter_life, intervals, usage, water
from services import flags as fl
from services import fuel_intake as fi
from services import fuel_quality as fq
from services import fuel_water as fw
from services.common import Projection, TaskKind, UsageForecast
from services.filter_dp import DpReading
from services.schedule import MAX_FORECAST_DAYS

from . import engine_tank
from .engine_samples import batch_source_fuel, samples_read
from .selectors import BatchInputs, UnitInputs, unit_forecast

FILTER_TASKS = {
    ComponentKind.PRIMARY_FILTER: TaskKind.PRIMARY_FILTER,
    ComponentKind.FINE_FILTER: TaskKind.FINE_FILTER,
}


@dataclass(frozen=True)
class ComponentProjection:
    component_id: int
    projection: Projection


@dataclass(frozen=True)
class UnitResult:
    unit_id: int
    site_id: int
    projections: list[ComponentProjection]
    flags: list[fl.UnitFlag]
    skipped: list[str]  # why a task could not be projected (no plan, no filter fitted)
    current_hours: float  # engine hours now, from the usage forecast
    rate: float  # engine hours per day, from the usage forecast
    burned: dict[int, float] = field(default_factory=dict)  # litres of each fueling burned
    forecast: UsageForecast | None = None  # the usage forecast it was projected from


@dataclass(frozen=True)
class UnitFuel:
    """What a unit's fuel and engine records say, shared by its filters and its separator."""

    paired: list[fi.Paired]  # each fueling with the quality of its fuel, oldest first
    source_names: dict[int, str]  # by fueling id
    events: list[fl.EngineEvent]
    burn: float | None  # measured L/h over the forecast window, when there is enough to tell
    refused: list[str] = field(default_factory=list)  # records left out, each with its reason
    tank_samples: list[fi.Sample] = field(default_factory=list)  # of the unit's own tank
    sources: dict[int, engine_tank.SourceFuel] = field(default_factory=dict)  # bulk tanks
    # Litres of each fueling burned by now, by the burn rate the tank was run at (the drain's
    # tank run leaves them here for unit_burned: one run, not two)
    burned_at_rate: dict[float, dict[int, float]] = field(default_factory=dict)


def unit_compute(b: UnitInputs, batch: BatchInputs, now: datetime) -> UnitResult:
    """A unit's projections and flags. Inputs services/ refuses (NaN, infinite, negative,
    after now) skip what they feed, with the reason, and flag the unit: never a crash."""
    unit = b.unit
    refused = [f"hour meter: {reason}" for reason in b.refused]  # rows the selectors refused
    try:
        forecast = unit_forecast(b, now=now)
    except ValueError as exc:
        refused.append(f"usage forecast: {exc}")
        return UnitResult(unit.pk, unit.site_id, [], [fl.refused_flag(reasons=refused, now=now)],
                          refused, 0.0, 0.0)  # fmt: skip
    if unit.disposed_on is not None and unit.disposed_on <= now.date():
        # A disposed unit is no longer serviced: no items, no flags (its history stays).
        return UnitResult(unit.pk, unit.site_id, [], [], ["disposed"], forecast.current_hours, 0.0,
                          forecast=forecast)  # fmt: skip
    try:
        fuel = unit_fuel(b, batch)
    except ValueError as exc:
        refused.append(f"fuel and engine records: {exc}")
        fuel = UnitFuel(paired=[], source_names={}, events=[], burn=None)
    hours = tank_hours(b, forecast, now)  # the same for every tank run of the unit
    results, skipped = unit_tasks(b, batch, fuel, forecast, hours, now, refused)
    unit_flags = unit_flags_compute(b, fuel, forecast, now, refused)
    return UnitResult(
        unit.pk, unit.site_id, results, unit_flags, skipped + refused, forecast.current_hours,
        forecast.rate, unit_burned(b, fuel, hours, now), forecast,
    )  # fmt: skip


def unit_burned(
    b: UnitInputs, fuel: UnitFuel, hours: list[tuple[datetime, float]], now: datetime
) -> dict[int, float]:
    """Litres of each fueling burned by ``now`` (for the source decisions); none when the
    records are refused (the filters' tasks say why)."""
    burn = fuel.burn or b.unit.unit_class.typical_burn_l_per_h or 0.0
    if burn in fuel.burned_at_rate:
        return fuel.burned_at_rate[burn]
    try:
        return engine_tank.tank_now(
            unit=b.unit, paired=fuel.paired, hours=hours, burn_l_per_h=burn, now=now,
        )[0]  # fmt: skip
    except ValueError:
        return {}


def tank_hours(
    b: UnitInputs, forecast: UsageForecast, now: datetime
) -> list[tuple[datetime, float]]:
    """(moment, engine hours) the unit's tank is drawn on: its readings up to ``now``, then
    the forecast's hours now."""
    return [
        *((r.at, engine_hours_at(b, r.at, r.hours)) for r in b.readings if r.at <= now),
        (min(now, forecast.as_of), forecast.current_hours),
    ]


def unit_tasks(
    b: UnitInputs,
    batch: BatchInputs,
    fuel: UnitFuel,
    forecast: UsageForecast,
    hours: list[tuple[datetime, float]],
    now: datetime,
    refused: list[str],
) -> tuple[list[ComponentProjection], list[str]]:
    """The unit's filter changes and separator drain; a refused input skips its task only."""
    results: list[ComponentProjection] = []
    skipped: list[str] = []
    refused.extend(fuel.refused)  # fuel records services/ refused: flagged with the rest
    for comp_kind, task in FILTER_TASKS.items():
        comp = b.filters.get(comp_kind)
        plan = b.plans.get(comp_kind)
        if comp is None or plan is None or not plan.interval_hours:
            skipped.append(f"{task.label}: no fitted filter or no plan with an hour interval")
            continue
        try:
            life = filter_life_get(batch, b.unit.unit_class_id, comp_kind, plan)
            projection = filter_compute(
                b, comp, plan, task, fuel, forecast, now, life=life, hours=hours
            )
        except ValueError as exc:
            refused.append(f"{task.label}: {exc}")
            continue
        results.append(ComponentProjection(comp.pk, projection))
    primary = b.filters.get(ComponentKind.PRIMARY_FILTER)
    plan = b.plans.get(ComponentKind.PRIMARY_FILTER)
    if primary and plan and plan.bowl_capacity_ml and plan.drain_interval_days:
        try:
            results.append(
                ComponentProjection(
                    primary.pk, drain_compute(b, plan, fuel, forecast, now, hours=hours)
                )
            )
        except ValueError as exc:
            refused.append(f"{TaskKind.SEPARATOR_DRAIN.label}: {exc}")
    else:
        skipped.append(
            f"{TaskKind.SEPARATOR_DRAIN.label}: no separator plan (bowl capacity, drain interval)"
        )
    return results, skipped


def unit_flags_compute(
    b: UnitInputs, fuel: UnitFuel, forecast: UsageForecast, now: datetime, refused: list[str]
) -> list[fl.UnitFlag]:
    """The unit's flags: relief valve, pump, a probable unrecorded meter change, and the
    records the engine refused (``refused`` is complete once the tasks have run)."""
    relief = b.plans.get(ComponentKind.RELIEF_VALVE)
    flags: list[fl.UnitFlag] = []
    try:
        flags = fl.unit_flags(
            events=fuel.events,
            relief_plan=fl.relief_valve_plan(
                window_hours=relief.relief_window_hours if relief else None,
                window_days=relief.relief_window_days if relief else None,
                openings_to_flag=relief.relief_openings_to_flag if relief else None,
                lifetime_openings_to_replace=relief.relief_lifetime_openings if relief else None,
            ),
            lifetime_relief_openings=b.lifetime_relief_openings,
            now=now,
            current_hours=forecast.current_hours if forecast.carried_to is not None else None,
            valve_replaced_at=b.valve_replaced_at,
        )
    except ValueError as exc:
        refused.append(f"engine events: {exc}")
    if forecast.probable_meter_change is not None:
        flags.append(fl.meter_change_flag(change=forecast.probable_meter_change))
    if refused:
        flags.append(fl.refused_flag(reasons=refused, now=now))
    return flags


def engine_hours_at(b: UnitInputs, at: datetime, meter: float) -> float:
    return usage.meter_to_engine_hours(meter=meter, at=at, replacements=b.replacements)


def unit_fuel(b: UnitInputs, batch: BatchInputs) -> UnitFuel:
    shared = batch_source_fuel(batch)
    own, own_refused = samples_read(b.unit_samples, batch)
    samples = [*shared.samples, *own]
    refused = [*shared.refused, *own_refused]  # records services/ refuses (NaN, infinity, ...)
    fuelings: list[fi.Fueling] = []
    for f in b.fuelings:
        try:
            fuelings.append(
                fi.Fueling(at=f.fueled_at, litres=f.litres, source_id=f.source_id, ref=str(f.pk))
            )
        except ValueError as exc:
            refused.append(f"fueling of {f.fueled_at:%Y-%m-%d} left out: {exc}")
    burn = None
    if len(b.readings) >= 2:
        first, last = b.readings[0], b.readings[-1]
        try:
            burn = fi.measured_burn(
                start=(first.at, engine_hours_at(b, first.at, first.hours)),
                end=(last.at, engine_hours_at(b, last.at, last.hours)),
                fuelings=fuelings,
            )
        except ValueError as exc:
            refused.append(f"measured burn rate left out: {exc}")
    return UnitFuel(
        paired=fi.quality_for_fuelings(fuelings=fuelings, samples=samples),
        source_names={
            f.pk: batch.sources[f.source_id].name if f.source_id else "unknown source"
            for f in b.fuelings
        },
        events=[
            fl.EngineEvent(
                at=e.occurred_at,
                hours=e.hours,
                spn=e.spn,
                fmi=e.fmi,
                count=e.occurrences,
                kind=e.kind,
            )
            for e in b.events
        ],
        burn=burn,
        refused=refused,
        tank_samples=own,
        sources=shared.sources,
    )


def filter_life_get(
    batch: BatchInputs, class_id: int, kind: str, plan: ServicePlan
) -> filter_life.LifeBudget:
    """The life a class's filter budget is stated in, from its changes on record (once a batch)."""
    key = (class_id, kind)
    if key not in batch.lives:
        by_unit: dict[int, list[filter_life.ChangeRecord]] = {}
        for unit_id, at, meter, dp in batch.filter_changes.get(key, []):
            by_unit.setdefault(unit_id, []).append(filter_life.ChangeRecord(at, meter, dp))
        observations = [
            o
            for changes in by_unit.values()
            for o in filter_life.life_observations(changes=changes, dp_limit_bar=plan.dp_limit_bar)
        ]
        batch.lives[key] = filter_life.life_budget(
            plan_hours=float(plan.interval_hours or 0), observations=observations
        )
    return batch.lives[key]


def filter_compute(
    b: UnitInputs,
    comp: Component,
    plan: ServicePlan,
    task: TaskKind,
    fuel: UnitFuel,
    forecast: UsageForecast,
    now: datetime,
    *,
    life: filter_life.LifeBudget | None = None,
    hours: list[tuple[datetime, float]],
) -> Projection:
    """One filter's next change; ``hours`` are the unit's :func:`tank_hours`."""
    channel, channel_note = fq.filter_channel(
        efficiency_size_um_c=comp.efficiency_size_um_c, nominal_rating_um=comp.rating_um
    )
    changed_at, changed_meter, _ = b.last_change.get(comp.kind, (None, None, None))
    last_at, last_meter = intervals.last_change(
        changed_at=changed_at,
        changed_meter=changed_meter,
        fitted_on=comp.installed_on,
        fitted_meter=comp.installed_hours,
        tz=now.tzinfo,
    )
    fplan = filter_plan(plan, channel, b.unit.unit_class.typical_burn_l_per_h)
    last_hours = engine_hours_at(b, last_at, last_meter)
    fi.current_concentration(pairs=fuel.paired, now=now, channel=channel)  # refuses future fuel
    dp_taken = [r.taken_at for r in b.dp_readings.get(comp.pk, []) if last_at <= r.taken_at <= now]
    burned = engine_tank.tank_loadings(
        unit=b.unit,
        paired=fuel.paired,
        source_names=fuel.source_names,
        tank_samples=fuel.tank_samples,
        sources=fuel.sources,
        channel=channel,
        hours=[*hours, (last_at, last_hours)],
        burn_l_per_h=fuel.burn or fplan.reference_burn_l_per_h,
        since=last_at,
        now=now,
        checkpoint=max(dp_taken) if dp_taken else None,  # the loading when dP was last read
    )
    projection = intervals.filter_projection(
        task=task,
        plan=fplan,
        last_change_at=last_at,
        last_change_hours=last_hours,
        loadings=burned.loadings,
        current_concentration_per_ml=burned.current_concentration_per_ml,
        current_reference_assumed=burned.current_reference_assumed,
        burn_l_per_h=fuel.burn,
        dp_readings=[
            DpReading(
                at=r.taken_at,
                hours=engine_hours_at(b, r.taken_at, r.hours),
                dp_bar=r.dp_bar,
                flow_l_per_h=r.flow_l_per_h,
                load_pct=r.load_pct,
                fuel_temperature_c=r.fuel_temperature_c,
            )
            for r in b.dp_readings.get(comp.pk, [])
            if r.taken_at >= last_at
        ],
        forecast=forecast,
        now=now,
        priority_raised=task in fl.raised_priorities(events=fuel.events, since=last_at),
        life=life,
        loading_at_latest_dp=burned.loading_at_checkpoint,
    )
    projection.explanation.extend([burned.sentence, channel_note])
    return projection


def filter_plan(plan: ServicePlan, channel: int, class_burn: float) -> filter_inputs.FilterPlan:
    return filter_inputs.FilterPlan(
        interval_hours=float(plan.interval_hours or 0),
        interval_days=int(plan.interval_days or MAX_FORECAST_DAYS),  # no calendar limit
        interval_litres=plan.interval_litres,
        reference_concentration_per_ml=fq.plan_reference_concentration(
            reference_iso4406=plan.reference_iso4406, channel=channel
        ),
        reference_burn_l_per_h=plan.reference_burn_l_per_h or class_burn,
        dp_limit_bar=plan.dp_limit_bar,
        soon_days=plan.soon_days,
        due_days=plan.due_days,
    )


def drain_compute(
    b: UnitInputs,
    plan: ServicePlan,
    fuel: UnitFuel,
    forecast: UsageForecast,
    now: datetime,
    *,
    hours: list[tuple[datetime, float]],
) -> Projection:
    """The separator's next drain (the plan has a bowl capacity and a drain interval);
    ``hours`` are the unit's :func:`tank_hours`."""
    records = [
        water.DrainRecord(at=at, hours=engine_hours_at(b, at, meter), water_ml=ml)
        for at, meter, ml in b.drains
        if meter is not None
    ]
    last = records[-1] if records else None
    since = last.at if last else now - timedelta(days=plan.drain_interval_days)
    reference_water = plan.reference_water_mg_kg
    coldest = b.unit.site.coldest_fuel_c  # the depot's coldest fuel, where it is set
    burn = fuel.burn or plan.reference_burn_l_per_h or b.unit.unit_class.typical_burn_l_per_h
    current_water, current_density, fuel.burned_at_rate[burn] = engine_tank.tank_water(
        unit=b.unit, paired=fuel.paired, hours=hours, burn_l_per_h=burn,
        now=now, reference_mg_kg=reference_water, coldest_c=coldest,
    )  # fmt: skip
    intakes = [
        water.WaterIntake(
            at=fueling.at,
            litres=fueling.litres,
            free_water_mg_kg=fw.free_water_or_reference(
                quality=quality, reference_mg_kg=reference_water, coldest_c=coldest
            ),
            density_kg_l=(quality.density_kg_l if quality else None) or fq.DEFAULT_DENSITY_KG_L,
            label=quality.label if quality else "no sample: the plan's reference water assumed",
        )
        for fueling, quality in fuel.paired
        if fueling.at > since
    ]
    return water.drain_projection(
        plan=water.DrainPlan(
            bowl_capacity_ml=float(plan.bowl_capacity_ml),
            drain_level_fraction=plan.drain_level_fraction,
            drain_interval_days=int(plan.drain_interval_days),
            drain_interval_hours=plan.drain_interval_hours,
            separator_efficiency=plan.separator_efficiency,
            soon_days=plan.drain_soon_days,
            due_days=plan.drain_due_days,
        ),
        last_drain=last,
        history=records,
        intakes=intakes,
        burn_l_per_h=burn,
        current_free_water_mg_kg=current_water,
        density_kg_l=current_density,
        forecast=forecast,
        water_in_fuel_since_drain=fl.water_event_since(events=fuel.events, since=since),
        now=now,
    )
