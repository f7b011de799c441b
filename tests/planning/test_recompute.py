"""The planning engine end to end: inputs in the database, due items out."""

from __future__ import annotations

import json
from datetime import timedelta
from io import StringIO
from typing import Any

import pytest
from django.core.management import call_command
from django.db import connection
from django.test.utils import CaptureQueriesContext

from fleetfuel.planning.actions import due_items_recompute
from fleetfuel.planning.models import DueItem
from tests import factories as f
from tests.planning.builders import history_make, sample_make

NOW = f.NOW


@pytest.fixture
def fleet(site: Any, unit_class: Any) -> dict[str, Any]:
    clean_tank = f.source_make(name="Clean tank")
    dirty_tank = f.source_make(name="Dirty tank")
    clean = f.unit_make(site=site, unit_class=unit_class, fleet_number="C-1")
    dirty = f.unit_make(site=site, unit_class=unit_class, fleet_number="D-1")
    history_make(unit=clean, source=clean_tank, days=30)
    history_make(unit=dirty, source=dirty_tank, days=30)
    start = NOW - timedelta(days=31)
    # WWFC 6th ed. 18/16/13 is the reference; the clean tank meets it.
    sample_make(source=clean_tank, at=start, code="18/16/13", ref="S-CLEAN")
    sample_make(source=dirty_tank, at=start, code="18/16/13", ref="S-OK")
    # Two ISO 4406 steps dirtier in every channel: each step doubles Table 1's upper limit,
    # so this fuel carries 4x the reference's particles (ISO 4406:1999 Table 1).
    sample_make(
        source=dirty_tank, at=NOW - timedelta(days=5, hours=12), code="20/18/15", ref="S-DIRTY"
    )
    return {"clean": clean, "dirty": dirty}


def items(unit: Any) -> dict[str, DueItem]:
    return {i.task: i for i in DueItem.objects.filter(unit=unit)}


def test_dirty_delivery_brings_the_filters_forward_and_names_the_sample(
    fleet: dict[str, Any],
) -> None:
    due_items_recompute(unit_ids=[fleet["clean"].pk, fleet["dirty"].pk], now=NOW)
    clean, dirty = items(fleet["clean"]), items(fleet["dirty"])
    assert set(clean) == {"primary_filter", "fine_filter", "separator_drain"}
    for task in ("primary_filter", "fine_filter"):
        assert dirty[task].due_hours < clean[task].due_hours
        assert dirty[task].basis == "contaminant_budget"
        assert any("S-DIRTY" in line for line in dirty[task].explanation)
    # Clean fuel: the plan's 500 h interval governs (never extended for clean fuel).
    # 30 days x 10 h/day from 1,000 h at the change -> 1,300 h now; due at 1,000 + 500 h.
    assert clean["fine_filter"].due_hours == pytest.approx(1500, abs=0.5)
    assert clean["fine_filter"].basis == "plan_hours"
    # Dirty, worked by hand with the tank (services/tank.py: well mixed; no tank size recorded,
    # so the largest fueling, 200 L): budget = 500 h x 20 L/h = 10,000 reference-litres.
    # 300 h x 20 L/h = 6,000 L burned since the change. Of the 6 fuelings after the dirty
    # sample, 5 are burned (1,000 L) and the last, put in an hour ago, only 10 h/day x 20 L/h
    # / 24 = 8.33 L: 6,000 + 3 x 1,008.33 = 9,025 used, 975 left. The tank now holds that
    # last fueling, 4x, so 975 / (20 L/h x 4) = 12.19 h -> 1,312.19 h.
    assert dirty["fine_filter"].due_hours == pytest.approx(1312.19, abs=0.05)


def test_hand_worked_budget(site: Any, unit_class: Any) -> None:
    # Plan: 500 h at 20 L/h on 18/16/13 (>=4 um(c): upper limit 2,500/mL, ISO 4406 Table 1).
    # Fuel 20/18/15 (10,000/mL at >=4 um(c)) is 4x. 10 days x 10 h/day from 1,000 h:
    # 2,000 L burned. The tank (well mixed, 200 L: the largest fueling, as no size is
    # recorded) first holds fuel of no record, the reference assumed: the first 10 h are
    # spread from the change at midnight to the reading 36 h later, and the first fueling
    # comes an hour before it, so 200 L x 35/36 = 194.4 L of it is burned at 1x.
    # Used: 194.4 + 4 x 1,805.6 = 7,416.7 of 10,000 reference-litres; 2,583.3 left lasts
    # 2,583.3 / (20 L/h x 4) = 32.29 h. Due at 1,100 + 32.29 = 1,132.29 h.
    tank = f.source_make()
    unit = f.unit_make(site=site, unit_class=unit_class, fleet_number="H-1")
    history_make(unit=unit, source=tank, days=10)
    sample_make(source=tank, at=NOW - timedelta(days=30), code="20/18/15", ref="S-4X")
    due_items_recompute(unit_ids=[unit.pk], now=NOW)
    fine = items(unit)["fine_filter"]
    assert fine.due_hours == pytest.approx(1132.29, abs=0.05)


