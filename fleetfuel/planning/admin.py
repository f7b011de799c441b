from django.contrib import admin

from .models import DueItem, ProjectionRun, UnitFlag


class DerivedAdmin(admin.ModelAdmin):
    """Derived rows: the engine writes them; people read them."""

    def has_add_permission(self, request, obj=None):  # type: ignore[no-untyped-def]
        return False

    def has_change_permission(self, request, obj=None):  # type: ignore[no-untyped-def]
        return False


@admin.register(DueItem)
class DueItemAdmin(DerivedAdmin):
    list_display = ["unit", "task", "status", "due_on", "due_hours", "basis", "computed_at"]
    list_filter = ["status", "task", "basis", "unit__site"]
    search_fields = ["unit__fleet_number"]
    list_select_related = ["unit"]


@admin.register(UnitFlag)
class UnitFlagAdmin(DerivedAdmin):
    list_display = ["unit", "code", "title", "since"]
    list_filter = ["code"]
    search_fields = ["unit__fleet_number"]


@admin.register(ProjectionRun)
class ProjectionRunAdmin(DerivedAdmin):
    list_display = ["started_at", "finished_at", "trigger", "units", "items"]
