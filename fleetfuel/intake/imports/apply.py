"""Running one file through its layout: dry run, all-or-nothing, or good rows only.

Every mode runs the same code: each row is stored in a savepoint inside one transaction,
so a refused row leaves nothing behind and later rows see the earlier ones (a reading's
neighbours, a delivery named by a sample). A dry run and an all-or-nothing apply with a
refused row roll the whole transaction back; good rows only commits the rest. Every
refused row is reported, and none is dropped silently.

The rows go in chunks. A bulk layout's rows are each checked, writing nothing, and the
chunk's writes are made together at its end (batch.py); when the database refuses them, the
chunk is rolled back to its savepoint and run again a row at a time, each row written at
once in its own savepoint (the path of a layout without ``bulk``), so the refusal is the
row's, with its line, as it would have been.
"""

from __future__ import annotations

import csv
from collections.abc import Callable, Iterator
from dataclasses import dataclass, field
from datetime import datetime
from itertools import batched
from pathlib import Path
from typing import Any

from django.core.exceptions import ValidationError
from django.db import IntegrityError, transaction

from .columns import CellError, Column, cell_blank, cell_parse
from .kind import Context, Layout, RowRefused
from .readers import FileRefused, FormulaCell, Sheet, sheet_open, xlsx_column_letter

DRY_RUN, ALL_OR_NOTHING, GOOD_ROWS_ONLY = "dry_run", "all_or_nothing", "good_rows_only"
MODES = (DRY_RUN, ALL_OR_NOTHING, GOOD_ROWS_ONLY)
CHUNK = 500  # rows written together; progress is reported after each


class _Rollback(Exception):
    pass


@dataclass
class RowError:
    file: str
    line: int
    column: str
    reason: str
    cells: list[Any] = field(default_factory=list)

    def __str__(self) -> str:
        where = f"line {self.line}" + (f", column {self.column}" if self.column else "")
        return f"{self.file} {where}: {self.reason}"


@dataclass
class ImportResult:
    file: str
    kind: str
    mode: str
    header: list[str] = field(default_factory=list)
    counts: dict[str, int] = field(
        default_factory=lambda: {"created": 0, "updated": 0, "unchanged": 0, "refused": 0}
    )
    errors: list[RowError] = field(default_factory=list)
    file_error: str = ""
    stored: bool = False  # whether anything was committed

    @property
    def ok(self) -> bool:
        return not self.file_error and not self.errors


def _columns_match(layout: Layout, sheet: Sheet) -> tuple[list[tuple[Column, int, str]], str]:
    """Each column with its index and header in the file, or the reason the header is wrong."""
    expected = ", ".join(c.header for c in layout.columns)
    if not sheet.header:
        return [], f"the file is empty; the first line must name the columns: {expected}"
    names = [h.strip().lower() for h in sheet.header]
    found: list[tuple[Column, int, str]] = []
    missing = []
    used: set[int] = set()
    for column in layout.columns:
        hits = [(i, n) for i, n in enumerate(names) if n in column.headers]
        if len(hits) > 1:
            return [], f"column {column.header} is given twice ({', '.join(n for _, n in hits)})"
        if hits:
            found.append((column, hits[0][0], hits[0][1]))
            used.add(hits[0][0])
        elif column.required:
            missing.append(column.header)
    unknown = [sheet.header[i] for i, n in enumerate(names) if i not in used and n]
    problems = []
    if missing:
        problems.append(f"missing column(s) {', '.join(missing)}")
    if unknown:
        problems.append(f"unknown column(s) {', '.join(unknown)}")
    if problems:
        return [], f"{'; '.join(problems)}; the {layout.kind} layout has: {expected}"
    return found, ""


def _row_values(
    found: list[tuple[Column, int, str]], cells: list[Any], sheet: Sheet
) -> dict[str, Any]:
    values: dict[str, Any] = {}
    for column, index, header in found:
        value = cells[index] if index < len(cells) else None
        if isinstance(value, FormulaCell):
            raise RowRefused(
                column.key, f"a formula ({value.formula}) where a value belongs: paste values"
            )
        try:
            values[column.key] = cell_parse(
                column, value, header=header, decimal_comma=sheet.decimal_comma
            )
        except CellError as exc:
            raise RowRefused(column.key, str(exc)) from None
    return values


def _column_label(key: str, found: list[tuple[Column, int, str]], sheet: Sheet, xlsx: bool) -> str:
    for column, index, header in found:
        if column.key == key:
            return f"{header} ({xlsx_column_letter(index)})" if xlsx else header
    return key


def file_import(
    *,
    path: Path,
    layout: Layout,
    mode: str,
    now: datetime,
    progress: Callable[[int], None] | None = None,
    site_ids: frozenset[int] | None = None,
) -> ImportResult:
    """Import one file. Never raises for bad input: the result carries every refusal."""
    if mode not in MODES:
        raise ValueError(f"mode must be one of {MODES}")
    result = ImportResult(file=path.name, kind=layout.kind, mode=mode)
    try:
        with sheet_open(path) as sheet:
            result.header = sheet.header
            found, problem = _columns_match(layout, sheet)
            if problem:
                result.file_error = problem
                return result
            ctx = Context(now=now, site_ids=site_ids, bulk=layout.bulk)
            _rows_run(result, layout=layout, sheet=sheet, found=found, ctx=ctx,
                      progress=progress, xlsx=path.suffix.lower() == ".xlsx")  # fmt: skip
    except FileRefused as exc:
        result.file_error = f"refused: {exc}"
        result.stored = False
        for key in ("created", "updated", "unchanged"):
            result.counts[key] = 0
    return result


