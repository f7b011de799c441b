"""The demo's two bad deliveries as source decisions, built once for this module.

FS-D001 (Kestrel bulk tank, 22/20/17) is more than two ISO 4406 scale numbers above the
World-Wide Fuel Charter 6th ed. (2019) 18/16/13 on every channel; FS-W001 (Mill Lane bulk
tank, 19/17/14 and 780 mg/kg) is within the margin on particles but over EN 590's 200 mg/kg
water. The units each decision lists are checked against the fuel log read here.
"""

from __future__ import annotations

import json
from collections.abc import Iterator
from datetime import datetime
from io import StringIO
from typing import Any

import pytest
import time_machine
from django.core.management import call_command

from fleetfuel.demo.actions import demo_seed
from fleetfuel.fleet.models import Fueling, FuelSample
from fleetfuel.planning.source_decisions import source_decisions_recompute
from fleetfuel.planning.source_models import SourceDecision
from tests.conftest import db_shared

NOW = datetime.fromisoformat("2026-12-02T05:59:00Z")


@pytest.fixture(scope="module")
def demo(django_db_setup: Any, django_db_blocker: Any) -> Iterator[None]:
    with db_shared(django_db_blocker):
        demo_seed(now=NOW)
        yield


def fuelled_since(sample: FuelSample) -> dict[str, float]:
    """Litres per unit from the sample's source since the sample (the demo records no
    deliveries, so the sample is where the dirty fuel starts), summed from the fuel log."""
    litres: dict[str, float] = {}
    rows = Fueling.objects.filter(
        source=sample.source, fueled_at__gte=sample.sampled_at, fueled_at__lte=NOW
    ).select_related("unit")
    for row in rows:
        key = row.unit.fleet_number
        litres[key] = litres.get(key, 0.0) + row.litres
    return {k: round(v, 1) for k, v in litres.items()}


def test_exactly_two_open_decisions_one_per_bad_delivery(demo: None, db: Any) -> None:
    open_ = SourceDecision.objects.filter(resolved_at__isnull=True).select_related("sample")
    assert sorted(d.sample.reference for d in open_) == ["FS-D001", "FS-W001"]


def test_the_dirty_delivery_lists_the_kestrel_units_fuelled_since(demo: None, db: Any) -> None:
    decision = SourceDecision.objects.select_related("sample", "source").get(
        sample__reference="FS-D001"
    )
    assert decision.source.name == "Kestrel bulk tank" and decision.stands
    reached = {r.unit.fleet_number: r.litres for r in decision.reached.select_related("unit")}
    expected = fuelled_since(decision.sample)
    assert reached.keys() == expected.keys()
    assert reached == pytest.approx(expected, abs=0.11)
    assert len(reached) >= 10 and all(n.startswith("KQ-") for n in reached)
    text = " ".join(decision.explanation)
    assert "FS-D001" in text and "22/20/17" in text
    assert f"{sum(expected.values()):,.0f} L" in text and "has been burned by now" in text
    # The demo projects every unit: each one's burned litres are worked out, and a
    # well-mixed tank has burned some but never all of what went in since (common practice).
    for r in decision.reached.select_related("unit"):
        assert r.litres_burned is not None and 0 < r.litres_burned < r.litres
        assert f"{r.unit.fleet_number} fuelled {r.litres:,.0f} L, burned " in text


def test_the_wet_delivery_is_a_decision_for_water(demo: None, db: Any) -> None:
    decision = SourceDecision.objects.get(sample__reference="FS-W001")
    text = " ".join(decision.explanation)
    assert "Water 780 mg/kg is over EN 590's 200 mg/kg" in text
    assert "scale numbers above" not in text  # 19/17/14: within two of 18/16/13
    assert all(r.unit.fleet_number.startswith("ML-") for r in decision.reached.all())


def test_recomputing_the_demo_opens_nothing_more(demo: None, db: Any) -> None:
    before = SourceDecision.objects.count()
    result = source_decisions_recompute(now=NOW)
    assert result.opened == 0 and result.refreshed == 2
    assert SourceDecision.objects.count() == before


def test_the_command_prints_each_open_decision_with_its_units(demo: None, db: Any) -> None:
    out = StringIO()
    with time_machine.travel(NOW, tick=False):
        call_command("source_decisions", "--site", "kestrel", "--json", stdout=out)
    rows = [json.loads(line) for line in out.getvalue().splitlines()]
    assert [r["sample"] for r in rows] == ["FS-D001"]
    sample = FuelSample.objects.get(reference="FS-D001")
    expected = fuelled_since(sample)
    assert {u["unit"]: u["litres_fuelled"] for u in rows[0]["units"]} == pytest.approx(
        expected, abs=0.11
    )
