"""The filter check: an item whose dirt estimate alone has run out ("check") becomes a
check task; its close records the dP reading, which confirms the change (a reading at or over
the plan's limit: overdue) or re-bases the estimate (below it: the plan's limits govern).

Common practice: a fuel filter is changed on its differential pressure or restriction
indicator, not on an estimate. 22/20/17 is 16x the plan's 18/16/13 (ISO 4406:1999 Table 1:
each step doubles the upper limit)."""

from __future__ import annotations

from datetime import timedelta
from typing import Any

import pytest
from django.urls import reverse

from fleetfuel.fleet.models import FilterPressureReading
from fleetfuel.ledger.models import ServiceEvent
from fleetfuel.planning.actions import due_items_recompute
from fleetfuel.planning.models import DueItem
from fleetfuel.workorders.actions import work_orders_from_due_items
from fleetfuel.workorders.close import work_order_close
from fleetfuel.workorders.forms import JobEntry
from fleetfuel.workorders.kinds import Kind
from tests import factories as f
from tests.planning.builders import history_make, sample_make

NOW = f.NOW
HTMX = {"HTTP_HX_REQUEST": "true"}


@pytest.fixture
def checked(site: Any, unit_class: Any) -> DueItem:
    # 30 days of 16x fuel from the change: 960 % of the estimate, 300 of the plan's 500 h.
    dirty = f.source_make(name="Dirty tank")
    sample_make(source=dirty, at=NOW - timedelta(days=40), code="22/20/17", ref="S-DIRTY")
    unit = f.unit_make(site=site, unit_class=unit_class, fleet_number="K-1")
    history_make(unit=unit, source=dirty, days=30)
    due_items_recompute(unit_ids=[unit.pk], now=NOW)
    item = DueItem.objects.get(unit=unit, task="fine_filter")
    assert item.status == DueItem.Status.CHECK
    return item


@pytest.mark.parametrize(
    ("dp", "after"),
    [
        ("1.05", {DueItem.Status.OVERDUE}),  # at or over the fine filter's 1.0 bar limit
        ("0.40", {DueItem.Status.OK, DueItem.Status.SOON}),  # below: the plan's 1,500 h
    ],
)
def test_a_check_records_its_dp_and_confirms_or_re_bases(
    checked: DueItem, site: Any, manager: Any, mechanic: Any, as_manager: Any, dp: str,
    after: set[str],
) -> None:  # fmt: skip
    created = work_orders_from_due_items(
        item_ids=[checked.pk], site_ids=[site.pk], created_by=manager, today=NOW.date(), now=NOW
    )
    (order,) = created.orders
    (task,) = order.tasks.all()
    assert task.kind == Kind.FILTER_CHECK and task.component_id == checked.component_id
    assert task.description.startswith("Check dP first")
    saved = as_manager.post(
        reverse("workorders:task_save", args=[task.pk]),
        {"filter": str(checked.component_id), "dp_bar": dp},
        **HTMX,
    )
    assert saved.status_code == 200 and 'class="error"' not in saved.content.decode()
    outcome = work_order_close(
        work_order_id=order.pk,
        user=manager,
        token="check-1",
        job=JobEntry(1_300.0, False, None, None, None),
        now=NOW,
    )
    assert outcome.result == "closed", (outcome.violations, outcome.problems)
    reading = FilterPressureReading.objects.get(component_id=checked.component_id)
    assert reading.dp_bar == pytest.approx(float(dp)) and reading.hours == 1_300.0
    event = ServiceEvent.objects.get(work_order=order, kind=ServiceEvent.Kind.MEASUREMENT)
    assert event.value == pytest.approx(float(dp)) and event.component_id == task.component_id
    due_items_recompute(unit_ids=[checked.unit_id], now=NOW)
    assert DueItem.objects.get(pk=checked.pk).status in after
