"""verify_ledger finds tampering done behind the app's back, and the signed checkpoints catch a
rewrite of a whole chain that recomputes consistently."""

from __future__ import annotations

import hashlib
from io import StringIO
from typing import Any

import pytest
from django.core.management import CommandError, call_command
from django.db import connection

from fleetfuel.ledger.actions import event_content
from fleetfuel.ledger.checkpoints import chain_checkpoints_record
from fleetfuel.ledger.models import ChainCheckpoint, ServiceEvent
from fleetfuel.ledger.tasks import checkpoint_heads
from services.ledger import GENESIS, entry_hash
from tests import factories as f

pytestmark = pytest.mark.django_db


def raw_sql(sql: str, params: list[Any]) -> None:
    """Change rows behind the app's back, as a database superuser can: on PostgreSQL with the
    triggers off for the test's transaction (``SET LOCAL session_replication_role``)."""
    with connection.cursor() as cursor:
        if connection.vendor == "postgresql":
            cursor.execute("SET LOCAL session_replication_role = replica")
        cursor.execute(sql, params)


def verify(*args: str) -> tuple[str, str]:
    out, err = StringIO(), StringIO()
    call_command("verify_ledger", *args, stdout=out, stderr=err)
    return out.getvalue(), err.getvalue()


def test_intact_ledger_gives_one_ok_line(unit: Any, mechanic: Any, add_events: Any) -> None:
    add_events(unit, mechanic, 5)
    out, _ = verify()
    assert out.strip().splitlines() == [
        "OK: 1 unit chain(s), 5 event(s) verified; 0 agree with their signed checkpoint."
    ]


def test_raw_update_of_one_entry_is_reported_with_its_id_and_seq(
    unit: Any, mechanic: Any, add_events: Any
) -> None:
    events = add_events(unit, mechanic, 4)
    raw_sql("UPDATE ledger_serviceevent SET water_ml = 2.5 WHERE id = %s", [events[2].pk])
    err = StringIO()
    with pytest.raises(CommandError, match="1 of 1 unit chain"):
        call_command("verify_ledger", stdout=StringIO(), stderr=err)
    line = err.getvalue()
    assert f"unit N-001 (North Depot): event {events[2].pk} seq 3:" in line
    assert "content does not match its stored hash" in line


def test_command_exits_non_zero_on_a_broken_chain(
    unit: Any, mechanic: Any, add_events: Any
) -> None:
    events = add_events(unit, mechanic, 2)
    raw_sql("UPDATE ledger_serviceevent SET prev_hash = %s WHERE id = %s", ["1" * 64, events[1].pk])
    with pytest.raises(CommandError) as caught:
        verify()
    assert caught.value.returncode == 1


def test_unit_option_checks_that_unit_only(
    unit: Any, site: Any, unit_class: Any, mechanic: Any, add_events: Any
) -> None:
    other = f.unit_make(site=site, unit_class=unit_class, fleet_number="N-002")
    add_events(unit, mechanic, 2)
    broken = add_events(other, mechanic, 2)
    raw_sql("UPDATE ledger_serviceevent SET notes = 'x' WHERE id = %s", [broken[0].pk])
    out, _ = verify("--unit", "N-001")
    assert out.startswith("OK: 1 unit chain(s), 2 event(s)")
    with pytest.raises(CommandError, match="No unit has fleet number"):
        verify("--unit", "NOPE")


def test_checkpoint_task_is_idempotent_and_signed(
    unit: Any, mechanic: Any, add_events: Any
) -> None:
    events = add_events(unit, mechanic, 3)
    assert checkpoint_heads() == {"checkpoints": 1}
    assert checkpoint_heads() == {"checkpoints": 0}  # same head: nothing new
    cp = ChainCheckpoint.objects.get()
    assert (cp.seq, cp.head_hash) == (3, events[-1].hash)
    assert len(cp.signature) == 64 and int(cp.signature, 16) >= 0
    add_events(unit, mechanic, 1)
    assert checkpoint_heads() == {"checkpoints": 1}
    assert list(ChainCheckpoint.objects.values_list("seq", flat=True)) == [4, 3]


def _chain_rewrite(unit: Any) -> None:
    """Change the first entry and recompute every hash after it, as a forger with database
    access would: the chain alone stays consistent."""
    rows = list(ServiceEvent.objects.filter(unit=unit).order_by("seq"))
    raw_sql("UPDATE ledger_serviceevent SET water_ml = 99 WHERE id = %s", [rows[0].pk])
    prev = GENESIS
    with connection.cursor() as cursor:
        for row in ServiceEvent.objects.filter(unit=unit).order_by("seq"):
            new = entry_hash(content=event_content(row), prev_hash=prev)
            cursor.execute(
                "UPDATE ledger_serviceevent SET prev_hash = %s, hash = %s WHERE id = %s",
                [prev, new, row.pk],
            )
            prev = new


def test_a_consistent_rewrite_of_a_whole_chain_disagrees_with_its_checkpoint(
    unit: Any, mechanic: Any, add_events: Any
) -> None:
    add_events(unit, mechanic, 3)
    chain_checkpoints_record(now=f.NOW)
    _chain_rewrite(unit)
    err = StringIO()
    with pytest.raises(CommandError):
        call_command("verify_ledger", stdout=StringIO(), stderr=err)
    assert "seq 3: hash" in err.getvalue() and "the chain was rewritten" in err.getvalue()


def test_a_forged_checkpoint_fails_its_signature(unit: Any, mechanic: Any, add_events: Any) -> None:
    add_events(unit, mechanic, 2)
    chain_checkpoints_record(now=f.NOW)
    _chain_rewrite(unit)
    new_head = (
        ServiceEvent.objects.filter(unit=unit).order_by("-seq").values_list("hash", flat=True)[0]
    )
    # Without the key the signature is stale.
    raw_sql("UPDATE ledger_chaincheckpoint SET head_hash = %s", [new_head])
    err = StringIO()
    with pytest.raises(CommandError):
        call_command("verify_ledger", stdout=StringIO(), stderr=err)
    assert "invalid signature" in err.getvalue()


def test_removed_entries_are_caught_by_the_checkpoint(
    unit: Any, mechanic: Any, add_events: Any
) -> None:
    events = add_events(unit, mechanic, 3)
    chain_checkpoints_record(now=f.NOW)
    raw_sql("DELETE FROM ledger_serviceevent WHERE id = %s", [events[-1].pk])
    err = StringIO()
    with pytest.raises(CommandError):
        call_command("verify_ledger", stdout=StringIO(), stderr=err)
    assert "ends at seq 2 but the checkpoint" in err.getvalue()


def test_stored_hash_is_sha256_of_the_canonical_content(
    unit: Any, mechanic: Any, add_events: Any
) -> None:
    (event,) = add_events(unit, mechanic, 1)
    from services.ledger import canonical_bytes

    row = ServiceEvent.objects.values().get(pk=event.pk)
    content = event_content(row)
    expected = hashlib.sha256(canonical_bytes(content) + GENESIS.encode("ascii")).hexdigest()
    assert event.hash == expected
