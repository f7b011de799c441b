"""The manager's due list (a page composed in fleetfuel/pages): filters, sorts, the expanding
row, the open-work-order mark, work orders from items."""

from __future__ import annotations

from collections import Counter
from datetime import timedelta
from typing import Any

import pytest
from django.urls import reverse
from django.utils import timezone

from fleetfuel.fleet.models import FuelSample, Unit
from fleetfuel.planning.benchmark import synthetic_fleet_make
from fleetfuel.planning.due_selectors import due_items_filtered, due_page, status_counts
from fleetfuel.planning.models import DueItem, SourceDecision, SourceDecisionUnit, UnitFlag
from fleetfuel.workorders.models import WorkOrder
from services.display import NBSP
from services.safety import HP_CAUTION
from tests import factories as f


def fleet_make(*, site: Any, unit_class: Any, n: int, prefix: str = "U") -> list[Unit]:
    return synthetic_fleet_make(site=site, unit_class=unit_class, n=n, prefix=prefix)


@pytest.fixture
def small_fleet(site: Any, unit_class: Any) -> list[Unit]:
    return fleet_make(site=site, unit_class=unit_class, n=4)


def rows(response: Any) -> list[DueItem]:
    return list(response.context["page"].items)


def test_lists_every_item_by_urgency_with_counts(as_manager: Any, small_fleet: list[Unit]) -> None:
    response = as_manager.get(reverse("pages:due_list"))
    assert response.status_code == 200
    items = rows(response)
    assert len(items) == 12
    assert [i.due_on for i in items] == sorted(i.due_on for i in items)
    counts = response.context["page"].counts
    assert sum(counts.values()) == 12 and counts["overdue"] == 3
    assert response["Vary"].count("HX-Request") == 1


@pytest.mark.parametrize(
    "params,check",
    [
        ({"status": "overdue"}, lambda i: i.status == "overdue"),
        ({"task": "fine_filter"}, lambda i: i.task == "fine_filter"),
        ({"within_days": "2"}, lambda i: i.due_on <= timezone.localdate() + timedelta(days=2)),
        ({"within_hours": "20"}, lambda i: i.hours_left <= 20),
        ({"q": "u-00002"}, lambda i: i.unit.fleet_number == "U-00002"),
    ],
)
def test_each_filter_narrows_the_list(
    as_manager: Any, small_fleet: list[Unit], params: dict[str, str], check: Any
) -> None:
    items = rows(as_manager.get(reverse("pages:due_list"), params))
    assert items and all(check(i) for i in items)
    assert len(items) < 12


def test_site_class_and_flag_filters(
    as_manager: Any, site: Any, other_site: Any, unit_class: Any
) -> None:
    here = fleet_make(site=site, unit_class=unit_class, n=2, prefix="H")
    other_class = f.unit_class_make(name="Other class")
    fleet_make(site=other_site, unit_class=other_class, n=2, prefix="T")
    UnitFlag.objects.create(
        unit=here[0],
        code="relief_valve_repeat",
        title="Relief valve opening repeatedly",
        reason="4 openings in 6 days",
        checks=["a"],
        since=timezone.now(),
        computed_at=timezone.now(),
    )
    url = reverse("pages:due_list")
    assert {i.unit.site_id for i in rows(as_manager.get(url, {"site": other_site.pk}))} == {
        other_site.pk
    }
    assert {
        i.unit.unit_class_id for i in rows(as_manager.get(url, {"unit_class": other_class.pk}))
    } == {other_class.pk}
    flagged = as_manager.get(url, {"flagged": "on"})
    assert {i.unit_id for i in rows(flagged)} == {here[0].pk}
    # The flag's reason is shown in words, not colour alone.
    assert "Relief valve opening repeatedly" in flagged.content.decode()


