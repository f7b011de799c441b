"""Who may reach what: every URL of the project and every admin page (changelist, add and
change of each registered model), for five people and two methods, against a table of expected
outcomes written below. A URL with no row in the table fails the test, so a new page cannot
appear without someone deciding who may reach it.

The people: anonymous; a manager of every depot; a manager limited to one depot; a mechanic
(assigned to every depot, so the column shows the role's rule); an auditor (every depot). Both
managers are staff, as the demo makes them. Every object a URL names lies at a depot other than
the one-depot manager's, so that column shows the site limits (404, or the admin's "does not
exist" redirect).

Outcomes: ``L`` (sent to a login page), ``A`` (the admin's redirect for an object it does
not show), otherwise the status code. POSTs carry no form data: an outcome of 200, 302,
400 or 422 there means the person got past the access checks to the form's own validation. Set
``PERMISSIONS_RECORD=1`` to print the observed table (for review, never to copy blindly).
"""

from __future__ import annotations

import os
from collections.abc import Iterator
from datetime import timedelta
from typing import Any

import pytest
from django.contrib import admin
from django.contrib.auth.models import User
from django.test import Client
from django.urls import URLPattern, URLResolver, get_resolver, reverse

from fleetfuel.accounts.admin import SiteLimits
from fleetfuel.fleet.models import (
    Delivery,
    EngineEvent,
    FilterPressureReading,
    Fueling,
    FuelSample,
    FuelSource,
    MeasurementLimit,
    MeterReading,
    MeterReplacement,
)
from fleetfuel.intake.feed_tokens import feed_token_create
from fleetfuel.intake.models import ImportRun
from fleetfuel.ledger.checkpoints import chain_checkpoints_record
from fleetfuel.ledger.manifest import export_finish
from fleetfuel.ledger.models import ServiceEvent
from fleetfuel.ledger.selectors import HistoryScope
from fleetfuel.pages.manifest import history_export_start
from fleetfuel.planning.actions import due_items_recompute
from fleetfuel.planning.models import DueItem, ProjectionRun, UnitFlag
from fleetfuel.planning.source_models import SourceDecision
from fleetfuel.workorders.models import WorkOrder, WorkOrderTask
from tests import factories as f
from tests.conftest import db_shared
from tests.ledger.conftest import events_add
from tests.workorders.conftest import task_make, work_order_make

NOW = f.NOW
PEOPLE = ("anonymous", "manager_all", "manager_one", "mechanic", "auditor")

# Besides the index and each model's changelist, add and change pages, the admin's own pages
# (login, logout, password change, JavaScript catalogue, autocomplete, "view on site", app
# lists) and each model's history and delete pages are left to Django: history and delete
# look the object up through the same queryset as the change page.

SESSION_ENDERS = {"accounts:logout"}  # after these, the person logs in again

