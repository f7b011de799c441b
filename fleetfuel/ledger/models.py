"""The service history: what was done to which unit, append-only and hash-chained per unit.

Rows are never updated or deleted through the app (see ServiceEvent.save/delete and the
admin); a correction is a new event that points at the one it corrects.
"""

from __future__ import annotations

from django.conf import settings
from django.db import models
from django.db.models import Q


class LedgerImmutableError(Exception):
    """Raised on any attempt to change or remove a recorded service event."""


class ServiceEvent(models.Model):
    class Kind(models.TextChoices):
        FILTER_CHANGED = "filter_changed", "Filter changed"
        SEPARATOR_DRAINED = "separator_drained", "Water separator drained"
        INJECTOR_REPLACED = "injector_replaced", "Injector replaced"
        CONNECTOR_REPLACED = "connector_replaced", "High-pressure connector replaced"
        RELIEF_VALVE_REPLACED = "relief_valve_replaced", "Rail relief valve replaced"
        PART_REPLACED = "part_replaced", "Other fuel-system part replaced"
        MEASUREMENT = "measurement", "Measurement taken"
        INSPECTION = "inspection", "Inspection"
        METER_REPLACED = "meter_replaced", "Hour meter replaced"
        RULE_OVERRIDE = "rule_override", "Service rule overridden"
        CORRECTION = "correction", "Correction of an earlier entry"

    class Appearance(models.TextChoices):
        CLEAR = "clear", "Clear"
        CLOUDY = "cloudy", "Cloudy"
        EMULSION = "emulsion", "Emulsion"
        PARTICULATE = "particulate", "Particulate"

    unit = models.ForeignKey("fleet.Unit", on_delete=models.PROTECT, related_name="service_events")
    component = models.ForeignKey(
        "fleet.Component",
        on_delete=models.PROTECT,
        null=True,
        blank=True,
        related_name="service_events",
    )
    component_kind = models.CharField(max_length=30, blank=True)
    kind = models.CharField(max_length=30, choices=Kind.choices)
    performed_at = models.DateTimeField()
    hour_meter = models.FloatField(null=True, blank=True)
    cylinder = models.PositiveSmallIntegerField(null=True, blank=True)
    part_number = models.CharField(max_length=60, blank=True)
    old_serial = models.CharField(max_length=60, blank=True)
    new_serial = models.CharField(max_length=60, blank=True)
    water_ml = models.FloatField("water drained (mL)", null=True, blank=True)
    water_appearance = models.CharField(max_length=20, choices=Appearance.choices, blank=True)
    measurement_name = models.CharField(max_length=80, blank=True)
    value = models.FloatField(null=True, blank=True)
    low_limit = models.FloatField(null=True, blank=True)
    high_limit = models.FloatField(null=True, blank=True)
    passed = models.BooleanField(null=True, blank=True)
    dp_before_bar = models.FloatField(null=True, blank=True)
    parts_used = models.TextField(blank=True)
    notes = models.TextField(blank=True)
    work_order = models.ForeignKey(
        "workorders.WorkOrder",
        on_delete=models.PROTECT,
        null=True,
        blank=True,
        related_name="service_events",
    )
    recorded_by = models.ForeignKey(
        settings.AUTH_USER_MODEL, on_delete=models.PROTECT, related_name="service_events"
    )
    recorded_at = models.DateTimeField()
    corrects = models.ForeignKey(
        "self", on_delete=models.PROTECT, null=True, blank=True, related_name="corrections"
    )
    reason = models.TextField(blank=True, help_text="Why a correction or override was made.")

    # Hash chain per unit: seq 1, 2, 3... each sealing the previous entry's hash.
    seq = models.PositiveIntegerField()
    prev_hash = models.CharField(max_length=64)
    hash = models.CharField(max_length=64, unique=True)

    class Meta:
        ordering = ["unit", "seq"]
        constraints = [
            models.UniqueConstraint(fields=["unit", "seq"], name="ledger_seq_unique_per_unit"),
            models.CheckConstraint(
                condition=Q(kind="correction", corrects__isnull=False) | ~Q(kind="correction"),
                name="ledger_correction_names_its_event",
            ),
        ]
        indexes = [
            models.Index(fields=["unit", "performed_at"], name="ledger_unit_at"),
            models.Index(fields=["performed_at"], name="ledger_at"),
        ]

    def __str__(self) -> str:
        return f"{self.unit_id}#{self.seq} {self.get_kind_display()}"

    def save(self, *args: object, **kwargs: object) -> None:
        if not self._state.adding:
            raise LedgerImmutableError(
                "Service events cannot be changed; record a correction instead."
            )
        super().save(*args, **kwargs)  # type: ignore[arg-type]

    def delete(self, *args: object, **kwargs: object) -> tuple[int, dict[str, int]]:
        raise LedgerImmutableError("Service events cannot be deleted.")
