"""The telematics feed, POST /api/v1/telematics/: tokens, per-item results, replays, limits.

Limits of the body: an SPN is 19 bits (0 to 524,287, SAE J1939-71) and an FMI 5 bits (0 to
31, SAE J1939-73); SPNs above 520,191 are manufacturer-proprietary (SAE J1939-71) and are
stored as given. Bearer tokens and their challenge follow RFC 6750 (section 3: a request
without a valid token gets 401 with ``WWW-Authenticate: Bearer``); 413 and 429 with
``Retry-After`` are RFC 9110 section 15.5.14 and RFC 6585 section 4.
"""

from __future__ import annotations

import json
from collections.abc import Iterator
from datetime import timedelta
from typing import Any
from unittest import mock

import pytest
from django.core.cache import cache
from django.test import Client

from fleetfuel.fleet.models import EngineEvent, MeterReading
from fleetfuel.intake.feed_tokens import feed_token_create, feed_token_revoke
from fleetfuel.intake.models import FeedReceipt
from fleetfuel.planning.models import DueItem
from tests import factories as f

URL = "/api/v1/telematics/"
NOW = f.NOW


@pytest.fixture
def token(clock_at_now: Any, site: Any) -> Any:
    cache.clear()  # the rate limit's counts
    return feed_token_create(site=site, name="gateway", created_by=None, now=NOW)


def post(client: Any, body: Any, *, secret: str | None, raw: bytes | None = None) -> Any:
    headers = {"Authorization": f"Bearer {secret}"} if secret is not None else {}
    data = raw if raw is not None else json.dumps(body)
    return client.post(URL, data=data, content_type="application/json", headers=headers)


def hours(item_id: str, unit: str, h: float, *, ago_h: float) -> dict[str, Any]:
    at = (NOW - timedelta(hours=ago_h)).isoformat()
    return {"id": item_id, "unit": unit, "type": "hours", "at": at, "hours": h}


def fault(item_id: str, unit: str, spn: int, fmi: int, *, ago_h: float = 1) -> dict[str, Any]:
    at = (NOW - timedelta(hours=ago_h)).isoformat()
    return {"id": item_id, "unit": unit, "type": "fault", "at": at, "spn": spn, "fmi": fmi}


# ------------------------------------------------------------------ who may post


@pytest.mark.parametrize("header", [None, "Bearer nonsense", "Basic dXNlcjpwYXNz", "Bearer "])
def test_401_without_a_valid_token(client: Any, token: Any, unit: Any, header: Any) -> None:
    headers = {"Authorization": header} if header is not None else {}
    body = json.dumps({"items": [hours("a", "N-001", 1200, ago_h=1)]})
    response = client.post(URL, data=body, content_type="application/json", headers=headers)
    assert response.status_code == 401
    assert response["WWW-Authenticate"].startswith("Bearer")
    assert not MeterReading.objects.exists()


def test_401_with_a_revoked_token(client: Any, token: Any, unit: Any) -> None:
    feed_token_revoke(token=token.token, now=NOW)
    response = post(client, {"items": [hours("a", "N-001", 1200, ago_h=1)]}, secret=token.secret)
    assert response.status_code == 401
    assert 'error="invalid_token"' in response["WWW-Authenticate"]
    assert not MeterReading.objects.exists()


def test_only_post(client: Any, token: Any) -> None:
    response = client.get(URL, headers={"Authorization": f"Bearer {token.secret}"})
    assert response.status_code == 405
    assert response["Allow"] == "POST"


def test_csrf_exempt_the_feed_only(client: Any, token: Any, unit: Any, manager: Any) -> None:
    strict = Client(enforce_csrf_checks=True)
    body = {"items": [hours("a", "N-001", 1200, ago_h=1)]}
    assert post(strict, body, secret=token.secret).status_code == 200
    strict.force_login(manager)
    page = strict.post("/intake/feed-tokens/", {"site": token.token.site_id, "name": "x"})
    assert page.status_code == 403  # a session's form still needs its CSRF token


# ------------------------------------------------------------------ per-item results


