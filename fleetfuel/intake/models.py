"""What the intake app stores of its own: the telematics feed's tokens and what each item
of the feed created (so a replayed item creates nothing), and the spreadsheet import runs."""

from __future__ import annotations

from django.conf import settings
from django.core.files.storage import FileSystemStorage
from django.db import models

from fleetfuel.fleet.models import EngineEvent, MeterReading, Site


class FeedToken(models.Model):
    """A bearer token for one telematics feed at one site. Only a SHA-256 of the secret is
    kept: the secret is shown once, when the token is made, and never again."""

    name = models.CharField(max_length=60, help_text="Which feed uses it, e.g. the gateway's.")
    site = models.ForeignKey(Site, on_delete=models.PROTECT, related_name="feed_tokens")
    token_hash = models.CharField(max_length=64, unique=True, editable=False)
    created_by = models.ForeignKey(
        settings.AUTH_USER_MODEL,
        on_delete=models.SET_NULL,
        null=True,
        blank=True,
        related_name="+",
    )
    created_at = models.DateTimeField()
    revoked_at = models.DateTimeField(null=True, blank=True)
    last_used_at = models.DateTimeField(null=True, blank=True)

    class Meta:
        ordering = ["site__name", "name"]
        constraints = [
            models.UniqueConstraint(
                fields=["site", "name"],
                condition=models.Q(revoked_at__isnull=True),
                name="feed_token_live_name_unique_per_site",
                violation_error_message="This site already has a live feed token of that name.",
            )
        ]

    def __str__(self) -> str:
        return f"{self.name} ({self.site.code})"


class FeedReceipt(models.Model):
    """One accepted feed item: the token and the client's own id, and the row it created.
    A second item with the same id from the same token is a duplicate and creates nothing."""

    token = models.ForeignKey(FeedToken, on_delete=models.CASCADE, related_name="receipts")
    client_id = models.CharField(max_length=100)
    received_at = models.DateTimeField()
    reading = models.ForeignKey(
        MeterReading, on_delete=models.SET_NULL, null=True, blank=True, related_name="+"
    )
    event = models.ForeignKey(
        EngineEvent, on_delete=models.SET_NULL, null=True, blank=True, related_name="+"
    )

    class Meta:
        constraints = [
            models.UniqueConstraint(
                fields=["token", "client_id"], name="feed_receipt_id_unique_per_token"
            )
        ]

    def __str__(self) -> str:
        return f"{self.client_id} via {self.token_id}"


# Uploaded files and their rejects, where the web process and a worker on the same host (or
# sharing the volume) both reach them.
IMPORT_STORAGE = FileSystemStorage(location=settings.BASE_DIR / "var" / "imports")


def import_storage() -> FileSystemStorage:
    """The storage, named by a callable so migrations do not record this checkout's path."""
    return IMPORT_STORAGE


class ImportRun(models.Model):
    """One pass of one uploaded file: a dry run, or an apply (all-or-nothing or good rows
    only). An apply after a dry run is a new run of the same file."""

    class Mode(models.TextChoices):
        DRY_RUN = "dry_run", "Dry run"
        ALL_OR_NOTHING = "all_or_nothing", "Apply, all or nothing"
        GOOD_ROWS_ONLY = "good_rows_only", "Apply the good rows only"

    class Status(models.TextChoices):
        QUEUED = "queued", "Queued"
        RUNNING = "running", "Running"
        DONE = "done", "Done"

    created_by = models.ForeignKey(
        settings.AUTH_USER_MODEL, on_delete=models.PROTECT, related_name="import_runs"
    )
    created_at = models.DateTimeField()
    kind = models.CharField(max_length=30)
    mode = models.CharField(max_length=20, choices=Mode.choices)
    file = models.FileField(storage=import_storage, upload_to="uploads/", max_length=200)
    original_name = models.CharField(max_length=200)
    status = models.CharField(max_length=10, choices=Status.choices, default=Status.QUEUED)
    rows_done = models.PositiveIntegerField(default=0)
    result = models.JSONField(default=dict, blank=True)
    rejects = models.FileField(storage=import_storage, upload_to="rejects/", blank=True)

    class Meta:
        ordering = ["-created_at"]

    def __str__(self) -> str:
        return f"{self.original_name} ({self.get_mode_display()}, {self.get_status_display()})"
