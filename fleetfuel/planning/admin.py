"""Derived rows in the admin, read-only, limited to the sites a person may see."""

from django.contrib import admin

from fleetfuel.accounts.admin import SiteLimitedAdmin

from .models import DueItem, ProjectionRun, UnitFlag


class DerivedAdmin(SiteLimitedAdmin):
    """Derived rows: the engine writes them; people read them."""

    def has_add_permission(self, request, obj=None):  # type: ignore[no-untyped-def]
        return False

    def has_change_permission(self, request, obj=None):  # type: ignore[no-untyped-def]
        return False


@admin.register(DueItem)
class DueItemAdmin(DerivedAdmin):
    site_path = "site"
    list_display = ["unit", "task", "status", "due_on", "due_hours", "basis", "computed_at"]
    list_filter = ["status", "task", "basis", ("site", admin.RelatedOnlyFieldListFilter)]
    search_fields = ["unit__fleet_number"]
    list_select_related = ["unit"]


@admin.register(UnitFlag)
class UnitFlagAdmin(DerivedAdmin):
    site_path = "unit__site"
    list_display = ["unit", "code", "title", "since"]
    list_filter = ["code"]
    search_fields = ["unit__fleet_number"]


@admin.register(ProjectionRun)
class ProjectionRunAdmin(DerivedAdmin):
    list_display = ["started_at", "finished_at", "trigger", "units", "items"]
