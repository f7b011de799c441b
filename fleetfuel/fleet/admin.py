"""The fleet in the admin, limited to the sites a person may see (fleetfuel.accounts.admin)."""

from django.contrib import admin
from django.db.models import Q
from django.http import HttpRequest

from fleetfuel.accounts.admin import SiteLimitedAdmin, SiteLimitedInline, site_limit

from .models import (
    Component,
    Delivery,
    EngineEvent,
    FilterPressureReading,
    Fueling,
    FuelSample,
    FuelSource,
    MeasurementLimit,
    MeterReading,
    MeterReplacement,
    ServicePlan,
    Site,
    Unit,
    UnitClass,
)


@admin.register(Site)
class SiteAdmin(SiteLimitedAdmin):
    site_path = "pk"

    def has_add_permission(self, request: HttpRequest) -> bool:
        """A new depot is added by someone who sees every depot (others would not see it)."""
        return super().has_add_permission(request) and site_limit(request) is None

    list_display = ["name", "code", "time_zone", "unit_system", "display_style", "coldest_fuel_c"]
    search_fields = ["name", "code"]


@admin.register(UnitClass)
class UnitClassAdmin(SiteLimitedAdmin):
    list_display = ["name", "typical_hours_per_day", "typical_burn_l_per_h"]


class ComponentInline(SiteLimitedInline, admin.TabularInline):  # type: ignore[type-arg]
    model = Component
    extra = 0
    fields = [
        "kind",
        "position",
        "part_number",
        "serial",
        "rating_um",
        "efficiency_size_um_c",
        "installed_on",
        "installed_hours",
        "removed_on",
    ]


@admin.register(Unit)
class UnitAdmin(SiteLimitedAdmin):
    site_path = "site"
    list_display = ["fleet_number", "site", "unit_class", "make", "model", "year", "disposed_on"]
    list_filter = [("site", admin.RelatedOnlyFieldListFilter), "unit_class", "make"]
    search_fields = ["fleet_number", "serial_number", "engine_serial"]
    inlines = [ComponentInline]


@admin.register(Component)
class ComponentAdmin(SiteLimitedAdmin):
    site_path = "unit__site"
    list_display = [
        "unit",
        "kind",
        "position",
        "part_number",
        "serial",
        "installed_on",
        "removed_on",
    ]
    list_filter = ["kind", ("unit__site", admin.RelatedOnlyFieldListFilter)]
    search_fields = ["unit__fleet_number", "part_number", "serial"]
    list_select_related = ["unit"]


class MeasurementLimitInline(SiteLimitedInline, admin.TabularInline):  # type: ignore[type-arg]
    model = MeasurementLimit
    extra = 0


@admin.register(ServicePlan)
class ServicePlanAdmin(SiteLimitedAdmin):
    list_display = [
        "unit_class",
        "component_kind",
        "interval_hours",
        "interval_days",
        "reference_iso4406",
        "drain_interval_days",
    ]
    list_filter = ["unit_class", "component_kind"]
    inlines = [MeasurementLimitInline]


@admin.register(MeterReading)
class MeterReadingAdmin(SiteLimitedAdmin):
    site_path = "unit__site"
    list_display = ["unit", "taken_at", "hours", "source"]
    list_filter = ["source", ("unit__site", admin.RelatedOnlyFieldListFilter)]
    search_fields = ["unit__fleet_number"]
    date_hierarchy = "taken_at"
    list_select_related = ["unit"]


@admin.register(MeterReplacement)
class MeterReplacementAdmin(SiteLimitedAdmin):
    site_path = "unit__site"
    list_display = ["unit", "replaced_at", "old_meter_final", "new_meter_start"]
    search_fields = ["unit__fleet_number"]


@admin.register(FuelSource)
class FuelSourceAdmin(SiteLimitedAdmin):
    site_path = "site"
    shared_when_empty = True  # a retail source serves every site
    list_display = ["name", "kind", "site", "density_kg_l", "fame_pct_v"]
    list_filter = ["kind", ("site", admin.RelatedOnlyFieldListFilter)]


@admin.register(Delivery)
class DeliveryAdmin(SiteLimitedAdmin):
    site_path = "source__site"
    shared_when_empty = True
    list_display = ["source", "delivered_at", "litres", "supplier", "ticket"]
    list_filter = ["source"]
    search_fields = ["ticket", "supplier"]
    date_hierarchy = "delivered_at"
    list_select_related = ["source"]


@admin.register(Fueling)
class FuelingAdmin(SiteLimitedAdmin):
    site_path = "unit__site"
    list_display = ["unit", "fueled_at", "litres", "source"]
    list_filter = ["source", ("unit__site", admin.RelatedOnlyFieldListFilter)]
    search_fields = ["unit__fleet_number"]
    date_hierarchy = "fueled_at"
    list_select_related = ["unit", "source"]


@admin.register(FuelSample)
class FuelSampleAdmin(SiteLimitedAdmin):
    site_path = "unit__site"

    def owned_q(self, ids: list[int]) -> Q:
        """A unit's sample belongs to the unit's site; a source's to the source's site."""
        return Q(unit__site__in=ids) | Q(unit__isnull=True, source__site__in=ids)

    def visible_q(self, ids: list[int]) -> Q:
        return self.owned_q(ids) | Q(unit__isnull=True, source__site__isnull=True)

    list_display = ["reference", "sampled_at", "source", "unit", "iso4406", "water_mg_kg"]
    list_filter = ["source"]
    search_fields = ["reference", "unit__fleet_number"]
    date_hierarchy = "sampled_at"


@admin.register(EngineEvent)
class EngineEventAdmin(SiteLimitedAdmin):
    site_path = "unit__site"
    list_display = ["unit", "occurred_at", "spn", "fmi", "occurrences", "kind"]
    list_filter = ["kind", ("unit__site", admin.RelatedOnlyFieldListFilter)]
    search_fields = ["unit__fleet_number", "spn"]
    date_hierarchy = "occurred_at"
    list_select_related = ["unit"]


@admin.register(FilterPressureReading)
class FilterPressureReadingAdmin(SiteLimitedAdmin):
    site_path = "component__unit__site"
    list_display = [
        "component",
        "taken_at",
        "hours",
        "dp_bar",
        "flow_l_per_h",
        "fuel_temperature_c",
    ]
    search_fields = ["component__unit__fleet_number"]
    list_select_related = ["component__unit"]
