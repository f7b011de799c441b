"""Signing in and staying signed in: lockout after repeated wrong passwords (django-axes), a
manager's unlock, the password rules and page, the session's idle and absolute limits, and the
headers every signed-in response carries."""

from __future__ import annotations

from datetime import timedelta
from typing import Any

import pytest
import time_machine
from django.conf import settings
from django.contrib.auth import SESSION_KEY
from django.contrib.auth.password_validation import validate_password
from django.core.exceptions import ValidationError
from django.urls import reverse

from fleetfuel.accounts.middleware import session_end_reason
from tests import factories as f
from tests.test_settings import settings_error
from tests.workorders.conftest import work_order_make

LOGIN = "accounts:login"


def sign_in(client: Any, username: str, password: str) -> Any:
    return client.post(reverse(LOGIN), {"username": username, "password": password})


def lock(client: Any, username: str) -> None:
    for _ in range(settings.AXES_FAILURE_LIMIT):
        sign_in(client, username, "not-the-password")


# ----------------------------------------------------------------- lockout


def test_lockout_after_repeated_failures_refuses_the_right_password(
    client: Any, mechanic: Any
) -> None:
    lock(client, mechanic.username)
    response = sign_in(client, mechanic.username, f.PASSWORD)
    assert response.status_code == 429
    html = response.content.decode()
    assert "This account is locked" in html and f"wrong {settings.AXES_FAILURE_LIMIT} times" in html
    assert "ask" in html and "fleet manager to unlock it" in html
    assert SESSION_KEY not in client.session


def test_fewer_failures_than_the_limit_still_sign_in(client: Any, mechanic: Any) -> None:
    for _ in range(settings.AXES_FAILURE_LIMIT - 1):
        sign_in(client, mechanic.username, "not-the-password")
    assert sign_in(client, mechanic.username, f.PASSWORD).status_code == 302


def test_a_manager_unlocks_and_the_right_password_works_again(
    client: Any, mechanic: Any, manager: Any, site: Any
) -> None:
    lock(client, mechanic.username)
    boss = f.user_make("manager", username="boss", sites=[site])
    client.force_login(boss)
    page = client.get(reverse("accounts:unlock"))
    assert mechanic.username in page.content.decode()
    done = client.post(reverse("accounts:unlock"), {"username": mechanic.username})
    assert done.status_code == 302
    client.logout()
    assert sign_in(client, mechanic.username, f.PASSWORD).status_code == 302


def test_a_manager_of_another_site_cannot_unlock(
    client: Any, mechanic: Any, other_site: Any
) -> None:
    lock(client, mechanic.username)
    elsewhere = f.user_make("manager", username="far", sites=[other_site])
    client.force_login(elsewhere)
    assert mechanic.username not in client.get(reverse("accounts:unlock")).content.decode()
    client.post(reverse("accounts:unlock"), {"username": mechanic.username})
    client.logout()
    assert sign_in(client, mechanic.username, f.PASSWORD).status_code == 429


def test_only_a_manager_of_every_site_unlocks_someone_of_every_site(
    client: Any, auditor: Any, manager: Any, site: Any
) -> None:
    lock(client, auditor.username)  # an auditor of no named site sees every site
    client.force_login(f.user_make("manager", username="local", sites=[site]))
    assert auditor.username not in client.get(reverse("accounts:unlock")).content.decode()
    client.force_login(manager)  # no named site: every site
    assert auditor.username in client.get(reverse("accounts:unlock")).content.decode()
    client.post(reverse("accounts:unlock"), {"username": auditor.username})
    client.logout()
    assert sign_in(client, auditor.username, f.PASSWORD).status_code == 302


def test_mechanics_and_auditors_cannot_unlock(client: Any, mechanic: Any, auditor: Any) -> None:
    for user in (mechanic, auditor):
        client.force_login(user)
        assert client.get(reverse("accounts:unlock")).status_code == 403


def test_the_lock_ends_after_the_cool_off(client: Any, mechanic: Any) -> None:
    with time_machine.travel(f.NOW, tick=False) as clock:
        lock(client, mechanic.username)
        assert sign_in(client, mechanic.username, f.PASSWORD).status_code == 429
        clock.shift(settings.AXES_COOLOFF_TIME + timedelta(minutes=1))
        assert sign_in(client, mechanic.username, f.PASSWORD).status_code == 302


# ----------------------------------------------------------------- passwords


@pytest.mark.parametrize("password", ["fleetfuel", "fleetfuel-1", "12345678901234", "password1234"])
def test_short_numeric_and_common_passwords_are_refused(password: str) -> None:
    # "fleetfuel" (9) and "fleetfuel-1" (11) are under 12 characters; the others are
    # all digits, or in Django's list of 20,000 common passwords.
    with pytest.raises(ValidationError):
        validate_password(password)


def test_twelve_characters_of_no_pattern_pass() -> None:
    validate_password("quarry-hinge-47")


