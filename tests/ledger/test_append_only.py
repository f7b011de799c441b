"""The service history only grows: no change, no delete (app, admin and, on PostgreSQL, the
database itself); a correction is a new entry; concurrent writers never fork a chain."""

from __future__ import annotations

import threading
from typing import Any

import pytest
from django.contrib.admin.sites import site as admin_site
from django.core.exceptions import ValidationError
from django.db import DatabaseError, connection, transaction
from django.test import RequestFactory

from fleetfuel.ledger.actions import service_event_append, service_event_correct
from fleetfuel.ledger.models import LedgerImmutableError, ServiceEvent
from services.ledger import GENESIS
from tests import factories as f

pytestmark = pytest.mark.django_db


def test_a_recorded_entry_refuses_save_and_delete(
    unit: Any, mechanic: Any, add_events: Any
) -> None:
    (event,) = add_events(unit, mechanic, 1)
    event.notes = "changed"
    with pytest.raises(LedgerImmutableError):
        event.save()
    with pytest.raises(LedgerImmutableError):
        event.delete()
    assert ServiceEvent.objects.get(pk=event.pk).notes == ""


def test_admin_offers_no_add_change_or_delete_even_to_a_superuser(db: Any) -> None:
    superuser = f.user_make(None, username="root")
    superuser.is_superuser = superuser.is_staff = True
    superuser.save()
    request = RequestFactory().get("/admin/")
    request.user = superuser
    model_admin = admin_site._registry[ServiceEvent]
    assert not model_admin.has_add_permission(request)
    assert not model_admin.has_change_permission(request)
    assert not model_admin.has_delete_permission(request)
    assert model_admin.has_view_permission(request)
    assert "delete_selected" not in model_admin.get_actions(request)


def test_admin_change_list_shows_entries_read_only(
    client: Any, unit: Any, mechanic: Any, add_events: Any
) -> None:
    add_events(unit, mechanic, 2)
    superuser = f.user_make(None, username="root2")
    superuser.is_superuser = superuser.is_staff = True
    superuser.save()
    client.force_login(superuser)
    page = client.get("/admin/ledger/serviceevent/")
    assert page.status_code == 200
    assert b"N-001" in page.content
    assert b"Add service event" not in page.content


def test_a_correction_is_a_new_entry_that_names_the_old_one(
    unit: Any, mechanic: Any, manager: Any, add_events: Any
) -> None:
    (event,) = add_events(unit, mechanic, 1, part_number="PF-10")
    fixed = service_event_correct(
        event=event, reason="Wrong part number typed", recorded_by=manager, part_number="PF-12"
    )
    assert (fixed.kind, fixed.corrects_id, fixed.seq) == ("correction", event.pk, 2)
    assert fixed.prev_hash == event.hash
    assert fixed.recorded_by == manager and fixed.reason == "Wrong part number typed"
    # The rest of the entry is restated, and the original stays as it was.
    assert (fixed.water_ml, fixed.hour_meter, fixed.performed_at) == (
        event.water_ml, event.hour_meter, event.performed_at,
    )  # fmt: skip
    assert ServiceEvent.objects.get(pk=event.pk).part_number == "PF-10"


@pytest.mark.parametrize(
    ("reason", "changes", "message"),
    [
        ("  ", {"notes": "x"}, "Say why"),
        ("typo", {"part_number": "PF-10"}, "Nothing to correct"),
        ("typo", {"unit": None}, "cannot be corrected"),
    ],
)
def test_a_correction_needs_a_reason_and_a_real_change(
    unit: Any, mechanic: Any, manager: Any, add_events: Any, reason: str, changes: Any, message: str
) -> None:
    (event,) = add_events(unit, mechanic, 1, part_number="PF-10")
    with pytest.raises(ValidationError, match=message):
        service_event_correct(event=event, reason=reason, recorded_by=manager, **changes)
    assert ServiceEvent.objects.count() == 1


def test_postgres_trigger_refuses_update_and_delete(
    postgres: None, unit: Any, mechanic: Any, add_events: Any
) -> None:
    (event,) = add_events(unit, mechanic, 1)
    for sql in (
        "UPDATE ledger_serviceevent SET notes = 'x' WHERE id = %s",
        "DELETE FROM ledger_serviceevent WHERE id = %s",
    ):
        with (
            pytest.raises(DatabaseError, match="append-only"),
            transaction.atomic(),
            connection.cursor() as cursor,
        ):
            cursor.execute(sql, [event.pk])
    assert ServiceEvent.objects.filter(pk=event.pk, notes="").exists()


def test_postgres_queryset_update_is_refused_too(
    postgres: None, unit: Any, mechanic: Any, add_events: Any
) -> None:
    add_events(unit, mechanic, 2)
    with pytest.raises(DatabaseError, match="append-only"), transaction.atomic():
        ServiceEvent.objects.filter(unit=unit).update(notes="bulk")


@pytest.mark.django_db(transaction=True)
def test_concurrent_appends_to_one_unit_keep_the_chain_linear(postgres: None) -> None:
    site = f.site_make()
    uc = f.unit_class_make()
    unit = f.unit_make(site=site, unit_class=uc, fleet_number="C-001")
    mechanic = f.user_make("mechanic", sites=[site])
    per_thread, threads = 12, 2
    start = threading.Barrier(threads)
    errors: list[BaseException] = []

    def writer(n: int) -> None:
        try:
            start.wait()
            for i in range(per_thread):
                service_event_append(
                    unit=unit,
                    kind=ServiceEvent.Kind.INSPECTION,
                    performed_at=f.NOW,
                    recorded_by=mechanic,
                    notes=f"writer {n} entry {i}",
                )
        except BaseException as exc:  # noqa: BLE001 - reported below
            errors.append(exc)
        finally:
            connection.close()  # each thread had its own connection

    workers = [threading.Thread(target=writer, args=(n,)) for n in range(threads)]
    for w in workers:
        w.start()
    for w in workers:
        w.join()
    assert errors == []
    chain = list(
        ServiceEvent.objects.filter(unit=unit).order_by("seq").values("seq", "prev_hash", "hash")
    )
    assert [row["seq"] for row in chain] == list(range(1, per_thread * threads + 1))
    previous = GENESIS
    for row in chain:
        assert row["prev_hash"] == previous
        previous = row["hash"]
    # Both writers got in: the entries interleave rather than one writer doing all.
    assert {f"writer {n} entry 0" for n in range(threads)} <= set(
        ServiceEvent.objects.filter(unit=unit).values_list("notes", flat=True)
    )
