"""The manager's import page: upload, the dry run's refused rows, apply, the rejects file."""

from __future__ import annotations

from collections.abc import Iterator
from datetime import timedelta
from pathlib import Path
from typing import Any

import openpyxl
import pytest
from django.core.files.uploadedfile import SimpleUploadedFile
from django.urls import reverse

from fleetfuel.fleet.models import MeterReading
from fleetfuel.intake.models import IMPORT_STORAGE, ImportRun
from tests import factories as f

NOW = f.NOW


@pytest.fixture(autouse=True)
def _storage_in_tmp(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Iterator[None]:
    monkeypatch.setattr(IMPORT_STORAGE, "_location", str(tmp_path))
    for cached in ("base_location", "location"):
        IMPORT_STORAGE.__dict__.pop(cached, None)
    yield
    for cached in ("base_location", "location"):
        IMPORT_STORAGE.__dict__.pop(cached, None)


def readings_csv(unit: Any, *, bad: bool) -> bytes:
    rows = ["unit,taken_at,hours"]
    for i in range(5):
        at = (NOW - timedelta(days=5 - i)).isoformat()
        rows.append(f"{unit.fleet_number},{at},{'-1' if bad and i == 2 else 1000 + 8 * i}")
    return ("\n".join(rows) + "\n").encode()


def upload(client: Any, content: bytes, name: str = "readings.csv") -> Any:
    file = SimpleUploadedFile(name, content, content_type="text/csv")
    return client.post(reverse("intake:import"), {"kind": "readings", "file": file})


@pytest.mark.usefixtures("clock_at_now")
def test_dry_run_then_good_rows_only(
    as_manager: Any, unit: Any, django_capture_on_commit_callbacks: Any
) -> None:
    with django_capture_on_commit_callbacks(execute=True):
        response = upload(as_manager, readings_csv(unit, bad=True))
    run = ImportRun.objects.get()
    assert response.status_code == 302 and response["Location"].endswith(f"/import/{run.pk}/")
    page = as_manager.get(response["Location"]).content.decode()
    assert "<td>4</td><td>hours</td><td>-1 is below the lowest allowed (0)</td>" in page
    assert "Would create" in page and MeterReading.objects.count() == 0
    with django_capture_on_commit_callbacks(execute=True):
        applied = as_manager.post(
            reverse("intake:import_apply", args=[run.pk]), {"mode": "good_rows_only"}
        )
    assert MeterReading.objects.filter(unit=unit).count() == 4
    last = ImportRun.objects.latest("pk")
    assert applied["Location"].endswith(f"/import/{last.pk}/")
    rejects = as_manager.get(reverse("intake:import_rejects", args=[last.pk]))
    lines = b"".join(rejects.streaming_content).decode().splitlines()
    assert lines[0] == "unit,taken_at,hours,refused_because"
    assert lines[1].endswith('-1,"line 4, column hours: -1 is below the lowest allowed (0)"')


@pytest.mark.usefixtures("clock_at_now")
def test_all_or_nothing_of_a_clean_file(
    as_manager: Any, unit: Any, django_capture_on_commit_callbacks: Any
) -> None:
    with django_capture_on_commit_callbacks(execute=True):
        upload(as_manager, readings_csv(unit, bad=False))
    run = ImportRun.objects.get()
    with django_capture_on_commit_callbacks(execute=True):
        as_manager.post(reverse("intake:import_apply", args=[run.pk]), {"mode": "all_or_nothing"})
    assert MeterReading.objects.filter(unit=unit).count() == 5
    page = as_manager.get(reverse("intake:import_run", args=[ImportRun.objects.latest("pk").pk]))
    assert "<strong>5</strong>" in page.content.decode()


def test_a_run_in_progress_is_polled(as_manager: Any, manager: Any) -> None:
    run = ImportRun.objects.create(
        created_by=manager, created_at=NOW, kind="readings", mode="dry_run",
        file="uploads/x.csv", original_name="x.csv",
    )  # fmt: skip
    response = as_manager.get(reverse("intake:import_run", args=[run.pk]), HTTP_HX_REQUEST="true")
    body = response.content.decode()
    assert body.lstrip().startswith('<div id="import-status"')
    assert 'hx-trigger="every 1s"' in body and "<progress" in body
    assert "HX-Request" in response["Vary"]


@pytest.mark.usefixtures("clock_at_now")
def test_units_of_other_sites_are_not_reached(
    client: Any,
    site: Any,
    other_site: Any,
    unit_class: Any,
    django_capture_on_commit_callbacks: Any,
) -> None:
    elsewhere = f.unit_make(site=other_site, unit_class=unit_class, fleet_number="FAR-1")
    local = f.user_make("manager", username="local", sites=[site])
    client.force_login(local)
    with django_capture_on_commit_callbacks(execute=True):
        upload(client, readings_csv(elsewhere, bad=False))
    run = ImportRun.objects.get()
    assert run.result["errors"][0] == {
        "line": 2, "column": "unit", "reason": "no unit with fleet number 'FAR-1'"
    }  # fmt: skip


def test_mechanics_do_not_import(as_mechanic: Any) -> None:
    assert as_mechanic.get(reverse("intake:import")).status_code == 403


def test_the_upload_page_lists_every_kind_with_its_templates(as_manager: Any) -> None:
    page = as_manager.get(reverse("intake:import")).content.decode()
    assert 'enctype="multipart/form-data"' in page
    assert reverse("intake:import_template", args=["service_events", "xlsx"]) in page
    assert "<code>litres</code>*" in page  # fuelings: the header names the unit


@pytest.mark.parametrize("fmt", ["csv", "xlsx"])
def test_templates_download(as_manager: Any, fmt: str, tmp_path: Path) -> None:
    response = as_manager.get(reverse("intake:import_template", args=["fuelings", fmt]))
    assert response["Content-Disposition"] == f'attachment; filename="fuelings.{fmt}"'
    if fmt == "csv":
        assert response.content.decode().strip() == "unit,site,fueled_at,litres,source"
    else:
        (tmp_path / "t.xlsx").write_bytes(response.content)
        sheet = openpyxl.load_workbook(tmp_path / "t.xlsx", read_only=True).worksheets[0]
        assert [c.value for c in next(sheet.iter_rows())] == [
            "unit", "site", "fueled_at", "litres", "source"
        ]  # fmt: skip


def test_the_entry_pages_lead_to_the_import(as_manager: Any, site: Any) -> None:
    page = as_manager.get(reverse("intake:home")).content.decode()
    assert f'href="{reverse("intake:import")}"' in page
