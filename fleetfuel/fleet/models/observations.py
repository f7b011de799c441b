"""What is observed of units over time: hour-meter readings and meter replacements, fuel
sources and fuelings, fuel samples, engine events, filter differential pressures.

These are the inputs of the interval engine. All are indexed for "by unit, by time" reads.
"""

from __future__ import annotations

from zoneinfo import ZoneInfo

from django.core.exceptions import ValidationError
from django.core.validators import MaxValueValidator, MinValueValidator
from django.db import models
from django.db.models import Q
from django.utils import timezone

from services.fuel_intake import MAX_FUELING_LITRES
from services.fuel_quality import (
    ABOVE_TABLE,
    FEW_COUNTED,
    FUEL_TEMPERATURE_RANGE_C,
    codes_marked_from_counts,
    format_iso4406,
    parse_iso4406_marked,
)

from .. import checks
from .assets import FILTER_KINDS, Component, Site, Unit


class MeterReading(models.Model):
    """The hour meter as read (the meter's own value, before any replacement offset)."""

    class Source(models.TextChoices):
        WORK_ORDER = "work_order", "Work order"
        FUEL_LOG = "fuel_log", "Fuel log"
        TELEMATICS = "telematics", "Telematics"
        MANUAL = "manual", "Manual entry"

    unit = models.ForeignKey(Unit, on_delete=models.CASCADE, related_name="readings")
    taken_at = models.DateTimeField()
    hours = models.FloatField(validators=[MinValueValidator(0)])
    source = models.CharField(max_length=20, choices=Source.choices, default=Source.MANUAL)

    class Meta:
        ordering = ["unit", "-taken_at"]
        get_latest_by = "taken_at"
        indexes = [models.Index(fields=["unit", "-taken_at"], name="reading_unit_latest")]

    def __str__(self) -> str:
        return f"{self.unit.fleet_number} {self.hours:.1f} h at {self.taken_at:%Y-%m-%d %H:%M}"

    def clean(self) -> None:
        """The reading must fit between its neighbours in time (``services.plausibility``):
        the meter may not go backwards unless a meter replacement lies in between, nor gain
        more hours than elapsed, nor be dated in the future."""
        if not self.unit_id or self.taken_at is None or self.hours is None:
            return
        refusal = checks.meter_reading_refusal(
            unit=self.unit,
            at=self.taken_at,
            hours=self.hours,
            now=timezone.now(),
            exclude_pk=self.pk,
            zone=ZoneInfo(self.unit.site.time_zone),
        )
        if refusal:
            raise ValidationError({"hours": refusal})


class MeterReplacement(models.Model):
    """A replaced hour meter. Engine hours after it = meter + (old_final - new_start)."""

    unit = models.ForeignKey(Unit, on_delete=models.CASCADE, related_name="meter_replacements")
    replaced_at = models.DateTimeField()
    old_meter_final = models.FloatField(validators=[MinValueValidator(0)])
    new_meter_start = models.FloatField(validators=[MinValueValidator(0)])
    note = models.CharField(max_length=200, blank=True)

    class Meta:
        ordering = ["unit", "replaced_at"]
        indexes = [models.Index(fields=["unit", "replaced_at"], name="meterrepl_unit_at")]

    def __str__(self) -> str:
        return f"{self.unit.fleet_number} meter replaced {self.replaced_at:%Y-%m-%d}"

    @property
    def offset(self) -> float:
        return self.old_meter_final - self.new_meter_start


