"""A task that cannot be done at this job: marked "not done" with a written reason from the
tablet, undone before the close, and left out of the close (no fields, no service event, its
due item still due), the reason kept on the task and in the work order's notes."""

from __future__ import annotations

from collections.abc import Iterator
from datetime import UTC, datetime
from typing import Any

import pytest
import time_machine
from django.contrib.messages import get_messages
from django.forms.models import model_to_dict
from django.urls import reverse
from django.utils import timezone

from fleetfuel.fleet.models import ComponentKind, MeterReading
from fleetfuel.ledger.models import ServiceEvent
from fleetfuel.planning.actions import due_items_recompute
from fleetfuel.planning.models import DueItem
from fleetfuel.workorders import actions
from fleetfuel.workorders.actions import work_orders_from_due_items
from fleetfuel.workorders.close import CloseOutcome, work_order_close
from fleetfuel.workorders.forms import JobEntry, not_done_reason_clean
from fleetfuel.workorders.models import WorkOrder, WorkOrderTask
from tests.workorders.conftest import task_make

K = WorkOrderTask.Kind
HTMX = {"HTTP_HX_REQUEST": "true"}
REASON = "Primary filter element not in stock, ordered for Tuesday"
MISSING_3 = "Injector replaced on cylinder 3 without a new high-pressure connector on cylinder 3."


def mark_url(task: WorkOrderTask) -> str:
    return reverse("workorders:task_not_done", args=[task.pk])


def undo_url(task: WorkOrderTask) -> str:
    return reverse("workorders:task_not_done_undo", args=[task.pk])


def job(hours: float | None = 2_000.0) -> JobEntry:
    return JobEntry(
        hour_meter=hours,
        meter_replaced=False,
        meter_old_final=None,
        meter_new_start=None,
        notes=None,
    )


def close(wo: WorkOrder, user: Any, token: str = "nd-1", **kw: Any) -> CloseOutcome:
    kw.setdefault("job", job())
    return work_order_close(work_order_id=wo.pk, user=user, token=token, **kw)


@pytest.fixture
def clock_months_after_the_filters_were_fitted() -> Iterator[None]:
    """The unit's primary filter was fitted on 2026-01-01 (tests.factories.unit_make) on a
    180-day plan; at this instant its calendar limit has governed for months, so the due date
    stays put whatever the usage forecast says. A fixed instant, not the day the suite runs."""
    with time_machine.travel(datetime(2026, 12, 1, 10, 0, tzinfo=UTC), tick=True):
        yield


@pytest.fixture
def primary_due(wo: WorkOrder) -> DueItem:
    """The unit's projected items; the primary filter's is overdue (as the planner shows)."""
    due_items_recompute(unit_ids=[wo.unit_id], now=wo.created_at)
    item = DueItem.objects.get(unit=wo.unit, task=DueItem.Task.PRIMARY_FILTER)
    assert item.status == DueItem.Status.OVERDUE
    return item


@pytest.fixture
def planned(wo: WorkOrder, primary_due: DueItem) -> WorkOrderTask:
    """A planned filter change, from the due item, with nothing entered yet."""
    return task_make(
        wo,
        K.FILTER_CHANGE,
        component=wo.unit.components.get(kind=ComponentKind.PRIMARY_FILTER),
        description="Change primary filter",
        due_item=primary_due,
    )


@pytest.fixture
def relief(wo: WorkOrder) -> WorkOrderTask:
    """A task that is done (it has no required field)."""
    return task_make(
        wo, K.RELIEF_VALVE_REPLACE, description="Replace relief valve", entry={"part_number": "RV"}
    )


# ----------------------------------------------------------------- the reason


@pytest.mark.parametrize(
    ("raw", "wanted"),
    [
        ("", "Write why this task cannot be done (10 characters or more)"),
        ("   \n  ", "Write why this task cannot be done (10 characters or more)"),
        ("no part", "(you wrote 7)"),
        # Padding does not count: runs of spaces are one space ("a b c" is 5 characters).
        ("a     b      c", "(you wrote 5)"),
    ],
)
def test_a_reason_under_ten_characters_is_refused(raw: str, wanted: str) -> None:
    reason, error = not_done_reason_clean(raw=raw)
    assert reason == ""
    assert wanted in error


def test_a_reason_is_kept_as_one_line() -> None:
    assert not_done_reason_clean(raw="  Unit needed\n back  on shift ") == (
        "Unit needed back on shift",
        "",
    )
    assert not_done_reason_clean(raw="0123456789") == ("0123456789", "")


