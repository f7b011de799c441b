"""The auditor's visit in a real browser (Chromium, desktop 1280x800): filter one unit's
history, download a CSV export, and check its SHA-256 against the manifest."""

from __future__ import annotations

import hashlib
import json
from pathlib import Path
from typing import Any

import pytest
from django.urls import reverse

from fleetfuel.ledger.models import ExportLog
from tests import factories as f
from tests.browser.conftest import screenshot
from tests.ledger.conftest import events_add

pytestmark = [pytest.mark.browser, pytest.mark.django_db(transaction=True)]


def test_auditor_filters_a_unit_and_checks_a_csv_export(login_page: Any, tmp_path: Path) -> None:
    site = f.site_make(name="East Quarry", code="east-quarry")
    uc = f.unit_class_make(name="Loader")
    mechanic = f.user_make("mechanic", username="moss", sites=[site])
    wanted = f.unit_make(site=site, unit_class=uc, fleet_number="EQ-101")
    other = f.unit_make(site=site, unit_class=uc, fleet_number="EQ-202")
    events_add(wanted, mechanic, 4)
    events_add(other, mechanic, 3)
    auditor = f.user_make("auditor", username="ines")

    page = login_page(auditor, width=1280, height=800)
    assert page.url.endswith(reverse("ledger:history"))
    assert page.locator("#history-results tbody tr").count() == 7

    page.fill("#id_unit", "EQ-101")
    page.get_by_role("button", name="Show").click()
    page.wait_for_url(lambda url: "unit=EQ-101" in url)  # no eval: the CSP refuses it
    page.wait_for_load_state("networkidle")
    rows = page.locator("#history-results tbody tr")
    assert rows.count() == 4
    for text in rows.all_inner_texts():
        assert "EQ-101" in text and "EQ-202" not in text
    screenshot(page, "auditor-history-1280")

    with page.expect_download() as info:
        page.get_by_role("button", name="CSV").click()
    download = info.value
    saved = tmp_path / download.suggested_filename
    download.save_as(saved)
    digest = hashlib.sha256(saved.read_bytes()).hexdigest()
    assert saved.read_bytes().count(b"\r\n") == 1 + 4  # header and EQ-101's four entries

    # The recent-exports box refreshes by itself and links the manifest.
    link = page.locator("#recent-exports").get_by_role("link", name="Manifest (JSON)")
    link.first.wait_for()
    screenshot(page, "auditor-history-exported-1280")
    manifest = json.loads(page.request.get(link.first.get_attribute("href")).body())
    assert manifest["sha256"] == digest
    assert manifest["row_count"] == 4 and manifest["filters"]["units"] == ["EQ-101"]
    assert manifest["file_name"] == download.suggested_filename
    assert ExportLog.objects.get().requested_by == auditor
