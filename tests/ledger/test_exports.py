"""The ledger's export pieces on their own: cell escaping (OWASP CSV injection), number cells,
and the manifest started with the scheduled tasks its caller gathers (49 CFR 396.3(b)(2)).
The exports as people make them (page and command) are tested in tests/pages/test_exports.py."""

from __future__ import annotations

from typing import Any

import pytest

from fleetfuel.ledger.exports import cell_escape, cell_text
from fleetfuel.ledger.manifest import export_start
from fleetfuel.ledger.models import ExportLog
from fleetfuel.ledger.selectors import HistoryScope
from tests import factories as f

pytestmark = pytest.mark.django_db


@pytest.mark.parametrize(
    ("text", "escaped"),
    [("=1+2", "'=1+2"), ("+1", "'+1"), ("-1", "'-1"), ("@SUM(A1)", "'@SUM(A1)"),
     ("\tx", "'\tx"), ("\rx", "'\rx"), ("'quoted", "''quoted"), ("plain", "plain"),
     ("a=b", "a=b")],
)  # fmt: skip
def test_cell_escape_prefixes_a_single_quote(text: str, escaped: str) -> None:
    assert cell_escape(text) == escaped


def test_negative_numbers_stay_numbers(db: Any) -> None:
    assert cell_text(-0.25) == "-0.25"
    assert cell_text(12.0) == "12"


def test_manifest_names_the_scheduled_tasks_it_is_given(
    unit: Any, site: Any, unit_class: Any, mechanic: Any, add_events: Any
) -> None:
    # 49 CFR 396.3(b)(2): "the nature and due date of the various inspection and maintenance
    # operations to be performed", per unit; the ledger writes what the layer above gathered.
    other = f.unit_make(site=site, unit_class=unit_class, fleet_number="N-002")
    add_events(unit, mechanic, 1)
    task = {"task": "fine_filter", "label": "Change pressure-side (fine) filter",
            "component_id": None, "due_on": "2026-07-01", "due_hours": 2500.0,
            "status": "soon"}  # fmt: skip
    log, heads = export_start(
        scope=HistoryScope(allowed_site_ids=None),
        fmt=ExportLog.Format.CSV,
        via=ExportLog.Via.COMMAND,
        user=None,
        scheduled={unit.pk: [task]},
        now=f.NOW,
    )
    by_unit = {u["fleet_number"]: u for u in log.manifest["units"]}
    assert by_unit["N-001"]["scheduled"] == [task]
    assert by_unit["N-002"]["scheduled"] == []  # a unit the mapping leaves out has none
    assert heads == {unit.pk: 1} and other.pk not in heads