def test_marking_without_a_reason_is_refused_with_a_clear_error(
    as_mechanic: Any, planned: WorkOrderTask
) -> None:
    response = as_mechanic.post(mark_url(planned), {"reason": "no part"}, **HTMX)
    assert response.status_code == 422
    assert "HX-Request" in response["Vary"]
    html = response.content.decode()
    assert "Say a little more about why this task cannot be done" in html
    assert "(you wrote 7)" in html
    assert ">no part</textarea>" in html  # what was typed stays in the field
    assert '<details class="not-done-box" open>' in html
    planned.refresh_from_db()
    assert (planned.not_done_at, planned.not_done_reason, planned.not_done_by) == (None, "", None)


def test_without_javascript_a_missing_reason_shows_the_page_with_the_error(
    as_mechanic: Any, wo: WorkOrder, planned: WorkOrderTask
) -> None:
    response = as_mechanic.post(mark_url(planned), {"reason": ""})
    assert response.status_code == 422
    html = response.content.decode()
    assert f"Work order {wo.number}" in html  # the whole page
    assert "Write why this task cannot be done (10 characters or more)" in html
    assert html.count('<details class="not-done-box" open>') == 1
    planned.refresh_from_db()
    assert not planned.is_not_done


# ----------------------------------------------------------------- marking and undoing


def test_mark_not_done_with_htmx_shows_the_reason_and_the_undo(
    as_mechanic: Any, mechanic: Any, wo: WorkOrder, planned: WorkOrderTask
) -> None:
    response = as_mechanic.post(mark_url(planned), {"reason": f"  {REASON}  "}, **HTMX)
    assert response.status_code == 200
    html = response.content.decode()
    assert f'id="task-{planned.pk}"' in html and "is-not-done" in html
    assert f"“{REASON}”" in html
    assert undo_url(planned) in html
    assert '<form class="task-form"' not in html  # no fields to fill
    # The close box's list of tasks not done, swapped out of band.
    assert 'id="not-done-summary"' in html and 'hx-swap-oob="true"' in html
    planned.refresh_from_db()
    assert planned.not_done_reason == REASON and planned.not_done_by == mechanic
    assert planned.not_done_at is not None and planned.done is False


def test_mark_not_done_as_a_plain_form(
    as_mechanic: Any, wo: WorkOrder, planned: WorkOrderTask
) -> None:
    response = as_mechanic.post(mark_url(planned), {"reason": REASON})
    assert response.status_code == 302
    assert response["Location"] == reverse("workorders:detail", args=[wo.pk]) + (
        f"#task-{planned.pk}"
    )
    (message,) = [str(m) for m in get_messages(response.wsgi_request)]
    assert "“Change primary filter” marked not done" in message and "stays due" in message
    page = as_mechanic.get(reverse("workorders:detail", args=[wo.pk])).content.decode()
    assert "Not done (1), left out of the close and still due:" in page
    assert REASON in page


def test_undo_brings_the_task_and_its_draft_back(
    as_mechanic: Any, mechanic: Any, wo: WorkOrder, planned: WorkOrderTask
) -> None:
    as_mechanic.post(
        reverse("workorders:task_save", args=[planned.pk]), {"part_number": "PF-9"}, **HTMX
    )
    actions.task_not_done_mark(task_id=planned.pk, user=mechanic, reason=REASON)
    response = as_mechanic.post(undo_url(planned), **HTMX)
    assert response.status_code == 200
    html = response.content.decode()
    assert '<form class="task-form"' in html and 'value="PF-9"' in html  # the draft is back
    assert mark_url(planned) in html and "is-not-done" not in html
    planned.refresh_from_db()
    assert (planned.not_done_at, planned.not_done_reason, planned.not_done_by) == (None, "", None)
    assert planned.entry["part_number"] == "PF-9"


def test_an_undone_task_needs_its_fields_again(
    wo: WorkOrder, mechanic: Any, relief: WorkOrderTask
) -> None:
    drain = task_make(wo, K.SEPARATOR_DRAIN, description="Drain separator")
    actions.task_not_done_mark(task_id=drain.pk, user=mechanic, reason=REASON)
    actions.task_not_done_undo(task_id=drain.pk, user=mechanic)
    outcome = close(wo, mechanic)
    assert outcome.result == "refused"
    assert outcome.problems == [
        "Drain separator: fill in “Water drained”.",
        "Drain separator: fill in “What came out”.",
    ]
    actions.task_not_done_mark(task_id=drain.pk, user=mechanic, reason=REASON)
    assert close(wo, mechanic).result == "closed"


def test_undo_as_a_plain_form(
    as_mechanic: Any, mechanic: Any, wo: WorkOrder, planned: WorkOrderTask
) -> None:
    actions.task_not_done_mark(task_id=planned.pk, user=mechanic, reason=REASON)
    response = as_mechanic.post(undo_url(planned))
    assert response.status_code == 302 and response["Location"].endswith(f"#task-{planned.pk}")
    planned.refresh_from_db()
    assert not planned.is_not_done


