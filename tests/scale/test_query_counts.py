"""Every list page and fragment asks the database the same number of times for a synthetic
fleet of 10 units as for one of 1,000 (the synth_fleet build with two weeks of history, every
unit projected, a work order on one unit in ten)."""

from __future__ import annotations

from collections.abc import Iterator
from typing import Any

import pytest
from django.contrib.auth.models import User
from django.db import connection
from django.test import Client
from django.test.utils import CaptureQueriesContext
from django.urls import reverse
from django.utils import timezone

from fleetfuel.demo.synth import MANAGER, MECHANIC, synthetic_fleet_build
from fleetfuel.fleet.models import Unit
from fleetfuel.planning.actions import due_items_recompute
from fleetfuel.planning.models import DueItem
from fleetfuel.workorders.actions import work_orders_from_due_items
from tests.conftest import db_shared

pytestmark = pytest.mark.django_db
HTMX = {"HX-Request": "true"}


@pytest.fixture(scope="module", params=[10, 1000])
def fleet(request: Any, django_db_setup: Any, django_db_blocker: Any) -> Iterator[dict[str, Any]]:
    with db_shared(django_db_blocker):
        now = timezone.now()
        made = synthetic_fleet_build(units=request.param, seed=3, now=now, days=14)
        ids = list(Unit.objects.order_by("pk").values_list("pk", flat=True))
        for start in range(0, len(ids), 200):
            due_items_recompute(unit_ids=ids[start : start + 200], now=now)
        drains = DueItem.objects.filter(task="separator_drain").order_by("unit_id")
        work_orders_from_due_items(
            item_ids=list(drains.values_list("pk", flat=True)[::10]),
            site_ids=made.site_ids,
            created_by=User.objects.get(username=MANAGER),
            today=timezone.localdate(),
        )
        yield {"size": request.param, "site": made.site_ids[0], "unit": ids[0]}


def count(username: str, url: str, params: dict[str, Any], headers: dict[str, str]) -> int:
    client = Client()
    client.force_login(User.objects.get(username=username))
    client.get(url, params, headers=headers)  # the session's first use, not the page's
    with CaptureQueriesContext(connection) as captured:
        response = client.get(url, params, headers=headers)
    assert response.status_code == 200, (url, response.status_code)
    return len(captured.captured_queries)


PAGES = [
    ("due list", MANAGER, "pages:due_list", {}, {}),
    ("due list, by unit", MANAGER, "pages:due_list", {"sort": "unit", "task": "fine_filter"}, {}),
    ("due list fragment", MANAGER, "pages:due_list", {"status": "soon"}, HTMX),
    ("unit list", MANAGER, "pages:unit_list", {}, {}),
    ("work orders", MANAGER, "workorders:list", {}, {}),
    ("my work", MECHANIC, "workorders:my_work", {}, {}),
    ("service history", MANAGER, "ledger:history", {}, {}),
    ("service history fragment", MANAGER, "ledger:history", {"kind": "separator_drained"}, HTMX),
    ("exports", MANAGER, "ledger:exports", {}, {}),
    ("hour-meter round", MANAGER, "intake:hours", {}, {}),
]


@pytest.mark.parametrize(("what", "who", "name", "params", "headers"), PAGES)
def test_list_page_queries_do_not_grow(
    fleet: dict[str, Any], what: str, who: str, name: str, params: dict, headers: dict
) -> None:
    seen = count(who, reverse(name), params, headers)
    assert seen == EXPECTED[what], what


# Each page's queries at either size, counted with the session already loaded (the session
# and the user are the first two of each; the depots one may see are one query,
# accounts.access.site_ids_for_user). tests/pages/test_due_list.py and test_unit_pages.py
# name the due list's and the unit list's queries one by one; the other pages read one page
# of rows and what they show of each row through a fixed set of joins and prefetches.
EXPECTED = {
    "due list": 12,
    "due list, by unit": 12,
    "due list fragment": 8,  # + the open decisions at fuel sources
    "unit list": 6,
    "work orders": 6,
    "my work": 5,
    "service history": 7,
    "service history fragment": 6,
    "exports": 6,  # + the depot whose date form the page uses (accounts.context.depot)
    "hour-meter round": 5,
}
