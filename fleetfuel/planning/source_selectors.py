"""Reads of source decisions: the open ones for the due list's cards, one for its page."""

from __future__ import annotations

from typing import Any

from django.db.models import Prefetch, Q, QuerySet

from .source_models import SourceDecision, SourceDecisionUnit


def _visible(site_ids: list[int]) -> Q:
    """At a site in ``site_ids``, or at a shared source that reached a unit at one."""
    shared = SourceDecisionUnit.objects.filter(unit__site_id__in=site_ids).values("decision_id")
    return Q(site_id__in=site_ids) | Q(site__isnull=True, pk__in=shared)


def _reached(site_ids: list[int]) -> Prefetch[Any]:
    """The units reached, only those at the person's sites, most litres first."""
    rows = SourceDecisionUnit.objects.filter(unit__site_id__in=site_ids).select_related(
        "unit__site"
    )
    return Prefetch("reached", queryset=rows.order_by("-litres", "unit_id"))


def source_decisions_open(*, site_ids: list[int]) -> QuerySet[SourceDecision]:
    """Open decisions the person may see, newest first, with their units (two queries)."""
    return (
        SourceDecision.objects.filter(_visible(site_ids), resolved_at__isnull=True)
        .select_related("source", "sample")
        .prefetch_related(_reached(site_ids))
        .order_by("-opened_at", "pk")
    )


def source_decision_reached(*, decision: SourceDecision, site_ids: list[int]) -> list[Any]:
    """One decision's units at the person's sites, most litres first."""
    rows = decision.reached.filter(unit__site_id__in=site_ids).select_related("unit__site")
    return list(rows.order_by("-litres", "unit_id"))
