"""The corrected view of the service history: each entry as it stands after its corrections.

Nothing recorded is changed: a correction is a new entry (kind "correction") that restates the
entry it corrects in full, with the corrected values, the kind the entry really was
(``corrected_kind``), a reason and an author. A correction always corrects the version in
effect, so one entry's corrections form a line: entry -> correction -> correction.

An entry is *in effect* when no correction names it and, if it is itself a correction, no later
correction names the same entry (two people correcting one version at once: the later wins).
Its *effective kind* is its own kind, or on a correction the kind it restates. Corrections
recorded before ``corrected_kind`` existed never changed the kind: theirs is the corrected
entry's (looked up two corrections deep).

One selector for every reader: the history page, the exports (CSV, also by COPY, XLSX, the
printed record) and the engine's inputs (``effective_events``).
"""

from __future__ import annotations

from django.db.models import (
    Case,
    CharField,
    Exists,
    F,
    OuterRef,
    Q,
    QuerySet,
    Subquery,
    Value,
    When,
)
from django.db.models.functions import Coalesce, NullIf

from .models import ServiceEvent

CORRECTION = ServiceEvent.Kind.CORRECTION


def _corrections_of(ref: str) -> QuerySet[ServiceEvent]:
    # "IS NOT NULL" lets the database read the corrections alone (a partial index), not
    # the whole ledger, to find the entries a correction names.
    return ServiceEvent.objects.filter(corrects_id=OuterRef(ref), corrects_id__isnull=False)


def _later_siblings() -> QuerySet[ServiceEvent]:
    """Later corrections of the entry this row corrects (on the same unit's chain)."""
    return ServiceEvent.objects.filter(
        corrects_id=OuterRef("corrects_id"), unit_id=OuterRef("unit_id"), seq__gt=OuterRef("seq")
    )


# Whether a row is in effect (see the module's doc), as a filter condition.
IN_EFFECT = ~Exists(_corrections_of("pk")) & (
    Q(corrects_id__isnull=True) | ~Exists(_later_siblings())
)

# The kind a row stands for in the corrected view.
EFFECTIVE_KIND = Case(
    When(~Q(kind=CORRECTION), then=F("kind")),
    default=Coalesce(
        NullIf(F("corrected_kind"), Value("")),
        NullIf(F("corrects__corrected_kind"), Value("")),
        NullIf(F("corrects__kind"), Value(CORRECTION)),
        F("corrects__corrects__kind"),
    ),
    output_field=CharField(),
)

# The entry that took a row's place: its latest correction, or a later correction of the
# same entry; None while the row is in effect.
SUPERSEDED_BY = Coalesce(
    Subquery(_corrections_of("pk").order_by("-seq").values("pk")[:1]),
    Subquery(_later_siblings().order_by("-seq").values("pk")[:1]),
)


def with_effective_kind(events: QuerySet[ServiceEvent]) -> QuerySet[ServiceEvent]:
    """``events`` annotated with ``effective_kind``."""
    return events.annotate(effective_kind=EFFECTIVE_KIND)


def in_effect(events: QuerySet[ServiceEvent] | None = None) -> QuerySet[ServiceEvent]:
    """The rows of ``events`` (default: all) in effect, annotated with ``effective_kind``."""
    events = ServiceEvent.objects.all() if events is None else events
    return with_effective_kind(events).filter(IN_EFFECT)


def effective_events(*kinds: str) -> QuerySet[ServiceEvent]:
    """The entries in effect whose effective kind is one of ``kinds``: what the engine reads.

    A filter change recorded against the wrong filter and corrected counts once, for the
    filter the correction names, at the time and hour meter it gives."""
    # A row of another kind than a correction stands for its own kind: said so first, so the
    # database works out only the corrections' kinds.
    plain = Q(kind__in=kinds)
    corrected = Q(kind=CORRECTION, effective_kind__in=list(kinds))
    return in_effect().filter(plain | corrected)


def effective_kind_of(event: ServiceEvent) -> str:
    """One row's effective kind, in Python (a few queries at most, for one correction)."""
    seen = 0
    while event.kind == CORRECTION and not event.corrected_kind and seen < 50:
        if event.corrects is None:
            return str(event.kind)
        event, seen = event.corrects, seen + 1
    return str(event.corrected_kind or event.kind)


def version_in_effect(event: ServiceEvent) -> ServiceEvent:
    """The version of ``event`` in effect now: the end of its line of corrections."""
    while True:
        later = ServiceEvent.objects.filter(corrects_id=event.pk).order_by("-seq").first()
        if later is None and event.corrects_id is not None:
            later = (
                ServiceEvent.objects.filter(
                    corrects_id=event.corrects_id, unit_id=event.unit_id, seq__gt=event.seq
                )
                .order_by("-seq")
                .first()
            )
        if later is None:
            return event
        event = later