def test_per_item_results_in_order(client: Any, token: Any, unit: Any) -> None:
    items = [
        hours("r1", "N-001", 1200.0, ago_h=5),
        fault("f1", "N-001", 97, 0),
        hours("r2", "N-999", 1200.0, ago_h=4),
        {"id": "bad", "unit": "N-001", "type": "hours", "at": "2026-06-15T09:00:00"},
        hours("r3", "N-001", 1203.5, ago_h=1),
    ]
    response = post(client, {"items": items}, secret=token.secret)
    assert response.status_code == 200
    results = response.json()["results"]
    assert [(r["id"], r["status"]) for r in results] == [
        ("r1", "created"),
        ("f1", "created"),
        ("r2", "refused"),
        ("bad", "refused"),
        ("r3", "created"),
    ]
    assert "N-999" in results[2]["error"]
    assert "'hours'" in results[3]["error"]
    readings = MeterReading.objects.filter(unit=unit).order_by("taken_at")
    assert [(r.hours, r.source) for r in readings] == [
        (1200.0, "telematics"),
        (1203.5, "telematics"),
    ]
    event = EngineEvent.objects.get(unit=unit)
    assert (event.spn, event.fmi, event.kind) == (97, 0, "water_in_fuel")
    token.token.refresh_from_db()
    assert NOW <= token.token.last_used_at < NOW + timedelta(minutes=1)  # the clock ticks


def test_replay_creates_nothing(client: Any, token: Any, unit: Any) -> None:
    body = {"items": [hours("r1", "N-001", 1200.0, ago_h=2), fault("f1", "N-001", 5571, 0)]}
    first = post(client, body, secret=token.secret).json()["results"]
    again = post(client, body, secret=token.secret).json()["results"]
    assert [r["status"] for r in first] == ["created", "created"]
    assert [r["status"] for r in again] == ["duplicate", "duplicate"]
    assert MeterReading.objects.count() == 1 and EngineEvent.objects.count() == 1
    assert FeedReceipt.objects.count() == 2


def test_an_id_twice_in_one_batch_is_stored_once(client: Any, token: Any, unit: Any) -> None:
    body = {"items": [fault("f1", "N-001", 97, 0), fault("f1", "N-001", 97, 0)]}
    results = post(client, body, secret=token.secret).json()["results"]
    assert [r["status"] for r in results] == ["created", "duplicate"]
    assert EngineEvent.objects.count() == 1


def test_another_sites_unit_refused(
    client: Any, token: Any, unit: Any, other_site: Any, unit_class: Any
) -> None:
    f.unit_make(site=other_site, unit_class=unit_class, fleet_number="S-001")
    body = {"items": [hours("s1", "S-001", 500.0, ago_h=1), fault("s2", "S-001", 97, 0)]}
    results = post(client, body, secret=token.secret).json()["results"]
    assert [r["status"] for r in results] == ["refused", "refused"]
    assert "not at this token's site" in results[0]["error"]
    assert not MeterReading.objects.exists() and not EngineEvent.objects.exists()


def test_proprietary_spn_stored_as_given(client: Any, token: Any, unit: Any) -> None:
    # 520,192 and above: manufacturer-proprietary (SAE J1939-71); 524,287 is the 19-bit top.
    body = {"items": [fault("p1", "N-001", 520_450, 31), fault("p2", "N-001", 524_287, 2)]}
    results = post(client, body, secret=token.secret).json()["results"]
    assert [r["status"] for r in results] == ["created", "created"]
    stored = sorted(EngineEvent.objects.values_list("spn", "fmi", "kind"))
    assert stored == [(520_450, 31, "other"), (524_287, 2, "other")]


