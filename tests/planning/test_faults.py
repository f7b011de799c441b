"""Faults after commit: the broker unreachable while a work order closes or an admin saves a
reading. The write stands, the user is told it stands, the unit is marked stale, the pages say
so, and the sweep recomputes it.

The broker is a local port with nothing listening (connection refused), and the suite's
in-process (eager) Celery is switched off for these tests only, so ``.delay`` really tries to
publish. The tests commit (``transaction=True``): on-commit callbacks run inside the request,
as they do in production.
"""

from __future__ import annotations

import importlib
import logging
import socket
from collections.abc import Iterator
from datetime import timedelta
from typing import Any

import pytest
import time_machine
from celery import current_app
from django.test import override_settings
from django.urls import reverse
from django.utils import timezone

from fleetfuel.celery import app
from fleetfuel.fleet.models import MeterReading
from fleetfuel.ledger.models import ServiceEvent
from fleetfuel.planning import actions
from fleetfuel.planning.actions import due_items_recompute
from fleetfuel.planning.models import DueItem, StaleProjection, WorkListDispatch
from fleetfuel.planning.tasks import stale_sweep, worklists_tick
from fleetfuel.workorders.models import WorkOrder, WorkOrderTask
from tests import factories as f
from tests.planning.test_worklists import Inbox, smtp, smtp_mailer, subscribed
from tests.workorders.conftest import task_make, work_order_make

__all__ = ["smtp", "subscribed"]  # fixtures shared with the work-list tests

MARKER = "Out of date: recompute pending"


def closed_port() -> int:
    """A local port nobody listens on: a connection there is refused at once."""
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


def app_point_at(url: str | None, *, eager: bool) -> None:
    app.conf.update(broker_url=url, result_backend=url, task_always_eager=eager)
    # Drop the app's cached connection pools and result store, so the next publish uses
    # the URLs above (the hook Celery itself calls after a fork).
    app._after_fork()
    app._backend_cache = None
    app._local.__dict__.pop("backend", None)


@pytest.fixture
def broker_down(monkeypatch: pytest.MonkeyPatch) -> Iterator[str]:
    # The project's app sends the tasks (another test's client app may have become current).
    previous = current_app._get_current_object()
    app.set_current()
    saved = {k: app.conf[k] for k in ("broker_url", "result_backend", "task_always_eager")}
    url = f"redis://127.0.0.1:{closed_port()}/11"
    # Celery reads the broker's URL from the environment before its configuration (CI sets
    # CELERY_BROKER_URL), so the closed port goes there too.
    monkeypatch.setenv("CELERY_BROKER_URL", url)
    app_point_at(url, eager=False)
    try:
        yield url
    finally:
        previous.set_current()
        monkeypatch.undo()
        app_point_at(saved["broker_url"], eager=saved["task_always_eager"])
        app.conf.update(result_backend=saved["result_backend"])
        app._backend_cache = None
        app._local.__dict__.pop("backend", None)


@pytest.fixture
def projected(unit: Any) -> Any:
    """A unit with a reading two days back and its due items computed from it."""
    MeterReading.objects.create(
        unit=unit,
        taken_at=timezone.now() - timedelta(days=2),
        hours=1_990.0,
        source=MeterReading.Source.TELEMATICS,
    )
    due_items_recompute(unit_ids=[unit.pk], now=timezone.now() - timedelta(days=1))
    assert DueItem.objects.filter(unit=unit).count() == 3
    return unit


def items_of(unit: Any) -> dict[str, DueItem]:
    return {i.task: i for i in DueItem.objects.filter(unit=unit)}


FIELDS = ("task", "status", "due_on", "due_hours", "hours_left", "basis", "computed_at")


def assert_sweep_recomputes(unit: Any, before: dict[str, DueItem]) -> None:
    """The sweep gives the unit exactly the engine's word on its new inputs, and clears its
    marks: a recompute at the same instant, straight after, changes nothing."""
    with time_machine.travel(timezone.now() + timedelta(minutes=5), tick=False):
        assert stale_sweep()["units"] == 1
        swept = list(DueItem.objects.filter(unit=unit).order_by("task").values(*FIELDS))
        due_items_recompute(unit_ids=[unit.pk], now=timezone.now())
        again = list(DueItem.objects.filter(unit=unit).order_by("task").values(*FIELDS))
    assert swept == again
    assert not StaleProjection.objects.filter(unit=unit).exists()
    after = items_of(unit)
    assert {t: i.pk for t, i in after.items()} == {t: i.pk for t, i in before.items()}
    assert not any(i.projection_stale for i in after.values())
    # The new reading moved the projection: not the rows from before the write.
    assert [i.hours_left for i in after.values()] != [before[t].hours_left for t in after]


