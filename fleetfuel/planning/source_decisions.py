"""Writes of source decisions: open and refresh them from the samples (the projection run),
and record a manager's resolution. The rules are ``services.source_quality``'s."""

from __future__ import annotations

import logging
from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from datetime import datetime
from typing import Any

from django.conf import settings
from django.db import IntegrityError, transaction
from django.db.models import Case, OuterRef, Q, Subquery, When

from fleetfuel.fleet.models import (
    FILTER_KINDS,
    Delivery,
    Fueling,
    FuelSample,
    FuelSource,
    ServicePlan,
)
from services import source_quality as sq
from services.common import Basis, DueStatus, TaskKind
from services.fuel_quality import Codes, parse_iso4406

from .models import DueItem
from .source_models import SourceDecision, SourceDecisionUnit

logger = logging.getLogger(__name__)


@dataclass(frozen=True)
class SourceRecompute:
    opened: int
    refreshed: int
    superseded: int


class SourceDecisionError(Exception):
    """A resolution that cannot be recorded (already closed, or an unknown outcome)."""


def _references_by_class() -> dict[int, list[Codes]]:
    refs: dict[int, list[Codes]] = {}
    for class_id, text in ServicePlan.objects.filter(component_kind__in=FILTER_KINDS).values_list(
        "unit_class_id", "reference_iso4406"
    ):
        try:
            refs.setdefault(class_id, []).append(parse_iso4406(text))
        except ValueError:
            continue  # a plan's own form refuses it; the charter's reference stands in
    return refs


def _sample_label(sample: FuelSample, source: FuelSource) -> str:
    found = sample.iso4406 or "no particle code"
    water = f", water {sample.water_mg_kg:.0f} mg/kg" if sample.water_mg_kg is not None else ""
    return (
        f"Sample {sample.reference} of {source.name}, {sample.sampled_at:%Y-%m-%d}: {found}{water}"
    )


@dataclass
class _Batch:
    """What the recompute reads: the samples in play and what they need, in seven queries."""

    sources: dict[int, Any]  # FuelSource, annotated with its latest sample's id
    samples: dict[int, FuelSample]  # each source's latest, and those of open decisions
    open_by_sample: dict[int, SourceDecision]
    decided: set[int]  # samples with a decision, open or closed
    deliveries: dict[int, list[datetime]] = field(default_factory=dict)  # by source
    starts: dict[int, datetime] = field(default_factory=dict)  # reach start, by sample
    fuelled: dict[int, list[sq.Fuelled]] = field(default_factory=dict)  # by source
    unit_class: dict[int, int] = field(default_factory=dict)
    names: dict[int, str] = field(default_factory=dict)  # fleet numbers, by unit
    refs: dict[int, list[Codes]] = field(default_factory=dict)  # by unit class
    # Litres of each fueling burned, by unit (the units the projection run just computed),
    # and, for the others, what the open decisions last said: by (decision, unit).
    burned: Mapping[int, Mapping[int, float]] = field(default_factory=dict)
    burned_before: dict[tuple[int, int], float | None] = field(default_factory=dict)


def _batch_load(*, now: datetime, burned: Mapping[int, Mapping[int, float]]) -> _Batch | None:
    latest = FuelSample.objects.filter(source_id=OuterRef("pk"), sampled_at__lte=now).order_by(
        "-sampled_at", "-pk"
    )
    sources = {
        s.pk: s for s in FuelSource.objects.annotate(latest_id=Subquery(latest.values("pk")[:1]))
    }  # 1
    open_rows = SourceDecision.objects.filter(resolved_at__isnull=True).select_related("sample")
    open_by_sample = {d.sample_id: d for d in open_rows}  # 2
    latest_ids = {s.latest_id for s in sources.values() if s.latest_id is not None}
    samples = {s.pk: s for s in FuelSample.objects.filter(pk__in=latest_ids)}  # 3
    samples.update({d.sample_id: d.sample for d in open_by_sample.values()})
    if not samples:
        return None
    decided = set(
        SourceDecision.objects.filter(sample_id__in=list(samples)).values_list(
            "sample_id", flat=True
        )
    )  # 4
    batch = _Batch(sources, samples, open_by_sample, decided, burned=burned)
    source_ids = {s.source_id for s in samples.values()}
    delivered: dict[int, datetime] = {}
    for pk, source_id, at in Delivery.objects.filter(source_id__in=source_ids).values_list(
        "pk", "source_id", "delivered_at"
    ):  # 5
        batch.deliveries.setdefault(source_id, []).append(at)
        delivered[pk] = at
    for s in samples.values():
        batch.starts[s.pk] = sq.reach_start_find(
            sampled_at=s.sampled_at,
            delivery_at=delivered.get(s.delivery_id) if s.delivery_id else None,
            deliveries_at=batch.deliveries.get(s.source_id, []),
        )
    for pk, unit_id, source_id, at, litres, class_id, name in Fueling.objects.filter(
        source_id__in=source_ids, fueled_at__gte=min(batch.starts.values()), fueled_at__lte=now
    ).values_list(
        "pk", "unit_id", "source_id", "fueled_at", "litres", "unit__unit_class_id",
        "unit__fleet_number",
    ):  # 6  # fmt: skip
        fuelling = sq.Fuelled(unit_id=unit_id, at=at, litres=litres, ref=pk)
        batch.fuelled.setdefault(source_id, []).append(fuelling)
        batch.unit_class[unit_id] = class_id
        batch.names[unit_id] = name
    batch.refs = _references_by_class()  # 7
    if open_by_sample:
        batch.burned_before = {
            (d, u): b
            for d, u, b in SourceDecisionUnit.objects.filter(
                decision__resolved_at__isnull=True
            ).values_list("decision_id", "unit_id", "litres_burned")
        }  # 8, only with decisions open
    return batch