BAD_ITEMS = [
    (
        {"unit": "N-001", "type": "fault", "at": "2026-06-15T10:00:00Z"},
        "Missing 'id', 'spn', 'fmi'",
    ),
    ({"id": "x", "unit": "N-001", "type": "gauge", "at": "2026-06-15T10:00:00Z"}, '"type"'),
    ({"id": 5, "unit": "N-001", "type": "hours", "at": "2026-06-15T10:00Z", "hours": 1}, '"id"'),
    (hours("x", "N-001", 10, ago_h=1) | {"at": "2026-06-15T10:00:00"}, "no UTC offset"),
    (hours("x", "N-001", 10, ago_h=1) | {"at": "yesterday"}, "not an ISO 8601 time"),
    (hours("x", "N-001", 10, ago_h=-2), "in the future"),
    (hours("x", "N-001", -1, ago_h=1), "cannot be negative"),
    (hours("x", "N-001", 10, ago_h=1) | {"hours": "10"}, "must be a number"),
    (hours("x", "N-001", 10, ago_h=1) | {"hours": True}, "must be a number"),
    (fault("x", "N-001", 524_288, 0), '"spn" 524288 is out of range (0 to 524,287)'),
    (fault("x", "N-001", -1, 0), '"spn" -1 is out of range'),
    (fault("x", "N-001", 97, 32), '"fmi" 32 is out of range (0 to 31)'),
    (fault("x", "N-001", 97, 1.5), '"fmi" must be a whole number'),
    (fault("x", "N-001", 97, 0) | {"count": 0}, '"count" 0 is out of range'),
    ("not an object", "must be a JSON object"),
    (hours("x", "  ", 10, ago_h=1), "Missing 'unit'"),
]


@pytest.mark.parametrize(("item", "error"), BAD_ITEMS)
def test_each_bad_item_says_what_is_wrong(
    client: Any, token: Any, unit: Any, item: Any, error: str
) -> None:
    results = post(client, {"items": [item]}, secret=token.secret).json()["results"]
    assert results[0]["status"] == "refused"
    assert error in results[0]["error"]
    assert not MeterReading.objects.exists() and not EngineEvent.objects.exists()


@pytest.mark.parametrize("literal", ["NaN", "Infinity", "-Infinity"])
def test_nan_hours_refused(client: Any, token: Any, unit: Any, literal: str) -> None:
    item = json.dumps(hours("n1", "N-001", 0, ago_h=1)).replace('"hours": 0', f'"hours": {literal}')
    response = post(client, None, secret=token.secret, raw=f'{{"items": [{item}]}}'.encode())
    result = response.json()["results"][0]
    assert result["status"] == "refused" and "finite" in result["error"]


# ------------------------------------------------------------------ the whole request


@pytest.mark.parametrize(
    ("raw", "message"),
    [
        (b'{"items": [\x00]}', "NUL byte"),
        (b'{"items": [{"id": "a\\u0000b"}]}', "NUL character"),
        (b'{"items": [', "not valid JSON"),
        (b"\xff\xfe", "not UTF-8"),
        (b"[" * 100_000, "not valid JSON"),
        (b'{"things": []}', 'list under "items"'),
        (b'{"items": {}}', '"items" must be a list'),
    ],
)
def test_unreadable_body_400(client: Any, token: Any, raw: bytes, message: str) -> None:
    response = post(client, None, secret=token.secret, raw=raw)
    assert response.status_code == 400
    assert message in response.json()["error"]


def test_1001_items_413(client: Any, token: Any, unit: Any) -> None:
    items = [fault(f"f{n}", "N-001", 97, 0) for n in range(1_001)]
    response = post(client, {"items": items}, secret=token.secret)
    assert response.status_code == 413
    assert "1,001 items" in response.json()["error"]
    assert not EngineEvent.objects.exists()


def test_1000_items_accepted(client: Any, token: Any, unit: Any) -> None:
    items = [fault(f"f{n}", "N-001", 97, 0) for n in range(1_000)]
    response = post(client, {"items": items}, secret=token.secret)
    assert response.status_code == 200
    assert EngineEvent.objects.count() == 1_000


def test_over_1_mb_413(client: Any, token: Any, unit: Any) -> None:
    padding = "x" * 1_000_000
    response = post(client, {"items": [], "padding": padding}, secret=token.secret)
    assert response.status_code == 413
    assert "1,000,000 bytes" in response.json()["error"]


def test_rate_limit_429_with_retry_after(client: Any, token: Any, settings: Any) -> None:
    settings.FEED_RATE_LIMIT = 3
    settings.FEED_RATE_WINDOW_SECONDS = 60
    codes = [post(client, {"items": []}, secret=token.secret) for _ in range(4)]
    assert [r.status_code for r in codes] == [200, 200, 200, 429]
    assert 1 <= int(codes[-1]["Retry-After"]) <= 60
    # Another token has its own count.
    other = feed_token_create(site=token.token.site, name="second", created_by=None, now=NOW)
    assert post(client, {"items": []}, secret=other.secret).status_code == 200


