"""The engine's calls into the fuel modules, end to end: ISO 4406 marks stored and shown, the
size channel by ISO 19438's efficiency size, the depot's coldest fuel, and records that
services/ refuses (NaN, 10^12 L) left out with their reason instead of a crash."""

from __future__ import annotations

from datetime import timedelta
from typing import Any

import pytest
from django.core.exceptions import ValidationError

from fleetfuel.fleet.models import Component, ComponentKind, Fueling, FuelSample
from fleetfuel.planning.actions import due_items_recompute
from fleetfuel.planning.engine import unit_compute
from fleetfuel.planning.models import DueItem
from fleetfuel.planning.selectors import batch_inputs_load
from services.fuel_water import diesel_saturation_mg_kg
from tests import factories as f
from tests.planning.builders import history_make, sample_make

NOW = f.NOW
pytestmark = pytest.mark.django_db


def items(unit: Any) -> dict[str, DueItem]:
    return {i.task: i for i in DueItem.objects.filter(unit=unit)}


def test_marks_are_stored_and_the_code_is_shown_with_them() -> None:
    tank = f.source_make()
    # ISO 4406:2021: "≥" where fewer than 20 particles were counted; ">=" is written "≥".
    marked = sample_make(source=tank, at=NOW - timedelta(days=3), code="14/12/>=7", ref="S-M")
    marked.refresh_from_db()
    assert (marked.mark_4, marked.mark_6, marked.mark_14) == ("", "", "≥")
    assert marked.iso4406 == "14/12/≥7" and "14/12/≥7" in str(marked)
    # Counts above ISO 4406 Table 1's last range (2,500,000/mL) read ">28", not an error.
    heavy = FuelSample(
        reference="S-H",
        source=tank,
        sampled_at=NOW - timedelta(days=2),
        count_4_per_ml=3_000_000.0,
        count_6_per_ml=900_000.0,
        count_14_per_ml=30_000.0,
    )
    heavy.full_clean()
    heavy.save()
    assert heavy.iso4406 == ">28/27/22" and heavy.mark_4 == ">"


def test_a_bad_code_is_a_field_error() -> None:
    sample = FuelSample(
        reference="S-B", source=f.source_make(), sampled_at=NOW, iso4406=">27/20/14"
    )
    with pytest.raises(ValidationError) as caught:
        sample.full_clean()
    assert "iso4406" in caught.value.message_dict
    # A temperature services/ would refuse is a field error on entry, not a crash later.
    hot = FuelSample(
        reference="S-T", source=f.source_make(name="T"), sampled_at=NOW, water_mg_kg=50.0,
        temperature_c=150.0,
    )  # fmt: skip
    with pytest.raises(ValidationError) as caught:
        hot.full_clean()
    assert "temperature_c" in caught.value.message_dict


def test_the_channel_follows_the_efficiency_size_and_says_so(site: Any, unit_class: Any) -> None:
    tank = f.source_make()
    unit = f.unit_make(site=site, unit_class=unit_class, fleet_number="R-1")
    history_make(unit=unit, source=tank, days=10)
    sample_make(source=tank, at=NOW - timedelta(days=30), code="20/18/15", ref="S-R")
    Component.objects.filter(unit=unit, kind=ComponentKind.FINE_FILTER).update(
        rating_um=10.0, efficiency_size_um_c=4.0
    )
    Component.objects.filter(unit=unit, kind=ComponentKind.PRIMARY_FILTER).update(
        rating_um=30.0, efficiency_size_um_c=None
    )
    due_items_recompute(unit_ids=[unit.pk], now=NOW)
    fine, primary = items(unit)["fine_filter"], items(unit)["primary_filter"]
    # ISO 19438: rated at 4 um(c) -> the >=4 um(c) count, though its nominal rating is 10 um.
    assert any("≥4 µm(c)" in s and "ISO 19438" in s for s in fine.explanation)
    # No efficiency size: the nominal 30 um rating picks >=14 um(c), and the sentence says
    # it is the fallback.
    assert any("≥14 µm(c)" in s and "nominal 30 µm" in s for s in primary.explanation)


def test_refused_records_are_left_out_with_their_reason(site: Any, unit_class: Any) -> None:
    tank = f.source_make()
    unit = f.unit_make(site=site, unit_class=unit_class, fleet_number="N-1")
    history_make(unit=unit, source=tank, days=10)
    # Written past the model's validators (as a bulk import could): a 10^12 L fueling and a
    # sample whose water is NaN and temperature infinite.
    Fueling.objects.create(unit=unit, source=tank, fueled_at=NOW - timedelta(hours=3), litres=1e12)
    FuelSample.objects.create(
        reference="S-NAN",
        source=tank,
        sampled_at=NOW - timedelta(days=1),
        iso4406="18/16/13",
        code_4=18,
        code_6=16,
        code_14=13,
        water_mg_kg=float("nan"),  # SQLite stores NaN as NULL; PostgreSQL keeps it
        temperature_c=float("inf"),
    )
    due_items_recompute(unit_ids=[unit.pk], now=NOW)
    got = items(unit)
    assert set(got) == {"primary_filter", "fine_filter", "separator_drain"}
    # The huge fueling did not turn into "10000000000 % of its budget".
    assert all(i.basis != "contaminant_budget" for i in got.values() if i.task != "separator_drain")
    assert not any("S-NAN" in line for i in got.values() for line in i.explanation)
    batch = batch_inputs_load(unit_ids=[unit.pk], now=NOW)
    result = unit_compute(batch.units[0], batch, NOW)
    reasons = " | ".join(result.skipped)
    assert "sample S-NAN left out: " in reasons
    assert "water_mg_kg must be" in reasons or "temperature_c must be" in reasons
    assert "litres must be a finite number, 0 or more, at most 20,000" in reasons


def test_the_depots_coldest_fuel_brings_the_drain_forward(site: Any, unit_class: Any) -> None:
    # A sample with 80 mg/kg water tested at 15 °C: petroleum diesel holds about 59 mg/kg there
    # but about 16 mg/kg at -10 °C (Hibbard and Schalla, NACA RM E52D24, 1952), so at a depot
    # whose fuel gets that cold about three times as much water reaches the bowl.
    tank = f.source_make()
    unit = f.unit_make(site=site, unit_class=unit_class, fleet_number="W-1")
    history_make(unit=unit, source=tank, days=20)
    sample_make(source=tank, at=NOW - timedelta(days=30), code="18/16/13", ref="S-W")
    due_items_recompute(unit_ids=[unit.pk], now=NOW)
    mild = items(unit)["separator_drain"]
    site.coldest_fuel_c = -10.0
    site.save()
    due_items_recompute(unit_ids=[unit.pk], now=NOW)
    cold = items(unit)["separator_drain"]
    # No drain on record, so both are due now; the water rate the sample gives is what moves.
    ratio = (80.0 - diesel_saturation_mg_kg(temperature_c=-10.0)) / (
        80.0 - diesel_saturation_mg_kg(temperature_c=15.0)
    )
    assert 2.5 < ratio < 3.5
    assert cold.inputs["sample_rate_ml_h"] == pytest.approx(
        mild.inputs["sample_rate_ml_h"] * ratio, rel=1e-6
    )
