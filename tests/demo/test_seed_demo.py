"""The demo tells the same story whenever it is built: just after midnight UTC, at 05:59 and
23:30 UTC, on the day a depot's clocks change, on 29 February.

Each instant builds the demo once (about 2 s) and every story check reads that build; the
build's transaction is rolled back when the instant's checks are done. Half the instants are
built by ``seed_demo --now`` while the wall clock is frozen years away (so the build must not
read it); the others by plain ``seed_demo`` under a clock frozen at the instant (a person's
"today's demo"). The checks run under a clock frozen at the instant, so the pages see the
same ``now`` as the build.
"""

from __future__ import annotations

import re
from collections.abc import Iterator
from dataclasses import dataclass, replace
from datetime import datetime, timedelta
from io import StringIO
from typing import Any
from zoneinfo import ZoneInfo

import pytest
import time_machine
from django.apps import apps
from django.contrib.auth.models import User
from django.core.management import call_command
from django.db import transaction
from django.test import TestCase
from django.urls import reverse

from fleetfuel.fleet.models import EngineEvent, Fueling, FuelSample, MeterReading, Site, Unit
from fleetfuel.ledger.models import ChainCheckpoint, ServiceEvent
from fleetfuel.planning.models import DueItem, UnitFlag
from fleetfuel.planning.source_models import SourceDecision
from fleetfuel.workorders.models import WorkOrder

DECOY_CLOCK = datetime.fromisoformat("2031-07-15T12:00:00Z")  # the wall clock of --now builds


@dataclass(frozen=True)
class Instant:
    now: datetime
    via_clock: bool  # plain seed_demo under a clock frozen at ``now``, else seed_demo --now
    queued_on_commit: tuple[Any, ...] = ()  # what the build left to run after its commit


INSTANTS = {
    "just-after-midnight-utc": Instant(datetime.fromisoformat("2026-12-02T00:05:00Z"), True),
    "as-reported-02:40-utc": Instant(datetime.fromisoformat("2026-12-02T02:40:00Z"), False),
    "05:59-utc": Instant(datetime.fromisoformat("2026-12-02T05:59:00Z"), False),
    "23:30-utc": Instant(datetime.fromisoformat("2026-12-02T23:30:00Z"), False),
    # Europe/London: clocks go forward at 01:00 UTC on 2027-03-28; 02:05 BST, just after,
    # given to --now in London's time.
    "london-clocks-forward": Instant(datetime.fromisoformat("2027-03-28T02:05:00+01:00"), False),
    # America/Chicago: clocks go back at 07:00 UTC on 2026-11-01; 01:30 CST, the hour twice.
    "chicago-clocks-back": Instant(datetime.fromisoformat("2026-11-01T07:30:00Z"), True),
    "29-february": Instant(datetime.fromisoformat("2028-02-29T12:00:00Z"), False),
}


@pytest.fixture(scope="module", params=list(INSTANTS), ids=list(INSTANTS))
def demo(request: Any, django_db_setup: Any, django_db_blocker: Any) -> Iterator[Instant]:
    """One demo build per instant, shared by the checks below, rolled back after them."""
    instant = INSTANTS[request.param]
    iso = instant.now.isoformat()
    with django_db_blocker.unblock(), transaction.atomic():
        with TestCase.captureOnCommitCallbacks() as queued:
            if instant.via_clock:
                with time_machine.travel(instant.now, tick=False):
                    call_command("seed_demo", stdout=StringIO())
            else:
                with time_machine.travel(DECOY_CLOCK, tick=False):
                    call_command("seed_demo", "--now", iso, stdout=StringIO())
        yield replace(instant, queued_on_commit=tuple(queued))
        transaction.set_rollback(True)


@pytest.fixture
def at_demo_now(demo: Instant, db: Any) -> Iterator[Instant]:
    with time_machine.travel(demo.now, tick=False):
        yield demo


def row_counts() -> dict[str, int]:
    return {
        m._meta.label: m.objects.count()
        for m in apps.get_models()
        if m._meta.app_label in {"fleet", "ledger", "workorders", "accounts", "planning"}
    }


