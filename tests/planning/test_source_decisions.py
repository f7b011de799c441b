"""Source decisions through the projection run: opened once per source and sample, the units
reached with their litres, closed by a later sample or by a manager.

Out of range against the World-Wide Fuel Charter 6th ed. (2019) 18/16/13 (the test plans'
reference) with a margin of two ISO 4406 scale numbers, or water over EN 590's 200 mg/kg.
"""

from __future__ import annotations

from datetime import timedelta
from typing import Any

import pytest

from fleetfuel.fleet.models import Delivery, Fueling
from fleetfuel.planning.actions import due_items_recompute
from fleetfuel.planning.models import DueItem
from fleetfuel.planning.source_decisions import (
    SourceDecisionError,
    source_decision_resolve,
    source_decisions_recompute,
)
from fleetfuel.planning.source_models import SourceDecision
from tests import factories as f
from tests.planning.builders import history_make, sample_make

NOW = f.NOW


@pytest.fixture
def tank(site: Any) -> Any:
    return f.source_make(name="North bulk tank", site=site)


@pytest.fixture
def two_units(site: Any, unit_class: Any, tank: Any) -> list[Any]:
    units = [f.unit_make(site=site, unit_class=unit_class, fleet_number=n) for n in ("N-1", "N-2")]
    for i, u in enumerate(units):
        history_make(unit=u, source=tank, days=30, hours_per_day=5.0 + 5 * i, burn_l_per_h=20.0)
    return units


def litres_since(unit: Any, tank: Any, since: Any) -> float:
    """Summed here from the fuel log itself, not by the code under test."""
    rows = Fueling.objects.filter(unit=unit, source=tank, fueled_at__gte=since, fueled_at__lte=NOW)
    return round(sum(r.litres for r in rows), 1)


def test_a_dirty_delivery_opens_one_decision_listing_the_units_since_the_delivery(
    tank: Any, two_units: list[Any]
) -> None:
    delivered = NOW - timedelta(days=10, hours=3)
    Delivery.objects.create(source=tank, delivered_at=delivered, litres=20_000)
    sample_make(source=tank, at=NOW - timedelta(days=10), code="22/20/17", ref="S-DIRTY")
    due_items_recompute(unit_ids=[u.pk for u in two_units], now=NOW)
    due_items_recompute(unit_ids=[u.pk for u in two_units], now=NOW)  # idempotent
    decision = SourceDecision.objects.get()
    assert decision.is_open and decision.sample.reference == "S-DIRTY"
    assert decision.reach_from == delivered
    reached = {r.unit.fleet_number: r.litres for r in decision.reached.select_related("unit")}
    assert reached == {u.fleet_number: litres_since(u, tank, delivered) for u in two_units}
    # Hand-worked: fuelled daily an hour before each reading, so 11 fuelings fall in the
    # 10 days 3 hours since the delivery, of 5 h x 20 L/h and of 10 h x 20 L/h.
    assert reached == {"N-1": 1100.0, "N-2": 2200.0}
    text = " ".join(decision.explanation)
    assert "S-DIRTY" in text and "3,300 L" in text and "has been burned by now" in text
    assert "4 scale numbers above the reference 18/16/13" in text
    assert all(r.litres_burned is not None for r in decision.reached.all())


def washout_left(*, fill_l: float, tank_l: float, fills: int, last_draw_l: float) -> float:
    """Litres of the last ``fills`` fillings still in a well-mixed tank kept full: each fill
    of ``fill_l`` tops the tank up to ``tank_l`` and the next ``fill_l`` drawn takes the
    fraction f = fill_l / tank_l of every parcel (the mixed vessel: what leaves carries the
    tank's mix, Levenspiel, Chemical Reaction Engineering, 3rd ed., ch. 5). A parcel k draws
    old keeps (1 - f)^k of itself, so the fills left sum as a geometric series,
    fill_l (1 - (1 - f)^n) / f, all shrunk by the draw since the last fill. Worked here, not
    by the code under test."""
    f = fill_l / tank_l
    return fill_l * (1 - (1 - f) ** fills) / f * (1 - last_draw_l / tank_l)


