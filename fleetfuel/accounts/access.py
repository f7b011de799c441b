"""Who may see and do what. Every view goes through these helpers.

A person's role is the Django group they belong to (manager, mechanic or auditor).
Managers and auditors see every site unless their profile names some; mechanics see
only the sites they are assigned to.
"""

from __future__ import annotations

from collections.abc import Callable
from functools import wraps
from typing import Any, TypeVar

from django.contrib.auth.decorators import login_required
from django.core.exceptions import PermissionDenied
from django.db.models import QuerySet
from django.http import HttpRequest, HttpResponse

from .models import Role

ViewFunc = TypeVar("ViewFunc", bound=Callable[..., HttpResponse])


def user_role(user: Any) -> str | None:
    """The user's role name, or None. Cached on the user object for the request."""
    if not getattr(user, "is_authenticated", False):
        return None
    cached = getattr(user, "_fleetfuel_role", "unset")
    if cached != "unset":
        return cached  # type: ignore[no-any-return]
    names = set(user.groups.values_list("name", flat=True))
    role = next((r.value for r in Role if r.value in names), None)
    user._fleetfuel_role = role
    return role


def role_required(*roles: str) -> Callable[[ViewFunc], ViewFunc]:
    """Login required; then 403 unless the user has one of ``roles``."""

    def decorator(view: ViewFunc) -> ViewFunc:
        @login_required
        @wraps(view)
        def wrapped(request: HttpRequest, *args: Any, **kwargs: Any) -> HttpResponse:
            if user_role(request.user) not in roles:
                raise PermissionDenied("Your role does not give access to this page.")
            return view(request, *args, **kwargs)

        return wrapped  # type: ignore[return-value]

    return decorator


def sites_for_user(user: Any) -> QuerySet[Any]:
    """The sites a person may see."""
    from fleetfuel.fleet.models import Site

    role = user_role(user)
    if role is None:
        return Site.objects.none()
    assigned = Site.objects.filter(staff__user=user)
    if role == Role.MECHANIC:
        return assigned
    # Managers and auditors: their named sites, or all when none are named.
    return assigned if assigned.exists() else Site.objects.all()


def site_ids_for_user(user: Any) -> list[int]:
    cached = getattr(user, "_fleetfuel_site_ids", None)
    if cached is None:
        cached = list(sites_for_user(user).values_list("id", flat=True))
        user._fleetfuel_site_ids = cached
    return cached  # type: ignore[no-any-return]


def unit_for_user(user: Any, pk: int) -> Any:
    """The unit, if the user may see it: 404 otherwise (no hint that it exists)."""
    from django.shortcuts import get_object_or_404

    from fleetfuel.fleet.models import Unit

    return get_object_or_404(
        Unit.objects.select_related("site", "unit_class"),
        pk=pk,
        site_id__in=site_ids_for_user(user),
    )


def require_write(user: Any) -> None:
    """Auditors read; they never write."""
    if user_role(user) not in (Role.MANAGER, Role.MECHANIC):
        raise PermissionDenied("Your role is read-only.")
