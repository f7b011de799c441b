"""Reads for the unit list and the unit page, which show the fleet with its service history,
due items and open work orders (ledger, planning and work orders, composed here)."""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime, timedelta

from django.db.models import Count, OuterRef, Q, QuerySet, Subquery

from fleetfuel.fleet.models import (
    FILTER_KINDS,
    Component,
    FilterPressureReading,
    Fueling,
    FuelSample,
    MeterReading,
    MeterReplacement,
    ServicePlan,
    Unit,
)
from fleetfuel.ledger.models import ServiceEvent
from fleetfuel.planning import selectors as planning_selectors
from fleetfuel.planning.models import DueItem, UnitFlag
from fleetfuel.workorders.models import WorkOrder
from services import usage
from services.common import UsageForecast

from .charts import Chart, Series

HISTORY_DAYS = 365


def units_for_list(*, site_ids: list[int], q: str = "") -> QuerySet[Unit]:
    qs = (
        Unit.objects.filter(site_id__in=site_ids)
        .select_related("site", "unit_class")
        .annotate(
            overdue=Count("due_items", filter=Q(due_items__status=DueItem.Status.OVERDUE)),
            due=Count("due_items", filter=Q(due_items__status=DueItem.Status.DUE)),
            flags_n=Count("flags", distinct=True),
        )
        .order_by("site__name", "fleet_number")
    )
    if q:
        qs = qs.filter(fleet_number__icontains=q)
    return qs


@dataclass
class UnitPage:
    unit: Unit
    components: list[Component]
    flags: list[UnitFlag]
    due_items: list[DueItem]
    events: list[ServiceEvent]
    open_orders: list[WorkOrder]
    forecast: UsageForecast | None
    charts: dict[str, Chart]


def unit_page(*, unit: Unit, now: datetime) -> UnitPage:
    """Everything the unit page shows: a fixed number of queries, whatever the history."""
    since = now - timedelta(days=HISTORY_DAYS)
    # Each fitted part with its class's dP limit (one plan per class and part kind).
    plan = ServicePlan.objects.filter(
        unit_class_id=unit.unit_class_id, component_kind=OuterRef("kind")
    )
    components = list(
        unit.components.filter(removed_on__isnull=True)
        .annotate(dp_limit_bar=Subquery(plan.values("dp_limit_bar")[:1]))
        .order_by("kind", "position")
    )
    flags = list(UnitFlag.objects.filter(unit=unit).order_by("code"))
    due_items = list(
        DueItem.objects.filter(unit=unit).order_by("due_on")  # shown without their parts
    )
    events = list(
        ServiceEvent.objects.filter(unit=unit)
        .select_related("recorded_by")
        .order_by("-performed_at", "-seq")[:25]
    )
    open_orders = list(
        WorkOrder.objects.filter(unit=unit, status=WorkOrder.Status.OPEN).select_related(
            "assigned_to"
        )
    )
    engine, forecast = _hours_and_forecast(unit=unit, since=since, now=now)
    charts = {"hours": _hours_chart(engine=engine, forecast=forecast, due_items=due_items, now=now)}
    charts.update(_dp_charts(unit=unit, components=components, since=since))
    charts["water"] = _drains_chart(unit=unit, since=since)
    charts.update(_fuel_sample_charts(unit=unit, since=since))
    return UnitPage(unit, components, flags, due_items, events, open_orders, forecast, charts)


def _hours_and_forecast(
    *, unit: Unit, since: datetime, now: datetime
) -> tuple[list[tuple[datetime, float]], UsageForecast | None]:
    """Engine hours over the chart's year (meter replacements applied) and the usage forecast."""
    readings = list(
        MeterReading.objects.filter(unit=unit, taken_at__gte=since, taken_at__lte=now)
        .order_by("taken_at")
        .values_list("taken_at", "hours")
    )
    replacements = [
        usage.MeterReplacement(
            at=r.replaced_at, old_meter_final=r.old_meter_final, new_meter_start=r.new_meter_start
        )
        for r in MeterReplacement.objects.filter(unit=unit).order_by("replaced_at")
    ]
    engine = usage.engine_hours(
        readings=[usage.MeterReading(at=at, hours=h) for at, h in readings],
        replacements=replacements,
    )
    # The forecast the unit's latest projection was made from (the due dates on this page
    # come from it), not a second one.
    forecast = planning_selectors.unit_forecast_stored(unit_id=unit.pk) if engine else None
    return engine, forecast


