"""Who may see and do what. Every view goes through these helpers.

A person's role is the Django group they belong to (manager, mechanic or auditor).
Managers and auditors see every site unless their profile names some; mechanics see
only the sites they are assigned to.

Each ``*_for_user`` helper returns one object if the person may have it, and says its rule:
403 when the person's role may not have such an object at all, 404 when the object is at a
site they may not see (the answer gives no hint that it exists).
"""

from __future__ import annotations

from collections.abc import Callable
from functools import wraps
from typing import Any, TypeVar

from django.apps import apps
from django.contrib.auth.decorators import login_required
from django.core.exceptions import PermissionDenied
from django.db import connection
from django.db.models import Q, QuerySet
from django.db.models.expressions import RawSQL
from django.http import Http404, HttpRequest, HttpResponse
from django.shortcuts import get_object_or_404

from .models import Profile, Role

ViewFunc = TypeVar("ViewFunc", bound=Callable[..., HttpResponse])

READERS = (Role.MANAGER, Role.MECHANIC, Role.AUDITOR)
WRITERS = (Role.MANAGER, Role.MECHANIC)
EXPORTERS = (Role.MANAGER, Role.AUDITOR)


def model_get(app_label: str, name: str) -> Any:
    """A model of a higher app, named by its label and looked up when a request is served.

    accounts is the lowest app and imports no other app of the project (a lower app never
    imports a higher one). Its helpers still return units, work orders and due items, so they
    name those models through Django's app registry, as Django's auth names the user model
    through ``get_user_model()``: at call time, when every app is loaded.
    """
    return apps.get_model(app_label, name)


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


def role_check(user: Any, roles: tuple[str, ...], *, refusal: str) -> None:
    """403 (with ``refusal`` as the reason) unless the user has one of ``roles``."""
    if user_role(user) not in roles:
        raise PermissionDenied(refusal)


def role_required(*roles: str) -> Callable[[ViewFunc], ViewFunc]:
    """Login required; then 403 unless the user has one of ``roles``."""

    def decorator(view: ViewFunc) -> ViewFunc:
        @login_required
        @wraps(view)
        def wrapped(request: HttpRequest, *args: Any, **kwargs: Any) -> HttpResponse:
            role_check(request.user, roles, refusal="Your role does not give access to this page.")
            return view(request, *args, **kwargs)

        return wrapped  # type: ignore[return-value]

    return decorator


def require_write(user: Any) -> None:
    """Auditors read; they never write."""
    role_check(user, WRITERS, refusal="Your role is read-only.")


def _visible(user: Any, role: str) -> tuple[str, list[Any]]:
    """Which sites (``s``, the site table) a person of ``role`` may see, as an SQL condition
    and its parameters: the sites their profile names; managers and auditors who name none
    see every site (those added later included); mechanics only named ones.

    Every page asks this first, so the rule is one short SQL statement over the profile's
    site table rather than ORM subqueries: the same rows (tests/accounts/test_access.py),
    about 1 ms less a page to build."""
    named = _named_sql()
    if role == Role.MECHANIC:
        return f"s.id IN ({named})", [user.pk]
    return f"s.id IN ({named}) OR NOT EXISTS ({named})", [user.pk, user.pk]


def _named_sql() -> str:
    """The ids of the sites a person's profile names (one parameter: the user's id)."""
    through = Profile.sites.through._meta
    return (
        f"SELECT ps.{through.get_field('site').column} FROM {through.db_table} ps "
        f"JOIN {Profile._meta.db_table} p ON p.id = ps.{through.get_field('profile').column} "
        "WHERE p.user_id = %s"
    )


def sites_for_user(user: Any) -> QuerySet[Any]:
    """The sites a person may see (``_visible``). One query, when it is read."""
    site = model_get("fleet", "Site")
    role = user_role(user)
    if role is None:
        return site.objects.none()  # type: ignore[no-any-return]
    where, params = _visible(user, role)
    chosen = f"SELECT s.id FROM {site._meta.db_table} s WHERE {where}"
    return site.objects.filter(pk__in=RawSQL(chosen, params))  # type: ignore[no-any-return]


def _sites_read(user: Any) -> tuple[list[int], bool, bool]:
    """The ids of the sites a person may see (by name), whether they see every site by
    default (a manager or auditor who names none), and whether those ids are every site
    there is (by default, or named to each): one query, kept on the user for the request."""
    cached = getattr(user, "_fleetfuel_sites", None)
    if cached is None:
        role = user_role(user)
        if role is None:
            cached = ([], False, False)
        else:
            where, params = _visible(user, role)
            table = model_get("fleet", "Site")._meta.db_table
            with connection.cursor() as cursor:
                cursor.execute(
                    f"SELECT s.id, NOT EXISTS ({_named_sql()}), "
                    f"(SELECT COUNT(*) FROM {table}) FROM {table} s WHERE {where} "
                    "ORDER BY s.name, s.id",
                    [user.pk, *params],
                )
                rows = cursor.fetchall()
            every = role != Role.MECHANIC and (not rows or bool(rows[0][1]))
            listed_all = bool(rows) and len(rows) == rows[0][2]
            cached = ([row[0] for row in rows], every, every or listed_all)
        user._fleetfuel_sites = cached
    return cached  # type: ignore[no-any-return]


