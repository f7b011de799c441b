"""The engine's latest word on each unit: due items, unit flags and the usage forecast.

Rows here are derived: a recompute replaces them (same inputs, same rows), so they are never
the record of anything done. The record is the ledger.
"""

from __future__ import annotations

from datetime import datetime

from django.db import models
from django.db.models import Q

from services.common import UsageForecast

# Decisions at a fuel source live in their own module; imported so Django registers them.
from .source_models import SourceDecision, SourceDecisionUnit  # noqa: F401

# After a sort index's unique id: a page's depots and status are filtered in the index.
COVER = ["site", "status"]


class DueItem(models.Model):
    class Task(models.TextChoices):
        PRIMARY_FILTER = "primary_filter", "Change primary filter / separator element"
        FINE_FILTER = "fine_filter", "Change pressure-side (fine) filter"
        SEPARATOR_DRAIN = "separator_drain", "Drain water separator"

    class Status(models.TextChoices):
        # Stored as text; ``rank`` orders by urgency for sorting and counting.
        OVERDUE = "overdue", "Overdue"
        # Only the dirt estimate has run out: read the filter's dP or indicator before a change.
        CHECK = "check", "Check dP first"
        DUE = "due", "Due"
        SOON = "soon", "Soon"
        OK = "ok", "OK"

    unit = models.ForeignKey("fleet.Unit", on_delete=models.CASCADE, related_name="due_items")
    # The unit's site, copied at projection time so the due list filters and sorts on one
    # table's index (a unit that moves site gets its items moved by the next recompute).
    site = models.ForeignKey("fleet.Site", on_delete=models.CASCADE, related_name="+")
    component = models.ForeignKey(
        "fleet.Component", on_delete=models.CASCADE, related_name="due_items"
    )
    task = models.CharField(max_length=30, choices=Task.choices)
    status = models.CharField(max_length=10, choices=Status.choices)
    rank = models.PositiveSmallIntegerField(help_text="0 overdue, 1 check, 2 due, 3 soon, 4 ok")
    # What to do first (services.urgency): the due list orders by urgency, late_from,
    # -late_hours, id on one index, so paging stays in the database.
    urgency = models.PositiveSmallIntegerField(
        default=7, help_text="services.urgency.Tier: 0 water-in-fuel alarm ... 7 ok"
    )
    late_hours = models.FloatField(
        default=0.0, help_text="Engine hours past the due point at the projection (<0: ahead)."
    )
    late_from = models.DateField(
        null=True, help_text="The due date, or the day an exhausted estimate ran out."
    )
    basis = models.CharField(max_length=40)
    due_hours = models.FloatField(null=True, blank=True)
    hours_left = models.FloatField(
        default=0.0,
        help_text="Engine hours from the projection to the due point (calendar items: at the "
        "forecast rate).",
    )
    due_on = models.DateField()
    earliest_on = models.DateField()
    latest_on = models.DateField()
    # The unit's fleet number at the projection, for the list's sorts only (shown: the
    # unit's own, read live). A unit saved is recomputed (signals.py), so it follows a rename.
    sort_fleet_number = models.CharField(max_length=30, default="", editable=False)
    explanation = models.JSONField(default=list)
    inputs = models.JSONField(default=dict)
    computed_at = models.DateTimeField()
    # Copied from StaleProjection when the unit is marked, so the due list shows it from its
    # one table; every recompute writes the row fresh (False).
    projection_stale = models.BooleanField(
        default=False, help_text="A recompute of this unit is owed (its inputs changed since)."
    )
    # Set by the source decisions' recompute: the open decision on the fuel source whose
    # out-of-range fuel reached the unit, when the dirt estimate is all that puts this item on
    # the list (the due list shows it under that decision rather than as a row of its own).
    source_decision = models.ForeignKey(
        SourceDecision, on_delete=models.SET_NULL, related_name="items", null=True, blank=True
    )

    class Meta:
        ordering = ["due_on", "unit_id", "task"]
        constraints = [
            models.UniqueConstraint(
                fields=["component", "task"], name="dueitem_one_per_component_task"
            ),
        ]
        indexes = [
            models.Index(fields=["site", "due_on", "id"], name="dueitem_site_due"),
            models.Index(fields=["site", "status", "due_on", "id"], name="dueitem_site_status_due"),
            models.Index(fields=["unit", "due_on"], name="dueitem_unit_due"),
            # The "date", "unit", "task" and "status" sorts, read in order from an index of the
            # due items alone, its depots and status filtered there (10,000 units: first page
            # 30-45 -> ~1 ms, a middle page 40-180 -> a few ms; sorting by the unit's own
            # column sorted every row, and without the depot in the index PostgreSQL read the
            # whole table to filter it).
            models.Index(fields=["due_on", "id", *COVER], name="dueitem_date_sort"),
            models.Index(
                fields=["sort_fleet_number", "due_on", "task", "id", *COVER],
                name="dueitem_unit_sort",
            ),
            models.Index(
                fields=["task", "due_on", "sort_fleet_number", "id", *COVER],
                name="dueitem_task_sort",
            ),
            models.Index(
                fields=["rank", "due_on", "sort_fleet_number", "id", *COVER],
                name="dueitem_status_sort",
            ),
            models.Index(
                # Depot and status after the unique id: the order is the same, and a page's
                # ids are read from the index alone, its depots and status filtered there.
                fields=["urgency", "late_from", "-late_hours", "id", "site", "status"],
                name="dueitem_urgency",
            ),
            models.Index(
                fields=["site", "urgency", "late_from", "-late_hours", "id"],
                name="dueitem_site_urgency",
            ),
        ]

    def __str__(self) -> str:
        return f"{self.unit_id} {self.task} due {self.due_on}"


