"""Every page needs a login, and the right role."""

from __future__ import annotations

from typing import Any

import pytest
from django.urls import URLPattern, URLResolver, get_resolver, reverse

PUBLIC = {"accounts:login", "accounts:logout", "accounts:healthz"}


def named_patterns() -> list[tuple[str, list[str]]]:
    """(namespaced name, converter names) of every URL of our apps (not the admin)."""
    found: list[tuple[str, list[str]]] = []

    def walk(patterns: list[Any], namespace: str | None) -> None:
        for p in patterns:
            if isinstance(p, URLResolver):
                if p.namespace == "admin":
                    continue
                walk(p.url_patterns, p.namespace or namespace)
            elif isinstance(p, URLPattern) and p.name:
                found.append((f"{namespace}:{p.name}", list(p.pattern.converters)))

    walk(get_resolver().url_patterns, None)
    return found


def test_our_apps_have_urls() -> None:
    names = {n for n, _ in named_patterns()}
    assert {"accounts:home", "pages:due_list", "fleet:unit_list"} <= names


@pytest.mark.django_db
@pytest.mark.parametrize("name,params", named_patterns())
def test_anonymous_is_sent_to_login(client: Any, name: str, params: list[str]) -> None:
    if name in PUBLIC:
        return
    url = reverse(name, kwargs=dict.fromkeys(params, 1))
    for method in (client.get, client.post):
        response = method(url)
        assert response.status_code == 302, (name, method)
        assert response["Location"].startswith(reverse("accounts:login")), name


@pytest.mark.django_db
def test_user_without_role_is_refused(client: Any) -> None:
    from tests.factories import user_make

    client.force_login(user_make(None))
    assert client.get(reverse("accounts:home")).status_code == 403
    assert client.get(reverse("pages:due_list")).status_code == 403


@pytest.mark.parametrize(
    "fixture,expected",
    [
        ("as_manager", "pages:due_list"),
        ("as_mechanic", "workorders:my_work"),
        ("as_auditor", "ledger:history"),
    ],
)
def test_home_sends_each_role_to_its_page(request: Any, fixture: str, expected: str) -> None:
    client = request.getfixturevalue(fixture)
    response = client.get(reverse("accounts:home"))
    assert response.status_code == 302
    assert response["Location"] == reverse(expected)


@pytest.mark.parametrize("fixture", ["as_mechanic", "as_auditor"])
@pytest.mark.parametrize("name", ["pages:due_list", "pages:due_item_detail"])
def test_manager_pages_refuse_other_roles(request: Any, fixture: str, name: str) -> None:
    client = request.getfixturevalue(fixture)
    kwargs = {"pk": 1} if name.endswith("detail") else {}
    assert client.get(reverse(name, kwargs=kwargs)).status_code == 403


@pytest.mark.parametrize("name", ["pages:work_orders_create", "planning:worklist_send_now"])
def test_auditor_writes_nothing_in_planning(as_auditor: Any, name: str) -> None:
    assert as_auditor.post(reverse(name), {"item": [1]}).status_code == 403


def test_login_page_renders_and_logs_in(client: Any, manager: Any) -> None:
    from tests.factories import PASSWORD

    assert client.get(reverse("accounts:login")).status_code == 200
    response = client.post(
        reverse("accounts:login"), {"username": manager.username, "password": PASSWORD}
    )
    assert response.status_code == 302
    bad = client.post(reverse("accounts:login"), {"username": manager.username, "password": "nope"})
    assert bad.status_code == 200 and b"Please enter a correct username" in bad.content


def test_healthz_answers_without_login(client: Any, db: Any) -> None:
    response = client.get(reverse("accounts:healthz"))
    assert response.status_code == 200 and response.content == b"ok"