def sees_every_site(user: Any) -> bool:
    """True for a manager or auditor whose profile names no site (they see every site, those
    added later included); False for everyone else, mechanics and anyone limited to some.
    Read with the sites themselves (``site_ids_for_user``): no query more."""
    return _sites_read(user)[1]


def sites_are_every_site(user: Any) -> bool:
    """True when the sites a person may see are, right now, every site there is (by default
    or because their profile names each): a list of theirs needs no site condition. Read
    with the sites themselves: no query more."""
    return _sites_read(user)[2]


def site_ids_for_user(user: Any) -> list[int]:
    """The ids of the sites a person may see (one query). Kept on the user for the request."""
    return _sites_read(user)[0]


def _access_check(user: Any, *, write: bool) -> None:
    if write:
        require_write(user)
    else:
        role_check(user, READERS, refusal="Your account has no role yet; ask a fleet manager.")


def unit_for_user(user: Any, pk: int) -> Any:
    """The unit, to any role, at a site the user may see: 404 otherwise."""
    _access_check(user, write=False)
    unit = model_get("fleet", "Unit")
    return get_object_or_404(
        unit.objects.select_related("site", "unit_class"),
        pk=pk,
        site_id__in=site_ids_for_user(user),
    )


def work_order_for_user(user: Any, pk: int, *, write: bool = False) -> Any:
    """The work order at a site the user may see (404 otherwise). Any role reads it; to write
    (``write=True``) the role must be a manager's or a mechanic's (403 for an auditor)."""
    _access_check(user, write=write)
    work_order = model_get("workorders", "WorkOrder")
    return get_object_or_404(
        work_order.objects.select_related(
            "unit__site", "unit__unit_class", "assigned_to", "closed_by", "override_by"
        ),
        pk=pk,
        unit__site_id__in=site_ids_for_user(user),
    )


def task_for_user(user: Any, pk: int, *, write: bool = False) -> Any:
    """A work-order task, under the rule of its work order (see ``work_order_for_user``)."""
    _access_check(user, write=write)
    task = model_get("workorders", "WorkOrderTask")
    return get_object_or_404(
        task.objects.select_related("work_order__unit__site", "component", "not_done_by"),
        pk=pk,
        work_order__unit__site_id__in=site_ids_for_user(user),
    )


def due_item_for_user(user: Any, pk: int) -> Any:
    """A due item, to a manager (403 for other roles: the due list is the manager's planning;
    mechanics and auditors see due items on the unit page and the work order), at a site the
    manager may see (404 otherwise)."""
    role_check(user, (Role.MANAGER,), refusal="Due items are planned by fleet managers.")
    due_item = model_get("planning", "DueItem")
    return get_object_or_404(
        due_item.objects.select_related("unit", "unit__site", "component"),
        pk=pk,
        site_id__in=site_ids_for_user(user),
    )


def source_decision_for_user(user: Any, pk: int, *, write: bool = False) -> Any:
    """A decision at a fuel source, to a manager or an auditor (403 for a mechanic; to write,
    ``write=True``, a manager only), when the source is at a site they may see, or, for a
    source shared by sites, when it reached a unit at one (404 otherwise)."""
    roles = (Role.MANAGER,) if write else (Role.MANAGER, Role.AUDITOR)
    role_check(user, roles, refusal="Decisions at fuel sources are the fleet manager's.")
    decision = model_get("planning", "SourceDecision")
    ids = site_ids_for_user(user)
    visible = decision.objects.filter(
        Q(site_id__in=ids) | Q(site__isnull=True, reached__unit__site_id__in=ids)
    ).values("pk")
    return get_object_or_404(
        decision.objects.select_related("source", "sample", "resolved_by", "new_sample"),
        pk=pk,
        pk__in=visible,
    )


def service_event_for_user(user: Any, pk: int) -> Any:
    """An entry of the service history, to any role, for a unit at a site the user may see
    (404 otherwise). Who may correct it is the correction view's rule (managers only)."""
    _access_check(user, write=False)
    event = model_get("ledger", "ServiceEvent")
    return get_object_or_404(
        event.objects.select_related("unit", "unit__site", "work_order"),
        pk=pk,
        unit__site_id__in=site_ids_for_user(user),
    )


def export_log_for_user(user: Any, pk: int) -> Any:
    """An export of the history, to those who export (managers and auditors; 403 for a
    mechanic). A manager may have every export, anyone else only their own, and either only
    when every site the export covered is one they may see (404 otherwise)."""
    role_check(user, EXPORTERS, refusal="Your role does not export.")
    log = get_object_or_404(model_get("ledger", "ExportLog"), pk=pk)
    if user_role(user) != Role.MANAGER and log.requested_by_id != user.pk:
        raise Http404("No such export.")
    if log.sites.exclude(pk__in=site_ids_for_user(user)).exists():
        raise Http404("No such export.")
    return log
