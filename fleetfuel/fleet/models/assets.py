"""The fleet as the trade sees it: sites, unit classes, units, fitted fuel-system components,
service plans and the measurements a plan asks for.

Everything is stored in SI units (bar gauge, litres, millilitres, degrees Celsius, engine
hours) and converted for display by the site's preference (services.units).
What is observed of a unit over time (readings, fuelings, samples, engine events) lives in
observations.py, which builds on this module.
"""

from __future__ import annotations

import zoneinfo

from django.core.exceptions import ValidationError
from django.core.validators import MaxValueValidator, MinValueValidator
from django.db import models
from django.db.models import Q
from django.db.models.functions import Coalesce

from services.display import DEFAULT_STYLE, STYLE_CHOICES
from services.fuel_quality import parse_iso4406
from services.rules import cylinder_exists


def validate_time_zone(value: str) -> None:
    try:
        zoneinfo.ZoneInfo(value)
    except (zoneinfo.ZoneInfoNotFoundError, ValueError):
        raise ValidationError(
            f"{value!r} is not a known IANA time zone (e.g. Europe/London)."
        ) from None


class Site(models.Model):
    """A depot where units are housed and maintained."""

    class UnitSystem(models.TextChoices):
        METRIC = "metric", "Metric (bar, L, °C)"
        US = "us", "US customary (psi, US gal, °F)"

    name = models.CharField(max_length=100, unique=True)
    code = models.SlugField(max_length=20, unique=True, help_text="Short code used in links.")
    time_zone = models.CharField(max_length=64, default="UTC", validators=[validate_time_zone])
    unit_system = models.CharField(
        max_length=10, choices=UnitSystem.choices, default=UnitSystem.METRIC
    )
    display_style = models.CharField(
        "dates and numbers",
        max_length=10,
        choices=STYLE_CHOICES,
        default=DEFAULT_STYLE,
        help_text="How this depot's pages, emails and prints show dates, times and numbers. "
        "Exports always use ISO 8601 dates.",
    )
    address = models.TextField(blank=True)
    coldest_fuel_c = models.FloatField(
        "coldest fuel temperature (°C)",
        null=True,
        blank=True,
        validators=[MinValueValidator(-50), MaxValueValidator(50)],
        help_text="The coldest the fuel in tanks and machines gets here, in a normal year. "
        "Water that stays dissolved in warm fuel comes out when it cools: free water is "
        "estimated at this temperature. Blank: the sample's temperature, else 15 °C.",
    )

    class Meta:
        ordering = ["name"]

    def __str__(self) -> str:
        return self.name


class UnitClass(models.Model):
    """A kind of machine that shares service plans (haul truck, wheel loader, genset...)."""

    name = models.CharField(max_length=100, unique=True)
    typical_hours_per_day = models.FloatField(
        validators=[MinValueValidator(0), MaxValueValidator(24)],
        help_text="Used when a unit has too few hour-meter readings to forecast from.",
    )
    typical_burn_l_per_h = models.FloatField(
        validators=[MinValueValidator(0.1)],
        help_text="Fuel burned per engine hour when no fuel log is available.",
    )
    typical_tank_l = models.FloatField(
        "typical fuel tank (L)",
        null=True,
        blank=True,
        validators=[MinValueValidator(1)],
        help_text="The class's usual tank size, for units whose own is not recorded.",
    )

    class Meta:
        ordering = ["name"]
        verbose_name_plural = "unit classes"

    def __str__(self) -> str:
        return self.name


class Unit(models.Model):
    """One machine. Identification fields follow 49 CFR 396.3(b)(1)."""

    site = models.ForeignKey(Site, on_delete=models.PROTECT, related_name="units")
    fleet_number = models.CharField(max_length=30, help_text="The shop's own number.")
    unit_class = models.ForeignKey(UnitClass, on_delete=models.PROTECT, related_name="units")
    make = models.CharField(max_length=60)
    model = models.CharField(max_length=60)
    serial_number = models.CharField("serial number or VIN", max_length=40)
    year = models.PositiveSmallIntegerField(
        validators=[MinValueValidator(1950), MaxValueValidator(2100)]
    )
    engine_serial = models.CharField(max_length=40, blank=True)
    cylinders = models.PositiveSmallIntegerField(
        validators=[MinValueValidator(1), MaxValueValidator(24)]
    )
    tire_size = models.CharField(max_length=40, blank=True, help_text="Where the unit has tyres.")
    owner = models.CharField(
        max_length=120, blank=True, help_text="Owner, if not the operating company."
    )
    tank_capacity_l = models.FloatField(
        "fuel tank capacity (L)",
        null=True,
        blank=True,
        validators=[MinValueValidator(1), MaxValueValidator(100_000)],
        help_text="Blank: the unit class's typical tank.",
    )
    in_service_on = models.DateField()
    disposed_on = models.DateField(null=True, blank=True)

    class Meta:
        ordering = ["site__name", "fleet_number"]
        constraints = [
            models.UniqueConstraint(
                fields=["site", "fleet_number"],
                name="unit_fleet_number_unique_per_site",
                violation_error_message="A unit with this fleet number is already at this site.",
            ),
            models.CheckConstraint(
                condition=Q(disposed_on__isnull=True)
                | Q(disposed_on__gte=models.F("in_service_on")),
                name="unit_disposed_after_in_service",
                violation_error_message="The disposal date cannot be before the in-service date.",
            ),
        ]

    def __str__(self) -> str:
        return f"{self.fleet_number} ({self.make} {self.model})"


