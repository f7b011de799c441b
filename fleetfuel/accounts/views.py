from __future__ import annotations

from typing import Any

from axes.models import AccessAttempt
from axes.utils import reset as axes_reset
from django.conf import settings
from django.contrib import messages
from django.contrib.auth import get_user_model
from django.contrib.auth.decorators import login_required
from django.core.exceptions import PermissionDenied
from django.db import connection
from django.db.models import Q
from django.http import HttpRequest, HttpResponse
from django.shortcuts import redirect, render
from django.templatetags.static import static
from django.views.decorators.http import require_GET, require_http_methods, require_safe

from .access import role_required, site_ids_for_user, user_role
from .models import Role

HOME_BY_ROLE = {
    Role.MANAGER: "pages:due_list",
    Role.MECHANIC: "workorders:my_work",
    Role.AUDITOR: "ledger:history",
}


@login_required
def home(request: HttpRequest) -> HttpResponse:
    """Send each person to their role's home page."""
    role = user_role(request.user)
    if role is None:
        raise PermissionDenied("Your account has no role yet; ask a fleet manager.")
    return redirect(HOME_BY_ROLE[Role(role)])


@require_safe
def favicon(request: HttpRequest) -> HttpResponse:
    """Browsers ask for /favicon.ico on pages without an icon link (the admin, old clients):
    the static icon (its hashed name is looked up per request, after collectstatic)."""
    return redirect(static("favicon.svg"), permanent=True)


@require_GET
def healthz(request: HttpRequest) -> HttpResponse:
    """Liveness for the container health check: no login, no data, just 'the database answers'."""
    with connection.cursor() as cursor:
        cursor.execute("SELECT 1")
    return HttpResponse("ok", content_type="text/plain")


def login_locked(
    request: HttpRequest, original_response: Any = None, credentials: Any = None
) -> HttpResponse:
    """The login page, saying the account is locked and what to do (django-axes calls it)."""
    minutes = (
        int(settings.AXES_COOLOFF_TIME.total_seconds() // 60) if settings.AXES_COOLOFF_TIME else 0
    )
    username = (credentials or {}).get("username") or request.POST.get("username", "")
    context = {
        "locked": True,
        "locked_minutes": minutes,
        "failure_limit": settings.AXES_FAILURE_LIMIT,
        "locked_username": username,
    }
    return render(request, "accounts/login.html", context, status=429)


def locked_usernames(*, manager: Any) -> list[str]:
    """Usernames locked out now, of people who share a site with ``manager``; people of no
    named site (they see every site) only for a manager of no named site."""
    people = Q(profile__sites__in=site_ids_for_user(manager))
    profile = getattr(manager, "profile", None)
    if profile is None or not profile.sites.exists():
        people |= Q(profile__sites__isnull=True)
    names = get_user_model().objects.filter(people).values_list("username", flat=True).distinct()
    return sorted(
        AccessAttempt.objects.filter(
            username__in=list(names), failures_since_start__gte=settings.AXES_FAILURE_LIMIT
        )
        .values_list("username", flat=True)
        .distinct()
    )


@role_required(Role.MANAGER)
@require_http_methods(["GET", "POST"])
def unlock(request: HttpRequest) -> HttpResponse:
    """A manager lets a locked-out colleague try again."""
    locked = locked_usernames(manager=request.user)
    if request.method == "POST":
        username = request.POST.get("username", "")
        if username not in locked:
            messages.error(request, "That account is not locked, or not one of your sites'.")
        else:
            axes_reset(username=username)
            messages.success(request, f"{username} can sign in again.")
        return redirect("accounts:unlock")
    return render(request, "accounts/unlock.html", {"locked": locked})
