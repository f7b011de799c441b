"""The benchmark's results as a table (plain or Markdown), each figure beside its target.

Targets (2 cores, PostgreSQL, 10,000 units): the projection at 2,000 units/s or more and
within 3x of its SQL floor; every due-list page and the fragment, the unit page and the
history page under 25 ms median; the export within 1.5x of COPY.
"""

from __future__ import annotations

from typing import Any

PAGE_TARGET_MS = 25.0
PROJECTION_UNITS_PER_S, PROJECTION_RATIO = 2000, 3.0
EXPORT_RATIO = 1.5
PAGES = {
    "due_list_first": "Due list, first page",
    "due_list_filtered": "Due list, filtered (depot, soon, by date)",
    "due_list_deep": "Due list, a page in the middle",
    "due_list_fragment": "Due list, htmx fragment (filtered)",
    "due_list_by_unit": "Due list by unit, a page in the middle",
    "unit_page": "Unit page",
    "work_order_page": "Work-order page",
    "history_page": "Service history, first page",
}
TARGETED = {"due_list_first", "due_list_filtered", "due_list_deep", "due_list_fragment",
            "due_list_by_unit", "unit_page", "history_page"}  # fmt: skip
HEAD = ("What", "Median", "Floor", "Ratio", "Queries", "Target", "Met")


def _mark(ok: bool | None) -> str:
    return "" if ok is None else ("yes" if ok else "NO")


def rows(result: dict[str, Any]) -> list[tuple[str, ...]]:
    out: list[tuple[str, ...]] = []
    p = result.get("projection")
    if p:
        ok = (p["units_per_s"] or 0) >= PROJECTION_UNITS_PER_S and (p["ratio"] or 99) <= 3
        out.append((
            f"Projection of {p['units']:,} units ({p['input_rows']:,} input rows, "
            f"{p['runs']} run{'' if p['runs'] == 1 else 's'})",
            f"{p['median_ms'] / 1000:.2f} s = {p['units_per_s']:,} units/s",
            f"{p['floor_ms'] / 1000:.2f} s", f"{p['ratio']}", "",
            f">= {PROJECTION_UNITS_PER_S:,}/s, <= {PROJECTION_RATIO}x", _mark(ok),
        ))  # fmt: skip
    for key, label in PAGES.items():
        page = result.get("pages", {}).get(key)
        if not page:
            continue
        ok = page["median_ms"] < PAGE_TARGET_MS if key in TARGETED else None
        out.append((
            label, f"{page['median_ms']:.1f} ms", f"{page['floor_ms']:.1f} ms",
            f"{page['ratio']}", str(page["queries"]),
            f"< {PAGE_TARGET_MS:.0f} ms" if key in TARGETED else "", _mark(ok),
        ))  # fmt: skip
    close = result.get("close")
    if close:
        out.append(("Work-order close (one drain)", f"{close['median_ms']:.1f} ms", "", "",
                    str(close["queries"]), "", ""))  # fmt: skip
    e = result.get("export")
    if e:
        path = e["csv_copy"] or e["csv_stream"]
        floor = e["postgres_copy"]
        ratio = path.get("ratio")
        out.append((
            f"CSV export, {e['rows']:,} service events",
            f"{path['rows_per_s']:,} rows/s, peak {path['peak_mib']} MiB",
            f"{floor['rows_per_s']:,} rows/s (COPY)" if floor else "", f"{ratio or ''}", "",
            f"<= {EXPORT_RATIO}x COPY", _mark(None if ratio is None else ratio <= EXPORT_RATIO),
        ))  # fmt: skip
    return out


def table(result: dict[str, Any], *, markdown: bool = False) -> str:
    meta = result.get("meta", {})
    part = meta.get("projected_units", meta.get("units"))
    projected = f" ({part:,} projected: the pages show their due items)" if part != meta.get(
        "units") else ""  # fmt: skip
    title = (
        f"{meta.get('units', 0):,} units{projected}, "
        f"{meta.get('service_events', 0):,} service events, "
        f"{meta.get('database', '?')}, medians of {meta.get('runs', '?')} runs, "
        f"{meta.get('date', '')} on {meta.get('machine', '')}"
    )
    return _render(title, HEAD, rows(result), markdown=markdown)


def _render(
    title: str, head: tuple[str, ...], body: list[tuple[str, ...]], *, markdown: bool
) -> str:
    if markdown:
        lines = [title, "", "| " + " | ".join(head) + " |", "|" + "---|" * len(head)]
        lines += ["| " + " | ".join(row) + " |" for row in body]
        return "\n".join(lines)
    widths = [max(len(r[i]) for r in [head, *body]) for i in range(len(head))]
    lines = [title, "  ".join(h.ljust(w) for h, w in zip(head, widths, strict=True))]
    lines += ["  ".join(c.ljust(w) for c, w in zip(r, widths, strict=True)) for r in body]
    return "\n".join(lines)


LOAD_P99_MS, LOAD_SHARE = 500.0, 0.25
LOAD_LABELS = {"floor_page": "Floor page", "due_list": "Due list", "unit_page": "Unit page",
               "task_save": "Task save (POST)"}  # fmt: skip
LOAD_HEAD = ("What", "Connections", "Requests/s", "p50", "p99", "Errors", "Met")


def load_rows(result: dict[str, Any]) -> list[tuple[str, ...]]:
    """Under load the targets are for the pages: throughput at least a quarter of the floor
    page's at the same connections, p99 under 500 ms, no error."""
    runs = result["runs"]
    floor = {r["connections"]: r["rps"] for r in runs.get("floor_page", [])}
    out = []
    for key, label in LOAD_LABELS.items():
        for r in runs.get(key, []):
            ok = None
            if key != "floor_page":
                share = r["rps"] >= LOAD_SHARE * floor.get(r["connections"], 0)
                ok = share and r["p99_ms"] < LOAD_P99_MS and r["errors"] == 0
            out.append((label, str(r["connections"]), f"{r['rps']:,.0f}", f"{r['p50_ms']} ms",
                        f"{r['p99_ms']} ms", str(r["errors"]), _mark(ok)))  # fmt: skip
    return out


def load_table(result: dict[str, Any], *, markdown: bool = False) -> str:
    title = f"{result.get('server', '')}, {result.get('seconds', '?')} s a run"
    return _render(title, LOAD_HEAD, load_rows(result), markdown=markdown)
