"""A decision at a fuel source: its page (managers and auditors read) and its resolution
(managers write). The cards that lead here are on the due list."""

from __future__ import annotations

from django.contrib import messages
from django.http import HttpResponse
from django.shortcuts import redirect, render
from django.utils import timezone
from django.views.decorators.http import require_http_methods

from fleetfuel.accounts.access import (
    role_required,
    site_ids_for_user,
    source_decision_for_user,
    user_role,
)
from fleetfuel.accounts.models import Role
from fleetfuel.accounts.requests import HtmxHttpRequest

from .forms import SourceDecisionResolveForm
from .source_decisions import SourceDecisionError, source_decision_resolve
from .source_selectors import source_decision_reached


@role_required(Role.MANAGER, Role.AUDITOR)
@require_http_methods(["GET", "POST"])
def source_decision(request: HtmxHttpRequest, pk: int) -> HttpResponse:
    """The decision, the units it reached, and (open, to a manager) the form that closes it."""
    write = request.method == "POST"
    decision = source_decision_for_user(request.user, pk, write=write)
    form = SourceDecisionResolveForm(request.POST if write else None)
    if write and form.is_valid():
        try:
            source_decision_resolve(
                decision_id=decision.pk,
                user=request.user,
                now=timezone.now(),
                **form.cleaned_data,
            )
        except SourceDecisionError as exc:
            messages.error(request, str(exc))
        else:
            messages.success(request, f"Recorded for {decision.source.name}.")
        return redirect("planning:source_decision", pk=decision.pk)
    context = {
        "decision": decision,
        "reached": source_decision_reached(
            decision=decision, site_ids=site_ids_for_user(request.user)
        ),
        "form": form,
        "can_resolve": decision.is_open and user_role(request.user) == Role.MANAGER,
    }
    return render(request, "planning/source_decision.html", context, status=400 if write else 200)
