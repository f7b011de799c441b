"""What the intake app keeps of its own: an import run (the browser's spreadsheet imports)."""

from __future__ import annotations

from django.conf import settings
from django.core.files.storage import FileSystemStorage
from django.db import models

# Uploaded files and their rejects, where the web process and a worker on the same host (or
# sharing the volume) both reach them.
IMPORT_STORAGE = FileSystemStorage(location=settings.BASE_DIR / "var" / "imports")


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
    file = models.FileField(storage=IMPORT_STORAGE, upload_to="uploads/", max_length=200)
    original_name = models.CharField(max_length=200)
    status = models.CharField(max_length=10, choices=Status.choices, default=Status.QUEUED)
    rows_done = models.PositiveIntegerField(default=0)
    result = models.JSONField(default=dict, blank=True)
    rejects = models.FileField(storage=IMPORT_STORAGE, upload_to="rejects/", blank=True)

    class Meta:
        ordering = ["-created_at"]

    def __str__(self) -> str:
        return f"{self.original_name} ({self.get_mode_display()}, {self.get_status_display()})"
