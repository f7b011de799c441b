"""Admin for work orders (staff only). Closing goes through the tablet, which checks the rules;
the admin is for looking things up and fixing an assignment or a due date."""

from __future__ import annotations

from django.contrib import admin

from .models import WorkOrder, WorkOrderTask


class WorkOrderTaskInline(admin.TabularInline):
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


@admin.register(WorkOrder)
class WorkOrderAdmin(admin.ModelAdmin):
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
    list_filter = ("status", "priority", "unit__site", "due_on")
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