# ----------------------------------------------------------------- the close


@pytest.mark.usefixtures("clock_months_after_the_filters_were_fitted")
def test_close_succeeds_with_a_task_not_done_and_leaves_its_due_item_due(
    as_mechanic: Any,
    mechanic: Any,
    wo: WorkOrder,
    planned: WorkOrderTask,
    relief: WorkOrderTask,
    primary_due: DueItem,
    django_capture_on_commit_callbacks: Any,
) -> None:
    filter_part = wo.unit.components.get(kind=ComponentKind.PRIMARY_FILTER)
    assert as_mechanic.post(mark_url(planned), {"reason": REASON}).status_code == 302
    before = model_to_dict(DueItem.objects.get(pk=primary_due.pk))

    with django_capture_on_commit_callbacks(execute=False) as callbacks:
        response = as_mechanic.post(
            reverse("workorders:close", args=[wo.pk]), {"token": "t-nd", "hour_meter": "2000"}
        )
    assert response.status_code == 302
    wo.refresh_from_db()
    assert wo.status == WorkOrder.Status.CLOSED
    # Only the task done is in the service history; nothing for the filter not changed.
    events = ServiceEvent.objects.filter(work_order=wo)
    assert list(events.values_list("kind", flat=True)) == ["relief_valve_replaced"]
    assert not ServiceEvent.objects.filter(unit=wo.unit, component=filter_part).exists()
    planned.refresh_from_db()
    relief.refresh_from_db()
    assert (planned.done, relief.done) == (False, True)
    assert planned.not_done_reason == REASON  # kept on the task
    assert f"Not done: Change primary filter — {REASON} ({mechanic.username})" in wo.notes
    # The close itself leaves the due item exactly as it was...
    assert model_to_dict(DueItem.objects.get(pk=primary_due.pk)) == before

    # ...and so does the recompute it queues: the filter is still due, not reset as changed.
    for callback in callbacks:
        callback()
    after = DueItem.objects.get(pk=primary_due.pk)
    assert after.computed_at > primary_due.computed_at  # the recompute did run
    assert (after.status, after.due_on, after.due_hours, after.basis) == (
        before["status"],
        before["due_on"],
        before["due_hours"],
        before["basis"],
    )
    assert after.status == DueItem.Status.OVERDUE
    filter_part.refresh_from_db()
    assert filter_part.installed_hours != 2_000.0
    # The planner may put it on a new work order (it is in no open one any more).
    created = work_orders_from_due_items(
        item_ids=[primary_due.pk],
        site_ids=[wo.unit.site_id],
        created_by=mechanic,
        today=timezone.localdate(),
    )
    assert len(created.orders) == 1

    # The result page lists the task not done, with its reason and who marked it.
    page = as_mechanic.get(response["Location"])
    html = page.content.decode()
    assert "Not done at this job (1)" in html
    assert f"Change primary filter</a>: “{REASON}”" in html
    messages = [str(m) for m in get_messages(page.wsgi_request)]
    assert any("Not done, so still due on the unit: Change primary filter." in m for m in messages)


def test_every_task_not_done_still_closes_and_records_the_hour_meter(
    wo: WorkOrder, mechanic: Any, planned: WorkOrderTask, relief: WorkOrderTask
) -> None:
    for task in (planned, relief):
        actions.task_not_done_mark(task_id=task.pk, user=mechanic, reason=REASON)
    # The hour meter is still needed.
    refused = close(wo, mechanic, job=job(None))
    assert refused.result == "refused"
    assert refused.problems == ["Enter the hour meter reading at the job."]

    outcome = close(wo, mechanic, token="nd-all")
    assert outcome.result == "closed"
    assert [t.pk for t in outcome.not_done] == [planned.pk, relief.pk]
    assert not ServiceEvent.objects.filter(work_order=wo).exists()
    reading = MeterReading.objects.get(source=MeterReading.Source.WORK_ORDER)
    assert (reading.unit_id, reading.hours) == (wo.unit_id, 2_000.0)
    wo.refresh_from_db()
    assert wo.notes.count("Not done: ") == 2
    assert not WorkOrderTask.objects.filter(work_order=wo, done=True).exists()


def test_a_retried_close_notes_the_tasks_not_done_once(
    wo: WorkOrder, mechanic: Any, planned: WorkOrderTask, relief: WorkOrderTask
) -> None:
    actions.task_not_done_mark(task_id=planned.pk, user=mechanic, reason=REASON)
    first = close(wo, mechanic, token="same")
    second = close(wo, mechanic, token="same")
    assert (first.replay, second.replay) == (False, True)
    assert [t.pk for t in second.not_done] == [planned.pk]
    wo.refresh_from_db()
    assert wo.notes.count(f"Not done: Change primary filter — {REASON}") == 1