class UnitFlag(models.Model):
    """Something odd the engine saw in a unit's engine events, with the checks to make."""

    unit = models.ForeignKey("fleet.Unit", on_delete=models.CASCADE, related_name="flags")
    code = models.CharField(max_length=40)
    title = models.CharField(max_length=120)
    reason = models.TextField()
    checks = models.JSONField(default=list)
    since = models.DateTimeField()
    high_pressure = models.BooleanField(default=False)
    computed_at = models.DateTimeField()

    class Meta:
        ordering = ["unit", "code"]
        constraints = [
            models.UniqueConstraint(fields=["unit", "code"], name="flag_one_per_unit_code"),
        ]

    def __str__(self) -> str:
        return f"{self.unit_id}: {self.title}"


class UnitForecast(models.Model):
    """The usage forecast a unit's latest projection was made from (one a unit), kept so the
    unit page shows the one its due dates came from, as of that projection, without
    rebuilding it (the unit page read it anew on every view: 15-20 ms of a 36 ms page)."""

    unit = models.OneToOneField(
        "fleet.Unit", on_delete=models.CASCADE, related_name="usage_forecast"
    )
    as_of = models.DateTimeField()
    current_hours = models.FloatField(help_text="Engine hours at as_of.")
    rate = models.FloatField(help_text="Engine hours per calendar day.")
    rate_low = models.FloatField()
    rate_high = models.FloatField()
    basis = models.CharField(max_length=20)
    note = models.TextField()
    last_reading_at = models.DateTimeField(null=True, blank=True)
    carried_to = models.DateTimeField(null=True, blank=True)
    # A large drop in the readings with no meter replacement recorded (the three together).
    meter_drop_at = models.DateTimeField(null=True, blank=True)
    meter_drop_engine_hours = models.FloatField(null=True, blank=True)
    meter_drop_read = models.FloatField(null=True, blank=True)
    computed_at = models.DateTimeField()

    # The fields UsageForecast and this row share by name; its probable_meter_change is the
    # three meter_drop_ columns.
    SHARED = [
        "as_of", "current_hours", "rate", "rate_low", "rate_high", "basis", "note",
        "last_reading_at", "carried_to",
    ]  # fmt: skip
    FIELDS = [*SHARED, "meter_drop_at", "meter_drop_engine_hours", "meter_drop_read", "computed_at"]

    @classmethod
    def of(cls, *, unit_id: int, forecast: UsageForecast, computed_at: datetime) -> UnitForecast:
        drop = forecast.probable_meter_change or (None, None, None)
        return cls(
            unit_id=unit_id,
            **{name: getattr(forecast, name) for name in cls.SHARED},
            meter_drop_at=drop[0],
            meter_drop_engine_hours=drop[1],
            meter_drop_read=drop[2],
            computed_at=computed_at,
        )

    def usage(self) -> UsageForecast:
        """The forecast as services/ takes it, as it was made."""
        drop = (self.meter_drop_at, self.meter_drop_engine_hours, self.meter_drop_read)
        return UsageForecast(
            **{name: getattr(self, name) for name in self.SHARED},
            probable_meter_change=drop if drop[0] is not None else None,  # type: ignore[arg-type]
        )

    def __str__(self) -> str:
        return f"unit {self.unit_id}: {self.rate:.1f} h/day as of {self.as_of}"


