"""Every page needs a login, and the right role."""

from __future__ import annotations

from datetime import timedelta
from pathlib import Path
from typing import Any

import pytest
from django.contrib.staticfiles import finders
from django.core.exceptions import PermissionDenied
from django.http import Http404
from django.urls import URLPattern, URLResolver, get_resolver, reverse

from fleetfuel.accounts import access
from fleetfuel.ledger.models import ExportLog
from fleetfuel.planning.actions import due_items_recompute
from fleetfuel.planning.models import DueItem
from fleetfuel.workorders.models import WorkOrderTask
from tests import factories as f
from tests.ledger.conftest import events_add
from tests.workorders.conftest import task_make, work_order_make

PUBLIC = {"accounts:login", "accounts:logout", "accounts:healthz", "accounts:favicon"}
# Machine endpoints take a bearer token, not a session: anonymous is 401 (tests/intake).
TOKEN_ONLY = {"api:telematics"}


def named_patterns() -> list[tuple[str, list[str]]]:
    """(namespaced name, converter names) of every URL of our apps (not the admin)."""
    found: list[tuple[str, list[str]]] = []

    def walk(patterns: list[Any], namespace: str | None) -> None:
        for p in patterns:
            if isinstance(p, URLResolver):
                if p.namespace == "admin":
                    continue
                walk(p.url_patterns, p.namespace or namespace)
            elif isinstance(p, URLPattern) and p.name:
                found.append((f"{namespace}:{p.name}", list(p.pattern.converters)))

    walk(get_resolver().url_patterns, None)
    return found


def test_our_apps_have_urls() -> None:
    names = {n for n, _ in named_patterns()}
    assert {"accounts:home", "pages:due_list", "pages:unit_list"} <= names


@pytest.mark.django_db
@pytest.mark.parametrize("name,params", named_patterns())
def test_anonymous_is_sent_to_login(client: Any, name: str, params: list[str]) -> None:
    if name in PUBLIC:
        return
    url = reverse(name, kwargs=dict.fromkeys(params, 1))
    if name in TOKEN_ONLY:
        assert client.post(url).status_code == 401, name
        return
    for method in (client.get, client.post):
        response = method(url)
        assert response.status_code == 302, (name, method)
        assert response["Location"].startswith(reverse("accounts:login")), name


@pytest.mark.django_db
def test_user_without_role_is_refused(client: Any) -> None:
    from tests.factories import user_make

    client.force_login(user_make(None))
    assert client.get(reverse("accounts:home")).status_code == 403
    assert client.get(reverse("pages:due_list")).status_code == 403


@pytest.mark.parametrize(
    "fixture,expected",
    [
        ("as_manager", "pages:due_list"),
        ("as_mechanic", "workorders:my_work"),
        ("as_auditor", "ledger:history"),
    ],
)
def test_home_sends_each_role_to_its_page(request: Any, fixture: str, expected: str) -> None:
    client = request.getfixturevalue(fixture)
    response = client.get(reverse("accounts:home"))
    assert response.status_code == 302
    assert response["Location"] == reverse(expected)


@pytest.mark.parametrize("fixture", ["as_mechanic", "as_auditor"])
@pytest.mark.parametrize("name", ["pages:due_list", "pages:due_item_detail"])
def test_manager_pages_refuse_other_roles(request: Any, fixture: str, name: str) -> None:
    client = request.getfixturevalue(fixture)
    kwargs = {"pk": 1} if name.endswith("detail") else {}
    assert client.get(reverse(name, kwargs=kwargs)).status_code == 403


@pytest.mark.parametrize("name", ["pages:work_orders_create", "planning:worklist_send_now"])
def test_auditor_writes_nothing_in_planning(as_auditor: Any, name: str) -> None:
    assert as_auditor.post(reverse(name), {"item": [1]}).status_code == 403


def test_login_page_renders_and_logs_in(client: Any, manager: Any) -> None:
    from tests.factories import PASSWORD

    assert client.get(reverse("accounts:login")).status_code == 200
    response = client.post(
        reverse("accounts:login"), {"username": manager.username, "password": PASSWORD}
    )
    assert response.status_code == 302
    bad = client.post(reverse("accounts:login"), {"username": manager.username, "password": "nope"})
    assert bad.status_code == 200 and b"Please enter a correct username" in bad.content


