"""The ledger's holes closed (issue 12): TRUNCATE refused, checkpoints append-only, removed
checkpoints and emptied tables named by verify_ledger, and checkpoints signed with a key of
their own, so rotating SECRET_KEY breaks nothing."""

from __future__ import annotations

from datetime import timedelta
from io import StringIO
from typing import Any

import pytest
from django.core.management import CommandError, call_command
from django.db import DatabaseError, connection, transaction
from django.test import override_settings
from django.utils import timezone
from django.utils.crypto import salted_hmac

from fleetfuel.ledger.checkpoints import chain_checkpoints_record
from fleetfuel.ledger.models import ChainCheckpoint, ServiceEvent, VerificationMark
from tests import factories as f
from tests.ledger.test_verify import _chain_rewrite, raw_sql

pytestmark = pytest.mark.django_db

KEY_A = "a" * 20 + "-first-ledger-key-for-these-tests-0123456789"
KEY_B = "b" * 20 + "-second-ledger-key-for-these-tests-0123456789"


def verify() -> tuple[str, str]:
    """(stdout, stderr) of verify_ledger; stderr ends with the CommandError's message."""
    out, err = StringIO(), StringIO()
    try:
        call_command("verify_ledger", stdout=out, stderr=err)
    except CommandError as exc:
        return out.getvalue(), err.getvalue() + f"\nFAILED: {exc}"
    return out.getvalue(), err.getvalue()


def after_the_events() -> Any:
    """A checkpoint run well after the entries were recorded (past the run's grace)."""
    return timezone.now() + timedelta(hours=2)


@pytest.fixture
def two_units(unit: Any, site: Any, unit_class: Any, mechanic: Any, add_events: Any) -> Any:
    other = f.unit_make(site=site, unit_class=unit_class, fleet_number="N-002")
    add_events(unit, mechanic, 3)
    add_events(other, mechanic, 2)
    return unit, other


@pytest.mark.django_db(transaction=True)  # committed rows: no deferred checks pending
@pytest.mark.parametrize(
    "table", ["ledger_serviceevent", "ledger_chaincheckpoint", "ledger_verificationmark"]
)
def test_postgres_refuses_truncate(postgres: None, add_events: Any, table: str) -> None:
    site, unit_class = f.site_make(name="North Depot"), f.unit_class_make()
    mechanic = f.user_make("mechanic", sites=[site])
    for number, count in (("N-001", 3), ("N-002", 2)):
        add_events(
            f.unit_make(site=site, unit_class=unit_class, fleet_number=number), mechanic, count
        )
    chain_checkpoints_record(now=after_the_events())
    with (
        pytest.raises(DatabaseError, match="TRUNCATE refused"),
        transaction.atomic(),
        connection.cursor() as cursor,
    ):
        # The test runner's sessions may truncate (settings, FLEETFUEL_TESTING); this one not.
        cursor.execute("SET LOCAL fleetfuel.ledger_truncate = ''")
        cursor.execute(f"TRUNCATE {table} CASCADE")
    assert ServiceEvent.objects.count() == 5 and ChainCheckpoint.objects.count() == 2


def test_postgres_refuses_update_and_delete_of_checkpoints(postgres: None, two_units: Any) -> None:
    chain_checkpoints_record(now=after_the_events())
    cp = ChainCheckpoint.objects.first()
    assert cp is not None
    for sql in (
        "UPDATE ledger_chaincheckpoint SET seq = 1 WHERE id = %s",
        "DELETE FROM ledger_chaincheckpoint WHERE id = %s",
    ):
        with (
            pytest.raises(DatabaseError, match="append-only"),
            transaction.atomic(),
            connection.cursor() as cursor,
        ):
            cursor.execute(sql, [cp.pk])
    assert ChainCheckpoint.objects.filter(pk=cp.pk, seq=cp.seq).exists()


def test_deleting_a_rewritten_units_checkpoints_names_that_unit(two_units: Any) -> None:
    unit, other = two_units
    chain_checkpoints_record(now=after_the_events())
    _chain_rewrite(unit)
    raw_sql("DELETE FROM ledger_chaincheckpoint WHERE unit_id = %s", [unit.pk])
    _, err = verify()
    assert "BROKEN unit N-001 (North Depot): seq 3:" in err
    assert "it has no checkpoint: checkpoints were removed" in err
    assert "N-002" not in err
    assert "FAILED: 1 of 2 unit chain(s) failed verification." in err


def test_history_recorded_after_the_last_run_needs_no_checkpoint_yet(two_units: Any) -> None:
    chain_checkpoints_record(now=timezone.now() - timedelta(days=1))  # before the entries
    out, err = verify()
    assert out.startswith("OK: 2 unit chain(s), 5 event(s)"), err