def test_the_litres_burned_of_the_dirty_fuel_follow_a_well_mixed_tank(
    tank: Any, two_units: list[Any]
) -> None:
    for unit in two_units:
        unit.tank_capacity_l = 2000.0
        unit.save(update_fields=["tank_capacity_l"])
    delivered = NOW - timedelta(days=10, hours=3)
    Delivery.objects.create(source=tank, delivered_at=delivered, litres=20_000)
    sample_make(source=tank, at=NOW - timedelta(days=10), code="22/20/17", ref="S-DIRTY")
    due_items_recompute(unit_ids=[u.pk for u in two_units], now=NOW)
    decision = SourceDecision.objects.get()
    rows = {r.unit.fleet_number: r for r in decision.reached.select_related("unit")}
    # Daily fuelings of a day's burn, an hour before each reading: 11 since the delivery,
    # the tank full after each, an hour's burn (a 24th of a fill) since the last.
    for name, fill in (("N-1", 100.0), ("N-2", 200.0)):
        left = washout_left(fill_l=fill, tank_l=2000.0, fills=11, last_draw_l=fill / 24)
        assert rows[name].litres == 11 * fill
        assert rows[name].litres_burned == pytest.approx(11 * fill - left, abs=0.1)
    # N-1: 1,100 L fuelled, 860.6 L still in the tank, 239.4 L burned.
    text = " ".join(decision.explanation)
    assert "N-1 fuelled 1,100 L, burned 239 L" in text
    assert "N-2 fuelled 2,200 L, burned" in text and "S-DIRTY" in text


def test_a_unit_not_projected_keeps_the_burned_litres_its_decision_gave_it(
    tank: Any, two_units: list[Any]
) -> None:
    sample_make(source=tank, at=NOW - timedelta(days=4), code="22/20/17", ref="S-DIRTY")
    due_items_recompute(unit_ids=[u.pk for u in two_units], now=NOW)
    before = {r.unit_id: r.litres_burned for r in SourceDecision.objects.get().reached.all()}
    due_items_recompute(unit_ids=[two_units[0].pk], now=NOW)
    source_decisions_recompute(now=NOW)  # the command's run: no unit projected
    after = {r.unit_id: r.litres_burned for r in SourceDecision.objects.get().reached.all()}
    assert after == before and all(v is not None and v > 0 for v in after.values())


def test_a_decision_opened_without_a_projection_says_burned_is_not_worked_out(
    tank: Any, two_units: list[Any]
) -> None:
    sample_make(source=tank, at=NOW - timedelta(days=4), code="22/20/17", ref="S-DIRTY")
    source_decisions_recompute(now=NOW)
    decision = SourceDecision.objects.get()
    assert [r.litres_burned for r in decision.reached.all()] == [None, None]
    assert "litres burned not yet worked out" in " ".join(decision.explanation)


def test_a_clean_sample_and_one_two_numbers_over_open_nothing(tank: Any, two_units: Any) -> None:
    sample_make(source=tank, at=NOW - timedelta(days=5), code="20/18/15", ref="S-OK")
    assert source_decisions_recompute(now=NOW).opened == 0
    assert not SourceDecision.objects.exists()


def test_water_over_en590_opens_one(tank: Any, two_units: Any) -> None:
    sample_make(source=tank, at=NOW - timedelta(days=5), code="19/17/14", water=780, ref="S-WET")
    source_decisions_recompute(now=NOW)
    decision = SourceDecision.objects.get()
    assert "780 mg/kg is over EN 590's 200 mg/kg" in " ".join(decision.explanation)
    # No delivery on file: the fuel reached since the sample itself.
    assert decision.reach_from == NOW - timedelta(days=5)


def test_a_stale_sample_opens_nothing(tank: Any, two_units: Any, settings: Any) -> None:
    settings.SOURCE_SAMPLE_MAX_AGE_DAYS = 20
    sample_make(source=tank, at=NOW - timedelta(days=25), code="22/20/17", ref="S-OLD")
    assert source_decisions_recompute(now=NOW).opened == 0