# Expected "GET/POST" outcome for each person, in the order of PEOPLE:
#   anonymous, manager of every depot, manager of one depot, mechanic, auditor.
# L: sent to a login page; A: the admin's "does not exist" redirect; otherwise the status.
# Reading it: mechanics and auditors are not staff (the admin sends them to its login); the
# admin refuses users, groups and profiles to managers (no model permission); a one-depot
# manager gets 404 or "absent" for the other depot's objects, 403 where shared configuration
# (unit classes, service plans) or a new depot would be changed; the ledger's and planning's
# rows are read-only in the admin for everyone (403 on add, and on a change's POST).
EXPECTED: dict[str, str] = {
    "accounts:home": "L/L 302/302 302/302 302/302 302/302",
    "accounts:healthz": "200/405 200/405 200/405 200/405 200/405",
    "accounts:favicon": "301/405 301/405 301/405 301/405 301/405",
    "accounts:login": "200/200 200/200 200/200 200/200 200/200",
    "accounts:logout": "405/L 405/L 405/L 405/L 405/L",
    "accounts:password_change": "L/L 200/200 200/200 200/200 200/200",
    "accounts:password_change_done": "L/L 200/405 200/405 200/405 200/405",
    "accounts:unlock": "L/L 200/302 200/302 403/403 403/403",
    "pages:due_list": "L/L 200/405 200/405 403/403 403/403",
    "pages:due_item_detail": "L/L 200/405 404/405 403/403 403/403",
    "pages:work_orders_create": "L/L 405/302 405/302 403/403 403/403",
    "pages:unit_list": "L/L 200/405 200/405 200/405 200/405",
    "pages:unit_detail": "L/L 200/405 404/405 200/405 200/405",
    "pages:export": "L/L 405/302 405/302 403/403 405/302",
    "pages:export_manifest": "L/L 200/405 404/405 403/403 404/405",
    "planning:source_decision": "L/L 200/400 404/404 403/403 200/403",
    "planning:worklist_send_now": "L/L 405/302 405/302 403/403 403/403",
    "planning:worklist_settings": "L/L 405/400 405/400 403/403 403/403",
    "workorders:my_work": "L/L 200/200 200/200 200/200 403/403",
    "workorders:list": "L/L 200/200 200/200 403/403 200/200",
    "workorders:detail": "L/L 200/200 404/404 200/200 200/200",
    "workorders:job_save": "L/L 405/302 405/404 405/302 403/403",
    "workorders:task_add": "L/L 405/422 405/404 405/422 403/403",
    "workorders:close": "L/L 405/302 405/404 405/302 403/403",
    "workorders:override": "L/L 405/302 405/404 405/403 403/403",
    "workorders:task_save": "L/L 405/302 405/404 405/302 403/403",
    "workorders:task_not_done": "L/L 405/422 405/404 405/422 403/403",
    "workorders:task_not_done_undo": "L/L 405/302 405/404 405/302 403/403",
    "ledger:history": "L/L 200/405 200/405 200/405 200/405",
    "ledger:correct": "L/L 405/400 405/404 403/403 403/403",
    "ledger:exports": "L/L 200/405 200/405 403/403 200/405",
    "ledger:exports_recent": "L/L 200/405 200/405 403/403 200/405",
    # Data entry and the feed's tokens: managers, at their own depots; the feed itself takes a
    # bearer token, never a session (401 to everyone here).
    "intake:home": "L/L 200/200 200/200 403/403 403/403",
    "intake:hours": "L/L 200/200 200/200 403/403 403/403",
    "intake:fuel": "L/L 200/200 200/200 403/403 403/403",
    "intake:delivery": "L/L 200/200 200/200 403/403 403/403",
    "intake:sample": "L/L 200/200 200/200 403/403 403/403",
    "intake:event": "L/L 200/200 200/200 403/403 403/403",
    "intake:feed_tokens": "L/L 200/200 200/200 403/403 403/403",
    "intake:feed_token_revoke": "L/L 405/302 405/404 403/403 403/403",
    # Spreadsheet imports: managers; a run is its maker's (404 to others); this run has no
    # rejects file (404).
    "intake:import": "L/L 200/200 200/200 403/403 403/403",
    "intake:import_run": "L/L 200/200 404/404 403/403 403/403",
    "intake:import_apply": "L/L 405/404 405/404 403/403 403/403",
    "intake:import_rejects": "L/L 404/404 404/404 403/403 403/403",
    "intake:import_template": "L/L 200/200 200/200 403/403 403/403",
    "api:telematics": "405/401 405/401 405/401 405/401 405/401",
    "admin:index": "L/L 200/200 200/200 L/L L/L",
    "admin:auth_group_changelist": "L/L 403/403 403/403 L/L L/L",
    "admin:auth_group_add": "L/L 403/403 403/403 L/L L/L",
    "admin:auth_group_change": "L/L 403/403 403/403 L/L L/L",
    "admin:auth_user_changelist": "L/L 403/403 403/403 L/L L/L",
    "admin:auth_user_add": "L/L 403/403 403/403 L/L L/L",
    "admin:auth_user_change": "L/L 403/403 403/403 L/L L/L",
    "admin:accounts_profile_changelist": "L/L 403/403 403/403 L/L L/L",
    "admin:accounts_profile_add": "L/L 403/403 403/403 L/L L/L",
    "admin:accounts_profile_change": "L/L 403/403 403/403 L/L L/L",
    "admin:fleet_site_changelist": "L/L 200/200 200/200 L/L L/L",
    "admin:fleet_site_add": "L/L 200/200 403/403 L/L L/L",
    "admin:fleet_site_change": "L/L 200/200 A/A L/L L/L",
    "admin:fleet_unitclass_changelist": "L/L 200/200 200/200 L/L L/L",
    "admin:fleet_unitclass_add": "L/L 200/200 403/403 L/L L/L",
    "admin:fleet_unitclass_change": "L/L 200/200 200/403 L/L L/L",
    "admin:fleet_unit_changelist": "L/L 200/200 200/200 L/L L/L",
    "admin:fleet_unit_add": "L/L 200/200 200/200 L/L L/L",
    "admin:fleet_unit_change": "L/L 200/200 A/A L/L L/L",
    "admin:fleet_component_changelist": "L/L 200/200 200/200 L/L L/L",
    "admin:fleet_component_add": "L/L 200/200 200/200 L/L L/L",
    "admin:fleet_component_change": "L/L 200/200 A/A L/L L/L",
    "admin:fleet_serviceplan_changelist": "L/L 200/200 200/200 L/L L/L",
    "admin:fleet_serviceplan_add": "L/L 200/200 403/403 L/L L/L",
    "admin:fleet_serviceplan_change": "L/L 200/200 200/403 L/L L/L",
    "admin:fleet_meterreading_changelist": "L/L 200/200 200/200 L/L L/L",
    "admin:fleet_meterreading_add": "L/L 200/200 200/200 L/L L/L",
    "admin:fleet_meterreading_change": "L/L 200/200 A/A L/L L/L",
    "admin:fleet_meterreplacement_changelist": "L/L 200/200 200/200 L/L L/L",
    "admin:fleet_meterreplacement_add": "L/L 200/200 200/200 L/L L/L",
    "admin:fleet_meterreplacement_change": "L/L 200/200 A/A L/L L/L",
    "admin:fleet_fuelsource_changelist": "L/L 200/200 200/200 L/L L/L",
    "admin:fleet_fuelsource_add": "L/L 200/200 200/200 L/L L/L",
    "admin:fleet_fuelsource_change": "L/L 200/200 A/A L/L L/L",
    "admin:fleet_delivery_changelist": "L/L 200/200 200/200 L/L L/L",
    "admin:fleet_delivery_add": "L/L 200/200 200/200 L/L L/L",
    "admin:fleet_delivery_change": "L/L 200/200 A/A L/L L/L",
    "admin:fleet_fueling_changelist": "L/L 200/200 200/200 L/L L/L",
    "admin:fleet_fueling_add": "L/L 200/200 200/200 L/L L/L",
    "admin:fleet_fueling_change": "L/L 200/200 A/A L/L L/L",
    "admin:fleet_fuelsample_changelist": "L/L 200/200 200/200 L/L L/L",
    "admin:fleet_fuelsample_add": "L/L 200/200 200/200 L/L L/L",
    "admin:fleet_fuelsample_change": "L/L 200/200 A/A L/L L/L",
    "admin:fleet_engineevent_changelist": "L/L 200/200 200/200 L/L L/L",
    "admin:fleet_engineevent_add": "L/L 200/200 200/200 L/L L/L",
    "admin:fleet_engineevent_change": "L/L 200/200 A/A L/L L/L",
    "admin:fleet_filterpressurereading_changelist": "L/L 200/200 200/200 L/L L/L",
    "admin:fleet_filterpressurereading_add": "L/L 200/200 200/200 L/L L/L",
    "admin:fleet_filterpressurereading_change": "L/L 200/200 A/A L/L L/L",
    "admin:ledger_serviceevent_changelist": "L/L 200/200 200/200 L/L L/L",
    "admin:ledger_serviceevent_add": "L/L 403/403 403/403 L/L L/L",
    "admin:ledger_serviceevent_change": "L/L 200/403 A/A L/L L/L",
    "admin:ledger_chaincheckpoint_changelist": "L/L 200/200 200/200 L/L L/L",
    "admin:ledger_chaincheckpoint_add": "L/L 403/403 403/403 L/L L/L",
    "admin:ledger_chaincheckpoint_change": "L/L 200/403 A/A L/L L/L",
    "admin:ledger_exportlog_changelist": "L/L 200/200 200/200 L/L L/L",
    "admin:ledger_exportlog_add": "L/L 403/403 403/403 L/L L/L",
    "admin:ledger_exportlog_change": "L/L 200/403 A/A L/L L/L",
    "admin:planning_dueitem_changelist": "L/L 200/200 200/200 L/L L/L",
    "admin:planning_dueitem_add": "L/L 403/403 403/403 L/L L/L",
    "admin:planning_dueitem_change": "L/L 200/403 A/A L/L L/L",
    "admin:planning_unitflag_changelist": "L/L 200/200 200/200 L/L L/L",
    "admin:planning_unitflag_add": "L/L 403/403 403/403 L/L L/L",
    "admin:planning_unitflag_change": "L/L 200/403 A/A L/L L/L",
    "admin:planning_projectionrun_changelist": "L/L 200/200 200/200 L/L L/L",
    "admin:planning_projectionrun_add": "L/L 403/403 403/403 L/L L/L",
    "admin:planning_projectionrun_change": "L/L 200/403 200/403 L/L L/L",
    "admin:workorders_workorder_changelist": "L/L 200/200 200/200 L/L L/L",
    "admin:workorders_workorder_add": "L/L 200/200 200/200 L/L L/L",
    "admin:workorders_workorder_change": "L/L 200/200 A/A L/L L/L",
}  # fmt: skip


