"""Turn one unit's stored inputs into services/ calls: projections and flags.

No queries here: everything comes from fleetfuel/planning/inputs.py. This module only maps
rows to the dataclasses services/ takes, so the trade's logic stays in services/.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime, timedelta

from fleetfuel.fleet.models import ComponentKind, FuelSample, ServicePlan
from services import fuel_quality as fq
from services import flags as fl
from services import intervals, usage, water
from services.common import Projection, TaskKind, UsageForecast

from .inputs import FORECAST_WINDOW_DAYS, BatchInputs, UnitInputs

CURRENT_FUEL_DAYS = 14  # "current" fuel quality: what went in over the last two weeks
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


def sample_quality(sample: FuelSample, source_name: str | None) -> fq.FuelQuality:
    where = f"of {source_name}" if source_name else "from the unit's tank"
    codes = (
        (sample.code_4, sample.code_6, sample.code_14)
        if sample.code_6 is not None and sample.code_14 is not None
        else None
    )
    counts = (
        (sample.count_4_per_ml, sample.count_6_per_ml, sample.count_14_per_ml)
        if sample.count_6_per_ml is not None and sample.count_14_per_ml is not None
        else None
    )
    shown = sample.iso4406 or "no particle code"
    water_txt = f", water {sample.water_mg_kg:.0f} mg/kg" if sample.water_mg_kg is not None else ""
    return fq.FuelQuality(
        codes=codes,  # type: ignore[arg-type]
        counts_per_ml=counts,  # type: ignore[arg-type]
        water_mg_kg=sample.water_mg_kg,
        fame_pct_v=sample.fame_pct_v,
        temperature_c=sample.temperature_c,
        label=f"sample {sample.reference} {where}, {sample.sampled_at:%Y-%m-%d}: "
        f"{shown}{water_txt}",
    )


def _meter_to_engine(b: UnitInputs, at: datetime, meter: float) -> float:
    return meter + sum(r.offset for r in b.replacements if r.replaced_at <= at)


def unit_forecast(b: UnitInputs, now: datetime) -> UsageForecast:
    readings = [usage.MeterReading(at=at, hours=h) for at, h in b.readings]
    if b.latest_reading and (not readings or readings[-1].at != b.latest_reading[0]):
        readings.append(usage.MeterReading(at=b.latest_reading[0], hours=b.latest_reading[1]))
        readings.sort(key=lambda r: r.at)
    return usage.usage_forecast(
        readings=readings,
        replacements=[
            usage.MeterReplacement(
                at=r.replaced_at,
                old_meter_final=r.old_meter_final,
                new_meter_start=r.new_meter_start,
            )
            for r in b.replacements
        ],
        now=now,
        window_days=FORECAST_WINDOW_DAYS,
        class_rate=b.unit.unit_class.typical_hours_per_day,
    )


def measured_burn(b: UnitInputs, now: datetime) -> float | None:
    """Litres per engine hour over the forecast window, or None if too little to tell."""
    if len(b.readings) < 2:
        return None
    (t0, m0), (t1, m1) = b.readings[0], b.readings[-1]
    hours = _meter_to_engine(b, t1, m1) - _meter_to_engine(b, t0, m0)
    if hours < 10:
        return None
    litres = sum(f.litres for f in b.fuelings if t0 < f.fueled_at <= t1)
    return litres / hours if litres > 0 else None


def unit_compute(b: UnitInputs, batch: BatchInputs, now: datetime) -> UnitResult:
    unit = b.unit
    forecast = unit_forecast(b, now)
    if unit.disposed_on is not None and unit.disposed_on <= now.date():
        # A disposed unit is no longer serviced: no items, no flags (its history stays).
        return UnitResult(unit.pk, unit.site_id, [], [], ["disposed"], forecast.current_hours, 0.0)
    burn = measured_burn(b, now)
    samples = [
        fq.Sample(
            at=s.sampled_at,
            source_id=s.source_id,
            unit_sample=False,
            quality=sample_quality(s, batch.sources[s.source_id].name if s.source_id else None),
        )
        for s in batch.source_samples
    ] + [
        fq.Sample(
            at=s.sampled_at, source_id=None, unit_sample=True, quality=sample_quality(s, None)
        )
        for s in b.unit_samples
    ]
    fuelings = [
        fq.Fueling(at=f.fueled_at, litres=f.litres, source_id=f.source_id, ref=str(f.pk))
        for f in b.fuelings
    ]
    paired = fq.quality_for_fuelings(fuelings=fuelings, samples=samples)
    source_names = {
        f.pk: batch.sources[f.source_id].name if f.source_id else "unknown source"
        for f in b.fuelings
    }
    engine_events = [
        fl.EngineEvent(
            at=e.occurred_at, hours=e.hours, spn=e.spn, fmi=e.fmi, count=e.occurrences, kind=e.kind
        )
        for e in b.events
    ]
    recent_from = now - timedelta(days=CURRENT_FUEL_DAYS)
    recent = [p for p in paired if p[0].at >= recent_from] or paired[-3:]

    results: list[ComponentProjection] = []
    skipped: list[str] = []
    for comp_kind, task in FILTER_TASKS.items():
        comp = b.filters.get(comp_kind)
        plan = b.plans.get(comp_kind)
        if comp is None or plan is None or not plan.interval_hours:
            skipped.append(f"{task.label}: no fitted filter or no plan with an hour interval")
            continue
        channel = fq.channel_for_rating(comp.rating_um)
        last_at, last_meter, _ = b.last_change.get(comp_kind, (None, None, None))
        if last_at is None:
            last_at = datetime.combine(comp.installed_on, datetime.min.time(), tzinfo=now.tzinfo)
            last_meter = comp.installed_hours
        elif last_meter is None:
            last_meter = comp.installed_hours
        last_hours = _meter_to_engine(b, last_at, last_meter)
        loadings = []
        for fueling, quality in paired:
            if fueling.at < last_at:
                continue
            conc, assumed = fq.concentration_or_reference(quality=quality, channel=channel)
            label = f"from {source_names[int(fueling.ref)]}, " + (
                quality.label if quality else "no sample: reference fuel assumed"
            )
            loadings.append(
                intervals.Loading(at=fueling.at, litres=fueling.litres, concentration_per_ml=conc,
                                  reference_assumed=assumed, label=label)
            )  # fmt: skip
        if recent:
            current, ref_litres, _ = fq.volume_weighted_concentration(pairs=recent, channel=channel)
            current_assumed = ref_litres >= sum(f.litres for f, _ in recent) - 1e-9
        else:
            current, current_assumed = fq.concentration_or_reference(quality=None, channel=channel)
        raised = task in fl.raised_priorities(events=engine_events, since=last_at)
        projection = intervals.filter_projection(
            task=task,
            plan=filter_plan(plan, channel, unit.unit_class.typical_burn_l_per_h),
            last_change_at=last_at,
            last_change_hours=last_hours,
            loadings=loadings,
            current_concentration_per_ml=current,
            current_reference_assumed=current_assumed,
            burn_l_per_h=burn,
            dp_readings=[
                intervals.DpReading(
                    at=r.taken_at, hours=_meter_to_engine(b, r.taken_at, r.hours), dp_bar=r.dp_bar
                )
                for r in b.dp_readings.get(comp.pk, [])
                if r.taken_at >= last_at
            ],
            forecast=forecast,
            now=now,
            priority_raised=raised,
        )
        results.append(ComponentProjection(comp.pk, projection))

    primary = b.filters.get(ComponentKind.PRIMARY_FILTER)
    plan = b.plans.get(ComponentKind.PRIMARY_FILTER)
    if (
        primary is not None
        and plan is not None
        and plan.bowl_capacity_ml
        and plan.drain_interval_days
    ):
        results.append(
            ComponentProjection(
                primary.pk,
                drain_compute(b, batch, plan, paired, engine_events, burn, forecast, now),
            )
        )
    else:
        skipped.append(
            f"{TaskKind.SEPARATOR_DRAIN.label}: no separator plan (bowl capacity, drain interval)"
        )

    relief = b.plans.get(ComponentKind.RELIEF_VALVE)
    relief_plan = fl.relief_valve_plan(
        window_hours=relief.relief_window_hours if relief else None,
        window_days=relief.relief_window_days if relief else None,
        openings_to_flag=relief.relief_openings_to_flag if relief else None,
        lifetime_openings_to_replace=relief.relief_lifetime_openings if relief else None,
    )
    unit_flags = fl.unit_flags(
        events=engine_events,
        relief_plan=relief_plan,
        lifetime_relief_openings=b.lifetime_relief_openings,
        now=now,
    )
    return UnitResult(
        unit.pk, unit.site_id, results, unit_flags, skipped, forecast.current_hours, forecast.rate
    )


def filter_plan(plan: ServicePlan, channel: int, class_burn: float) -> intervals.FilterPlan:
    codes = fq.parse_iso4406(plan.reference_iso4406)
    code = codes[channel] if codes[channel] is not None else fq.REFERENCE_CODES[channel]
    return intervals.FilterPlan(
        interval_hours=float(plan.interval_hours or 0),
        interval_days=int(plan.interval_days or 3650),
        interval_litres=plan.interval_litres,
        reference_concentration_per_ml=fq.count_range(int(code))[1],  # type: ignore[arg-type]
        reference_burn_l_per_h=plan.reference_burn_l_per_h or class_burn,
        dp_limit_bar=plan.dp_limit_bar,
        soon_days=plan.soon_days,
        due_days=plan.due_days,
    )


def drain_compute(
    b: UnitInputs,
    batch: BatchInputs,
    plan: ServicePlan,
    paired: list[tuple[fq.Fueling, fq.FuelQuality | None]],
    engine_events: list[fl.EngineEvent],
    burn: float | None,
    forecast: UsageForecast,
    now: datetime,
) -> Projection:
    records = [
        water.DrainRecord(at=at, hours=_meter_to_engine(b, at, meter), water_ml=ml or 0.0)
        for at, meter, ml in b.drains
        if meter is not None
    ]
    last = records[-1] if records else None
    since = last.at if last else now - timedelta(days=plan.drain_interval_days or 7)

    def free(quality: fq.FuelQuality | None) -> tuple[float, float]:
        density = fq.DEFAULT_DENSITY_KG_L
        total = (
            quality.water_mg_kg
            if quality and quality.water_mg_kg is not None
            else plan.reference_water_mg_kg
        )
        return (
            fq.free_water_mg_kg(
                total_mg_kg=total,
                temperature_c=quality.temperature_c if quality else None,
                fame_pct_v=quality.fame_pct_v if quality else None,
            ),
            density,
        )

    intakes = []
    for fueling, quality in paired:
        if fueling.at <= since:
            continue
        fw, density = free(quality)
        label = quality.label if quality else "no sample: the plan's reference water assumed"
        intakes.append(water.WaterIntake(at=fueling.at, litres=fueling.litres, free_water_mg_kg=fw,
                                         density_kg_l=density, label=label))  # fmt: skip
    current_fw, density = free(paired[-1][1] if paired else None)
    return water.drain_projection(
        plan=water.DrainPlan(
            bowl_capacity_ml=float(plan.bowl_capacity_ml or 0),
            drain_level_fraction=plan.drain_level_fraction,
            drain_interval_days=int(plan.drain_interval_days or 7),
            drain_interval_hours=plan.drain_interval_hours,
            separator_efficiency=plan.separator_efficiency,
            soon_days=plan.drain_soon_days,
            due_days=plan.drain_due_days,
        ),
        last_drain=last,
        history=records,
        intakes=intakes,
        burn_l_per_h=burn or plan.reference_burn_l_per_h or b.unit.unit_class.typical_burn_l_per_h,
        current_free_water_mg_kg=current_fw,
        density_kg_l=density,
        forecast=forecast,
        water_in_fuel_since_drain=fl.water_event_since(events=engine_events, since=since),
        now=now,
    )