def test_not_json_415(client: Any, token: Any) -> None:
    response = client.post(
        URL,
        data="items=1",
        content_type="text/plain",
        headers={"Authorization": f"Bearer {token.secret}"},
    )
    assert response.status_code == 415


# ------------------------------------------------------------------ recompute on commit


@pytest.fixture
def delay() -> Iterator[mock.MagicMock]:
    with mock.patch("fleetfuel.planning.signals.recompute_units.delay") as patched:
        yield patched


def test_recompute_once_per_unit_on_commit(
    client: Any,
    token: Any,
    unit: Any,
    site: Any,
    unit_class: Any,
    delay: mock.MagicMock,
    django_capture_on_commit_callbacks: Any,
) -> None:
    second = f.unit_make(site=site, unit_class=unit_class, fleet_number="N-002")
    items = [
        hours("r1", "N-001", 1200.0, ago_h=5),
        hours("r2", "N-001", 1202.0, ago_h=3),
        fault("f1", "N-001", 97, 0),
        fault("f2", "N-002", 95, 16),
        fault("f3", "N-002", 95, 16, ago_h=2),
    ]
    with django_capture_on_commit_callbacks(execute=True):
        delay.reset_mock()
        post(client, {"items": items}, secret=token.secret)
    ids = [unit_id for call in delay.call_args_list for unit_id in call.args[0]]
    # Each unit once (ids left pending by earlier tests' rolled-back transactions may ride
    # along: planning.signals sends them with the next commit).
    assert ids.count(unit.pk) == 1 and ids.count(second.pk) == 1


def test_due_items_follow_the_feed_on_commit(
    client: Any, token: Any, unit: Any, django_capture_on_commit_callbacks: Any
) -> None:
    # Nothing computed yet; the batch's commit runs the recompute (Celery in-process in tests)
    # and the unit's due items then start from the readings the feed brought.
    assert not DueItem.objects.filter(unit=unit).exists()
    items = [hours("r1", "N-001", 1_400.0, ago_h=48), hours("r2", "N-001", 1_420.0, ago_h=2)]
    with django_capture_on_commit_callbacks(execute=True):
        post(client, {"items": items}, secret=token.secret)
    fine = DueItem.objects.get(unit=unit, task="fine_filter")
    # Worked by hand: filters fitted at 1,000 h, changed every 500 h (tests.factories), so due
    # at 1,500 h; 80 h left at the last reading (1,420 h), less what ran in the 2 h since.
    assert fine.due_hours == 1_500
    assert 78 <= fine.hours_left <= 80


def test_a_disposed_unit_takes_nothing_after_its_disposal(
    client: Any, token: Any, unit: Any
) -> None:
    unit.disposed_on = (NOW - timedelta(days=3)).date()
    unit.save()
    body = {
        "items": [
            fault("late", "N-001", 97, 0, ago_h=24),
            fault("early", "N-001", 97, 0, ago_h=24 * 5),
        ]
    }
    results = post(client, body, secret=token.secret).json()["results"]
    assert [r["status"] for r in results] == ["refused", "created"]
    assert "disposed of on" in results[0]["error"]


def test_a_fault_keeps_its_hours_and_count(client: Any, token: Any, unit: Any) -> None:
    item = fault("f1", "N-001", 5571, 0) | {"hours": 1_234.5, "count": 3}
    assert (
        post(client, {"items": [item]}, secret=token.secret).json()["results"][0]["status"]
        == "created"
    )
    event = EngineEvent.objects.get()
    assert (event.hours, event.occurrences, event.kind) == (1_234.5, 3, "relief_valve_opened")


def test_an_id_again_after_its_refusal_is_refused(client: Any, token: Any, unit: Any) -> None:
    body = {"items": [fault("f1", "N-404", 97, 0), fault("f1", "N-001", 97, 0)]}
    results = post(client, body, secret=token.secret).json()["results"]
    assert [r["status"] for r in results] == ["refused", "refused"]
    assert "earlier in this batch" in results[1]["error"]
    assert not EngineEvent.objects.exists()