def _decision_fields(
    *,
    batch: _Batch,
    sample: FuelSample,
    standing: sq.SampleStanding,
    now: datetime,
    decision_id: int | None,
) -> tuple[dict[str, Any], list[sq.UnitReach], bool]:
    """The decision's derived fields, the units reached, and whether the sample is out of
    range against the cleanest filter-plan reference of the units it reached. A unit the
    projection run did not just compute keeps the litres burned the decision last gave it."""
    source = batch.sources[sample.source_id]
    start = batch.starts[sample.pk]
    reach = [
        r
        if r.burned is not None
        else replace(r, burned=batch.burned_before.get((decision_id or 0, r.unit_id)))
        for r in sq.reach_sum(
            fuelings=batch.fuelled.get(source.pk, []), start=start, end=now, burned=batch.burned
        )
    ]
    reference = sq.reference_strictest(
        references=[c for r in reach for c in batch.refs.get(batch.unit_class[r.unit_id], [])]
    )
    verdict = sq.sample_range_check(
        codes=(sample.code_4, sample.code_6, sample.code_14)
        if sample.code_6 is not None and sample.code_14 is not None
        else None,
        marks=(sample.mark_4, sample.mark_6, sample.mark_14),
        water_mg_kg=sample.water_mg_kg,
        reference=reference,
        margin=settings.SOURCE_SAMPLE_MARGIN_SCALE_NUMBERS,
    )
    fields: dict[str, Any] = {
        "site_id": source.site_id,
        "reach_from": start,
        "litres": round(sum(r.litres for r in reach), 1),
        "explanation": sq.decision_explain(
            sample_label=_sample_label(sample, source),
            verdict=verdict,
            standing=standing,
            reach_start=start,
            reach=reach,
            names=batch.names,
        ),
        "stands": standing.stands,
        "particles_over": verdict.particles_over,
        "computed_at": now,
    }
    return fields, reach, verdict.out_of_range


def _reached_replace(*, decision: SourceDecision, reach: list[sq.UnitReach]) -> None:
    SourceDecisionUnit.objects.filter(decision=decision).delete()
    SourceDecisionUnit.objects.bulk_create(
        SourceDecisionUnit(
            decision=decision,
            unit_id=r.unit_id,
            litres=round(r.litres, 1),
            litres_burned=round(r.burned, 1) if r.burned is not None else None,
            fuelings=r.fuelings,
            first_at=r.first_at,
            last_at=r.last_at,
        )
        for r in reach
    )


def source_decisions_recompute(
    *, now: datetime, burned: Mapping[int, Mapping[int, float]] | None = None
) -> SourceRecompute:
    """Open a decision for each source whose latest sample stands and is out of range, and
    refresh the open ones (units reached, litres fuelled and burned, whether the sample still
    stands); an open decision whose sample a later one replaced closes as superseded. Then
    mark the due items an open decision stands for (:func:`due_items_mark`).

    ``burned``: by unit, the litres of each fueling burned by ``now`` (the engine's tank
    model, for the units just projected); the other units keep what their decision last said.

    Idempotent: one decision per source and sample, ever (a resolved one is never reopened).
    Eight queries (seven with no decision open) and the writes, whatever the number of
    sources.
    """
    counts = {"opened": 0, "refreshed": 0, "superseded": 0}
    batch = _batch_load(now=now, burned=burned or {})
    if batch is None:  # no sample at all, so no decision (a sample's go with it)
        return SourceRecompute(**counts)
    with transaction.atomic():
        for sample in batch.samples.values():
            if sample.sampled_at > now:
                continue  # a recompute for an earlier instant: not yet taken
            try:
                done = _sample_decide(batch=batch, sample=sample, now=now)
            except ValueError as exc:  # refused before any write: the others go on
                logger.warning("sample %s left out of source decisions: %s", sample.pk, exc)
                continue
            if done:
                counts[done] += 1
        due_items_mark()
    return SourceRecompute(**counts)