class ProjectionRun(models.Model):
    """A record of a full recompute (nightly or by command), for the manager's confidence."""

    started_at = models.DateTimeField()
    finished_at = models.DateTimeField(null=True, blank=True)
    units = models.PositiveIntegerField(default=0)
    items = models.PositiveIntegerField(default=0)
    trigger = models.CharField(max_length=20, default="nightly")
    updated_at = models.DateTimeField(null=True, blank=True)  # the latest batch done
    # Each unit class's filter life budgets, "class id:filter kind" -> the budget's figures:
    # worked out once at the start from the whole class's changes, read by every batch.
    lives = models.JSONField(default=dict, blank=True)

    class Meta:
        ordering = ["-started_at"]
        constraints = [
            models.CheckConstraint(
                condition=Q(finished_at__isnull=True) | Q(finished_at__gte=models.F("started_at")),
                name="run_finishes_after_start",
            )
        ]


class ProjectionBatch(models.Model):
    """One batch of a full run: its units, queued as a task that any worker may take.

    A batch is marked done once, by a conditional update under the run's row lock, so a
    redelivered batch (a worker killed before it acknowledged) neither counts twice nor
    finishes the run early; a batch lost with its worker is queued again by the stale sweep.
    """

    run = models.ForeignKey(ProjectionRun, on_delete=models.CASCADE, related_name="batches")
    number = models.PositiveIntegerField()
    unit_ids = models.JSONField(default=list)
    done_at = models.DateTimeField(null=True, blank=True)
    units = models.PositiveIntegerField(default=0)
    items = models.PositiveIntegerField(default=0)

    class Meta:
        ordering = ["run", "number"]
        constraints = [
            models.UniqueConstraint(fields=["run", "number"], name="batch_one_number_per_run"),
        ]

    def __str__(self) -> str:
        return f"run {self.run_id} batch {self.number}"


class StaleProjection(models.Model):
    """A unit whose inputs changed but whose recompute could not be queued (broker down).

    The write that changed them stands; the periodic sweep recomputes these units, and a
    recompute that read the unit's inputs after the mark was made removes it.
    """

    unit = models.OneToOneField(
        "fleet.Unit", on_delete=models.CASCADE, primary_key=True, related_name="+"
    )
    marked_at = models.DateTimeField()
    reason = models.TextField(blank=True)

    class Meta:
        ordering = ["marked_at"]

    def __str__(self) -> str:
        return f"unit {self.unit_id} projection stale since {self.marked_at}"


class WorkListDispatch(models.Model):
    """One emailed work list: a manager, a site, a local day, scheduled or by hand (and, by
    hand, each resend the manager confirmed). Claimed before sending, so a rerun of the hourly
    tick, two workers, or two presses of "send now" never send the same list twice."""

    class Status(models.TextChoices):
        PENDING = "pending", "Waiting to send"
        SENDING = "sending", "Sending"
        RETRYING = "retrying", "Failed, will retry"
        SENT = "sent", "Sent"
        FAILED = "failed", "Failed after retries"

    user = models.ForeignKey("auth.User", on_delete=models.CASCADE, related_name="work_lists")
    site = models.ForeignKey("fleet.Site", on_delete=models.CASCADE, related_name="work_lists")
    local_date = models.DateField()
    manual = models.BooleanField(default=False, help_text="Sent with the 'send now' button.")
    resend = models.PositiveSmallIntegerField(
        default=0,
        help_text="0: the day's list; 1, 2, ...: sent again by hand, each time confirmed.",
    )
    status = models.CharField(max_length=10, choices=Status.choices, default=Status.PENDING)
    attempts = models.PositiveSmallIntegerField(default=0)
    last_error = models.TextField(blank=True)
    items = models.PositiveIntegerField(default=0)
    created_at = models.DateTimeField(auto_now_add=True)
    sent_at = models.DateTimeField(null=True, blank=True)

    class Meta:
        ordering = ["-created_at"]
        constraints = [
            # One scheduled and one by-hand list a day: a second press asks before sending
            # again, and each confirmed resend is a row of its own, sent once.
            models.UniqueConstraint(
                fields=["user", "site", "local_date", "manual", "resend"],
                name="worklist_once_per_user_site_day_kind_resend",
            ),
        ]

    def __str__(self) -> str:
        return f"work list {self.site_id} {self.local_date} for {self.user_id}: {self.status}"