def url_names(
    patterns: list[Any] | None = None, prefix: str = "", namespace: str = ""
) -> Iterator[tuple[str, str]]:
    """(namespace:name, route) of every named URL pattern of the project, the admin's aside."""
    for entry in patterns if patterns is not None else get_resolver().url_patterns:
        if isinstance(entry, URLResolver):
            if entry.namespace == "admin":
                continue
            ns = f"{namespace}{entry.namespace}:" if entry.namespace else namespace
            yield from url_names(entry.url_patterns, prefix + str(entry.pattern), ns)
        elif isinstance(entry, URLPattern):
            assert entry.name, f"the URL {prefix}{entry.pattern} has no name"
            yield f"{namespace}{entry.name}", prefix + str(entry.pattern)


def admin_names() -> Iterator[tuple[str, Any]]:
    """(URL name, model) of each registered model's changelist, add and change pages."""
    yield "admin:index", None
    for model in admin.site._registry:
        base = f"admin:{model._meta.app_label}_{model._meta.model_name}"
        for page in ("changelist", "add", "change"):
            yield f"{base}_{page}", model


class World:
    """Two depots, five people, one object of each model at the depot that is not the one-depot
    manager's, and the object each URL names (invented data, built once)."""

    def __init__(self) -> None:
        self.home, self.there = f.site_make(name="Home Depot"), f.site_make(name="Far Depot")
        unit_class = f.unit_class_make()
        plans = f.plans_make(unit_class)
        MeasurementLimit.objects.create(
            plan=next(iter(plans.values())), name="Supply pressure", low=1.5
        )
        unit = f.unit_make(site=self.there, unit_class=unit_class, fleet_number="F-001")
        f.unit_make(site=self.home, unit_class=unit_class, fleet_number="H-001")
        self.people: dict[str, User | None] = {
            "anonymous": None,
            "manager_all": f.user_make("manager", username="perm-mgr-all"),
            "manager_one": f.user_make("manager", username="perm-mgr-one", sites=[self.home]),
            "mechanic": f.user_make(
                "mechanic", username="perm-mech", sites=[self.home, self.there]
            ),
            "auditor": f.user_make("auditor", username="perm-aud"),
        }
        for name in ("manager_all", "manager_one"):
            staff = self.people[name]
            assert staff is not None
            staff.is_staff = True
            staff.save(update_fields=["is_staff"])
        self._observations(unit)
        mechanic = self.people["mechanic"]
        events_add(unit, mechanic, 2)
        chain_checkpoints_record(now=NOW)
        due_items_recompute(unit_ids=[unit.pk], now=NOW)
        UnitFlag.objects.create(
            unit=unit, code="perm", title="Test flag", reason="invented", since=NOW, computed_at=NOW
        )
        ProjectionRun.objects.create(started_at=NOW, finished_at=NOW + timedelta(minutes=1))
        wo = work_order_make(unit=unit, created_by=self.people["manager_all"])
        task = task_make(wo, WorkOrderTask.Kind.SEPARATOR_DRAIN)
        log, _ = history_export_start(
            scope=HistoryScope(allowed_site_ids=None),
            fmt="csv",
            via="command",
            user=self.people["manager_all"],
        )
        export_finish(log_id=log.pk, row_count=0, sha256="0" * 64)
        # The matrix's clients (a test that logs in again makes its own: sessions written in
        # a test's transaction are rolled back with it).
        self.clients = {person: self.client_for(person) for person in PEOPLE}
        token = feed_token_create(
            site=self.there, name="gateway", created_by=self.people["manager_all"], now=NOW
        ).token
        self.url_objects: dict[str, Any] = {
            "intake:feed_token_revoke": token,
            "planning:source_decision": self.decision,
            "intake:import_template": {"kind": "readings", "fmt": "csv"},
            "ledger:correct": ServiceEvent.objects.filter(unit=unit).first(),
            "pages:due_item_detail": DueItem.objects.filter(unit=unit).first(),
            "pages:unit_detail": unit,
            "pages:export_manifest": log,
            "workorders:task_save": task,
            "workorders:task_not_done": task,
            "workorders:task_not_done_undo": task,
        }
        for name in ("detail", "job_save", "task_add", "close", "override"):
            self.url_objects[f"workorders:{name}"] = wo
        run = ImportRun.objects.create(
            created_by=self.people["manager_all"], created_at=NOW, kind="readings",
            mode=ImportRun.Mode.DRY_RUN, file="uploads/perm.csv", original_name="perm.csv",
        )  # fmt: skip
        for name in ("import_run", "import_apply", "import_rejects"):
            self.url_objects[f"intake:{name}"] = run

    def _observations(self, unit: Any) -> None:
        MeterReading.objects.create(unit=unit, taken_at=NOW - timedelta(days=1), hours=1200)
        MeterReplacement.objects.create(
            unit=unit, replaced_at=NOW, old_meter_final=1200, new_meter_start=0
        )
        source = FuelSource.objects.create(
            site=self.there, name="Far tank", kind=FuelSource.Kind.BULK_TANK
        )
        Delivery.objects.create(source=source, delivered_at=NOW, litres=5000, ticket="PERM-1")
        Fueling.objects.create(unit=unit, source=source, fueled_at=NOW, litres=100)
        FuelSample.objects.create(
            reference="PERM-S1", unit=unit, sampled_at=NOW, iso4406="18/16/13"
        )
        EngineEvent.objects.create(
            unit=unit, occurred_at=NOW, spn=97, fmi=0, kind=EngineEvent.Kind.WATER_IN_FUEL
        )
        FilterPressureReading.objects.create(
            component=unit.components.first(), taken_at=NOW, hours=1200, dp_bar=0.2
        )
        dirty = FuelSample.objects.create(
            reference="PERM-S2", source=source, sampled_at=NOW, iso4406="22/20/17"
        )
        self.decision = SourceDecision.objects.create(
            source=source, site=self.there, sample=dirty, opened_at=NOW, reach_from=NOW,
            computed_at=NOW,
        )  # fmt: skip

    def client_for(self, person: str) -> Client:
        client = Client()
        user = self.people[person]
        if user is not None:
            client.force_login(user)
        return client

    def admin_object(self, model: Any) -> Any:
        model_admin = admin.site._registry[model]
        rows = model._default_manager.all()
        if isinstance(model_admin, SiteLimits) and model_admin.site_path is not None:
            rows = rows.filter(model_admin.owned_q([self.there.pk]))
        found = rows.order_by("pk").first()
        assert found is not None, f"no {model._meta.label} at {self.there} to open"
        return found

    def url(self, name: str, route: str, model: Any = None) -> str:
        if name.startswith("admin:") and name.endswith("_change"):
            return reverse(name, args=[self.admin_object(model).pk])
        if "<" in route:
            obj = self.url_objects.get(name)
            assert obj is not None, f"{name} ({route}) names an object: add it to World"
            if isinstance(obj, dict):
                return reverse(name, kwargs=obj)
            return reverse(name, args=[obj.pk])
        return reverse(name)