def test_recompute_twice_leaves_the_same_rows(fleet: dict[str, Any]) -> None:
    ids = [fleet["clean"].pk, fleet["dirty"].pk]
    due_items_recompute(unit_ids=ids, now=NOW)
    fields = [
        "id",
        "unit_id",
        "component_id",
        "task",
        "status",
        "due_on",
        "due_hours",
        "basis",
        "explanation",
    ]
    first = list(DueItem.objects.order_by("id").values(*fields))
    due_items_recompute(unit_ids=ids, now=NOW)
    assert list(DueItem.objects.order_by("id").values(*fields)) == first


def test_query_count_does_not_grow_with_batch_size(site: Any, unit_class: Any) -> None:
    tank = f.source_make()
    units = [f.unit_make(site=site, unit_class=unit_class) for _ in range(6)]
    for u in units:
        history_make(unit=u, source=tank, days=5)
    counts = []
    for batch in (units[:2], units):
        with CaptureQueriesContext(connection) as ctx:
            due_items_recompute(unit_ids=[u.pk for u in batch], now=NOW)
        counts.append(len(ctx.captured_queries))
    assert counts[0] == counts[1]
    # 13 reads (planning/selectors.py names each; the 13th, filter_changes_load, is every
    # filter change of the batch's unit classes, the life evidence) + stale-row reads/deletes
    # and two upserts (on PostgreSQL four statements each: the scratch table made if need be
    # and emptied, the COPY into it, the insert from it: planning/actions.rows_upsert_copy);
    # savepoints add a few on each database. The point is the equality above; keep this a
    # sanity bound.
    assert counts[0] <= 28


def test_project_due_json_lists_every_task_with_basis_and_explanation(
    fleet: dict[str, Any],
) -> None:
    out = StringIO()
    call_command("project_due", "--json", stdout=out)
    rows = [json.loads(line) for line in out.getvalue().splitlines()]
    assert {(r["unit"], r["task"]) for r in rows} == {
        (u, t) for u in ("C-1", "D-1") for t in ("primary_filter", "fine_filter", "separator_drain")
    }
    for r in rows:
        assert r["basis"] and r["explanation"] and r["status"] in set(DueItem.Status.values)
        assert len(r["band"]) == 2 and r["band"][0] <= r["band"][1]


def test_project_due_refuses_an_unknown_unit(db: Any) -> None:
    from django.core.management.base import CommandError

    with pytest.raises(CommandError, match="No unit"):
        call_command("project_due", "--unit", "NOPE")


def test_water_in_fuel_event_makes_the_drain_due_now(fleet: dict[str, Any]) -> None:
    from fleetfuel.fleet.models import EngineEvent

    unit = fleet["clean"]
    # SAE J1939 SPN 97: water in fuel indicator.
    EngineEvent.objects.create(
        unit=unit,
        occurred_at=NOW - timedelta(hours=3),
        spn=97,
        fmi=0,
        kind=EngineEvent.Kind.WATER_IN_FUEL,
    )
    due_items_recompute(unit_ids=[unit.pk], now=NOW)
    drain = items(unit)["separator_drain"]
    assert drain.due_on == NOW.date()
    assert drain.basis == "water_event"


def test_repeated_relief_valve_openings_flag_the_unit(fleet: dict[str, Any]) -> None:
    from fleetfuel.fleet.models import EngineEvent
    from fleetfuel.planning.models import UnitFlag

    unit = fleet["dirty"]
    for d in (1, 2, 3):  # the plan flags 3 openings within 7 days
        EngineEvent.objects.create(
            unit=unit,
            occurred_at=NOW - timedelta(days=d),
            spn=5571,
            fmi=0,
            kind=EngineEvent.Kind.RELIEF_VALVE_OPENED,
        )
    due_items_recompute(unit_ids=[unit.pk], now=NOW)
    flag = UnitFlag.objects.get(unit=unit, code="relief_valve_repeat")
    assert "metering" in flag.checks[0].lower() and flag.high_pressure
    # Events go away (outside the window) -> the flag goes on the next recompute.
    due_items_recompute(unit_ids=[unit.pk], now=NOW + timedelta(days=30))
    assert not UnitFlag.objects.filter(unit=unit, code="relief_valve_repeat").exists()


def test_a_disposed_unit_leaves_the_due_list(fleet: dict[str, Any]) -> None:
    unit = fleet["clean"]
    due_items_recompute(unit_ids=[unit.pk], now=NOW)
    assert DueItem.objects.filter(unit=unit).count() == 3
    unit.disposed_on = NOW.date()
    unit.save()
    due_items_recompute(unit_ids=[unit.pk], now=NOW)
    assert not DueItem.objects.filter(unit=unit).exists()