class FuelSource(models.Model):
    class Kind(models.TextChoices):
        BULK_TANK = "bulk_tank", "Bulk tank"
        BOWSER = "bowser", "Mobile bowser"
        RETAIL = "retail", "Retail"

    site = models.ForeignKey(
        Site, on_delete=models.PROTECT, related_name="fuel_sources", null=True, blank=True
    )
    name = models.CharField(max_length=100, unique=True)
    kind = models.CharField(max_length=20, choices=Kind.choices)
    density_kg_l = models.FloatField(
        "density at 15 °C (kg/L)",
        default=0.835,
        validators=[MinValueValidator(0.78), MaxValueValidator(0.9)],
        help_text="EN 590 allows 0.820-0.845 kg/L.",
    )
    fame_pct_v = models.FloatField(
        "FAME (% V/V)", default=7.0, validators=[MinValueValidator(0), MaxValueValidator(100)]
    )

    class Meta:
        ordering = ["name"]

    def __str__(self) -> str:
        return self.name


class Delivery(models.Model):
    """A bulk delivery of fuel into a source (tank or bowser), with the supplier's ticket."""

    source = models.ForeignKey(FuelSource, on_delete=models.PROTECT, related_name="deliveries")
    delivered_at = models.DateTimeField()
    litres = models.FloatField(validators=[MinValueValidator(1), MaxValueValidator(1_000_000)])
    supplier = models.CharField(max_length=100, blank=True)
    ticket = models.CharField("ticket number", max_length=60, blank=True)

    class Meta:
        ordering = ["source", "-delivered_at"]
        verbose_name_plural = "deliveries"
        constraints = [
            models.UniqueConstraint(
                fields=["source", "delivered_at"],
                name="delivery_one_per_source_and_time",
                violation_error_message="This source already has a delivery at that time.",
            ),
        ]
        indexes = [models.Index(fields=["source", "delivered_at"], name="delivery_source_at")]

    def __str__(self) -> str:
        return f"{self.litres:.0f} L into {self.source} at {self.delivered_at:%Y-%m-%d}"


class Fueling(models.Model):
    unit = models.ForeignKey(Unit, on_delete=models.CASCADE, related_name="fuelings")
    source = models.ForeignKey(
        FuelSource, on_delete=models.PROTECT, related_name="fuelings", null=True, blank=True
    )
    fueled_at = models.DateTimeField()
    litres = models.FloatField(
        validators=[MinValueValidator(0.1), MaxValueValidator(MAX_FUELING_LITRES)]
    )

    class Meta:
        ordering = ["unit", "-fueled_at"]
        indexes = [models.Index(fields=["unit", "fueled_at"], name="fueling_unit_at")]

    def __str__(self) -> str:
        return f"{self.litres:.0f} L into {self.unit.fleet_number} at {self.fueled_at:%Y-%m-%d}"

    def clean(self) -> None:
        """The same plausibility rule as the entry pages, the import and the feed."""
        if self.unit_id is None or self.litres is None:
            return
        refusal = checks.fueling_refusal_for(unit=self.unit, litres=self.litres)
        if refusal:
            raise ValidationError({"litres": refusal})


ISO_MARKS = [
    ("", "none"),
    (FEW_COUNTED, "fewer than 20 particles counted"),
    (ABOVE_TABLE, "above ISO 4406 Table 1"),
]


