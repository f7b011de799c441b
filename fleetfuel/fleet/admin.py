from django.contrib import admin

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
class SiteAdmin(admin.ModelAdmin):
    list_display = ["name", "code", "time_zone", "unit_system", "coldest_fuel_c"]
    search_fields = ["name", "code"]


@admin.register(UnitClass)
class UnitClassAdmin(admin.ModelAdmin):
    list_display = ["name", "typical_hours_per_day", "typical_burn_l_per_h"]


class ComponentInline(admin.TabularInline):
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
class UnitAdmin(admin.ModelAdmin):
    list_display = ["fleet_number", "site", "unit_class", "make", "model", "year", "disposed_on"]
    list_filter = ["site", "unit_class", "make"]
    search_fields = ["fleet_number", "serial_number", "engine_serial"]
    inlines = [ComponentInline]


@admin.register(Component)
class ComponentAdmin(admin.ModelAdmin):
    list_display = [
        "unit",
        "kind",
        "position",
        "part_number",
        "serial",
        "installed_on",
        "removed_on",
    ]
    list_filter = ["kind", "unit__site"]
    search_fields = ["unit__fleet_number", "part_number", "serial"]
    list_select_related = ["unit"]


class MeasurementLimitInline(admin.TabularInline):
    model = MeasurementLimit
    extra = 0


@admin.register(ServicePlan)
class ServicePlanAdmin(admin.ModelAdmin):
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
class MeterReadingAdmin(admin.ModelAdmin):
    list_display = ["unit", "taken_at", "hours", "source"]
    list_filter = ["source", "unit__site"]
    search_fields = ["unit__fleet_number"]
    date_hierarchy = "taken_at"
    list_select_related = ["unit"]


@admin.register(MeterReplacement)
class MeterReplacementAdmin(admin.ModelAdmin):
    list_display = ["unit", "replaced_at", "old_meter_final", "new_meter_start"]
    search_fields = ["unit__fleet_number"]


@admin.register(FuelSource)
class FuelSourceAdmin(admin.ModelAdmin):
    list_display = ["name", "kind", "site", "density_kg_l", "fame_pct_v"]
    list_filter = ["kind", "site"]


@admin.register(Delivery)
class DeliveryAdmin(admin.ModelAdmin):
    list_display = ["source", "delivered_at", "litres", "supplier", "ticket"]
    list_filter = ["source"]
    search_fields = ["ticket", "supplier"]
    date_hierarchy = "delivered_at"
    list_select_related = ["source"]


@admin.register(Fueling)
class FuelingAdmin(admin.ModelAdmin):
    list_display = ["unit", "fueled_at", "litres", "source"]
    list_filter = ["source", "unit__site"]
    search_fields = ["unit__fleet_number"]
    date_hierarchy = "fueled_at"
    list_select_related = ["unit", "source"]


@admin.register(FuelSample)
class FuelSampleAdmin(admin.ModelAdmin):
    list_display = ["reference", "sampled_at", "source", "unit", "iso4406", "water_mg_kg"]
    list_filter = ["source"]
    search_fields = ["reference", "unit__fleet_number"]
    date_hierarchy = "sampled_at"


@admin.register(EngineEvent)
class EngineEventAdmin(admin.ModelAdmin):
    list_display = ["unit", "occurred_at", "spn", "fmi", "occurrences", "kind"]
    list_filter = ["kind", "unit__site"]
    search_fields = ["unit__fleet_number", "spn"]
    date_hierarchy = "occurred_at"
    list_select_related = ["unit"]


@admin.register(FilterPressureReading)
class FilterPressureReadingAdmin(admin.ModelAdmin):
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