def _hours_chart(
    *,
    engine: list[tuple[datetime, float]],
    forecast: UsageForecast | None,
    due_items: list[DueItem],
    now: datetime,
) -> Chart:
    hours_chart = Chart(title="Engine hours with forecast", y_label="engine hours (h)")
    hours_chart.series.append(Series(points=engine, css="series", label="recorded"))
    if forecast is not None and due_items:
        # Up to the furthest due item, and at least a month ahead so the line reads.
        horizon = max(d.latest_on for d in due_items)
        days = max(30, (horizon - now.date()).days)
        path = usage.forecast_path(forecast=forecast, now=now, days=days)
        hours_chart.series.append(
            Series(
                points=[(t, mid) for t, mid, _, _ in path],
                css="forecast",
                label=f"forecast {forecast.rate:.1f} h/day (dashed; band shaded)",
            )
        )
        hours_chart.band = [(t, low, high) for t, _, low, high in path]
    return hours_chart


def _dp_charts(*, unit: Unit, components: list[Component], since: datetime) -> dict[str, Chart]:
    """Differential pressure across each fitted filter since it was fitted, with its limit."""
    filters = {c.pk: c for c in components if c.kind in FILTER_KINDS}
    dp_rows: dict[int, list[tuple[datetime, float]]] = {pk: [] for pk in filters}
    for comp_id, at, dp in (
        FilterPressureReading.objects.filter(component_id__in=list(filters), taken_at__gte=since)
        .order_by("taken_at")
        .values_list("component_id", "taken_at", "dp_bar")
    ):
        if at.date() >= filters[comp_id].installed_on:
            dp_rows[comp_id].append((at, dp))
    charts: dict[str, Chart] = {}
    for pk, comp in filters.items():
        limit = comp.dp_limit_bar  # annotated in unit_page()
        charts[f"dp-{comp.kind}"] = Chart(
            title=f"Differential pressure, {comp.get_kind_display().lower()}, since its change",
            y_label="dP (bar)",
            series=[Series(points=dp_rows[pk], css="series")],
            limit=limit,
            limit_label=f"limit {limit} bar" if limit else "",
        )
    return charts


def _drains_chart(*, unit: Unit, since: datetime) -> Chart:
    drains = [
        (at, water_ml or 0.0)
        for at, water_ml in ServiceEvent.objects.filter(
            unit=unit, kind=ServiceEvent.Kind.SEPARATOR_DRAINED, performed_at__gte=since
        )
        .order_by("performed_at")
        .values_list("performed_at", "water_ml")
    ]
    return Chart(
        title="Water drained per drain",
        y_label="water (mL)",
        series=[Series(points=drains, css="bar")],
        bars=True,
    )


def _fuel_sample_charts(*, unit: Unit, since: datetime) -> dict[str, Chart]:
    """Samples of the unit's own tank and of the sources that fuelled it over the chart's year."""
    # The sources' ids as a list, not a subquery: with one, PostgreSQL reads every sample.
    source_ids = list(
        Fueling.objects.filter(unit=unit, fueled_at__gte=since)
        .order_by()  # not the model's order, which joins the unit and its site
        .values_list("source_id", flat=True)
        .distinct()
    )
    samples = list(
        FuelSample.objects.filter(Q(unit=unit) | Q(source_id__in=source_ids), sampled_at__gte=since)
        .order_by("sampled_at")
        .values_list("sampled_at", "code_4", "code_14", "water_mg_kg")
    )
    codes = Chart(
        title="Fuel samples: ISO 4406 scale numbers",
        y_label="scale number",
        series=[
            Series(
                points=[(s[0], s[1]) for s in samples if s[1] is not None],
                css="series",
                label="≥4 µm(c)",
            ),
            Series(
                points=[(s[0], s[2]) for s in samples if s[2] is not None],
                css="forecast",
                label="≥14 µm(c) (dashed)",
            ),
        ],
        limit=18,
        limit_label="WWFC 18 at ≥4 µm(c)",
    )
    water_content = Chart(
        title="Fuel samples: water content",
        y_label="water (mg/kg)",
        series=[Series(points=[(s[0], s[3]) for s in samples if s[3] is not None], css="dot")],
        limit=200,
        limit_label="EN 590 limit 200 mg/kg",
    )
    return {"codes": codes, "water_content": water_content}
