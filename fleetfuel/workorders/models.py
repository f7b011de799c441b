"""Work orders: a unit, a mechanic, a due date and the tasks to do on it."""

from __future__ import annotations

from django.conf import settings
from django.db import models
from django.db.models import Q

from .kinds import Kind


class WorkOrder(models.Model):
    class Status(models.TextChoices):
        OPEN = "open", "Open"
        CLOSED = "closed", "Closed"
        CANCELLED = "cancelled", "Cancelled"

    class Priority(models.IntegerChoices):
        URGENT = 1, "Urgent"
        HIGH = 2, "High"
        NORMAL = 3, "Normal"

    number = models.CharField(max_length=20, unique=True)
    unit = models.ForeignKey("fleet.Unit", on_delete=models.PROTECT, related_name="work_orders")
    status = models.CharField(max_length=12, choices=Status.choices, default=Status.OPEN)
    priority = models.PositiveSmallIntegerField(choices=Priority.choices, default=Priority.NORMAL)
    due_on = models.DateField()
    assigned_to = models.ForeignKey(
        settings.AUTH_USER_MODEL,
        on_delete=models.PROTECT,
        null=True,
        blank=True,
        related_name="assigned_work_orders",
    )
    created_by = models.ForeignKey(
        settings.AUTH_USER_MODEL, on_delete=models.PROTECT, related_name="created_work_orders"
    )
    created_at = models.DateTimeField()
    hour_meter = models.FloatField("hour meter at the job", null=True, blank=True)
    meter_replaced = models.BooleanField("hour meter was replaced at this job", default=False)
    meter_old_final = models.FloatField(
        "old meter's final reading", null=True, blank=True, help_text="When the meter was replaced."
    )
    meter_new_start = models.FloatField(
        "new meter's reading when fitted",
        null=True,
        blank=True,
        help_text="When the meter was replaced.",
    )
    job_saved_at = models.DateTimeField(
        "job fields last saved",
        null=True,
        blank=True,
        help_text="Draft of the hour meter and notes.",
    )
    notes = models.TextField(blank=True)
    closed_at = models.DateTimeField(null=True, blank=True)
    closed_by = models.ForeignKey(
        settings.AUTH_USER_MODEL,
        on_delete=models.PROTECT,
        null=True,
        blank=True,
        related_name="closed_work_orders",
    )
    close_token = models.CharField(max_length=64, null=True, blank=True, unique=True)
    override_reason = models.TextField(blank=True)
    override_by = models.ForeignKey(
        settings.AUTH_USER_MODEL,
        on_delete=models.PROTECT,
        null=True,
        blank=True,
        related_name="overridden_work_orders",
    )
    follow_up_of = models.ForeignKey(
        "self",
        on_delete=models.SET_NULL,
        null=True,
        blank=True,
        related_name="follow_ups",
        help_text="The work order whose out-of-limit measurement created this one.",
    )

    class Meta:
        ordering = ["priority", "due_on", "number"]
        constraints = [
            models.CheckConstraint(
                condition=Q(status="closed", closed_at__isnull=False, closed_by__isnull=False)
                | ~Q(status="closed"),
                name="workorder_closed_has_who_and_when",
            ),
        ]
        indexes = [
            models.Index(fields=["status", "due_on"], name="wo_status_due"),
            models.Index(fields=["assigned_to", "status"], name="wo_assignee_status"),
        ]

    def __str__(self) -> str:
        return self.number


class WorkOrderTask(models.Model):
    """One thing to do in a work order. ``entry`` holds what the mechanic entered (a draft
    saved as they go), which becomes service events when the work order closes. What each
    kind asks and records is in the registry (kinds.py)."""

    Kind = Kind

    work_order = models.ForeignKey(WorkOrder, on_delete=models.CASCADE, related_name="tasks")
    kind = models.CharField(max_length=30, choices=Kind.choices)
    component = models.ForeignKey(
        "fleet.Component", on_delete=models.PROTECT, null=True, blank=True, related_name="+"
    )
    cylinder = models.PositiveSmallIntegerField(null=True, blank=True)
    description = models.CharField(max_length=200)
    due_item = models.ForeignKey(
        "planning.DueItem",
        on_delete=models.SET_NULL,
        null=True,
        blank=True,
        related_name="work_order_tasks",
    )
    entry = models.JSONField(default=dict, blank=True)
    done = models.BooleanField(default=False)
    draft_saved_at = models.DateTimeField(null=True, blank=True)
    # A task that could not be done at this job (part not in stock, unit needed back, the due
    # item did not apply): it needs no fields, writes no service event at close and its due
    # item stays due. Cleared again by "undo" while the work order is open.
    not_done_reason = models.TextField("why it was not done", blank=True)
    not_done_by = models.ForeignKey(
        settings.AUTH_USER_MODEL,
        on_delete=models.PROTECT,
        null=True,
        blank=True,
        related_name="+",
    )
    not_done_at = models.DateTimeField("marked not done at", null=True, blank=True)

    class Meta:
        ordering = ["work_order", "id"]
        constraints = [
            models.CheckConstraint(
                condition=Q(not_done_at__isnull=True, not_done_by__isnull=True, not_done_reason="")
                | (
                    Q(not_done_at__isnull=False, not_done_by__isnull=False, done=False)
                    & ~Q(not_done_reason="")
                ),
                name="wotask_not_done_has_reason_who_when",
            ),
        ]

    def __str__(self) -> str:
        return f"{self.work_order.number}: {self.description}"

    @property
    def is_not_done(self) -> bool:
        return self.not_done_at is not None

    @property
    def bound_component_id(self) -> int | None:
        """The part a task made from a due item works on: that item's, and no other (a
        different part is a different task). None for a task added on the page."""
        return self.due_item.component_id if self.due_item is not None else None
