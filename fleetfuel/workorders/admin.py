"""Admin for work orders (staff only). Closing goes through the tablet, which checks the rules;
the admin is for looking things up and fixing an assignment or a due date. Limited to the
sites a person may see; a closed work order and its tasks are read-only here too (the service
history points at them)."""

from __future__ import annotations

from typing import Any

from django.contrib import admin
from django.http import HttpRequest

from fleetfuel.accounts.admin import SiteLimitedAdmin, SiteLimitedInline

from .models import WorkOrder, WorkOrderTask


def is_closed(work_order: Any) -> bool:
    return work_order is not None and work_order.status == WorkOrder.Status.CLOSED


class WorkOrderTaskInline(SiteLimitedInline, admin.TabularInline):  # type: ignore[type-arg]
    model = WorkOrderTask
    extra = 0
    fields = (
        "kind",
        "description",
        "cylinder",
        "component",
        "done",
        "draft_saved_at",
        "entry",
        "not_done_reason",
        "not_done_by",
        "not_done_at",
    )
    # "Not done" is set and undone on the tablet only (it has its reason, who and when).
    readonly_fields = ("draft_saved_at", "not_done_reason", "not_done_by", "not_done_at")
    raw_id_fields = ("component", "due_item")
    show_change_link = False

    def has_add_permission(self, request: HttpRequest, obj: Any = None) -> bool:
        return not is_closed(obj) and super().has_add_permission(request, obj)

    def has_change_permission(self, request: HttpRequest, obj: Any = None) -> bool:
        return not is_closed(obj) and super().has_change_permission(request, obj)

    def has_delete_permission(self, request: HttpRequest, obj: Any = None) -> bool:
        return not is_closed(obj) and super().has_delete_permission(request, obj)


@admin.register(WorkOrder)
class WorkOrderAdmin(SiteLimitedAdmin):
    site_path = "unit__site"
    list_display = (
        "number",
        "unit",
        "status",
        "priority",
        "due_on",
        "assigned_to",
        "closed_at",
        "closed_by",
    )
    list_filter = ("status", "priority", ("unit__site", admin.RelatedOnlyFieldListFilter), "due_on")
    search_fields = ("number", "unit__fleet_number", "notes", "override_reason")
    date_hierarchy = "due_on"
    list_select_related = ("unit", "assigned_to", "closed_by")
    raw_id_fields = ("unit", "follow_up_of")
    readonly_fields = (
        "status",  # opened by the planner or a person, closed only through the close rules
        "closed_at",
        "closed_by",
        "close_token",
        "override_reason",
        "override_by",
        "job_saved_at",
    )
    inlines = [WorkOrderTaskInline]

    def has_change_permission(self, request: HttpRequest, obj: Any = None) -> bool:
        return not is_closed(obj) and super().has_change_permission(request, obj)

    def has_delete_permission(self, request: HttpRequest, obj: Any = None) -> bool:
        return not is_closed(obj) and super().has_delete_permission(request, obj)
