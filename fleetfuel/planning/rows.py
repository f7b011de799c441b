"""The engine's input rows as plain tuples (``values_list``), named as the models name their
fields: the engine reads thousands a batch, and a model instance costs several times a tuple
to build (fleetfuel/planning/selectors.py reads them)."""

from __future__ import annotations

from datetime import datetime
from typing import Any, NamedTuple


class FuelingRow(NamedTuple):
    pk: int
    unit_id: int
    fueled_at: datetime
    litres: float
    source_id: int | None


class FuelSampleRow(NamedTuple):
    pk: int
    reference: str
    source_id: int | None
    unit_id: int | None
    sampled_at: datetime
    iso4406: str
    code_4: int | None
    code_6: int | None
    code_14: int | None
    mark_4: str
    mark_6: str
    mark_14: str
    count_4_per_ml: float | None
    count_6_per_ml: float | None
    count_14_per_ml: float | None
    water_mg_kg: float | None
    fame_pct_v: float | None
    temperature_c: float | None


class EngineEventRow(NamedTuple):
    unit_id: int
    occurred_at: datetime
    hours: float | None
    spn: int | None
    fmi: int | None
    occurrences: int
    kind: str


class DpRow(NamedTuple):
    component_id: int
    taken_at: datetime
    hours: float
    dp_bar: float
    flow_l_per_h: float | None
    load_pct: float | None
    fuel_temperature_c: float | None


class DeliveryRow(NamedTuple):
    source_id: int
    delivered_at: datetime
    litres: float
    ticket: str


def rows_of(queryset: Any, row: Any) -> list[Any]:
    """The queryset's rows as ``row`` tuples (its fields, in its order)."""
    return list(map(row._make, queryset.values_list(*row._fields)))