@pytest.mark.parametrize(
    "sort,key",
    [
        ("unit", lambda i: i.unit.fleet_number),
        ("task", lambda i: i.task),
        ("status", lambda i: i.rank),
        ("urgency", lambda i: (i.urgency, i.late_from, -i.late_hours)),
        ("due", lambda i: i.due_on),
    ],
)
def test_sorts(as_manager: Any, small_fleet: list[Unit], sort: str, key: Any) -> None:
    items = rows(as_manager.get(reverse("pages:due_list"), {"sort": sort}))
    assert [key(i) for i in items] == sorted(key(i) for i in items)


def test_bad_filter_value_says_what_is_wrong(as_manager: Any, small_fleet: list[Unit]) -> None:
    response = as_manager.get(reverse("pages:due_list"), {"within_days": "-4"})
    assert response.status_code == 200
    assert "greater than or equal to 0" in response.content.decode()


def test_htmx_request_gets_only_the_table_and_pushes_the_url(
    as_manager: Any, small_fleet: list[Unit]
) -> None:
    response = as_manager.get(
        reverse("pages:due_list"), {"status": "due"}, headers={"HX-Request": "true"}
    )
    body = response.content.decode()
    assert 'id="due-results"' in body and "<html" not in body
    assert response["HX-Push-Url"].endswith("status=due")


def test_paging_fetches_one_extra_row_instead_of_counting(
    as_manager: Any, site: Any, unit_class: Any
) -> None:
    fleet_make(site=site, unit_class=unit_class, n=20)  # 60 items, pages of 50
    first = as_manager.get(reverse("pages:due_list"))
    second = as_manager.get(reverse("pages:due_list"), {"page": 2})
    assert first.context["page"].has_next and not second.context["page"].has_next
    assert len(rows(first)) == 50 and len(rows(second)) == 10
    assert not {i.pk for i in rows(first)} & {i.pk for i in rows(second)}


def test_row_expands_to_its_explanation(as_manager: Any, small_fleet: list[Unit]) -> None:
    item = DueItem.objects.order_by("pk").first()
    assert item is not None
    url = reverse("pages:due_item_detail", args=[item.pk])
    fragment = as_manager.get(url, headers={"HX-Request": "true"}).content.decode()
    assert "Explained 0-0" in fragment and "<html" not in fragment and "Due between" in fragment
    page = as_manager.get(url).content.decode()  # without JavaScript: a whole page
    assert "<html" in page and "Explained 0-0" in page


def test_two_items_on_one_unit_make_one_work_order_with_two_tasks(
    as_manager: Any, small_fleet: list[Unit], site: Any
) -> None:
    mechanic = f.user_make("mechanic", username="mo", sites=[site])
    unit = small_fleet[1]
    picked = list(DueItem.objects.filter(unit=unit).order_by("pk")[:2])
    other = DueItem.objects.filter(unit=small_fleet[2]).first()
    response = as_manager.post(
        reverse("pages:work_orders_create"), {"item": [picked[0].pk, picked[1].pk, other.pk]}
    )
    assert response.status_code == 302
    orders = WorkOrder.objects.order_by("pk")
    assert orders.count() == 2
    mine = orders.get(unit=unit)
    assert mine.tasks.count() == 2 and mine.assigned_to == mechanic
    assert {t.due_item_id for t in mine.tasks.all()} == {p.pk for p in picked}
    assert mine.due_on == max(timezone.localdate(), min(p.due_on for p in picked))
    # The items now show the work order holding them, linked, and cannot be put in a second.
    listing = as_manager.get(reverse("pages:due_list"), {"q": unit.fleet_number})
    badge = f'href="{reverse("workorders:detail", args=[mine.pk])}" title="In open work order'
    assert listing.content.decode().count(badge) == 2 and mine.number in listing.content.decode()
    as_manager.post(reverse("pages:work_orders_create"), {"item": [picked[0].pk]})
    assert WorkOrder.objects.count() == 2


def test_mechanic_and_auditor_cannot_create_work_orders(
    as_mechanic: Any, small_fleet: list[Unit], auditor: Any, client: Any
) -> None:
    item = DueItem.objects.first()
    assert (
        as_mechanic.post(reverse("pages:work_orders_create"), {"item": [item.pk]}).status_code
        == 403
    )
    client.force_login(auditor)
    assert client.post(reverse("pages:work_orders_create"), {"item": [item.pk]}).status_code == 403
    assert WorkOrder.objects.count() == 0