def outcome(response: Any) -> str:
    if response.status_code == 302:
        where = response["Location"]
        if "/login/" in where:
            return "L"
        if where.rstrip("/").endswith("/admin"):
            return "A"
    return str(response.status_code)


@pytest.fixture(scope="module")
def world(django_db_setup: Any, django_db_blocker: Any) -> Iterator[World]:
    with db_shared(django_db_blocker):
        yield World()


def observed(world: World, name: str, url: str) -> tuple[tuple[str, str], ...]:
    row = []
    for person in PEOPLE:
        client = world.clients[person]
        get = outcome(client.get(url))
        post = outcome(client.post(url, {}))
        if name in SESSION_ENDERS:
            world.clients[person] = world.client_for(person)
        row.append((get, post))
    return tuple(row)


def all_urls(world: World) -> list[tuple[str, str]]:
    """(name, URL) of everything the matrix visits."""
    found = [(name, world.url(name, route)) for name, route in url_names()]
    found += [(name, world.url(name, "", model)) for name, model in admin_names()]
    return found


def test_every_url_and_admin_page_has_an_expectation() -> None:
    names = {name for name, _ in url_names()} | {name for name, _ in admin_names()}
    missing = sorted(names - EXPECTED.keys())
    assert not missing, (
        "No expected outcome in tests/test_permissions.py for: " + ", ".join(missing)
        + ". Decide who may reach each and add its row to EXPECTED."
    )  # fmt: skip
    stale = sorted(EXPECTED.keys() - names)
    assert not stale, "EXPECTED names URLs that no longer exist: " + ", ".join(stale)