def test_seed_demo_is_idempotent_and_matches_the_scenario(at_demo_now: Instant) -> None:
    first = row_counts()
    call_command("seed_demo", stdout=StringIO())
    assert row_counts() == first
    assert Site.objects.count() == 4
    assert 40 <= Unit.objects.count() <= 60
    assert Unit.objects.values("unit_class").distinct().count() == 5
    # One water-contaminated delivery (EN 590 limit: 200 mg/kg) and one dirty one
    # (dirtier than the WWFC 6th ed. 18/16/13 at the >=4 um(c) channel).
    assert FuelSample.objects.filter(water_mg_kg__gt=200).count() == 1
    assert FuelSample.objects.filter(code_4__gt=18).exists()
    # The recompute ran at the build: every unit has its three tasks projected, at `now`,
    # and nothing is left to recompute them after the commit at the wall clock's time.
    assert first["planning.DueItem"] == 3 * Unit.objects.count()
    assert set(DueItem.objects.values_list("computed_at", flat=True)) == {at_demo_now.now}
    assert set(ChainCheckpoint.objects.values_list("recorded_at", flat=True)) == {at_demo_now.now}
    assert at_demo_now.queued_on_commit == ()


def test_demo_contaminated_deliveries_lead_the_due_list(at_demo_now: Instant, client: Any) -> None:
    # The dirty delivery (sample FS-D001 into the Kestrel tank) brings Kestrel's filters
    # forward on contaminant loading, and each explanation names the sample.
    kestrel = DueItem.objects.filter(site__code="kestrel", task="fine_filter")
    assert kestrel.filter(basis="contaminant_budget").count() >= kestrel.count() // 2
    for item in kestrel.filter(basis="contaminant_budget"):
        assert any("FS-D001" in line for line in item.explanation)
    # The wet delivery (FS-W001, 780 mg/kg against EN 590's 200) shows on Mill Lane's units.
    mill = DueItem.objects.filter(site__code="mill-lane")
    assert any("FS-W001" in line for item in mill for line in item.explanation)
    # The manager's home opens on them: the first page, sorted by due date, starts with them.
    client.force_login(User.objects.get(username="manager"))
    first = client.get(reverse("pages:due_list")).context["page"].items[:10]
    assert all(i.site.code in {"kestrel", "mill-lane"} for i in first)


def test_demo_no_item_is_overdue_on_the_dirt_estimate_alone(at_demo_now: Instant) -> None:
    # Only a hard limit makes a filter overdue (the plan's hours, days or fuel volume, a
    # measured dP at its limit); a spent dirt estimate asks for a dP check ("check").
    filters = DueItem.objects.filter(task__in=["primary_filter", "fine_filter"])
    overdue_on = set(filters.filter(status="overdue").values_list("basis", flat=True))
    assert overdue_on <= {"plan_hours", "plan_days", "fuel_volume", "differential_pressure"}
    # Those of the dirty delivery's filters whose estimate is spent wait on a check, each
    # naming the sample and the litres burned (how many depends on how the budget is set).
    kestrel = filters.filter(site__code="kestrel", status="check")
    for item in kestrel:
        assert item.explanation[0].startswith("Check before changing")
        assert any("FS-D001" in x and "burned so far" in x for x in item.explanation)