def test_healthz_answers_without_login(client: Any, db: Any) -> None:
    response = client.get(reverse("accounts:healthz"))
    assert response.status_code == 200 and response.content == b"ok"


# --- The per-object access helpers (fleetfuel/accounts/access.py), called directly. ---------
# Their rules: 403 when the role may not have such an object, 404 when it is at a site the
# person may not see. Mechanics see only the sites they are assigned to.


@pytest.fixture
def objects(unit: Any, other_site: Any, unit_class: Any, manager: Any) -> dict[str, Any]:
    """One of each object at North Depot (``unit``) and one at South Depot (``other_site``)."""
    found: dict[str, Any] = {"here": {}, "there": {}}
    there = f.unit_make(site=other_site, unit_class=unit_class, fleet_number="S-001")
    due_items_recompute(unit_ids=[unit.pk, there.pk], now=f.NOW)
    for key, target in (("here", unit), ("there", there)):
        order = work_order_make(
            unit=target,
            created_by=manager,
            due_on=f.NOW.date() + timedelta(days=1),
            created_at=f.NOW,
        )
        found[key] = {
            "unit": target,
            "work_order": order,
            "task": task_make(order, WorkOrderTask.Kind.SEPARATOR_DRAIN),
            "due_item": DueItem.objects.filter(unit=target).first(),
            "service_event": events_add(target, manager, 1)[0],
        }
        assert found[key]["due_item"] is not None, "the recompute projects the unit's plans"
    return found


HELPERS = {
    "unit": access.unit_for_user,
    "work_order": access.work_order_for_user,
    "task": access.task_for_user,
    "due_item": access.due_item_for_user,
    "service_event": access.service_event_for_user,
}


def outcome(call: Any) -> Any:
    """What a view would answer: the object, 403 or 404."""
    try:
        return call()
    except PermissionDenied:
        return 403
    except Http404:
        return 404


@pytest.mark.parametrize("kind", sorted(HELPERS))
def test_another_sites_object_is_not_found(objects: dict[str, Any], site: Any, kind: str) -> None:
    manager_here = f.user_make("manager", sites=[site])
    mine, theirs = objects["here"][kind], objects["there"][kind]
    assert outcome(lambda: HELPERS[kind](manager_here, mine.pk)) == mine
    assert outcome(lambda: HELPERS[kind](manager_here, theirs.pk)) == 404
    # A manager who names no site sees every site.
    manager_everywhere = f.user_make("manager")
    assert outcome(lambda: HELPERS[kind](manager_everywhere, theirs.pk)) == theirs


@pytest.mark.parametrize("kind", ["unit", "work_order", "task", "service_event"])
def test_mechanics_see_only_the_sites_they_are_assigned_to(
    objects: dict[str, Any], site: Any, kind: str
) -> None:
    assigned = f.user_make("mechanic", sites=[site])
    unassigned = f.user_make("mechanic")
    mine, theirs = objects["here"][kind], objects["there"][kind]
    assert outcome(lambda: HELPERS[kind](assigned, mine.pk)) == mine
    assert outcome(lambda: HELPERS[kind](assigned, theirs.pk)) == 404
    # Unlike a manager, a mechanic with no site named sees none.
    assert outcome(lambda: HELPERS[kind](unassigned, mine.pk)) == 404


def test_mechanic_site_ids_are_their_assignments(site: Any, other_site: Any) -> None:
    assert access.site_ids_for_user(f.user_make("mechanic", sites=[site])) == [site.pk]
    assert access.site_ids_for_user(f.user_make("mechanic")) == []
    assert sorted(access.site_ids_for_user(f.user_make("auditor"))) == sorted(
        [site.pk, other_site.pk]
    )


def test_a_persons_depots_are_one_query(
    site: Any, other_site: Any, django_assert_num_queries: Any
) -> None:
    named, everywhere = f.user_make("manager", sites=[site]), f.user_make("auditor")
    access.user_role(named), access.user_role(everywhere)  # the role, read once a request
    with django_assert_num_queries(1):
        assert access.site_ids_for_user(named) == [site.pk]
    with django_assert_num_queries(1):
        assert sorted(access.site_ids_for_user(everywhere)) == sorted([site.pk, other_site.pk])
    with django_assert_num_queries(0):  # kept on the user for the request
        access.site_ids_for_user(named)