class ComponentKind(models.TextChoices):
    """The fitted parts of a common-rail fuel system that fleetfuel tracks.

    Low-pressure side first, in the order fuel passes them, then the high-pressure side.
    To add a kind, see DEVELOPERS.md ("Adding a component kind").
    """

    PRIMARY_FILTER = "primary_filter", "Primary filter / water separator"
    LIFT_PUMP = "lift_pump", "Lift pump"
    LOW_PRESSURE_PUMP = "low_pressure_pump", "Low-pressure (gear) pump"
    FINE_FILTER = "fine_filter", "Pressure-side (fine) filter"
    METERING_ACTUATOR = "metering_actuator", "Metering actuator"
    HIGH_PRESSURE_PUMP = "high_pressure_pump", "High-pressure pump"
    RAIL = "rail", "Rail"
    RELIEF_VALVE = "relief_valve", "Rail relief valve"
    INJECTOR = "injector", "Injector"
    HP_CONNECTOR = "hp_connector", "High-pressure connector"
    DRAIN_CHECK_VALVE = "drain_check_valve", "Drain-line check valve"


# Kinds fitted once per cylinder, and kinds on the high-pressure side (cautions apply).
PER_CYLINDER_KINDS = frozenset({ComponentKind.INJECTOR, ComponentKind.HP_CONNECTOR})
HIGH_PRESSURE_KINDS = frozenset(
    {
        ComponentKind.HIGH_PRESSURE_PUMP,
        ComponentKind.RAIL,
        ComponentKind.RELIEF_VALVE,
        ComponentKind.INJECTOR,
        ComponentKind.HP_CONNECTOR,
    }
)
FILTER_KINDS = frozenset({ComponentKind.PRIMARY_FILTER, ComponentKind.FINE_FILTER})


class Component(models.Model):
    """One fitted part on one unit. Removing it sets removed_on; history is kept."""

    unit = models.ForeignKey(Unit, on_delete=models.CASCADE, related_name="components")
    kind = models.CharField(max_length=30, choices=ComponentKind.choices)
    position = models.PositiveSmallIntegerField(
        null=True, blank=True, help_text="Cylinder number, for per-cylinder parts."
    )
    part_number = models.CharField(max_length=60, blank=True)
    serial = models.CharField(max_length=60, blank=True)
    rating_um = models.FloatField(
        "filter rating (µm)",
        null=True,
        blank=True,
        validators=[MinValueValidator(0.5), MaxValueValidator(200)],
    )
    efficiency_size_um_c = models.FloatField(
        "efficiency rated at (µm(c))",
        null=True,
        blank=True,
        validators=[MinValueValidator(1), MaxValueValidator(100)],
        help_text="The particle size at which the element's efficiency is stated (ISO 19438), "
        "e.g. 4 for 'beta 200 at 4 µm(c)'. It picks the ISO 4406 count that loads the "
        "filter; blank: the nominal rating is used instead.",
    )
    installed_on = models.DateField()
    installed_hours = models.FloatField(validators=[MinValueValidator(0)])
    removed_on = models.DateField(null=True, blank=True)
    removed_hours = models.FloatField(null=True, blank=True)

    class Meta:
        ordering = ["unit", "kind", "position"]
        constraints = [
            models.UniqueConstraint(
                "unit",
                "kind",
                Coalesce("position", 0),
                condition=Q(removed_on__isnull=True),
                name="component_one_fitted_per_position",
                violation_error_message="This unit already has that part fitted at that position.",
            ),
        ]
        indexes = [models.Index(fields=["unit", "kind"], name="component_unit_kind")]

    def __str__(self) -> str:
        where = f" cyl {self.position}" if self.position else ""
        return f"{self.get_kind_display()}{where} on {self.unit.fleet_number}"

    def clean(self) -> None:
        if self.kind in PER_CYLINDER_KINDS:
            if self.position is None:
                raise ValidationError({"position": "Give the cylinder number for this part."})
            if self.unit_id and not cylinder_exists(
                cylinder=self.position, cylinders=self.unit.cylinders
            ):
                raise ValidationError(
                    {"position": f"The unit has {self.unit.cylinders} cylinders."}
                )
        elif self.position is not None:
            raise ValidationError({"position": "Only injectors and connectors take a cylinder."})

    @property
    def is_high_pressure(self) -> bool:
        return self.kind in HIGH_PRESSURE_KINDS