def test_demo_dirty_delivery_is_one_decision_with_the_litres_each_unit_burned(
    at_demo_now: Instant,
) -> None:
    decisions = SourceDecision.objects.filter(resolved_at__isnull=True, particles_over=True)
    decision = decisions.select_related("sample").get()  # one, for the dirty delivery
    assert decision.sample.reference == "FS-D001"
    reached = list(decision.reached.select_related("unit"))
    assert len(reached) >= 10 and all(r.unit.fleet_number.startswith("KQ-") for r in reached)
    # Each unit's tank is its class's (the demo's invented sizes), never its largest fueling;
    # well mixed, some but not all of the dirty fuel has been burned (common practice).
    assert all(r.litres_burned is not None and 0 < r.litres_burned < r.litres for r in reached)
    text = " ".join(decision.explanation)
    assert "FS-D001" in text and "has been burned by now" in text
    said = re.search(r"([\d,]+) L of it has been burned by now", text)
    assert said is not None  # the total is the units' own, each stored to 0.1 L
    burned = sum(r.litres_burned or 0.0 for r in reached)
    assert float(said.group(1).replace(",", "")) == pytest.approx(burned, abs=1.0)
    # The Kestrel filters waiting on a dP check for the dirt estimate alone stand under it.
    checks = DueItem.objects.filter(site__code="kestrel", status="check")
    assert checks.exists()
    assert set(checks.values_list("source_decision", flat=True)) == {decision.pk}
    assert (
        not DueItem.objects.exclude(site__code="kestrel")
        .filter(source_decision__isnull=False)
        .exists()
    )
    for item in DueItem.objects.filter(task="fine_filter", site__code="kestrel"):
        assert any("the class's typical" in line for line in item.explanation)


def test_demo_ledger_verifies_against_its_checkpoints(at_demo_now: Instant) -> None:
    out = StringIO()
    call_command("verify_ledger", stdout=out)
    # Every unit with history has a signed checkpoint of its head from the start.
    assert "48 unit chain(s)" in out.getvalue()
    assert "0 agree with their signed checkpoint" not in out.getvalue()


def test_demo_flags_the_relief_valve_repeats_on_the_hauler(
    at_demo_now: Instant, client: Any
) -> None:
    # KQ-H04's rail relief valve opened 4 times over the last week; the demo plan flags 3
    # openings within 7 days (invented plan values).
    flagged = UnitFlag.objects.filter(code="relief_valve_repeat")
    assert list(flagged.values_list("unit__fleet_number", flat=True)) == ["KQ-H04"]
    assert "4 relief-valve openings in the last 7 days" in flagged.get().reason
    client.force_login(User.objects.get(username="manager"))
    page = client.get(reverse("pages:due_list"), {"q": "KQ-H04"}).context["page"]
    hauler = Unit.objects.get(fleet_number="KQ-H04")
    assert "relief_valve_repeat" in {f.code for f in page.flags_by_unit[hauler.pk]}


def test_demo_work_orders_are_open_for_tomorrow_at_the_depot(
    at_demo_now: Instant, client: Any
) -> None:
    now = at_demo_now.now
    open_orders = WorkOrder.objects.filter(status=WorkOrder.Status.OPEN).select_related(
        "unit__site"
    )
    assert sorted(o.number for o in open_orders) == ["WO-00002", "WO-00003", "WO-00004"]
    for order in open_orders:
        tomorrow = (now + timedelta(days=1)).astimezone(ZoneInfo(order.unit.site.time_zone))
        assert order.due_on == tomorrow.date()
        assert order.created_at <= now
    # The injector job, closed two months ago, is in the ledger with its connector.
    job = WorkOrder.objects.get(number="WO-00001", status=WorkOrder.Status.CLOSED)
    assert sorted(job.service_events.values_list("kind", flat=True)) == [
        ServiceEvent.Kind.CONNECTOR_REPLACED,
        ServiceEvent.Kind.INJECTOR_REPLACED,
    ]
    client.force_login(User.objects.get(username="mechanic"))
    page = client.get(reverse("workorders:my_work")).content.decode()
    assert all(number in page for number in ("WO-00002", "WO-00003", "WO-00004"))


def test_demo_records_nothing_after_now(at_demo_now: Instant) -> None:
    now = at_demo_now.now
    for model, field in [
        (MeterReading, "taken_at"),
        (Fueling, "fueled_at"),
        (FuelSample, "sampled_at"),
        (EngineEvent, "occurred_at"),
        (ServiceEvent, "performed_at"),
        (ServiceEvent, "recorded_at"),
    ]:
        latest = model.objects.order_by(f"-{field}").values_list(field, flat=True).first()
        assert latest is not None and latest <= now, (model.__name__, field, latest)
    # The last hour-meter readings are from yesterday's shift, on the demo's clock.
    latest = MeterReading.objects.order_by("-taken_at").first()
    assert latest is not None and now - latest.taken_at < timedelta(days=1)