def _rows_run(
    result: ImportResult, *, layout: Layout, sheet: Sheet, found: list[tuple[Column, int, str]],
    ctx: Context, progress: Callable[[int], None] | None, xlsx: bool,
) -> None:  # fmt: skip
    given = {c.key for c, _, _ in found}
    absent = [c for c in layout.columns if c.key not in given]
    run = _RowRun(layout=layout, sheet=sheet, found=found, absent=absent, ctx=ctx, xlsx=xlsx)
    rows = 0
    try:
        with transaction.atomic():
            for chunk in batched(_nonblank(sheet.rows), CHUNK):
                for outcome in run.chunk(chunk):
                    if isinstance(outcome, RowError):
                        result.counts["refused"] += 1
                        result.errors.append(outcome)
                    else:
                        result.counts[outcome] += 1
                rows += len(chunk)
                if progress and rows % CHUNK == 0:
                    progress(rows)
            if rows == 0:
                result.file_error = "the file has a header and no rows below it"
            if (
                result.mode == DRY_RUN
                or result.file_error
                or (result.errors and result.mode == ALL_OR_NOTHING)
            ):
                raise _Rollback
            result.stored = True
    except _Rollback:
        result.stored = False


@dataclass
class _RowRun:
    """Rows of one file through its layout, a chunk at a time."""

    layout: Layout
    sheet: Sheet
    found: list[tuple[Column, int, str]]
    absent: list[Column]
    ctx: Context
    xlsx: bool
    seen: dict[tuple[Any, ...], int] = field(default_factory=dict)  # natural key: its line

    def chunk(self, chunk: tuple[tuple[int, list[Any]], ...]) -> list[str | RowError]:
        """Each row's outcome, its writes made (rolled back with the file's when refused)."""
        seen = dict(self.seen)
        try:
            with transaction.atomic():
                outcomes = [self.row(line, cells, seen) for line, cells in chunk]
                self.ctx.writes.flush()
        except (IntegrityError, ValidationError):  # the database refused the chunk's writes
            self.ctx.restart(bulk=False)
            seen = dict(self.seen)
            outcomes = [self.row(line, cells, seen) for line, cells in chunk]
            self.ctx.restart(bulk=self.layout.bulk)
        self.seen = seen
        return outcomes

    def row(self, line: int, cells: list[Any], seen: dict[tuple[Any, ...], int]) -> str | RowError:
        try:
            values = _row_values(self.found, cells, self.sheet)
            for column in self.absent:  # optional columns the file leaves out
                values[column.key] = cell_parse(column, None, header="", decimal_comma=False)
            natural = tuple(values.get(k) for k in self.layout.key)
            if natural in seen:
                raise RowRefused("", f"the same row as line {seen[natural]} "
                                 f"({', '.join(self.layout.key)})")  # fmt: skip
            seen[natural] = line
            return _row_store(self.layout, values, self.ctx)
        except RowRefused as exc:
            label = (
                _column_label(exc.column, self.found, self.sheet, self.xlsx) if exc.column else ""
            )
            return RowError(self.sheet.name, line, label, exc.reason, cells)


def _row_store(layout: Layout, values: dict[str, Any], ctx: Context) -> str:
    """Store one row in a savepoint; what the database itself refuses is a row error too.
    A bulk chunk's row writes nothing until the flush: it needs no savepoint."""
    if ctx.writes.bulk:
        return layout.store(values, ctx)
    try:
        with transaction.atomic():
            return layout.store(values, ctx)
    except IntegrityError as exc:
        raise RowRefused("", f"refused by the database ({str(exc).splitlines()[0]})") from None


def _nonblank(rows: Iterator[tuple[int, list[Any]]]) -> Iterator[tuple[int, list[Any]]]:
    """Rows with something in them (a spreadsheet's trailing empty lines are not rows)."""
    for line, cells in rows:
        if not all(cell_blank(c) for c in cells):
            yield line, cells


def rejects_write(*, results: list[ImportResult], path: Path) -> int:
    """The refused rows of each file as they were, with their reason in an added column.
    Returns how many rows it wrote."""
    written = 0
    with path.open("w", newline="", encoding="utf-8") as out:
        writer = csv.writer(out)
        for result in results:
            if not result.errors:
                continue
            writer.writerow([*result.header, "refused_because"])
            for error in result.errors:
                cells = ["" if c is None else c.formula if isinstance(c, FormulaCell) else c
                         for c in error.cells]  # fmt: skip
                reason = f"line {error.line}" + (f", column {error.column}" if error.column else "")
                writer.writerow([*cells, f"{reason}: {error.reason}"])
                written += 1
    return written
