"""Decisions at a fuel source: one per out-of-range sample, with the units it reached.

Opened and kept current by the projection run (``source_decisions.source_decisions_recompute``);
closed by a manager, who records what was done. The units reached are derived while the
decision is open and kept as they stood when it was closed.
"""

from __future__ import annotations

from django.conf import settings
from django.db import models
from django.db.models import Q

from services.source_quality import UNIT_LINE_PREFIX


class SourceDecision(models.Model):
    class Outcome(models.TextChoices):
        POLISHED = "polished", "Tank polished (fuel filtered, water drawn off)"
        QUARANTINED = "quarantined", "Tank quarantined (no fuel drawn until cleared)"
        RESAMPLED = "resampled", "Tank resampled"
        ACCEPTED = "accepted", "Accepted as is"
        SUPERSEDED = "superseded", "A later sample speaks for the tank"

    # What a manager may record (a later sample closes a decision by itself).
    MANAGER_OUTCOMES = (Outcome.POLISHED, Outcome.QUARANTINED, Outcome.RESAMPLED, Outcome.ACCEPTED)

    source = models.ForeignKey(
        "fleet.FuelSource", on_delete=models.CASCADE, related_name="decisions"
    )
    # The source's site, copied when computed (None for a source shared by sites).
    site = models.ForeignKey(
        "fleet.Site", on_delete=models.CASCADE, related_name="+", null=True, blank=True
    )
    sample = models.ForeignKey("fleet.FuelSample", on_delete=models.CASCADE, related_name="+")
    opened_at = models.DateTimeField()
    reach_from = models.DateTimeField(help_text="Fuel drawn from the source since then.")
    litres = models.FloatField(default=0.0, help_text="Litres fuelled from it since then.")
    explanation = models.JSONField(default=list)
    stands = models.BooleanField(default=True, help_text="The sample still stands for the tank.")
    particles_over = models.BooleanField(
        default=False,
        help_text="The sample is out of range on particles (not only on water): the units' "
        "filter items on the dirt estimate alone are shown under it.",
    )
    computed_at = models.DateTimeField()
    resolved_at = models.DateTimeField(null=True, blank=True)
    resolved_by = models.ForeignKey(
        settings.AUTH_USER_MODEL,
        on_delete=models.PROTECT,
        related_name="+",
        null=True,
        blank=True,
    )
    outcome = models.CharField(max_length=20, choices=Outcome.choices, blank=True)
    note = models.TextField(blank=True)
    new_sample_reference = models.CharField("new sample (lab reference)", max_length=40, blank=True)
    new_sample = models.ForeignKey(
        "fleet.FuelSample", on_delete=models.SET_NULL, related_name="+", null=True, blank=True
    )

    class Meta:
        ordering = ["-opened_at", "pk"]
        constraints = [
            models.UniqueConstraint(
                fields=["source", "sample"], name="sourcedecision_one_per_source_sample"
            ),
            models.CheckConstraint(
                condition=(Q(resolved_at__isnull=True) & Q(outcome=""))
                | (Q(resolved_at__isnull=False) & ~Q(outcome="")),
                name="sourcedecision_resolved_with_outcome",
            ),
        ]
        indexes = [models.Index(fields=["resolved_at", "site"], name="sourcedecision_open_site")]

    def __str__(self) -> str:
        return f"decision on {self.source_id} for sample {self.sample_id}"

    @property
    def is_open(self) -> bool:
        return self.resolved_at is None

    @property
    def headline(self) -> list[str]:
        """The explanation without its line per unit (for a card that lists the units)."""
        return [line for line in self.explanation if not line.startswith(UNIT_LINE_PREFIX)]


class SourceDecisionUnit(models.Model):
    """A unit the out-of-range fuel reached: the litres it took from the source since."""

    decision = models.ForeignKey(SourceDecision, on_delete=models.CASCADE, related_name="reached")
    unit = models.ForeignKey("fleet.Unit", on_delete=models.CASCADE, related_name="+")
    litres = models.FloatField()
    litres_burned = models.FloatField(
        null=True,
        blank=True,
        help_text="Litres of that fuel burned by the unit's last projection (its tank model); "
        "empty: not worked out.",
    )
    fuelings = models.PositiveIntegerField()
    first_at = models.DateTimeField()
    last_at = models.DateTimeField()

    class Meta:
        ordering = ["decision", "-litres", "unit_id"]
        constraints = [
            models.UniqueConstraint(
                fields=["decision", "unit"], name="sourcedecisionunit_one_per_unit"
            ),
        ]

    def __str__(self) -> str:
        return f"{self.unit_id}: {self.litres:.0f} L"
