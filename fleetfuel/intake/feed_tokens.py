"""The feed's tokens: made, revoked, recognised, and their request rate kept in check.

A token is 32 random bytes (URL-safe base64, 43 characters) given to the feed once; only its
SHA-256 is stored, so a copy of the database lets nobody post to the feed.
"""

from __future__ import annotations

import hashlib
import secrets
from collections.abc import Iterable
from dataclasses import dataclass
from datetime import datetime
from typing import Any

from django.conf import settings
from django.core.cache import cache
from django.db import transaction
from django.db.models import QuerySet

from fleetfuel.fleet.models import Site

from .models import FeedToken

SECRET_BYTES = 32


def token_hash(secret: str) -> str:
    """The SHA-256 (hex) under which a token's secret is stored."""
    return hashlib.sha256(secret.encode("utf-8")).hexdigest()


@dataclass(frozen=True)
class MadeToken:
    token: FeedToken
    secret: str  # shown once, never stored


def feed_token_create(*, site: Site, name: str, created_by: Any, now: datetime) -> MadeToken:
    """A new token for the feed ``name`` at ``site``; its secret is returned, never kept."""
    secret = secrets.token_urlsafe(SECRET_BYTES)
    with transaction.atomic():
        token = FeedToken.objects.create(
            site=site,
            name=name,
            token_hash=token_hash(secret),
            created_by=created_by,
            created_at=now,
        )
    return MadeToken(token=token, secret=secret)


def feed_token_revoke(*, token: FeedToken, now: datetime) -> FeedToken:
    """Revoke the token (a token once revoked stays revoked)."""
    if token.revoked_at is None:
        token.revoked_at = now
        token.save(update_fields=["revoked_at"])
    return token


def feed_token_from_header(header: str) -> FeedToken | None:
    """The live token an ``Authorization: Bearer <secret>`` header names, or None. One query."""
    scheme, _, secret = header.partition(" ")
    secret = secret.strip()
    if scheme.lower() != "bearer" or not secret or len(secret) > 200:
        return None
    return (
        FeedToken.objects.select_related("site")
        .filter(token_hash=token_hash(secret), revoked_at__isnull=True)
        .first()
    )


def feed_tokens_for_sites(site_ids: Iterable[int]) -> QuerySet[FeedToken]:
    """The tokens of these sites, live first, for the manager's page."""
    return (
        FeedToken.objects.filter(site_id__in=list(site_ids))
        .select_related("site", "created_by")
        .order_by("revoked_at", "site__name", "name")
    )


def feed_rate_check(*, token_id: int, now: datetime) -> int | None:
    """Count one request of the token in the current fixed window of the cache; None while
    within the limit, else the seconds until the window ends (for ``Retry-After``)."""
    window = settings.FEED_RATE_WINDOW_SECONDS
    stamp = int(now.timestamp())
    start = stamp - stamp % window
    key = f"feed-rate:{token_id}:{start}"
    cache.add(key, 0, timeout=window + 1)
    try:
        count = cache.incr(key)
    except ValueError:  # evicted between add and incr: this request opens the window again
        cache.set(key, 1, timeout=window + 1)
        count = 1
    if count <= settings.FEED_RATE_LIMIT:
        return None
    return max(1, start + window - stamp)