def test_seeing_every_site_is_read_with_the_sites(
    site: Any, other_site: Any, django_assert_num_queries: Any
) -> None:
    named, everywhere = f.user_make("manager", sites=[site]), f.user_make("auditor")
    mechanic, unnamed_mechanic = f.user_make("mechanic", sites=[site]), f.user_make("mechanic")
    for user in (named, everywhere, mechanic, unnamed_mechanic):
        access.user_role(user)  # the role, read once a request
    with django_assert_num_queries(1):  # the sites and "every site" are one query
        assert access.sees_every_site(everywhere)
        assert sorted(access.site_ids_for_user(everywhere)) == sorted([site.pk, other_site.pk])
    with django_assert_num_queries(1):
        assert not access.sees_every_site(named) and access.site_ids_for_user(named) == [site.pk]
    # A mechanic never sees every site, named or not.
    assert not access.sees_every_site(mechanic) and not access.sees_every_site(unnamed_mechanic)
    # Sites that are every site there is: by default, or named to each (no query more).
    both = f.user_make("manager", sites=[site, other_site])
    access.user_role(both)
    with django_assert_num_queries(1):
        assert access.sites_are_every_site(both) and not access.sees_every_site(both)
    assert access.sites_are_every_site(everywhere)
    assert not access.sites_are_every_site(named) and not access.sites_are_every_site(mechanic)
    assert not access.sites_are_every_site(unnamed_mechanic)


@pytest.mark.parametrize("kind", sorted(HELPERS))
def test_a_person_without_a_role_is_refused(objects: dict[str, Any], kind: str) -> None:
    nobody = f.user_make(None)
    assert outcome(lambda: HELPERS[kind](nobody, objects["here"][kind].pk)) == 403


@pytest.mark.parametrize("role", ["mechanic", "auditor"])
def test_due_items_are_for_managers(objects: dict[str, Any], site: Any, role: str) -> None:
    person = f.user_make(role, sites=[site])
    item = objects["here"]["due_item"]
    assert outcome(lambda: access.due_item_for_user(person, item.pk)) == 403


@pytest.mark.parametrize("kind", ["work_order", "task"])
def test_auditors_read_work_orders_but_never_write(
    objects: dict[str, Any], site: Any, kind: str
) -> None:
    helper = HELPERS[kind]
    auditor_here = f.user_make("auditor", sites=[site])
    mechanic_here = f.user_make("mechanic", sites=[site])
    mine, theirs = objects["here"][kind], objects["there"][kind]
    assert outcome(lambda: helper(auditor_here, mine.pk)) == mine
    assert outcome(lambda: helper(auditor_here, mine.pk, write=True)) == 403
    assert outcome(lambda: helper(mechanic_here, mine.pk, write=True)) == mine
    assert outcome(lambda: helper(mechanic_here, theirs.pk, write=True)) == 404


def test_export_logs_are_the_makers_or_a_managers(
    objects: dict[str, Any], auditor: Any, site: Any
) -> None:
    log = ExportLog.objects.create(
        requested_by=auditor, requested_at=f.NOW, via="web", format="csv", file_name="x.csv"
    )
    other_auditor = f.user_make("auditor")
    assert outcome(lambda: access.export_log_for_user(auditor, log.pk)) == log
    assert outcome(lambda: access.export_log_for_user(other_auditor, log.pk)) == 404
    # A manager has every export, even one made by a person of another site.
    manager_here = f.user_make("manager", sites=[site])
    assert outcome(lambda: access.export_log_for_user(manager_here, log.pk)) == log
    mechanic_here = f.user_make("mechanic", sites=[site])
    assert outcome(lambda: access.export_log_for_user(mechanic_here, log.pk)) == 403


def test_favicon_is_served_and_linked(client: Any, db: Any) -> None:
    """/favicon.ico (asked for by browsers on pages without a link) leads to the icon."""
    response = client.get("/favicon.ico")
    assert response.status_code == 301 and response["Location"].endswith("favicon.svg")
    # The static files (served by WhiteNoise once collected) hold it under that name.
    found = finders.find("favicon.svg")
    assert found and "<svg" in Path(found).read_text(encoding="utf-8")
    login = client.get(reverse("accounts:login")).content.decode()
    assert 'rel="icon"' in login and "favicon.svg" in login