def test_a_manager_limited_to_one_site_sees_only_it(
    client: Any, site: Any, other_site: Any, unit_class: Any
) -> None:
    fleet_make(site=site, unit_class=unit_class, n=1, prefix="A")
    theirs = fleet_make(site=other_site, unit_class=unit_class, n=1, prefix="B")
    boss = f.user_make("manager", sites=[site])
    client.force_login(boss)
    assert {i.unit.site_id for i in rows(client.get(reverse("pages:due_list")))} == {site.pk}
    foreign = DueItem.objects.filter(unit=theirs[0]).first()
    assert client.get(reverse("pages:due_item_detail", args=[foreign.pk])).status_code == 404


def test_a_high_pressure_flag_shows_the_caution_in_the_explanation(
    as_manager: Any, small_fleet: list[Unit]
) -> None:
    item = DueItem.objects.order_by("pk").first()
    assert item is not None
    url = reverse("pages:due_item_detail", args=[item.pk])
    assert HP_CAUTION.title not in as_manager.get(url).content.decode()
    UnitFlag.objects.create(
        unit=item.unit,
        code="pumping_imbalance",
        title="High-pressure pump: pumping imbalance",
        reason="2 pumping-imbalance events",
        checks=["Check the supply side first."],
        since=timezone.now(),
        high_pressure=True,
        computed_at=timezone.now(),
    )
    fragment = as_manager.get(url, headers={"HX-Request": "true"}).content.decode()
    # The one caution include, with the checks the flag lists.
    assert "Check the supply side first." in fragment
    assert fragment.count(HP_CAUTION.title) == 1