def test_a_newer_clean_sample_after_a_later_delivery_closes_the_old_decision(
    tank: Any, two_units: Any
) -> None:
    sample_make(source=tank, at=NOW - timedelta(days=20), code="22/20/17", ref="S-DIRTY")
    source_decisions_recompute(now=NOW - timedelta(days=15))
    decision = SourceDecision.objects.get()
    Delivery.objects.create(source=tank, delivered_at=NOW - timedelta(days=8), litres=20_000)
    source_decisions_recompute(now=NOW - timedelta(days=7))
    decision.refresh_from_db()
    assert decision.is_open and not decision.stands  # a later delivery: resample
    assert decision.explanation[-1].endswith("Resample.")
    sample_make(source=tank, at=NOW - timedelta(days=7), code="17/15/12", ref="S-CLEAN")
    result = source_decisions_recompute(now=NOW)
    decision.refresh_from_db()
    assert result.superseded == 1 and result.opened == 0
    assert decision.outcome == SourceDecision.Outcome.SUPERSEDED
    assert decision.new_sample.reference == "S-CLEAN" and decision.resolved_by is None
    assert source_decisions_recompute(now=NOW).superseded == 0


def test_resolving_is_recorded_closes_it_and_is_never_reopened(
    tank: Any, two_units: Any, manager: Any
) -> None:
    sample_make(source=tank, at=NOW - timedelta(days=3), code="22/20/17", ref="S-DIRTY")
    source_decisions_recompute(now=NOW)
    decision = SourceDecision.objects.get()
    litres = decision.litres
    new = sample_make(source=tank, at=NOW, code="17/15/12", ref="S-AFTER")
    source_decision_resolve(
        decision_id=decision.pk, user=manager, outcome="polished",
        note="Polished by the contractor", new_sample_reference=" S-AFTER ", now=NOW,
    )  # fmt: skip
    decision.refresh_from_db()
    assert (decision.resolved_by, decision.resolved_at, decision.outcome) == (
        manager,
        NOW,
        "polished",
    )
    assert decision.new_sample == new and decision.note == "Polished by the contractor"
    source_decisions_recompute(now=NOW + timedelta(days=1))
    decision.refresh_from_db()
    assert SourceDecision.objects.count() == 1 and decision.outcome == "polished"
    assert decision.litres == litres  # kept as it stood when closed
    with pytest.raises(SourceDecisionError, match="already closed"):
        source_decision_resolve(
            decision_id=decision.pk, user=manager, outcome="accepted", note="",
            new_sample_reference="", now=NOW,
        )  # fmt: skip


def test_a_manager_cannot_record_superseded(tank: Any, two_units: Any, manager: Any) -> None:
    sample_make(source=tank, at=NOW - timedelta(days=3), code="22/20/17", ref="S-DIRTY")
    source_decisions_recompute(now=NOW)
    with pytest.raises(SourceDecisionError):
        source_decision_resolve(
            decision_id=SourceDecision.objects.get().pk, user=manager, outcome="superseded",
            note="", new_sample_reference="", now=NOW,
        )  # fmt: skip


@pytest.mark.parametrize("sources", [1, 6])
def test_the_recompute_reads_a_fixed_number_of_queries(
    site: Any, unit_class: Any, sources: int, django_assert_num_queries: Any
) -> None:
    for n in range(sources):
        tank = f.source_make(name=f"Tank {n}", site=site)
        unit = f.unit_make(site=site, unit_class=unit_class, fleet_number=f"Q-{n}")
        history_make(unit=unit, source=tank, days=5)
        sample_make(source=tank, at=NOW - timedelta(days=2), code="17/15/12", ref=f"S-{n}")
    # 1 sources with their latest sample's id, 2 open decisions, 3 the latest samples,
    # 4 decisions already made on them, 5 deliveries, 6 fuelings since, 7 filter plans'
    # references (8, the units' burned litres, only with a decision open); then the
    # transaction's savepoint, the update marking the due items, and its release.
    with django_assert_num_queries(10):
        assert source_decisions_recompute(now=NOW).opened == 0