# What the dirt estimate alone puts on the due list: a filter whose estimate governs its due
# point (or has run out: "check"); never overdue (services.filter_status).
DIRT_ONLY = Q(
    task__in=[TaskKind.PRIMARY_FILTER.value, TaskKind.FINE_FILTER.value],
    basis=Basis.CONTAMINANT_BUDGET.value,
    status__in=[DueStatus.CHECK.value, DueStatus.DUE.value, DueStatus.SOON.value],
)


def due_items_mark() -> None:
    """Point each due item the dirt estimate alone puts on the list at the newest open
    decision on particles (a sample over on water only says nothing of filter dirt) that
    lists its unit (none: cleared); every other item points at none. One update, whatever
    the number of items or decisions."""
    newest_open = SourceDecisionUnit.objects.filter(
        unit_id=OuterRef("unit_id"),
        decision__resolved_at__isnull=True,
        decision__particles_over=True,
    ).order_by("-decision__opened_at", "-decision_id")
    DueItem.objects.filter(DIRT_ONLY | Q(source_decision__isnull=False)).update(
        source_decision=Case(
            When(DIRT_ONLY, then=Subquery(newest_open.values("decision_id")[:1])), default=None
        )
    )


def _sample_decide(*, batch: _Batch, sample: FuelSample, now: datetime) -> str | None:
    """Open, refresh or supersede the decision on one sample; what was done, if anything."""
    decision = batch.open_by_sample.get(sample.pk)
    if decision is None and sample.pk in batch.decided:
        return None  # resolved: kept as it was closed
    source = batch.sources[sample.source_id]
    later = batch.samples.get(source.latest_id) if source.latest_id != sample.pk else None
    standing = sq.sample_standing_check(
        sampled_at=sample.sampled_at,
        deliveries_at=batch.deliveries.get(sample.source_id, []),
        later_sample_at=later.sampled_at if later else None,
        max_age_days=settings.SOURCE_SAMPLE_MAX_AGE_DAYS,
        now=now,
    )
    if decision is not None and standing.standing is sq.Standing.NEWER_SAMPLE:
        decision.resolved_at, decision.outcome = now, SourceDecision.Outcome.SUPERSEDED
        decision.note = f"Closed by the projection run: {standing.reason}."
        decision.new_sample = later
        decision.new_sample_reference = later.reference if later else ""
        decision.save()
        return "superseded"
    if decision is None and not standing.stands:
        return None
    fields, reach, out = _decision_fields(
        batch=batch, sample=sample, standing=standing, now=now,
        decision_id=decision.pk if decision else None,
    )  # fmt: skip
    if decision is None and not out:
        return None
    if decision is not None:
        SourceDecision.objects.filter(pk=decision.pk).update(**fields)
        _reached_replace(decision=decision, reach=reach)
        return "refreshed"
    try:
        with transaction.atomic():  # another worker may open the same one at the same time
            decision = SourceDecision.objects.create(
                source=source, sample=sample, opened_at=now, **fields
            )
    except IntegrityError:
        return None  # opened by the other run; its next recompute refreshes it
    _reached_replace(decision=decision, reach=reach)
    return "opened"


def source_decision_resolve(
    *,
    decision_id: int,
    user: Any,
    outcome: str,
    note: str,
    new_sample_reference: str,
    now: datetime,
) -> SourceDecision:
    """Record what was done about an open decision: who, when, what, and any new sample
    (linked when the lab reference is on file). One transaction, the row locked."""
    if outcome not in SourceDecision.MANAGER_OUTCOMES:
        raise SourceDecisionError(f"{outcome!r} is not something a manager records here.")
    with transaction.atomic():
        decision = SourceDecision.objects.select_for_update().get(pk=decision_id)
        if decision.resolved_at is not None:
            raise SourceDecisionError("This decision was already closed.")
        reference = new_sample_reference.strip()
        decision.resolved_at, decision.resolved_by, decision.outcome = now, user, outcome
        decision.note = note.strip()
        decision.new_sample_reference = reference
        decision.new_sample = (
            FuelSample.objects.filter(reference=reference).first() if reference else None
        )
        decision.save()
    return decision