def test_an_injector_not_done_needs_no_connector(wo: WorkOrder, mechanic: Any) -> None:
    injector = task_make(wo, K.INJECTOR_REPLACE, cylinder=3, description="Injector 3")
    task_make(wo, K.RELIEF_VALVE_REPLACE, description="Relief valve")
    assert close(wo, mechanic).violations[0].message == MISSING_3  # the rule applies...
    actions.task_not_done_mark(task_id=injector.pk, user=mechanic, reason=REASON)
    assert close(wo, mechanic).result == "closed"  # ...to injectors replaced only


def test_a_connector_not_done_does_not_get_round_the_connector_rule(
    wo: WorkOrder, mechanic: Any
) -> None:
    task_make(wo, K.INJECTOR_REPLACE, cylinder=3, description="Injector 3",
              entry={"new_serial": "INJ-3"})  # fmt: skip
    connector = task_make(wo, K.CONNECTOR_REPLACE, cylinder=3, description="Connector 3")
    actions.task_not_done_mark(task_id=connector.pk, user=mechanic, reason="No connector left")
    outcome = close(wo, mechanic)
    assert outcome.result == "refused"
    assert [v.message for v in outcome.violations] == [MISSING_3]


def test_a_measurement_not_done_creates_no_follow_up(
    wo: WorkOrder, mechanic: Any, limits: Any, relief: WorkOrderTask
) -> None:
    measured = task_make(
        wo,
        K.MEASUREMENT,
        description="Supply pressure under load",
        entry={"limit_id": limits["load"].pk, "value": 3.2},  # outside its limits
    )
    actions.task_not_done_mark(task_id=measured.pk, user=mechanic, reason="Gauge is away")
    outcome = close(wo, mechanic)
    assert outcome.result == "closed" and outcome.follow_up is None
    assert not ServiceEvent.objects.filter(work_order=wo, kind="measurement").exists()


# ----------------------------------------------------------------- after the close


def test_marking_after_the_close_is_refused_and_the_reason_kept_in_notes(
    as_mechanic: Any, wo: WorkOrder, planned: WorkOrderTask, manager: Any
) -> None:
    WorkOrder.objects.filter(pk=wo.pk).update(
        status=WorkOrder.Status.CLOSED, closed_at=timezone.now(), closed_by=manager
    )
    response = as_mechanic.post(mark_url(planned), {"reason": REASON}, **HTMX)
    assert response.status_code == 409
    html = response.content.decode()
    assert f"by {manager.username}" in html and "added to its notes" in html
    assert mark_url(planned) not in html  # the card is read-only now
    wo.refresh_from_db()
    planned.refresh_from_db()
    assert REASON in wo.notes and not planned.is_not_done
    undo = as_mechanic.post(undo_url(planned), **HTMX)
    assert undo.status_code == 409


# ----------------------------------------------------------------- who may


def test_an_auditor_may_not_mark_or_undo(
    as_auditor: Any, mechanic: Any, planned: WorkOrderTask, relief: WorkOrderTask
) -> None:
    actions.task_not_done_mark(task_id=relief.pk, user=mechanic, reason=REASON)
    assert as_auditor.post(mark_url(planned), {"reason": REASON}).status_code == 403
    assert as_auditor.post(mark_url(planned), {"reason": REASON}, **HTMX).status_code == 403
    assert as_auditor.post(undo_url(relief)).status_code == 403
    planned.refresh_from_db()
    relief.refresh_from_db()
    assert not planned.is_not_done and relief.not_done_reason == REASON
    # The auditor reads the reason, without any button.
    page = as_auditor.get(reverse("workorders:detail", args=[planned.work_order_id]))
    html = page.content.decode()
    assert REASON in html and undo_url(relief) not in html and mark_url(planned) not in html


def test_anonymous_is_sent_to_login(client: Any, planned: WorkOrderTask) -> None:
    login = reverse("accounts:login")
    for url in (mark_url(planned), undo_url(planned)):
        response = client.post(url, {"reason": REASON})
        assert response.status_code == 302 and response["Location"].startswith(login), url
    planned.refresh_from_db()
    assert not planned.is_not_done


def test_a_get_is_not_allowed(as_mechanic: Any, planned: WorkOrderTask) -> None:
    assert as_mechanic.get(mark_url(planned)).status_code == 405
    assert as_mechanic.get(undo_url(planned)).status_code == 405


def test_csrf_is_checked(mechanic: Any, planned: WorkOrderTask) -> None:
    from django.test import Client

    strict = Client(enforce_csrf_checks=True)
    strict.force_login(mechanic)
    assert strict.post(mark_url(planned), {"reason": REASON}).status_code == 403
    planned.refresh_from_db()
    assert not planned.is_not_done