@pytest.mark.usefixtures("clock_at_now")
@pytest.mark.django_db(transaction=True)
def test_close_with_the_broker_unreachable_answers_success_and_the_sweep_recomputes(
    client: Any,
    projected: Any,
    manager: Any,
    mechanic: Any,
    broker_down: str,
    caplog: pytest.LogCaptureFixture,
) -> None:
    unit = projected
    wo = work_order_make(unit=unit, created_by=manager, assigned_to=mechanic, number="WO-0700")
    task_make(
        wo,
        WorkOrderTask.Kind.RELIEF_VALVE_REPLACE,
        description="Relief valve",
        entry={"part_number": "RV-1"},
    )
    before = items_of(unit)
    client.force_login(mechanic)

    with caplog.at_level(logging.ERROR, logger="fleetfuel.planning.signals"):
        response = client.post(
            reverse("workorders:close", args=[wo.pk]),
            {"token": "t-broker", "hour_meter": "2010"},
            follow=True,
        )

    # The close stands and the mechanic is told so: no error page, no "nothing was recorded".
    assert response.status_code == 200
    html = response.content.decode()
    assert "nothing was recorded" not in html
    assert [m.level_tag for m in response.context["messages"]] == ["success"]
    wo.refresh_from_db()
    assert wo.status == WorkOrder.Status.CLOSED
    assert ServiceEvent.objects.filter(work_order=wo).count() == 1
    # The failure is logged, and the unit marked stale (its items not recomputed yet).
    assert any("not queued" in r.getMessage() for r in caplog.records)
    mark = StaleProjection.objects.get(unit=unit)
    assert mark.reason  # the error the publish raised
    stale = items_of(unit)
    assert all(i.projection_stale for i in stale.values())
    assert all(i.computed_at == before[t].computed_at for t, i in stale.items())

    # The pages that show the unit's items say they are out of date.
    client.force_login(f.user_make("manager", username="mona", sites=[unit.site]))
    assert MARKER in client.get(reverse("pages:unit_detail", args=[unit.pk])).content.decode()
    assert MARKER in client.get(reverse("pages:due_list")).content.decode()

    # The broker is still down: the sweep (beat, run here in-process) recomputes the unit.
    assert_sweep_recomputes(unit, before)
    assert MARKER not in client.get(reverse("pages:due_list")).content.decode()
    assert stale_sweep()["units"] == 0  # nothing left: a second sweep does nothing


@pytest.mark.usefixtures("clock_at_now")
@pytest.mark.django_db(transaction=True)
def test_admin_save_of_a_reading_with_the_broker_unreachable_stands(
    client: Any, projected: Any, broker_down: str
) -> None:
    unit = projected
    before = items_of(unit)
    root = f.user_make(None, username="root")
    root.is_superuser = root.is_staff = True
    root.save()
    client.force_login(root)
    taken = timezone.localtime(timezone.now() - timedelta(hours=1))
    response = client.post(
        reverse("admin:fleet_meterreading_add"),
        {
            "unit": unit.pk,
            "taken_at_0": taken.strftime("%Y-%m-%d"),
            "taken_at_1": taken.strftime("%H:%M:%S"),
            "hours": "2030",
            "source": MeterReading.Source.MANUAL,
        },
        follow=True,
    )
    assert response.status_code == 200
    assert "was added successfully" in response.content.decode()
    assert MeterReading.objects.filter(unit=unit, hours=2_030.0).count() == 1
    assert StaleProjection.objects.filter(unit=unit).exists()
    assert all(i.projection_stale for i in items_of(unit).values())
    assert_sweep_recomputes(unit, before)


def test_every_scheduled_job_names_a_task_of_the_app() -> None:
    """The sweep is on beat's schedule, and no entry names a task the workers lack."""
    names = {entry["task"] for entry in app.conf.beat_schedule.values()}
    assert stale_sweep.name in names
    for name in names:
        module, attribute = name.rsplit(".", 1)
        assert getattr(importlib.import_module(module), attribute).name == name


@pytest.mark.django_db
def test_a_recompute_keeps_a_mark_made_after_it_read_the_inputs(
    projected: Any, monkeypatch: pytest.MonkeyPatch
) -> None:
    """A mark made while a recompute runs stays for the sweep (the recompute may have read
    the inputs before the write that caused the mark)."""
    unit = projected
    StaleProjection.objects.create(unit=unit, marked_at=timezone.now(), reason="test")
    marks = StaleProjection.objects.filter(unit=unit)
    first = marks.get().marked_at

    def remark_during_load(**kwargs: Any) -> Any:
        marks.update(marked_at=first + timedelta(seconds=1))
        return load(**kwargs)

    load = actions.batch_inputs_load
    monkeypatch.setattr(actions, "batch_inputs_load", remark_during_load)
    due_items_recompute(unit_ids=[unit.pk], now=timezone.now())
    monkeypatch.undo()
    assert marks.get().marked_at == first + timedelta(seconds=1)
    due_items_recompute(unit_ids=[unit.pk], now=timezone.now())
    assert not marks.exists()


@pytest.mark.usefixtures("clock_at_now")  # 13:00 in London: not the list's chosen hour
@pytest.mark.django_db(transaction=True)
def test_send_now_with_the_broker_unreachable_is_queued_again_by_the_schedule(
    client: Any, subscribed: dict[str, Any], smtp: tuple[Inbox, int], broker_down: str
) -> None:
    inbox, port = smtp
    client.force_login(subscribed["manager"])
    response = client.post(reverse("planning:worklist_send_now"), follow=True)
    assert response.status_code == 200
    [(level, text)] = [(m.level_tag, m.message) for m in response.context["messages"]]
    assert level == "error" and "task queue could not be reached" in text
    dispatch = WorkListDispatch.objects.get(manual=True)
    assert dispatch.status == WorkListDispatch.Status.PENDING

    # The broker is back (in-process here); the hourly tick queues the lost list again.
    app_point_at(None, eager=True)
    with (
        time_machine.travel(f.NOW + timedelta(minutes=20), tick=True),
        override_settings(MAILERS=smtp_mailer(port)),
    ):
        worklists_tick()
        worklists_tick()  # a rerun sends nothing twice
    dispatch.refresh_from_db()
    assert dispatch.status == WorkListDispatch.Status.SENT
    assert [rcpt for _, rcpt, _ in inbox.messages] == [["morgan@depot.example"]]