class FuelSample(models.Model):
    """A fuel-quality result, taken from a source or from a unit's own tank."""

    reference = models.CharField("lab reference", max_length=40, unique=True)
    source = models.ForeignKey(
        FuelSource, on_delete=models.PROTECT, related_name="samples", null=True, blank=True
    )
    unit = models.ForeignKey(
        Unit, on_delete=models.CASCADE, related_name="samples", null=True, blank=True
    )
    sampled_at = models.DateTimeField()
    iso4406 = models.CharField(
        "ISO 4406 code", max_length=20, blank=True, help_text="e.g. 18/16/13 or -/16/13"
    )
    code_4 = models.PositiveSmallIntegerField(null=True, blank=True, editable=False)
    code_6 = models.PositiveSmallIntegerField(null=True, blank=True, editable=False)
    code_14 = models.PositiveSmallIntegerField(null=True, blank=True, editable=False)
    # ISO 4406 marks per channel, as the lab wrote them: "≥" fewer than 20 particles counted
    # (ISO 4406:2021), ">" above Table 1 (">28"), blank for none.
    mark_4 = models.CharField(max_length=1, blank=True, editable=False, choices=ISO_MARKS)
    mark_6 = models.CharField(max_length=1, blank=True, editable=False, choices=ISO_MARKS)
    mark_14 = models.CharField(max_length=1, blank=True, editable=False, choices=ISO_MARKS)
    count_4_per_ml = models.FloatField(
        "particles ≥4 µm(c) per mL", null=True, blank=True, validators=[MinValueValidator(0)]
    )
    count_6_per_ml = models.FloatField(
        "particles ≥6 µm(c) per mL", null=True, blank=True, validators=[MinValueValidator(0)]
    )
    count_14_per_ml = models.FloatField(
        "particles ≥14 µm(c) per mL", null=True, blank=True, validators=[MinValueValidator(0)]
    )
    water_mg_kg = models.FloatField(
        "water (mg/kg)", null=True, blank=True, validators=[MinValueValidator(0)]
    )
    fame_pct_v = models.FloatField(
        "FAME (% V/V)",
        null=True,
        blank=True,
        validators=[MinValueValidator(0), MaxValueValidator(100)],
    )
    temperature_c = models.FloatField(
        "temperature (°C)",
        null=True,
        blank=True,
        validators=[
            MinValueValidator(FUEL_TEMPERATURE_RANGE_C[0]),
            MaxValueValidator(FUEL_TEMPERATURE_RANGE_C[1]),
        ],
    )
    lab_method = models.CharField(
        max_length=80, blank=True, help_text="e.g. ISO 11171 APC; EN ISO 12937 (Karl Fischer)"
    )
    delivery = models.ForeignKey(
        Delivery,
        on_delete=models.PROTECT,
        related_name="samples",
        null=True,
        blank=True,
        help_text="The delivery this sample was taken from, if any.",
    )
    total_contamination_mg_kg = models.FloatField(
        "total contamination (mg/kg)",
        null=True,
        blank=True,
        validators=[MinValueValidator(0)],
        help_text="EN 12662 or ASTM D6217.",
    )
    appearance = models.CharField(
        max_length=40, blank=True, help_text="ASTM D4176 rating, e.g. clear and bright; haze 2"
    )
    microbial = models.CharField(
        "microbial result", max_length=80, blank=True, help_text="e.g. ASTM D7687, as reported"
    )
    lab = models.CharField("laboratory", max_length=100, blank=True)
    report_ref = models.CharField("lab report reference", max_length=60, blank=True)

    class Meta:
        ordering = ["-sampled_at"]
        constraints = [
            models.CheckConstraint(
                condition=(Q(source__isnull=False) & Q(unit__isnull=True))
                | (Q(source__isnull=True) & Q(unit__isnull=False)),
                name="sample_from_source_or_unit",
                violation_error_message="A sample comes from either a fuel source or a unit.",
            ),
        ]
        indexes = [
            models.Index(fields=["source", "sampled_at"], name="sample_source_at"),
            models.Index(fields=["unit", "sampled_at"], name="sample_unit_at"),
        ]

    def __str__(self) -> str:
        return f"{self.reference} ({self.iso4406 or 'counts'})"

    def clean(self) -> None:
        counts = (self.count_4_per_ml, self.count_6_per_ml, self.count_14_per_ml)
        has_counts = self.count_6_per_ml is not None and self.count_14_per_ml is not None
        marks = ("", "", "")
        if self.iso4406.strip():
            try:
                codes, marks = parse_iso4406_marked(self.iso4406)
            except ValueError as exc:
                raise ValidationError({"iso4406": str(exc)}) from exc
            self.iso4406 = format_iso4406(codes, marks)  # ">=" written as "≥"
        elif has_counts:
            try:
                codes, marks = codes_marked_from_counts(per_ml=counts)  # type: ignore[arg-type]
            except ValueError as exc:
                raise ValidationError({"count_4_per_ml": str(exc)}) from exc
            self.iso4406 = format_iso4406(codes, marks)
        else:
            codes = None
        if codes is None and self.water_mg_kg is None:
            raise ValidationError("Give an ISO 4406 code, particle counts or a water content.")
        self.code_4, self.code_6, self.code_14 = codes if codes else (None, None, None)
        self.mark_4, self.mark_6, self.mark_14 = marks