def test_one_bad_row_leaves_the_projection_and_the_other_sources_alone(
    site: Any, unit_class: Any, two_units: list[Any], tank: Any
) -> None:
    other = f.source_make(name="South bowser", site=site)
    Fueling.objects.bulk_create(  # past the model's validators, as a raw import might
        [Fueling(unit=two_units[0], source=other, fueled_at=NOW - timedelta(hours=2), litres=-5)]
    )
    sample_make(source=other, at=NOW - timedelta(days=1), code="22/20/17", ref="S-BAD-LOG")
    sample_make(source=tank, at=NOW - timedelta(days=1), code="22/20/17", ref="S-GOOD")
    result = due_items_recompute(unit_ids=[u.pk for u in two_units], now=NOW)
    assert result.items > 0
    assert [d.sample.reference for d in SourceDecision.objects.all()] == ["S-GOOD"]


def test_a_sample_after_now_is_not_yet_taken(tank: Any, two_units: Any) -> None:
    sample_make(source=tank, at=NOW - timedelta(days=1), code="22/20/17", ref="S-DIRTY")
    source_decisions_recompute(now=NOW)
    assert source_decisions_recompute(now=NOW - timedelta(days=2)).refreshed == 0
    assert SourceDecision.objects.get().is_open


def test_items_on_the_dirt_estimate_alone_are_marked_with_the_open_decision(
    tank: Any, two_units: list[Any], manager: Any
) -> None:
    # 24/22/19: six scale numbers over 18/16/13, about 64 times the particles (ISO 4406
    # Table 1): the dirt estimate of each filter runs out, no hard limit is reached.
    sample_make(source=tank, at=NOW - timedelta(days=20), code="24/22/19", ref="S-DIRTY")
    due_items_recompute(unit_ids=[u.pk for u in two_units], now=NOW)
    decision = SourceDecision.objects.get()
    items = DueItem.objects.filter(unit__in=two_units)
    dirt = items.filter(basis="contaminant_budget").exclude(status="ok")
    assert dirt.count() == 4 and {i.status for i in dirt} == {"check"}
    assert {i.source_decision_id for i in dirt} == {decision.pk}
    assert not items.exclude(pk__in=dirt).filter(source_decision__isnull=False).exists()
    # Recorded as done: the items stand on their own again at the next run.
    source_decision_resolve(
        decision_id=decision.pk, user=manager, outcome="polished", note="",
        new_sample_reference="", now=NOW,
    )  # fmt: skip
    due_items_recompute(unit_ids=[two_units[0].pk], now=NOW)
    assert not items.filter(source_decision__isnull=False).exists()


def test_an_item_of_a_unit_the_decision_does_not_list_is_not_marked(
    tank: Any, two_units: list[Any], site: Any, unit_class: Any
) -> None:
    other = f.unit_make(site=site, unit_class=unit_class, fleet_number="N-9")
    history_make(unit=other, source=f.source_make(name="Clean bowser", site=site), days=30)
    sample_make(source=tank, at=NOW - timedelta(days=20), code="24/22/19", ref="S-DIRTY")
    due_items_recompute(unit_ids=[u.pk for u in [*two_units, other]], now=NOW)
    assert not DueItem.objects.filter(unit=other, source_decision__isnull=False).exists()
    assert DueItem.objects.filter(unit__in=two_units, source_decision__isnull=False).exists()


def test_a_decision_on_water_alone_marks_no_filter_item(tank: Any, two_units: list[Any]) -> None:
    # 19/17/14 is within two scale numbers of 18/16/13; 780 mg/kg is over EN 590's 200.
    sample_make(source=tank, at=NOW - timedelta(days=20), code="19/17/14", water=780, ref="S-WET")
    due_items_recompute(unit_ids=[u.pk for u in two_units], now=NOW)
    decision = SourceDecision.objects.get()
    assert decision.is_open and not decision.particles_over
    assert not DueItem.objects.filter(source_decision__isnull=False).exists()
