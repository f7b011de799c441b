"""Import runs from the browser: start one (the upload kept), run it (in a Celery task, or
in-process where there is no broker, as the demo runs), apply a dry run's file.

Progress goes through the cache, not the database: the run's own rows are written inside
the import's transaction, which other connections do not see until it ends."""

from __future__ import annotations

from datetime import datetime
from pathlib import Path
from typing import Any

from django.core.cache import cache
from django.core.files.uploadedfile import UploadedFile
from django.db import transaction

from fleetfuel.accounts.access import site_ids_for_user

from ..models import ImportRun
from .apply import file_import, rejects_write
from .layouts import layout_for
from .readers import size_refusal

ERRORS_SHOWN = 1_000  # on the page; the rejects file has every refused row


def progress_key(run_id: int) -> str:
    return f"fleetfuel:import-run:{run_id}:rows"


def import_run_start(
    *, user: Any, kind: str, upload: UploadedFile, now: datetime, enqueue: Any
) -> ImportRun:
    """Keep the upload and queue a dry run of it (``enqueue(run_id)`` after the commit)."""
    layout_for(kind=kind)  # an unknown kind is refused before anything is kept
    refusal = size_refusal(upload.size or 0)
    if refusal:
        raise ValueError(refusal)
    name = Path(upload.name or "upload.csv").name
    with transaction.atomic():
        run = ImportRun(created_by=user, created_at=now, kind=kind, original_name=name,
                        mode=ImportRun.Mode.DRY_RUN)  # fmt: skip
        run.file.save(name, upload, save=False)
        run.save()
        transaction.on_commit(lambda: enqueue(run.pk))
    return run


def import_run_apply(*, run: ImportRun, mode: str, now: datetime, enqueue: Any) -> ImportRun:
    """A new run of a dry run's file, storing (all or nothing, or the good rows only)."""
    if mode not in (ImportRun.Mode.ALL_OR_NOTHING, ImportRun.Mode.GOOD_ROWS_ONLY):
        raise ValueError(f"not an apply mode: {mode!r}")
    with transaction.atomic():
        applied = ImportRun.objects.create(
            created_by=run.created_by, created_at=now, kind=run.kind, mode=mode,
            file=run.file.name, original_name=run.original_name,
        )  # fmt: skip
        transaction.on_commit(lambda: enqueue(applied.pk))
    return applied


def import_run_execute(*, run_id: int, now: datetime) -> None:
    """Run the file through its layout in the run's mode and keep the result."""
    run = ImportRun.objects.select_related("created_by").get(pk=run_id)
    if run.status == ImportRun.Status.DONE:
        return  # a task delivered twice does the work once
    ImportRun.objects.filter(pk=run.pk).update(status=ImportRun.Status.RUNNING)
    path = Path(run.file.path)
    original = path.with_name(run.original_name)  # row errors name the file as uploaded
    result = file_import(
        path=path, layout=layout_for(kind=run.kind), mode=run.mode, now=now,
        progress=lambda rows: cache.set(progress_key(run.pk), rows, 3600),
        site_ids=frozenset(site_ids_for_user(run.created_by)),
    )  # fmt: skip
    for error in result.errors:
        error.file = original.name
    run.result = {
        "counts": result.counts, "file_error": result.file_error, "stored": result.stored,
        "errors": [{"line": e.line, "column": e.column, "reason": e.reason}
                   for e in result.errors[:ERRORS_SHOWN]],
        "errors_total": len(result.errors),
    }  # fmt: skip
    if result.errors:
        rejects = path.with_name(f"{path.stem}-run{run.pk}-rejects.csv")
        rejects_write(results=[result], path=rejects)
        run.rejects.name = str(rejects.relative_to(Path(run.file.storage.location)))
    run.rows_done = sum(result.counts.values())
    run.status = ImportRun.Status.DONE
    run.save()