@pytest.mark.parametrize("size", [10, 1000])
def test_query_count_does_not_grow_with_the_fleet(
    as_manager: Any, site: Any, unit_class: Any, django_assert_num_queries: Any, size: int
) -> None:
    fleet_make(site=site, unit_class=unit_class, n=size)
    # 1 session, 2 user, 3 user's groups (role), 4 the sites the user may see (named ones,
    # else all), 5 counts by status, 6 one page of items (+1, with the unit's fleet number,
    # site and class names as columns, and the open work order as subqueries), 7 flags of the
    # units on the page, 8 the manager's recent work-list emails, 9 open decisions at fuel
    # sources (none here, so their units are not fetched), 10 site choices, 11 class choices,
    # 12 the manager's profile (work-list subscription).
    with django_assert_num_queries(12):
        response = as_manager.get(reverse("pages:due_list"), {"status": "overdue", "sort": "unit"})
    assert response.status_code == 200 and len(rows(response)) == min(50, size * 3 // 4)


def test_each_row_says_how_far_past_or_ahead_in_days_and_hours(
    as_manager: Any, small_fleet: list[Unit]
) -> None:
    # The synthetic fleet's unit 0 runs 10 h a day (hours left = 10 x days): its primary
    # filter was due 3 days (30 h) ago, its fine filter is due in 1 day (10 h).
    page = as_manager.get(reverse("pages:due_list"), {"q": "U-00000"})
    html = page.content.decode().replace(NBSP, " ")  # no-break spaces hold numbers to units
    assert "overdue by 3 d · 30 h" in html and "due in 1 d · 10 h" in html
    # Short forms on the row, the long ones on hover (and in "Why?").
    assert 'title="Change pressure-side (fine) filter">Fine filter<' in html
    assert 'title="Plan hour interval">Plan hours<' in html


def test_a_water_alarm_drain_leads_then_overdue_by_how_far(
    as_manager: Any, small_fleet: list[Unit]
) -> None:
    # The most urgent thing is a drain a water-in-fuel alarm made due: give one ok item that
    # standing (as the recompute does: services.urgency.Tier.WATER_ALARM).
    drain = DueItem.objects.filter(status="ok", task="separator_drain").order_by("pk").first()
    assert drain is not None
    DueItem.objects.filter(pk=drain.pk).update(
        status="due", basis="water_event", urgency=0, late_hours=0.0, late_from=timezone.localdate()
    )
    items = rows(as_manager.get(reverse("pages:due_list")))
    assert items[0].pk == drain.pk
    overdue = [i for i in items if i.status == "overdue"]
    assert items[1 : 1 + len(overdue)] == overdue
    assert [i.late_from for i in overdue] == sorted(i.late_from for i in overdue)


def test_an_open_source_decision_gathers_its_dirt_estimate_items(
    as_manager: Any, small_fleet: list[Unit], site: Any
) -> None:
    tank = f.source_make(name="East bulk tank", site=site)
    sample = FuelSample.objects.create(
        source=tank, sampled_at=timezone.now() - timedelta(days=3), iso4406="22/20/17",
        reference="S-9",
    )  # fmt: skip
    decision = SourceDecision.objects.create(
        source=tank, site=site, sample=sample, opened_at=timezone.now(),
        reach_from=sample.sampled_at, explanation=["Out of range."], computed_at=timezone.now(),
    )  # fmt: skip
    reached = small_fleet[1]
    SourceDecisionUnit.objects.create(
        decision=decision, unit=reached, litres=400.0, fuelings=2,
        first_at=sample.sampled_at, last_at=timezone.now(),
    )  # fmt: skip
    # Only the reached unit's items whose dirt estimate governs belong to the decision.
    dirt = DueItem.objects.filter(unit=reached).order_by("pk")[:2]
    DueItem.objects.filter(pk__in=[i.pk for i in dirt]).update(
        basis="contaminant_budget", source_decision=decision
    )  # as the source recompute marks them (source_decisions.due_items_mark)
    response = as_manager.get(reverse("pages:due_list"))
    groups = response.context["groups"]
    under = [g for g in groups if g.decision is not None]
    assert len(under) == 1 and {r.pk for r in under[0].rows} == {i.pk for i in dirt}
    assert sum(len(g.rows) for g in groups) == 12
    html = response.content.decode()
    assert html.count('class="card source-decision"') == 1
    assert "East bulk tank: polish, quarantine or resample this tank" in html
    assert "its 2 dirt-estimate items below" in html


@pytest.mark.parametrize("size", [10, 1000])
def test_the_fragment_query_count_does_not_grow_with_the_fleet(
    as_manager: Any, site: Any, unit_class: Any, django_assert_num_queries: Any, size: int
) -> None:
    fleet_make(site=site, unit_class=unit_class, n=size)
    # 1 session, 2 user, 3 role, 4 the sites the user may see, 5 counts by status, 6 one page
    # of items (with the open work order's id and number as subqueries), 7 flags of the units
    # on the page, 8 open decisions at fuel sources (none here, so their units are not
    # fetched). The filters' choices are not rendered in the fragment, so not fetched.
    with django_assert_num_queries(8):
        response = as_manager.get(reverse("pages:due_list"), headers={"HX-Request": "true"})
    assert response.status_code == 200 and len(rows(response)) == min(50, size * 3)


def test_counts_stop_at_the_cap_and_say_so(
    as_manager: Any, small_fleet: list[Unit], monkeypatch: Any
) -> None:
    # 4 units x 3 items: 3 overdue, 3 due, 3 soon, 3 ok; with a cap of 2 each reads "2+".
    monkeypatch.setattr("fleetfuel.planning.due_selectors.COUNT_CAP", 2)
    monkeypatch.setattr("fleetfuel.pages.due_rows.COUNT_CAP", 2)
    response = as_manager.get(reverse("pages:due_list"))
    assert response.context["page"].counts == {
        "overdue": 3,
        "check": 0,
        "due": 3,
        "soon": 3,
        "ok": 3,
    }
    assert ("overdue", "Overdue", "2+") in response.context["counts"]
    assert ("check", "Check dP first", "0") in response.context["counts"]


def test_counts_agree_with_a_plain_count_under_joined_filters_and_with_no_depot(
    small_fleet: list[Unit],
) -> None:
    # The counts compile the filtered set once and take each status as a parameter of it;
    # checked against Python's collections.Counter over the same rows, with filters that
    # join (class, fleet number) and one that is a subquery (flagged).
    unit = small_fleet[0]
    UnitFlag.objects.create(
        unit=unit, code="x", title="t", reason="r", checks=[], since=timezone.now(),
        computed_at=timezone.now(),
    )  # fmt: skip
    today = timezone.localdate()
    for data in (
        {},
        {"unit_class": unit.unit_class},
        {"q": unit.fleet_number},
        {"flagged": True, "task": DueItem.Task.SEPARATOR_DRAIN},
    ):
        base = due_items_filtered(site_ids=[unit.site_id], data=data, today=today)
        expected = Counter(base.values_list("status", flat=True))
        assert status_counts(base) == {s: expected[s] for s in DueItem.Status.values}, data
    none = due_items_filtered(site_ids=[], data={}, today=today)
    assert status_counts(none) == dict.fromkeys(DueItem.Status.values, 0)


@pytest.mark.parametrize("sort", ["urgency", "due", "unit", "task", "status"])
def test_every_depots_pages_are_the_same_without_the_depot_condition(
    site: Any, other_site: Any, unit_class: Any, monkeypatch: Any, sort: str
) -> None:
    # A person who sees every depot gets the walk with no depot condition (every_site): the
    # same rows on every page as the list of every depot's ids gives.
    fleet_make(site=site, unit_class=unit_class, n=3)
    fleet_make(site=other_site, unit_class=unit_class, n=3, prefix="V")
    monkeypatch.setattr("fleetfuel.planning.due_selectors.PAGE_SIZE", 5)
    today = timezone.localdate()
    every = [site.pk, other_site.pk]
    for page in range(1, 5):
        data = {"sort": sort, "page": page}
        listed = due_page(site_ids=every, data=data, today=today)
        walked = due_page(site_ids=every, data=data, today=today, every_site=True)
        assert [i.pk for i in walked.items] == [i.pk for i in listed.items], (sort, page)
        assert walked.counts == listed.counts and walked.has_next == listed.has_next


def test_row_text_from_the_database_is_escaped(as_manager: Any, small_fleet: list[Unit]) -> None:
    # Cells are made in the presenter: a class name or flag with markup in it stays text.
    unit = small_fleet[0]
    unit.unit_class.name = "<b>Hauler</b>"
    unit.unit_class.save()
    UnitFlag.objects.create(
        unit=unit, code="x", title='Valve "A" <i>', reason="r & s", checks=[],
        since=timezone.now(), computed_at=timezone.now(),
    )  # fmt: skip
    html = as_manager.get(reverse("pages:due_list")).content.decode()
    assert "<b>Hauler</b>" not in html and "&lt;b&gt;Hauler&lt;/b&gt;" in html
    assert "Flag: Valve &quot;A&quot; &lt;i&gt;" in html and "r &amp; s" in html


def test_more_filters_open_only_for_a_filter_and_name_the_sort(
    as_manager: Any, small_fleet: list[Unit]
) -> None:
    # The filter form sends every field, the default sort included (as after creating work
    # orders from a filtered list): the extra filters open only when one that narrows the
    # list is set. A sort alone is named on the closed button (open, the panel covered the
    # list's first rows and the "create work orders" button).
    default = as_manager.get(reverse("pages:due_list"), {"status": "due", "sort": "urgency"})
    by_date = as_manager.get(reverse("pages:due_list"), {"status": "due", "sort": "due"})
    within = as_manager.get(reverse("pages:due_list"), {"within_days": "7", "sort": "urgency"})
    assert '<details class="more">' in default.content.decode()
    assert '<summary class="btn">More filters</summary>' in default.content.decode()
    assert '<details class="more">' in by_date.content.decode()
    assert "More filters · by due date</summary>" in by_date.content.decode()
    assert '<details class="more" open>' in within.content.decode()
