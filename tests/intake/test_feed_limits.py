"""The feed's limits where production keeps them: the per-token request count in Redis,
shared by every web process (a fixed window, RFC 6585 section 4: 429 with Retry-After);
and the body and item readers against arbitrary input (Hypothesis): whatever arrives, the
answer is a result or a 400, never a server error."""

from __future__ import annotations

import json
import os
import uuid
from datetime import UTC, datetime, timedelta, timezone
from typing import Any

import redis
from django.test import override_settings
from hypothesis import given
from hypothesis import strategies as st

from fleetfuel.intake.feed_items import BodyError, FeedItem, body_items, item_parse
from fleetfuel.intake.feed_tokens import feed_rate_check
from tests.conftest import need

CACHE_URL = os.environ.get("CACHE_URL") or "redis://127.0.0.1:6379/8"
NOW = datetime(2026, 6, 15, 12, 0, 30, tzinfo=UTC)
ZONES = [UTC, timezone(timedelta(hours=-5)), timezone(timedelta(hours=5, minutes=30))]


def redis_up(url: str) -> bool:
    try:
        return bool(redis.Redis.from_url(url, socket_connect_timeout=1).ping())
    except redis.RedisError:
        return False


def test_rate_window_in_redis() -> None:
    need(redis_up(CACHE_URL), f"needs Redis at {CACHE_URL}")
    caches = {
        "default": {
            "BACKEND": "django.core.cache.backends.redis.RedisCache",
            "LOCATION": CACHE_URL,
            "KEY_PREFIX": f"test-{uuid.uuid4().hex}",  # nothing of another run is touched
        }
    }
    with override_settings(CACHES=caches, FEED_RATE_LIMIT=2, FEED_RATE_WINDOW_SECONDS=60):
        assert feed_rate_check(token_id=1, now=NOW) is None
        assert feed_rate_check(token_id=1, now=NOW) is None
        # The window opened at 12:00:00 and closes at 12:01:00: 30 s left at 12:00:30.
        assert feed_rate_check(token_id=1, now=NOW) == 30
        assert feed_rate_check(token_id=2, now=NOW) is None  # each token its own count
        later = NOW.replace(minute=1, second=0)
        assert feed_rate_check(token_id=1, now=later) is None  # a new window


JSON = st.recursive(
    st.none() | st.booleans() | st.integers() | st.floats() | st.text(max_size=30),
    lambda inner: (
        st.lists(inner, max_size=4) | st.dictionaries(st.text(max_size=8), inner, max_size=4)
    ),
    max_leaves=12,
)
AT = st.datetimes(max_value=datetime(2026, 6, 16), timezones=st.sampled_from(ZONES)).map(
    lambda d: d.isoformat()
)
NAMES = st.text(min_size=1, max_size=12)
# Items shaped as the feed expects, with any values of the right kind.
WELL_FORMED = st.fixed_dictionaries(
    {"id": NAMES, "unit": NAMES, "type": st.just("hours"), "at": AT, "hours": st.floats()}
) | st.fixed_dictionaries(
    {
        "id": NAMES,
        "unit": NAMES,
        "type": st.just("fault"),
        "at": AT,
        "spn": st.integers(-5, 2**20),
        "fmi": st.integers(-5, 40),
    },
    optional={"count": st.integers(-2, 2**32), "hours": st.floats()},
)
ITEMISH = st.fixed_dictionaries(
    {},
    optional={
        "id": JSON | st.text(max_size=120),
        "unit": JSON,
        "type": st.sampled_from(["hours", "fault"]) | JSON,
        "at": st.datetimes(max_value=datetime(2026, 6, 16), timezones=st.sampled_from(ZONES)).map(
            lambda d: d.isoformat()
        )
        | JSON,
        "hours": JSON,
        "spn": st.integers(-5, 2**20) | JSON,
        "fmi": st.integers(-5, 40) | JSON,
        "count": JSON,
    },
)


@given(raw=st.binary(max_size=200))
def test_any_bytes_give_items_or_a_body_error(raw: bytes) -> None:
    try:
        items = body_items(raw)
    except BodyError as exc:
        assert str(exc)
    else:
        assert isinstance(items, list)


@given(raw=WELL_FORMED | ITEMISH | JSON)
def test_any_item_parses_or_says_why(raw: Any) -> None:
    try:
        item = item_parse(raw, now=NOW)
    except ValueError as exc:
        assert str(exc)
        return
    # What is accepted is what the feed stores: in range and finite.
    assert isinstance(item, FeedItem) and item.type in ("hours", "fault")
    assert item.at.utcoffset() is not None
    if item.type == "hours":
        assert item.hours is not None and 0 <= item.hours < float("inf")
    else:
        assert 0 <= (item.spn or 0) <= 524_287 and 0 <= (item.fmi or 0) <= 31


@given(items=st.lists(ITEMISH, max_size=5))
def test_any_body_of_items_round_trips(items: list[Any]) -> None:
    try:
        body = json.dumps({"items": items}).encode()
    except ValueError:
        return
    try:
        assert len(body_items(body)) == len(items)
    except BodyError as exc:
        assert "NUL" in str(exc)
