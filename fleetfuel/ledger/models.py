"""The service history: what was done to which unit, append-only and hash-chained per unit.

Rows are never updated or deleted through the app (see ServiceEvent.save/delete and the
admin); a correction is a new event that points at the one it corrects.
"""

from __future__ import annotations

from django.conf import settings
from django.db import models
from django.db.models import Q

from fleetfuel.fleet.models import ComponentKind


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
    # On a correction: the kind of entry the corrected entry really was (its own ``kind`` is
    # "correction"). Empty on every other entry and on corrections recorded before it existed.
    corrected_kind = models.CharField(max_length=30, choices=Kind.choices, blank=True)

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
            models.CheckConstraint(
                condition=Q(corrected_kind="")
                | (Q(kind="correction") & ~Q(corrected_kind="correction")),
                name="ledger_corrected_kind_on_corrections_only",
            ),
        ]
        indexes = [
            models.Index(fields=["unit", "performed_at"], name="ledger_unit_at"),
            # The history page reads newest first by (performed_at, id), a keyset.
            models.Index(fields=["performed_at", "id"], name="ledger_at_id"),
            # The corrections alone (a few rows of the ledger): which entries were corrected is
            # read from here, not from the whole table (ledger/effective.py).
            models.Index(
                fields=["corrects"], condition=Q(corrects__isnull=False), name="ledger_corrections"
            ),
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

    @property
    def shown_kind_label(self) -> str:
        """The label of the kind the entry stands for: a correction's is the kind it restates
        (``effective_kind`` where the row was read with it, see effective.py)."""
        kind = getattr(self, "effective_kind", None) or self.corrected_kind or self.kind
        return str(self.Kind(kind).label) if kind in self.Kind.values else kind

    @property
    def component_kind_label(self) -> str:
        if self.component_kind in ComponentKind.values:
            return str(ComponentKind(self.component_kind).label)
        return self.component_kind


class ChainCheckpoint(models.Model):
    """A signed note of one unit's chain head at a moment (written by a beat task).

    A rewrite of a whole chain inside the database recomputes consistently, so the chain alone
    would not show it; the checkpoint, signed with a key the database does not hold
    (HMAC-SHA256 keyed with LEDGER_SIGNING_KEY, named by ``key_id``), still names the old head,
    and verify_ledger compares. Append-only: PostgreSQL refuses UPDATE, DELETE and TRUNCATE.
    """

    unit = models.ForeignKey("fleet.Unit", on_delete=models.PROTECT, related_name="checkpoints")
    seq = models.PositiveIntegerField()
    head_hash = models.CharField(max_length=64)
    recorded_at = models.DateTimeField()
    key_id = models.CharField(max_length=16, blank=True, help_text="empty: signed with SECRET_KEY")
    signature = models.CharField(max_length=64)

    class Meta:
        ordering = ["unit", "-seq"]
        constraints = [
            models.UniqueConstraint(fields=["unit", "seq"], name="checkpoint_one_per_unit_seq"),
        ]

    def __str__(self) -> str:
        return f"{self.unit_id}#{self.seq} {self.head_hash[:12]}"


class VerificationMark(models.Model):
    """What a full verification that found nothing wrong saw, signed like a checkpoint.

    The next verification compares: fewer entries in the history, fewer checkpoints, or an
    older latest checkpoint than a mark recorded means rows were removed behind the app's back.
    Append-only like the checkpoints.
    """

    verified_at = models.DateTimeField()
    events = models.PositiveBigIntegerField()
    checkpoints = models.PositiveBigIntegerField()
    latest_checkpoint_at = models.DateTimeField(null=True, blank=True)
    # Each unit's latest checkpoint then: {"<unit id>": [checkpoint id, seq]}.
    heads = models.JSONField(default=dict)
    key_id = models.CharField(max_length=16)
    signature = models.CharField(max_length=64)

    class Meta:
        ordering = ["-verified_at", "-id"]

    def __str__(self) -> str:
        return f"verified {self.verified_at:%Y-%m-%d %H:%M}: {self.events} entries"


class ExportLog(models.Model):
    """One export of the service history: who, when, what, and the digest of the data file.

    Created when the export starts; ``row_count``, ``sha256`` and ``finished_at`` are filled
    when the data file is complete (for a streamed CSV, when the last byte has been sent).
    ``manifest`` holds what is known at the start (filters, units, chain heads, due items).
    """

    class Format(models.TextChoices):
        CSV = "csv", "CSV"
        XLSX = "xlsx", "Excel (XLSX)"
        PRINT = "print", "Printable record (HTML)"

    class Via(models.TextChoices):
        WEB = "web", "Web"
        COMMAND = "command", "Command line"

    requested_by = models.ForeignKey(
        settings.AUTH_USER_MODEL,
        on_delete=models.PROTECT,
        null=True,
        blank=True,
        related_name="ledger_exports",
    )
    requested_at = models.DateTimeField()
    via = models.CharField(max_length=10, choices=Via.choices)
    format = models.CharField(max_length=10, choices=Format.choices)
    filters = models.JSONField(default=dict)
    file_name = models.CharField(max_length=200)
    manifest = models.JSONField(default=dict)
    # The sites of the units it covered: a person sees an export only when all of them are
    # among the sites they may see.
    sites = models.ManyToManyField("fleet.Site", blank=True, related_name="+")
    row_count = models.PositiveIntegerField(null=True, blank=True)
    sha256 = models.CharField("data file SHA-256", max_length=64, blank=True)
    finished_at = models.DateTimeField(null=True, blank=True)

    class Meta:
        ordering = ["-requested_at", "-id"]
        indexes = [
            models.Index(fields=["requested_by", "-requested_at"], name="export_by_user"),
        ]

    def __str__(self) -> str:
        return f"Export {self.pk} ({self.format})"

    @property
    def finished(self) -> bool:
        return self.finished_at is not None
