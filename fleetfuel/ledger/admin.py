"""The admin shows the ledger and never changes it: no add, change or delete, for anyone.
Limited to the sites a person may see (fleetfuel.accounts.admin); an export only when every
site it covered is one of them."""

from __future__ import annotations

from typing import Any

from django.contrib import admin
from django.db.models import QuerySet
from django.http import HttpRequest

from fleetfuel.accounts.admin import SiteLimitedAdmin, site_limit

from .models import ChainCheckpoint, ExportLog, ServiceEvent
from .selectors import exports_within_sites


class ReadOnlyAdmin(SiteLimitedAdmin):
    """View only, even for a superuser (who otherwise has every permission)."""

    def has_add_permission(self, request: HttpRequest, obj: Any = None) -> bool:
        return False

    def has_change_permission(self, request: HttpRequest, obj: Any = None) -> bool:
        return False

    def has_delete_permission(self, request: HttpRequest, obj: Any = None) -> bool:
        return False


@admin.register(ServiceEvent)
class ServiceEventAdmin(ReadOnlyAdmin):
    site_path = "unit__site"
    list_display = (
        "performed_at", "unit", "seq", "kind", "component_kind", "cylinder", "hour_meter",
        "recorded_by", "corrects", "short_hash",
    )  # fmt: skip
    list_filter = ("kind", ("unit__site", admin.RelatedOnlyFieldListFilter), "performed_at")
    search_fields = (
        "unit__fleet_number", "part_number", "old_serial", "new_serial", "notes", "reason", "hash",
    )  # fmt: skip
    list_select_related = ("unit", "recorded_by", "corrects")
    date_hierarchy = "performed_at"
    ordering = ("-performed_at", "-id")
    show_full_result_count = False  # no count of the whole table on every page

    @admin.display(description="hash")
    def short_hash(self, obj: ServiceEvent) -> str:
        return obj.hash[:12] + "…"


@admin.register(ChainCheckpoint)
class ChainCheckpointAdmin(ReadOnlyAdmin):
    site_path = "unit__site"
    list_display = ("unit", "seq", "head_hash", "recorded_at", "key_id")
    list_select_related = ("unit",)
    search_fields = ("unit__fleet_number", "head_hash")
    show_full_result_count = False


@admin.register(ExportLog)
class ExportLogAdmin(ReadOnlyAdmin):
    list_display = (
        "pk", "requested_at", "requested_by", "via", "format", "row_count", "sha256", "finished_at",
    )  # fmt: skip
    list_filter = ("format", "via")
    list_select_related = ("requested_by",)
    search_fields = ("sha256", "file_name", "requested_by__username")
    exclude = ("manifest",)

    def get_queryset(self, request: HttpRequest) -> QuerySet[ExportLog]:
        rows = admin.ModelAdmin.get_queryset(self, request)
        ids = site_limit(request)
        return rows if ids is None else exports_within_sites(rows, ids)