def test_a_rerun_checkpoint_after_deletion_is_caught_by_the_last_verification(
    two_units: Any,
) -> None:
    unit, _ = two_units
    chain_checkpoints_record(now=after_the_events())
    assert verify()[0].startswith("OK: 2 unit chain(s)")  # records a signed mark
    _chain_rewrite(unit)
    raw_sql("DELETE FROM ledger_chaincheckpoint WHERE unit_id = %s", [unit.pk])
    chain_checkpoints_record(now=after_the_events())  # the beat notes the forged head anew
    _, err = verify()
    assert "BROKEN unit N-001 (North Depot): seq 3: the checkpoint at seq 3" in err
    assert "is gone: checkpoints were removed" in err


def test_emptied_tables_are_reported_against_the_last_verification(two_units: Any) -> None:
    chain_checkpoints_record(now=after_the_events())
    assert verify()[0].startswith("OK: 2 unit chain(s)")
    raw_sql("DELETE FROM ledger_chaincheckpoint", [])
    raw_sql("DELETE FROM ledger_serviceevent", [])
    _, err = verify()
    assert "BROKEN ledger: 0 entries in the service history now, but the verification" in err
    assert "counted 5: rows were removed" in err
    assert "BROKEN ledger: 0 checkpoints now" in err
    assert "N-001 (North Depot)" in err and "N-002 (North Depot)" in err
    assert "FAILED: 2 of 0 unit chain(s) failed verification; 3 problem(s)" in err


def test_a_forged_verification_mark_is_reported(two_units: Any) -> None:
    chain_checkpoints_record(now=after_the_events())
    verify()
    raw_sql("UPDATE ledger_verificationmark SET events = 1", [])
    _, err = verify()
    assert "BROKEN ledger: the verification mark of" in err and "invalid signature" in err


def test_verification_passes_after_secret_key_is_rotated(two_units: Any) -> None:
    with override_settings(LEDGER_SIGNING_KEY=KEY_A):
        chain_checkpoints_record(now=after_the_events())
        assert verify()[0].startswith("OK: 2 unit chain(s), 5 event(s) verified; 2 agree")
    with override_settings(LEDGER_SIGNING_KEY=KEY_A, SECRET_KEY="rotated-" + "s" * 50):
        out, err = verify()
    assert out.startswith("OK: 2 unit chain(s), 5 event(s) verified; 2 agree"), err


def test_an_old_ledger_key_verifies_only_while_listed_as_a_fallback(two_units: Any) -> None:
    with override_settings(LEDGER_SIGNING_KEY=KEY_A):
        chain_checkpoints_record(now=after_the_events())
    with override_settings(LEDGER_SIGNING_KEY=KEY_B, LEDGER_SIGNING_KEY_FALLBACKS=[KEY_A]):
        assert verify()[0].startswith("OK: 2 unit chain(s), 5 event(s) verified; 2 agree")
    with override_settings(LEDGER_SIGNING_KEY=KEY_B, LEDGER_SIGNING_KEY_FALLBACKS=[]):
        _, err = verify()
    assert "neither LEDGER_SIGNING_KEY nor among LEDGER_SIGNING_KEY_FALLBACKS" in err


def test_a_checkpoint_from_before_the_ledger_key_verifies_with_secret_key(
    unit: Any, mechanic: Any, add_events: Any
) -> None:
    (event,) = add_events(unit, mechanic, 1)
    at = after_the_events()
    message = f"{unit.pk}|1|{event.hash}|{at.isoformat()}"
    legacy = salted_hmac("fleetfuel.ledger.ChainCheckpoint", message, algorithm="sha256")
    ChainCheckpoint.objects.create(
        unit=unit, seq=1, head_hash=event.hash, recorded_at=at, signature=legacy.hexdigest()
    )
    assert verify()[0].startswith("OK: 1 unit chain(s), 1 event(s) verified; 1 agree")
    assert VerificationMark.objects.count() == 1


def test_a_checkpoint_from_before_the_ledger_key_names_secret_key_when_it_changed(
    unit: Any, mechanic: Any, add_events: Any
) -> None:
    (event,) = add_events(unit, mechanic, 1)
    at = after_the_events()
    message = f"{unit.pk}|1|{event.hash}|{at.isoformat()}"
    legacy = salted_hmac("fleetfuel.ledger.ChainCheckpoint", message, algorithm="sha256")
    ChainCheckpoint.objects.create(
        unit=unit, seq=1, head_hash=event.hash, recorded_at=at, signature=legacy.hexdigest()
    )
    with override_settings(SECRET_KEY="rotated-" + "s" * 50, SECRET_KEY_FALLBACKS=[]):
        _, err = verify()
    assert "invalid signature under SECRET_KEY and SECRET_KEY_FALLBACKS" in err
