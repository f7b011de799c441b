"""The README's recipe (tests/ledger/third_party_check.py, standard library only) accepts an
export as written and refuses one that was changed afterwards."""

from __future__ import annotations

import hashlib
import io
import json
import subprocess
import sys
from pathlib import Path
from typing import Any

import pytest
from django.core.management import call_command

from fleetfuel.ledger.actions import service_event_append, service_event_correct
from fleetfuel.ledger.models import ServiceEvent
from tests import factories as f

pytestmark = pytest.mark.django_db
RECIPE = Path(__file__).with_name("third_party_check.py")


def check(path: Path) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [sys.executable, "-I", str(RECIPE), str(path)], capture_output=True, text=True, check=False
    )


@pytest.fixture
def exported(tmp_path: Path, unit: Any, mechanic: Any, manager: Any, add_events: Any) -> Path:
    first, *_ = add_events(unit, mechanic, 3)
    service_event_append(
        unit=unit, kind=ServiceEvent.Kind.MEASUREMENT, performed_at=f.NOW, recorded_by=mechanic,
        measurement_name="Return flow, cyl 3", value=0.1 + 0.2, low_limit=-1.5, passed=False,
        notes="=cmd|' /C calc'!A0", parts_used="@risk",
    )  # fmt: skip
    service_event_correct(event=first, reason="Bowl was cloudy", recorded_by=manager, notes="+1")
    out = tmp_path / "history.csv"
    call_command("export_history", "--format", "csv", "--out", str(out), stdout=io.StringIO())
    return out


def test_recipe_accepts_the_export(exported: Path) -> None:
    result = check(exported)
    assert result.returncode == 0, result.stderr
    assert result.stdout.strip() == "OK: 5 rows, 1 unit chain(s) agree with the manifest"


def test_recipe_refuses_a_file_that_differs_from_its_manifest(exported: Path) -> None:
    exported.write_bytes(exported.read_bytes().replace(b"Return flow", b"Return flaw"))
    result = check(exported)
    assert result.returncode != 0 and "differs from its manifest" in result.stderr


def test_recipe_refuses_a_changed_row_even_with_a_matching_digest(exported: Path) -> None:
    data = exported.read_bytes().replace(b"Return flow", b"Return flaw")
    exported.write_bytes(data)
    manifest_path = Path(f"{exported}.manifest.json")
    manifest = json.loads(manifest_path.read_text())
    manifest["sha256"] = hashlib.sha256(data).hexdigest()  # a forger can rewrite the manifest
    manifest_path.write_text(json.dumps(manifest))
    result = check(exported)
    assert result.returncode != 0 and "event" in result.stderr and "N-001" in result.stderr
