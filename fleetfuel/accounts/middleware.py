"""What every signed-in request goes through: the session's idle timeout and absolute lifetime,
and ``Cache-Control: no-store`` on the response, so a shared browser keeps no copy of a page,
an export or a manifest once its user has gone.

A session records when it signed in and when it was last used (refreshed at most once a
minute, so reading pages does not write the session each time). The server-side expiry
(``SESSION_COOKIE_AGE``) is the absolute lifetime, so a session dropped from a browser is
gone on the server too.

An htmx request (the tablet saving a draft) that would be sent to the login page gets a 401
telling htmx to open the login page instead: following the redirect would answer 200 with
the login form, and the tablet would take that for "saved" and drop its local copy.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any
from urllib.parse import urlsplit

from django.conf import settings
from django.contrib import messages
from django.contrib.auth import logout
from django.contrib.auth.views import redirect_to_login
from django.http import HttpRequest, HttpResponse
from django.shortcuts import resolve_url
from django.utils import timezone
from django.utils.cache import add_never_cache_headers

SIGNED_IN_AT = "fleetfuel_signed_in_at"  # session keys, seconds since the epoch
SEEN_AT = "fleetfuel_seen_at"
SEEN_REFRESH_S = 60


def session_end_reason(
    *, signed_in_at: float, seen_at: float, now: float, idle_minutes: int, max_hours: int
) -> str:
    """Why the session must end now: "idle", "max", or "" while it may go on."""
    if now - signed_in_at > max_hours * 3600:
        return "max"
    if now - seen_at > idle_minutes * 60:
        return "idle"
    return ""


def session_stamp(sender: Any, request: HttpRequest, user: Any, **kwargs: Any) -> None:
    """On sign-in (``user_logged_in``): the session starts now."""
    now = timezone.now().timestamp()
    request.session[SIGNED_IN_AT] = now
    request.session[SEEN_AT] = now


class SignedInMiddleware:
    def __init__(self, get_response: Callable[[HttpRequest], HttpResponse]) -> None:
        self.get_response = get_response

    def __call__(self, request: HttpRequest) -> HttpResponse:
        user = getattr(request, "user", None)
        signed_in = bool(user and user.is_authenticated)
        if signed_in and (refusal := self.session_check(request)) is not None:
            return htmx_signed_out(request, refusal)
        response = self.get_response(request)
        if signed_in:
            add_never_cache_headers(response)  # no-store, private, max-age=0
        return htmx_signed_out(request, response)

    def session_check(self, request: HttpRequest) -> HttpResponse | None:
        session = request.session
        now = timezone.now().timestamp()
        started = float(session.setdefault(SIGNED_IN_AT, now))
        seen = float(session.setdefault(SEEN_AT, now))
        reason = session_end_reason(
            signed_in_at=started,
            seen_at=seen,
            now=now,
            idle_minutes=settings.SESSION_IDLE_MINUTES,
            max_hours=settings.SESSION_MAX_HOURS,
        )
        if not reason:
            if now - seen >= SEEN_REFRESH_S:
                session[SEEN_AT] = now
            return None
        logout(request)
        messages.info(
            request,
            f"You were signed out after {settings.SESSION_IDLE_MINUTES} minutes without use."
            if reason == "idle"
            else f"You were signed out: a session lasts at most {settings.SESSION_MAX_HOURS} "
            "hours.",
        )
        response = redirect_to_login(request.get_full_path())
        add_never_cache_headers(response)
        return response


def htmx_signed_out(request: HttpRequest, response: HttpResponse) -> HttpResponse:
    """For htmx, a redirect to the login page becomes a 401 that opens it (see above), coming
    back afterwards to the page the browser shows, not to the URL the request posted to."""
    login = resolve_url(settings.LOGIN_URL)
    if (
        not request.headers.get("HX-Request")
        or response.status_code != 302
        or not response.get("Location", "").startswith(login)
    ):
        return response
    shown = urlsplit(request.headers.get("HX-Current-URL", ""))
    back = shown.path + (f"?{shown.query}" if shown.query else "") or "/"
    refused = HttpResponse(
        "You are signed out. Sign in again: what you entered is kept on this tablet.",
        status=401,
        content_type="text/plain; charset=utf-8",
    )
    refused["HX-Redirect"] = redirect_to_login(back)["Location"]
    add_never_cache_headers(refused)
    return refused
