"""synth_fleet: the rows it promises, chains that verify, the same fleet for the same seed,
and --drop takes away the synthetic depots and nothing else."""

from __future__ import annotations

import hashlib
import io
import json
from datetime import UTC
from typing import Any

import pytest
from django.core.management import call_command

from fleetfuel.demo.synth import synthetic_drop, synthetic_fleet_build, synthetic_sites
from fleetfuel.fleet.models import Component, MeterReading, Unit
from fleetfuel.ledger.actions import CONTENT_FIELDS, HASHED_WHEN_SET, service_event_append
from fleetfuel.ledger.models import ServiceEvent
from fleetfuel.ledger.verification import ledger_verify
from tests import factories as f

pytestmark = pytest.mark.django_db


def story(fleet_number: str) -> list[tuple[Any, ...]]:
    """A unit's history without the row ids (which differ between builds)."""
    return list(
        ServiceEvent.objects.filter(unit__fleet_number=fleet_number)
        .order_by("seq")
        .values_list("seq", "kind", "performed_at", "hour_meter", "water_ml")
    )


def test_builds_the_rows_it_promises_with_chains_that_verify(db: Any) -> None:
    made = synthetic_fleet_build(units=3, seed=7, now=f.NOW)
    # 548 days with a reading every second day: 274 per unit; 6 parts and 4 injectors.
    assert made.counts["fleet.MeterReading"] == MeterReading.objects.count() == 3 * 274
    assert made.counts["fleet.Component"] == Component.objects.count() == 3 * 10
    events = made.counts["ledger.ServiceEvent"]
    assert events == ServiceEvent.objects.count() and 3 * 90 < events < 3 * 130
    report = ledger_verify()
    assert report.units == 3 and report.events == events
    assert not [p for p in report.problems if "checkpoint" not in p.problem]
    # One link by hand, as README's "Checking an export" tells an auditor: SHA-256 (FIPS
    # 180-4, Python's hashlib) of the sorted-key compact JSON (RFC 8259) of the content,
    # followed by the previous entry's hash.
    first = ServiceEvent.objects.filter(seq=1).values(*CONTENT_FIELDS, "hash", "prev_hash")[0]
    # A field added after entries were sealed without it is hashed only when set (the
    # export manifest's ``hashed_when_set``).
    content = {k: first[k] for k in CONTENT_FIELDS if k not in HASHED_WHEN_SET or first[k]}
    for key in ("performed_at", "recorded_at"):
        content[key] = content[key].astimezone(UTC).strftime("%Y-%m-%dT%H:%M:%S.%fZ")
    content = {k: int(v) if isinstance(v, float) and v.is_integer() else v
               for k, v in content.items()}  # fmt: skip
    text = json.dumps(content, sort_keys=True, separators=(",", ":"), ensure_ascii=False)
    assert first["prev_hash"] == "0" * 64
    assert hashlib.sha256(text.encode() + first["prev_hash"].encode()).hexdigest() == first["hash"]


def test_the_same_seed_builds_the_same_fleet_and_another_seed_another(db: Any) -> None:
    synthetic_fleet_build(units=2, seed=7, now=f.NOW)
    before = story("SY-000001")
    synthetic_drop()
    synthetic_fleet_build(units=2, seed=7, now=f.NOW)
    assert story("SY-000001") == before and len(before) > 90
    synthetic_drop()
    synthetic_fleet_build(units=2, seed=8, now=f.NOW)
    assert story("SY-000001") != before


def test_drop_removes_the_synthetic_depots_and_leaves_the_rest(unit: Unit, mechanic: Any) -> None:
    service_event_append(unit=unit, kind="inspection", performed_at=f.NOW, recorded_by=mechanic)
    call_command("synth_fleet", units=2, seed=1, now=f.NOW.isoformat(), stdout=io.StringIO())
    assert len(synthetic_sites()) == 1 and Unit.objects.count() == 3
    call_command("synth_fleet", drop=True, stdout=io.StringIO())
    assert synthetic_sites() == []
    assert list(Unit.objects.all()) == [unit]
    assert ServiceEvent.objects.get().unit_id == unit.pk
