"""The pages as the benchmark times them: in-process through Django's test client (request to
response, middleware and rendering included, no network), signed in as the synthetic
manager, each beside the floor page (floor.py) timed in the same rounds; and a work-order
close, its draft saved first through the tablet's own save."""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

from django.contrib.auth.models import User
from django.db import connection, transaction
from django.test import Client
from django.test.utils import CaptureQueriesContext
from django.urls import reverse
from django.utils import timezone

from fleetfuel.fleet.models import MeterReading, Unit
from fleetfuel.planning.models import DueItem
from fleetfuel.workorders.actions import work_orders_from_due_items
from fleetfuel.workorders.close import work_order_close
from fleetfuel.workorders.forms import JobEntry
from fleetfuel.workorders.models import WorkOrder

from .bench import ms, paired
from .floor import FLOOR_PATH
from .synth import MANAGER

HTMX = {"HX-Request": "true"}


def _getter(client: Client, url: str, params: dict[str, Any], headers: dict[str, str]) -> Any:
    def get() -> None:
        response = client.get(url, params, secure=True, headers=headers)
        if response.status_code != 200:
            raise RuntimeError(f"GET {url} {params} answered {response.status_code}")

    return get


def _queries(fn: Callable[[], Any]) -> int:
    with CaptureQueriesContext(connection) as captured:
        fn()
    return len(captured.captured_queries)


def page_urls(site_ids: list[int]) -> dict[str, tuple[str, dict[str, Any], dict[str, str]]]:
    """What is timed: name -> (path, query, headers)."""
    due = reverse("pages:due_list")
    unit = Unit.objects.filter(site_id__in=site_ids).order_by("pk").first()
    assert unit is not None
    items = DueItem.objects.filter(site_id__in=site_ids).count()
    deep = max(1, items // 50 // 2)  # a page in the middle of the list
    filtered = {"site": site_ids[0], "status": "soon", "sort": "due"}
    return {
        "due_list_first": (due, {}, {}),
        "due_list_filtered": (due, filtered, {}),
        "due_list_deep": (due, {"page": deep}, {}),
        "due_list_fragment": (due, filtered, HTMX),
        "due_list_by_unit": (due, {"sort": "unit", "page": deep}, {}),
        "unit_page": (reverse("pages:unit_detail", args=[unit.pk]), {}, {}),
        "work_order_page": (
            reverse("workorders:detail", args=[drain_work_order(site_ids).pk]),
            {},
            {},
        ),
        "history_page": (reverse("ledger:history"), {}, {}),
    }


def drain_work_order(site_ids: list[int]) -> WorkOrder:
    """A work order of one separator drain, made from the due item of a unit without one."""
    item = (
        DueItem.objects.filter(site_id__in=site_ids, task="separator_drain")
        .exclude(unit__work_orders__isnull=False)
        .order_by("unit_id")
        .first()
    )
    if item is None:
        raise RuntimeError("No synthetic unit is left without a work order: rebuild the fleet.")
    made = work_orders_from_due_items(
        item_ids=[item.pk],
        site_ids=site_ids,
        created_by=User.objects.get(username=MANAGER),
        today=timezone.localdate(),
    )
    return made.orders[0]


def pages_measure(site_ids: list[int], *, runs: int) -> dict[str, Any]:
    client, anonymous = Client(), Client()
    client.force_login(User.objects.get(username=MANAGER))
    floor = _getter(anonymous, FLOOR_PATH, {}, {})
    out: dict[str, Any] = {"floor_page": {"queries": _queries(floor)}}
    for name, (url, params, headers) in page_urls(site_ids).items():
        get = _getter(client, url, params, headers)
        out[name] = {**paired(get, floor, runs=runs), "queries": _queries(get), "path": url}
    return out


def close_measure(site_ids: list[int], *, runs: int) -> dict[str, Any]:
    """``runs`` work orders (one drain each, on different units): the tablet's save of the
    task through its page, then the close; the close timed, its queries counted (not the
    recompute it queues: a worker's work)."""
    user = User.objects.get(username=MANAGER)
    client = Client()
    client.force_login(user)
    times, queries = [], []
    for n in range(runs + 1):
        wo = drain_work_order(site_ids)
        task = wo.tasks.get()
        saved = client.post(
            reverse("workorders:task_save", args=[task.pk]),
            {"water_ml": "12", "appearance": "clear"},
            secure=True,
            headers=HTMX,
        )
        if saved.status_code != 200:
            raise RuntimeError(f"task save answered {saved.status_code}")
        meter = MeterReading.objects.filter(unit_id=wo.unit_id).order_by("-taken_at").first()
        job = JobEntry(
            hour_meter=(meter.hours if meter else 0) + 1,
            meter_replaced=False,
            meter_old_final=None,
            meter_new_start=None,
            notes="",
        )

        def close(wo: WorkOrder = wo, job: JobEntry = job, n: int = n) -> None:
            outcome = work_order_close(
                work_order_id=wo.pk, user=user, token=f"b{n}-{wo.pk}", job=job
            )
            if outcome.result != "closed":
                raise RuntimeError(f"close refused: {outcome.message} {outcome.violations}")

        # In an outer transaction, so the unit's recompute that the close queues on commit
        # (run in-process when no broker is configured) comes after the timing, as a worker's.
        with transaction.atomic(), CaptureQueriesContext(connection) as captured:
            took = ms(close)
        if n:  # the first one warms up
            times.append(took)
            queries.append(len(captured.captured_queries))
    times.sort()
    return {
        "median_ms": round(times[len(times) // 2], 2),
        "queries": max(queries),
        "runs": runs,
    }
