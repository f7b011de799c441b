"""The unit list and the unit page."""

from __future__ import annotations

from datetime import timedelta
from typing import Any

import pytest
from django.urls import reverse

from fleetfuel.planning.actions import due_items_recompute
from fleetfuel.planning.benchmark import synthetic_fleet_make
from tests import factories as f
from tests.planning.builders import history_make, sample_make


@pytest.mark.parametrize("size", [3, 60])
def test_unit_list_query_count_is_flat(
    as_manager: Any, site: Any, unit_class: Any, django_assert_num_queries: Any, size: int
) -> None:
    synthetic_fleet_make(site=site, unit_class=unit_class, n=size)
    # 1 session, 2 user, 3 groups, 4 the sites one may see, 5 paginator count, 6 one page
    # of units with site, class and status counts.
    with django_assert_num_queries(6):
        response = as_manager.get(reverse("pages:unit_list"))
    assert response.status_code == 200
    assert len(response.context["page"].object_list) == min(size, 50)


@pytest.mark.usefixtures("clock_at_now")  # the page draws its charts up to the clock's now
def test_unit_page_shows_flags_due_items_and_labelled_charts(as_manager: Any, unit: Any) -> None:
    tank = f.source_make()
    history_make(unit=unit, source=tank, days=40)
    sample_make(source=tank, at=f.NOW - timedelta(days=41), code="17/15/12", ref="S-1")
    due_items_recompute(unit_ids=[unit.pk], now=f.NOW)
    page = as_manager.get(reverse("pages:unit_detail", args=[unit.pk])).content.decode()
    for text in (
        "Due items",
        "Change pressure-side (fine) filter",
        "Hour meter and forecast",
        "engine hours (h)",
        "water (mg/kg)",
        "EN 590 limit 200 mg/kg",
        "<svg",
    ):
        assert text in page, text
    # Cautions are shown for the high-pressure parts listed on the page.
    assert "high pressure" in page


def test_unit_pages_follow_site_access(client: Any, unit: Any, other_site: Any) -> None:
    outsider = f.user_make("mechanic", sites=[other_site])
    client.force_login(outsider)
    assert client.get(reverse("pages:unit_detail", args=[unit.pk])).status_code == 404
    listing = client.get(reverse("pages:unit_list")).content.decode()
    assert unit.fleet_number not in listing


def test_auditor_can_read_unit_pages(as_auditor: Any, unit: Any) -> None:
    assert as_auditor.get(reverse("pages:unit_detail", args=[unit.pk])).status_code == 200