class ServicePlan(models.Model):
    """How a unit class services one component kind. Data the shop edits, not constants.

    Filter plans use the interval fields and the reference fuel; separator plans the drain
    fields; relief-valve plans the relief thresholds. Unused fields stay blank.
    """

    unit_class = models.ForeignKey(UnitClass, on_delete=models.CASCADE, related_name="plans")
    component_kind = models.CharField(max_length=30, choices=ComponentKind.choices)

    interval_hours = models.FloatField(null=True, blank=True, validators=[MinValueValidator(1)])
    interval_days = models.PositiveIntegerField(null=True, blank=True)
    interval_litres = models.FloatField(
        "fuel-volume interval (L)", null=True, blank=True, validators=[MinValueValidator(1)]
    )
    reference_iso4406 = models.CharField(
        "reference fuel ISO 4406 code",
        max_length=20,
        default="18/16/13",
        help_text="The fuel cleanliness the hour interval assumes (WWFC 6th ed.: 18/16/13).",
    )
    reference_water_mg_kg = models.FloatField(
        default=200, help_text="EN 590 limit: 200 mg/kg.", validators=[MinValueValidator(0)]
    )
    reference_burn_l_per_h = models.FloatField(
        null=True, blank=True, validators=[MinValueValidator(0.1)]
    )
    dp_limit_bar = models.FloatField(
        "differential pressure limit (bar)",
        null=True,
        blank=True,
        validators=[MinValueValidator(0)],
    )

    bowl_capacity_ml = models.FloatField(null=True, blank=True, validators=[MinValueValidator(1)])
    drain_level_fraction = models.FloatField(
        default=0.8,
        validators=[MinValueValidator(0.05), MaxValueValidator(1)],
        help_text="Drain when the bowl is this full (ISO 16332:2018 drains at 80 %).",
    )
    drain_interval_days = models.PositiveIntegerField(null=True, blank=True)
    drain_interval_hours = models.FloatField(null=True, blank=True)
    separator_efficiency = models.FloatField(
        default=0.95, validators=[MinValueValidator(0), MaxValueValidator(1)]
    )

    drain_soon_days = models.PositiveIntegerField(
        default=2, help_text="A drain shows as 'soon' this many days ahead."
    )
    drain_due_days = models.PositiveIntegerField(
        default=0, help_text="A drain shows as 'due' this many days ahead (0: on the day)."
    )

    relief_window_hours = models.FloatField(null=True, blank=True)
    relief_window_days = models.PositiveIntegerField(null=True, blank=True)
    relief_openings_to_flag = models.PositiveIntegerField(null=True, blank=True)
    relief_lifetime_openings = models.PositiveIntegerField(null=True, blank=True)

    soon_days = models.PositiveIntegerField(default=14)
    due_days = models.PositiveIntegerField(default=3)

    class Meta:
        ordering = ["unit_class", "component_kind"]
        constraints = [
            models.UniqueConstraint(
                fields=["unit_class", "component_kind"],
                name="plan_one_per_class_and_kind",
                violation_error_message="This unit class already has a plan for that part.",
            ),
        ]

    def __str__(self) -> str:
        return f"{self.unit_class}: {self.get_component_kind_display()}"

    def clean(self) -> None:
        try:
            parse_iso4406(self.reference_iso4406)
        except ValueError as exc:
            raise ValidationError({"reference_iso4406": str(exc)}) from exc
        if self.component_kind in FILTER_KINDS and not (self.interval_hours or self.interval_days):
            raise ValidationError("A filter plan needs an hour or a calendar interval.")
        if self.soon_days < self.due_days:
            raise ValidationError({"soon_days": "'Soon' must be at least as long as 'due'."})


class MeasurementLimit(models.Model):
    """A measurement the plan asks for at service, with pass limits (gauge pressures)."""

    plan = models.ForeignKey(ServicePlan, on_delete=models.CASCADE, related_name="limits")
    name = models.CharField(max_length=80, help_text="e.g. Supply pressure at cranking")
    quantity = models.CharField(
        max_length=30,
        choices=[
            ("pressure_bar_gauge", "Pressure (bar gauge)"),
            ("volume_ml", "Volume (mL)"),
            ("flow_l_per_h", "Flow (L/h)"),
        ],
        default="pressure_bar_gauge",
    )
    low = models.FloatField(null=True, blank=True)
    high = models.FloatField(null=True, blank=True)

    class Meta:
        ordering = ["plan", "name"]
        constraints = [
            models.UniqueConstraint(fields=["plan", "name"], name="limit_name_unique_per_plan"),
            models.CheckConstraint(
                condition=Q(low__isnull=False) | Q(high__isnull=False),
                name="limit_has_a_bound",
                violation_error_message="Give a low limit, a high limit or both.",
            ),
        ]

    def __str__(self) -> str:
        return self.name
