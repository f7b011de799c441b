"""The admin, limited to the sites a person may see.

Every model admin of the project derives from ``SiteLimitedAdmin`` and says where its rows'
site is (``site_path``). For someone limited to some sites (fleetfuel.accounts.access), the
lists, the object pages and the choices of every foreign key hold only those sites' rows; rows
of no site (shared: a retail fuel source, a unit class, a service plan) are seen but changed
only by those who see every site. A superuser is not limited.
"""

from __future__ import annotations

from typing import Any

from django.contrib import admin
from django.contrib.auth import get_user_model
from django.db.models import Model, Q, QuerySet
from django.http import HttpRequest

from .access import sees_every_site, site_ids_for_user
from .models import Profile

# The records pages wear fleetfuel's name, and "View site" leads back to fleetfuel's own pages
# (where the daily entry happens: /intake/); they hold plans and reference data.
admin.site.site_header = "fleetfuel · fleet records"
admin.site.site_title = "fleetfuel records"
admin.site.index_title = "Plans, reference data and records"
admin.site.site_url = "/"


def site_limit(request: HttpRequest) -> list[int] | None:
    """The site ids the admin shows this person, or None for no limit."""
    user = request.user
    if getattr(user, "is_superuser", False) or sees_every_site(user):
        return None
    return site_ids_for_user(user)


class SiteLimits:
    """Where a model's site is, and the admin's rules built from it (mixed into admins and
    inlines)."""

    # Path from the model to its site ("site", "unit__site", "pk" for a site itself); None
    # for rows every site shares (configuration such as unit classes and service plans).
    site_path: str | None = None
    # True when a row may have no site (the path is null) and is then shared by all sites.
    shared_when_empty: bool = False

    def owned_q(self, ids: list[int]) -> Q:
        return Q(**{f"{self.site_path}__in": ids})

    def visible_q(self, ids: list[int]) -> Q:
        q = self.owned_q(ids)
        if self.shared_when_empty:
            q |= Q(**{f"{self.site_path}__isnull": True})
        return q

    def rows_limit(self, qs: QuerySet[Any], request: HttpRequest) -> QuerySet[Any]:
        ids = site_limit(request)
        if ids is None or self.site_path is None:
            return qs
        return qs.filter(self.visible_q(ids))

    def may_write(self, request: HttpRequest, obj: Model | None) -> bool:
        ids = site_limit(request)
        if ids is None:
            return True
        if self.site_path is None:
            return False  # shared by every site: changed by those who see them all
        if obj is None:
            return True
        return type(obj)._default_manager.filter(self.owned_q(ids), pk=obj.pk).exists()

    def choices_limit(self, db_field: Any, request: HttpRequest, field: Any) -> Any:
        """Limit a foreign key's choices to the rows the person may see."""
        ids = site_limit(request)
        if ids is None or field is None:
            return field
        related = db_field.related_model
        if related is get_user_model():
            people = Q(profile__sites__in=ids) | Q(pk=request.user.pk)
            field.queryset = field.queryset.filter(
                pk__in=related._default_manager.filter(people).values("pk")
            )
            return field
        related_admin = admin.site._registry.get(related)
        if isinstance(related_admin, SiteLimits) and related_admin.site_path is not None:
            field.queryset = field.queryset.filter(related_admin.visible_q(ids))
        return field


class SiteLimitedAdmin(SiteLimits, admin.ModelAdmin):  # type: ignore[type-arg]
    def get_queryset(self, request: HttpRequest) -> QuerySet[Any]:
        return self.rows_limit(super().get_queryset(request), request)

    def has_add_permission(self, request: HttpRequest) -> bool:
        return super().has_add_permission(request) and self.may_write(request, None)

    def has_change_permission(self, request: HttpRequest, obj: Any = None) -> bool:
        return super().has_change_permission(request, obj) and self.may_write(request, obj)

    def has_delete_permission(self, request: HttpRequest, obj: Any = None) -> bool:
        return super().has_delete_permission(request, obj) and self.may_write(request, obj)

    def formfield_for_foreignkey(self, db_field: Any, request: HttpRequest, **kwargs: Any) -> Any:
        field = super().formfield_for_foreignkey(db_field, request, **kwargs)
        return self.choices_limit(db_field, request, field)

    def formfield_for_manytomany(self, db_field: Any, request: HttpRequest, **kwargs: Any) -> Any:
        field = super().formfield_for_manytomany(db_field, request, **kwargs)
        return self.choices_limit(db_field, request, field)


class SiteLimitedInline(SiteLimits):
    """For inlines: the choices of their foreign keys limited the same way."""

    def formfield_for_foreignkey(self, db_field: Any, request: HttpRequest, **kwargs: Any) -> Any:
        field = super().formfield_for_foreignkey(db_field, request, **kwargs)  # type: ignore[misc]
        return self.choices_limit(db_field, request, field)


@admin.register(Profile)
class ProfileAdmin(SiteLimitedAdmin):
    """Profiles name the sites a person sees: only those who see every site change them (a
    person limited to one depot must not widen anyone's sites, their own included)."""

    list_display = ["user", "work_list_subscribed", "work_list_hour", "work_list_days_ahead"]
    filter_horizontal = ["sites"]
    search_fields = ["user__username", "user__last_name"]
    site_path = "sites"

    def get_queryset(self, request: HttpRequest) -> QuerySet[Any]:
        qs = admin.ModelAdmin.get_queryset(self, request)
        ids = site_limit(request)
        if ids is None:
            return qs
        return qs.filter(pk__in=Profile.objects.filter(sites__in=ids).values("pk"))

    def may_write(self, request: HttpRequest, obj: Model | None) -> bool:
        return site_limit(request) is None