class EngineEvent(models.Model):
    """A fault or event reported by the engine controller (SAE J1939 SPN + FMI)."""

    class Kind(models.TextChoices):
        RELIEF_VALVE_OPENED = "relief_valve_opened", "Rail relief valve opened"
        WATER_IN_FUEL = "water_in_fuel", "Water in fuel"
        FILTER_DP_HIGH = "filter_dp_high", "Filter differential pressure high"
        SUPPLY_PRESSURE_LOW = "supply_pressure_low", "Fuel supply pressure low"
        PUMPING_IMBALANCE = "pumping_imbalance", "High-pressure pumping imbalance"
        OTHER = "other", "Other"

    unit = models.ForeignKey(Unit, on_delete=models.CASCADE, related_name="engine_events")
    occurred_at = models.DateTimeField()
    hours = models.FloatField(null=True, blank=True)
    spn = models.PositiveIntegerField(
        "SPN", validators=[MaxValueValidator(524_287)], help_text="SAE J1939 suspect parameter"
    )
    fmi = models.PositiveSmallIntegerField(
        "FMI", validators=[MaxValueValidator(31)], help_text="SAE J1939 failure mode identifier"
    )
    occurrences = models.PositiveIntegerField(default=1, validators=[MinValueValidator(1)])
    kind = models.CharField(max_length=30, choices=Kind.choices, default=Kind.OTHER)

    class Meta:
        ordering = ["unit", "-occurred_at"]
        indexes = [models.Index(fields=["unit", "occurred_at"], name="event_unit_at")]

    def __str__(self) -> str:
        return (
            f"{self.unit.fleet_number} SPN {self.spn} FMI {self.fmi} at {self.occurred_at:%Y-%m-%d}"
        )


class FilterPressureReading(models.Model):
    """Differential pressure across a filter (bar), from a gauge at service or telematics."""

    component = models.ForeignKey(
        Component, on_delete=models.CASCADE, related_name="pressure_readings"
    )
    taken_at = models.DateTimeField()
    hours = models.FloatField("hour meter", validators=[MinValueValidator(0)])
    dp_bar = models.FloatField("differential pressure (bar)", validators=[MinValueValidator(0)])
    # Conditions at the reading, where known: dP scales with flow and with viscosity (cold fuel
    # reads higher), so a rise is read against them.
    flow_l_per_h = models.FloatField(
        "fuel flow (L/h)", null=True, blank=True, validators=[MinValueValidator(0)]
    )
    load_pct = models.FloatField(
        "engine load (%)",
        null=True,
        blank=True,
        validators=[MinValueValidator(0), MaxValueValidator(100)],
    )
    fuel_temperature_c = models.FloatField(
        "fuel temperature (°C)",
        null=True,
        blank=True,
        validators=[
            MinValueValidator(FUEL_TEMPERATURE_RANGE_C[0]),
            MaxValueValidator(FUEL_TEMPERATURE_RANGE_C[1]),
        ],
    )

    class Meta:
        ordering = ["component", "taken_at"]
        indexes = [models.Index(fields=["component", "taken_at"], name="dp_component_at")]

    def __str__(self) -> str:
        return f"{self.component} {self.dp_bar:.2f} bar at {self.taken_at:%Y-%m-%d}"

    def clean(self) -> None:
        if self.component_id and self.component.kind not in FILTER_KINDS:
            raise ValidationError({"component": "Differential pressure is read across a filter."})