@pytest.mark.django_db
def test_permission_matrix(world: World) -> None:
    record = os.environ.get("PERMISSIONS_RECORD")
    failures = []
    for name, url in all_urls(world):
        got = observed(world, name, url)
        if record:
            print(f'    "{name}": "{" ".join(f"{g}/{p}" for g, p in got)}",')
            continue
        want = EXPECTED.get(name)
        if want is None:
            continue  # reported by test_every_url_and_admin_page_has_an_expectation
        for person, cell, (got_get, got_post) in zip(PEOPLE, want.split(), got, strict=True):
            want_get, want_post = cell.split("/")
            for method, w, g in (("GET", want_get, got_get), ("POST", want_post, got_post)):
                if w != g:
                    failures.append(f"{method} {url} ({name}) as {person}: expected {w}, got {g}")
    assert not failures, "\n".join(failures)


def _names(response: Any) -> str:
    return response.content.decode()


@pytest.mark.django_db
def test_one_depot_manager_lists_and_chooses_only_their_depots_rows(world: World) -> None:
    client = world.client_for("manager_one")
    units = _names(client.get(reverse("admin:fleet_unit_changelist")))
    assert "H-001" in units and "F-001" not in units
    readings = client.get(reverse("admin:fleet_meterreading_add"))
    choices = readings.context["adminform"].form.fields["unit"].queryset
    assert list(choices.values_list("fleet_number", flat=True)) == ["H-001"]
    unit_add = client.get(reverse("admin:fleet_unit_add"))
    sites = unit_add.context["adminform"].form.fields["site"].queryset
    assert list(sites) == [world.home]
    everyone = world.client_for("manager_all").get(reverse("admin:fleet_unit_changelist"))
    assert "H-001" in _names(everyone) and "F-001" in _names(everyone)


