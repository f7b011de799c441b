"""The read replica (DATABASE_REPLICA_URL): exports and the history page read through it when
one is configured, everything else reads and writes the primary; without one, everything
is on the primary.

In tests the "replica" alias is a TEST MIRROR of the default database (Django's
``TEST: {"MIRROR": "default"}``): the same data over a connection of its own, so the tests
that read through it commit their data (transaction=True).
"""

from __future__ import annotations

import io
import json
from pathlib import Path
from typing import Any

import openpyxl
import pytest
from django.core.management import call_command
from django.db import connections
from django.test import override_settings
from django.test.utils import CaptureQueriesContext
from django.urls import reverse

from fleetfuel.dbrouters import REPLICA, history_alias
from fleetfuel.fleet.models import Unit
from fleetfuel.ledger.models import ExportLog
from tests.ledger.conftest import events_add


def test_without_a_replica_history_reads_the_primary() -> None:
    assert history_alias() == "default"
    assert history_alias(caught_up=True) == "default"


@pytest.mark.django_db(transaction=True, databases=["default", REPLICA])
@override_settings(DATABASE_REPLICA_READS=True)
def test_an_export_reads_the_history_through_the_replica(
    tmp_path: Path, unit: Any, mechanic: Any
) -> None:
    events_add(unit, mechanic, 3)
    out = tmp_path / "all.xlsx"  # CSV on PostgreSQL is a COPY, out of Django's query log
    with (
        CaptureQueriesContext(connections[REPLICA]) as replica,
        CaptureQueriesContext(connections["default"]) as primary,
    ):
        call_command("export_history", "--format", "xlsx", "--out", str(out), stdout=io.StringIO())
    book = openpyxl.load_workbook(out, read_only=True)
    assert len(list(book["Service history"].iter_rows(values_only=True))) == 1 + 3
    # The entries were read on the replica; the export's log was written on the primary.
    assert any('FROM "ledger_serviceevent"' in q["sql"] for q in replica.captured_queries)
    assert not any(q["sql"].startswith(("INSERT", "UPDATE")) for q in replica.captured_queries)
    assert any('INSERT INTO "ledger_exportlog"' in q["sql"] for q in primary.captured_queries)
    manifest = json.loads(Path(f"{out}.manifest.json").read_text())
    assert manifest["row_count"] == 3 and ExportLog.objects.get().row_count == 3


@pytest.mark.django_db(transaction=True, databases=["default", REPLICA])
@override_settings(DATABASE_REPLICA_READS=True)
def test_the_history_page_reads_through_the_replica(
    client: Any, auditor: Any, unit: Any, mechanic: Any
) -> None:
    events_add(unit, mechanic, 2)
    client.force_login(auditor)
    with CaptureQueriesContext(connections[REPLICA]) as replica:
        response = client.get(reverse("ledger:history"))
    assert response.status_code == 200
    assert unit.fleet_number in response.content.decode()
    assert any('FROM "ledger_serviceevent"' in q["sql"] for q in replica.captured_queries)


@pytest.mark.django_db(databases=["default", REPLICA])
@override_settings(DATABASE_REPLICA_READS=True)
def test_everything_else_reads_and_writes_the_primary(unit: Any) -> None:
    with CaptureQueriesContext(connections[REPLICA]) as replica:
        unit.save()
        assert Unit.objects.get(pk=unit.pk) == unit
    assert replica.captured_queries == []