@pytest.mark.parametrize("role", ["manager", "mechanic", "auditor"])
def test_every_role_changes_its_password(client: Any, site: Any, role: str) -> None:
    user = f.user_make(role, username=f"who-{role}", sites=[site])
    client.force_login(user)
    url = reverse("accounts:password_change")
    page = client.get(url)
    assert page.status_code == 200 and "Change your password" in page.content.decode()
    assert url in client.get(reverse("pages:unit_list")).content.decode()  # in the navigation
    short = client.post(
        url, {"old_password": f.PASSWORD, "new_password1": "short-1", "new_password2": "short-1"}
    )
    assert short.status_code == 200 and "at least 12 characters" in short.content.decode()
    new = "quarry-hinge-47"
    done = client.post(
        url, {"old_password": f.PASSWORD, "new_password1": new, "new_password2": new}
    )
    assert done.status_code == 302 and done["Location"] == reverse("accounts:password_change_done")
    client.logout()
    assert sign_in(client, user.username, f.PASSWORD).status_code == 200  # old one refused
    assert sign_in(client, user.username, new).status_code == 302


# ----------------------------------------------------------------- sessions


def test_session_end_reason() -> None:
    start = 1_000_000.0
    kw = {"idle_minutes": 30, "max_hours": 12}
    assert session_end_reason(signed_in_at=start, seen_at=start, now=start + 1799, **kw) == ""
    assert session_end_reason(signed_in_at=start, seen_at=start, now=start + 1801, **kw) == "idle"
    late = start + 12 * 3600 + 1
    assert session_end_reason(signed_in_at=start, seen_at=late - 60, now=late, **kw) == "max"


def test_idle_timeout_signs_out(client: Any, mechanic: Any) -> None:
    page = reverse("workorders:my_work")
    idle = timedelta(minutes=settings.SESSION_IDLE_MINUTES)
    with time_machine.travel(f.NOW, tick=False) as clock:
        client.force_login(mechanic)
        clock.shift(idle - timedelta(minutes=1))
        assert client.get(page).status_code == 200  # use moves the idle deadline on
        clock.shift(idle - timedelta(minutes=1))
        assert client.get(page).status_code == 200
        clock.shift(idle + timedelta(minutes=1))
        response = client.get(page)
        assert response.status_code == 302 and response["Location"].startswith(reverse(LOGIN))
        assert SESSION_KEY not in client.session


def test_absolute_lifetime_signs_out_however_busy(client: Any, mechanic: Any) -> None:
    page = reverse("workorders:my_work")
    with time_machine.travel(f.NOW, tick=False) as clock:
        client.force_login(mechanic)
        steps = settings.SESSION_MAX_HOURS * 4  # a request every 15 minutes
        for _ in range(steps):
            clock.shift(timedelta(minutes=15))
            assert client.get(page).status_code == 200
        clock.shift(timedelta(minutes=15))
        assert client.get(page).status_code == 302


# ----------------------------------------------------------------- headers


@pytest.mark.parametrize(
    "url_name", ["pages:due_list", "workorders:list", "ledger:history", "ledger:exports"]
)
def test_signed_in_pages_are_not_stored_and_carry_the_policy(
    as_manager: Any, url_name: str
) -> None:
    response = as_manager.get(reverse(url_name))
    assert response.status_code == 200
    assert "no-store" in response["Cache-Control"]
    policy = response["Content-Security-Policy"]
    assert "script-src 'self' 'nonce-" in policy and "object-src 'none'" in policy


def test_exports_are_not_stored(as_manager: Any, unit: Any, mechanic: Any) -> None:
    response = as_manager.post(reverse("pages:export"), {"format": "csv"})
    assert response.status_code == 200 and "no-store" in response["Cache-Control"]


def test_a_tablet_save_after_sign_out_is_refused_not_answered_with_the_login_form(
    client: Any, mechanic: Any, unit: Any, manager: Any
) -> None:
    # Following the redirect would answer 200 (the login form): the tablet would drop its copy.
    order = work_order_make(unit=unit, created_by=manager, assigned_to=mechanic)
    page = reverse("workorders:detail", args=[order.pk])
    response = client.post(
        reverse("workorders:job_save", args=[order.pk]),
        {"notes": "typed while signed out"},
        HTTP_HX_REQUEST="true",
        HTTP_HX_CURRENT_URL=f"http://testserver{page}",
    )
    assert response.status_code == 401
    assert response["HX-Redirect"] == f"{reverse(LOGIN)}?next={page}"
    order.refresh_from_db()
    assert order.notes == ""


@pytest.mark.parametrize(
    ("env", "name", "hint"),
    [
        ({"LOGIN_FAILURE_LIMIT": "0"}, "LOGIN_FAILURE_LIMIT", "from 1 to 100"),
        ({"LOGIN_LOCKOUT_MINUTES": "-5"}, "LOGIN_LOCKOUT_MINUTES", "from 0 to 10080"),
        ({"SESSION_IDLE_MINUTES": "half an hour"}, "SESSION_IDLE_MINUTES", "whole number"),
        ({"SESSION_MAX_HOURS": "0"}, "SESSION_MAX_HOURS", "from 1 to 336"),
    ],
)
def test_a_bad_sign_in_setting_stops_the_start_naming_it(
    env: dict[str, str], name: str, hint: str
) -> None:
    message = (settings_error(DEBUG="true", **env) or "").strip().splitlines()[-1]
    assert f"variable {name}" in message and hint in message, message