@pytest.mark.django_db
def test_one_depot_manager_cannot_change_another_depots_unit(world: World) -> None:
    unit = world.url_objects["pages:unit_detail"]
    url = reverse("admin:fleet_unit_change", args=[unit.pk])
    data = {
        "fleet_number": unit.fleet_number, "site": world.home.pk, "unit_class": unit.unit_class_id,
        "make": unit.make, "model": unit.model, "serial_number": unit.serial_number,
        "year": unit.year, "cylinders": unit.cylinders, "owner": "Someone Else Ltd",
        "in_service_on": unit.in_service_on.isoformat(),
    }  # fmt: skip
    response = world.client_for("manager_one").post(url, data)
    assert outcome(response) == "A"
    unit.refresh_from_db()
    assert unit.owner != "Someone Else Ltd" and unit.site_id == world.there.pk


@pytest.mark.django_db
def test_a_closed_work_order_is_read_only_in_the_admin(world: World) -> None:
    unit = world.url_objects["pages:unit_detail"]
    closed = work_order_make(
        unit=unit,
        created_by=world.people["manager_all"],
        number="WO-CLOSED",
        status=WorkOrder.Status.CLOSED,
        closed_at=NOW,
        closed_by=world.people["mechanic"],
        hour_meter=1234.0,
    )
    task_make(closed, WorkOrderTask.Kind.SEPARATOR_DRAIN)
    client = world.client_for("manager_all")
    url = reverse("admin:workorders_workorder_change", args=[closed.pk])
    page = client.get(url)
    assert page.status_code == 200
    assert not page.context["has_change_permission"]
    assert all(
        not formset.has_change_permission for formset in page.context["inline_admin_formsets"]
    )
    other = f.unit_make(site=world.there, unit_class=unit.unit_class, fleet_number="F-002")
    response = client.post(url, {"unit": other.pk, "hour_meter": "1", "number": "WO-CLOSED"})
    assert response.status_code == 403
    closed.refresh_from_db()
    assert (closed.unit_id, closed.hour_meter) == (unit.pk, 1234.0)
