"""Feed tokens: made on the manager's page or by ``manage.py feed_token``, the secret shown
once and stored only as its SHA-256 (FIPS 180-4, checked with hashlib), revocable, scoped
to the sites the manager may see."""

from __future__ import annotations

import hashlib
import io
import re
from typing import Any

import pytest
from django.core.management import CommandError, call_command

from fleetfuel.intake.feed_tokens import feed_token_create, feed_token_from_header
from fleetfuel.intake.models import FeedToken
from tests import factories as f

PAGE = "/intake/feed-tokens/"


def test_manager_makes_a_token_shown_once(as_manager: Any, site: Any) -> None:
    response = as_manager.post(PAGE, {"site": site.pk, "name": "workshop gateway"})
    assert response.status_code == 200
    secret = re.search(r'id="feed-secret"[^>]*>([^<]+)<', response.content.decode())[1]  # type: ignore[index]
    token = FeedToken.objects.get(name="workshop gateway")
    assert token.site == site and token.created_by is not None
    # Stored as the SHA-256 of the secret, never the secret itself.
    assert token.token_hash == hashlib.sha256(secret.encode()).hexdigest()
    assert secret not in token.token_hash
    assert feed_token_from_header(f"Bearer {secret}") == token
    assert "no-store" in response["Cache-Control"]
    # Shown once: the list no longer carries it.
    assert secret not in as_manager.get(PAGE).content.decode()


def test_secrets_are_32_random_bytes(site: Any) -> None:
    made = [
        feed_token_create(site=site, name=f"t{n}", created_by=None, now=f.NOW) for n in range(2)
    ]
    # URL-safe base64 of 32 bytes is 43 characters (RFC 4648 section 5, no padding).
    assert [len(m.secret) for m in made] == [43, 43]
    assert made[0].secret != made[1].secret


def test_revoke_on_the_page(as_manager: Any, site: Any) -> None:
    made = feed_token_create(site=site, name="gw", created_by=None, now=f.NOW)
    response = as_manager.post(f"/intake/feed-tokens/{made.token.pk}/revoke/")
    assert response.status_code == 302
    made.token.refresh_from_db()
    assert made.token.revoked_at is not None
    assert feed_token_from_header(f"Bearer {made.secret}") is None
    page = as_manager.get(PAGE).content.decode()
    assert "revoked" in page and "never" in page  # last used: never


def test_page_is_scoped_to_the_managers_sites(client: Any, site: Any, other_site: Any) -> None:
    north_manager = f.user_make("manager", sites=[site])
    client.force_login(north_manager)
    theirs = feed_token_create(site=other_site, name="south gw", created_by=None, now=f.NOW)
    page = client.get(PAGE).content.decode()
    assert "south gw" not in page
    assert client.post(f"/intake/feed-tokens/{theirs.token.pk}/revoke/").status_code == 404
    refused = client.post(PAGE, {"site": other_site.pk, "name": "sneaky"})
    assert refused.status_code == 200 and not FeedToken.objects.filter(name="sneaky").exists()


@pytest.mark.parametrize("who", ["as_mechanic", "as_auditor"])
def test_only_managers(request: Any, who: str, site: Any) -> None:
    client = request.getfixturevalue(who)
    assert client.get(PAGE).status_code == 403
    assert client.post(PAGE, {"site": site.pk, "name": "x"}).status_code == 403


def test_the_same_name_twice_is_refused_until_revoked(as_manager: Any, site: Any) -> None:
    as_manager.post(PAGE, {"site": site.pk, "name": "gw"})
    again = as_manager.post(PAGE, {"site": site.pk, "name": "gw"})
    assert "already has a live feed token" in again.content.decode()
    call_command("feed_token", "--site", site.code, "--revoke", "gw", stdout=io.StringIO())
    as_manager.post(PAGE, {"site": site.pk, "name": "gw"})
    assert FeedToken.objects.filter(name="gw").count() == 2


def test_command_prints_the_secret_once(site: Any) -> None:
    out, err = io.StringIO(), io.StringIO()
    call_command("feed_token", "--site", site.code, "--name", "gateway", stdout=out, stderr=err)
    secret = out.getvalue().strip()
    token = FeedToken.objects.get(name="gateway")
    assert token.token_hash == hashlib.sha256(secret.encode()).hexdigest()
    assert "Shown once" in err.getvalue()
    revoked = io.StringIO()
    call_command("feed_token", "--site", site.code, "--revoke", "gateway", stdout=revoked)
    assert "Revoked" in revoked.getvalue()
    assert feed_token_from_header(f"Bearer {secret}") is None


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["--site", "nowhere", "--name", "x"], "No site has code 'nowhere'"),
        (["--site", "north", "--revoke", "x"], "no live feed token 'x'"),
    ],
)
def test_command_errors(site: Any, args: list[str], message: str) -> None:
    with pytest.raises(CommandError, match=message):
        call_command("feed_token", *args, stdout=io.StringIO())
