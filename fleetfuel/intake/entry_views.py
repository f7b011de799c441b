"""The manager's entry pages: thin views over entry_forms, entry_selectors and entry_actions.

Each page is one form for one site (``?site=CODE``, the first site the manager may see by
default). With htmx the form's fragment is swapped in place; without it the form posts and
redirects as a plain form. A saved entry keeps the site, source and time on the next blank
form, so a day's entries go in one after another from the keyboard.
"""

from __future__ import annotations

from datetime import datetime
from typing import Any
from urllib.parse import urlencode
from zoneinfo import ZoneInfo

from django.contrib import messages
from django.http import Http404, HttpRequest, HttpResponse
from django.shortcuts import redirect, render
from django.urls import reverse
from django.utils import timezone
from django.views.decorators.http import require_http_methods
from django.views.decorators.vary import vary_on_headers

from fleetfuel.accounts.access import role_required
from fleetfuel.accounts.models import Role
from fleetfuel.fleet.models import Site
from services.display import count_noun

from . import entry_forms as ef
from . import entry_selectors as sel
from .entry_actions import (
    delivery_record,
    engine_event_record,
    fueling_record,
    meter_round_record,
    sample_record,
)

entry_page = role_required(Role.MANAGER)


def _site(request: HttpRequest) -> tuple[Site, list[Site]]:
    """The site the page is for, among those the manager may see (404 for any other)."""
    sites = sel.entry_sites(request.user)
    code = str(request.POST.get("site") or request.GET.get("site") or "")
    site = sel.entry_site_pick(sites, code.replace("\x00", "")[:20] or None)
    if site is None:
        raise Http404("No such site.")
    return site, sites


def _local_now(site: Site, now: datetime) -> str:
    return timezone.localtime(now, ZoneInfo(site.time_zone)).strftime(ef.TIME_FORMAT)


def _render(request: HttpRequest, name: str, context: dict[str, Any]) -> HttpResponse:
    site: Site = context["site"]
    context.setdefault("volume_unit", ef.volume_label(site))
    template = f"intake/entry_{name}.html"
    if request.htmx and not request.htmx.boosted:
        template += "#entry-form"
    return render(request, template, context)


def _saved(request: HttpRequest, name: str, text: str, keep: dict[str, str]) -> HttpResponse:
    """After a save: the next blank form, keeping ``keep`` (site, source, time). htmx follows
    the redirect itself and swaps the next form's fragment in, with the message in it."""
    messages.success(request, text)
    return redirect(
        reverse(f"intake:{name}") + "?" + urlencode({k: v for k, v in keep.items() if v})
    )


@entry_page
def entry_home(request: HttpRequest) -> HttpResponse:
    site, sites = _site(request)
    return render(request, "intake/entry_home.html", {"site": site, "sites": sites})


@entry_page
@require_http_methods(["GET", "POST"])
@vary_on_headers("HX-Request")
def hours_round(request: HttpRequest) -> HttpResponse:
    """A depot's hour-meter round: every active unit, only the filled rows saved."""
    site, sites = _site(request)
    now = timezone.now()
    today = timezone.localtime(now, ZoneInfo(site.time_zone)).date()
    rows = sel.round_rows(site=site, today=today)
    typed: dict[int, str] = {}
    refused: dict[int, str] = {}
    if request.method == "POST":
        form = ef.RoundForm(request.POST, site=site, now=now)
        hours, refused = ef.round_parse(data=request.POST, rows=rows)
        if form.is_valid():
            outcome = meter_round_record(
                hours_by_unit=hours,
                at=form.cleaned_data["taken_at"],
                now=now,
                zone=ZoneInfo(site.time_zone),
            )
            refused |= outcome.refused
            if not refused and (outcome.saved or outcome.unchanged):
                text = f"{count_noun(len(outcome.saved), 'reading')} saved at {site.name}."
                at = request.POST.get("taken_at", "")
                return _saved(request, "hours", text, {"site": site.code, "at": at})
            if outcome.saved:
                messages.success(request, f"{count_noun(len(outcome.saved), 'reading')} saved.")
                rows = sel.round_rows(site=site, today=today)
            if not refused:
                form.add_error(None, "Type at least one reading.")
        typed = {r.unit_id: str(request.POST.get(f"h-{r.unit_id}", ""))[:30] for r in rows}
        kept = refused if form.is_valid() else typed  # a bad time keeps every typed row
        typed = {k: v.replace("\x00", "") for k, v in typed.items() if k in kept}
    else:
        form = ef.RoundForm(
            initial={"taken_at": request.GET.get("at") or _local_now(site, now)},
            site=site,
            now=now,
        )
    entries = [(r, typed.get(r.unit_id, ""), refused.get(r.unit_id)) for r in rows]
    context = {"site": site, "sites": sites, "form": form, "entries": entries}
    context["refused_n"] = len(refused)
    return _render(request, "hours", context)


def _simple_page(
    request: HttpRequest, *, form_class: type[ef.SiteForm], keep: tuple[str, ...]
) -> tuple[Site, list[Site], ef.SiteForm, datetime]:
    """The site, the sites, the form (bound on POST; else blank, keeping ``keep`` from the
    query string and the time, or now) and the time now."""
    site, sites = _site(request)
    now = timezone.now()
    if request.method == "POST":
        return site, sites, form_class(request.POST, site=site, now=now), now
    initial = {k: request.GET.get(k, "")[:40].replace("\x00", "") for k in keep}
    at = initial.pop("at", "") or _local_now(site, now)
    for name, field in form_class.base_fields.items():
        if isinstance(field, ef.SiteTimeField):
            initial[name] = at
    return site, sites, form_class(initial=initial, site=site, now=now), now


def _lab_initial(site: Site, now: datetime) -> dict[str, str]:
    return {"sampled_at": _local_now(site, now)}


def _units_context(site: Site, now: datetime) -> list[str]:
    today = timezone.localtime(now, ZoneInfo(site.time_zone)).date()
    return list(sel.active_units(site=site, today=today).values_list("fleet_number", flat=True))


@entry_page
@require_http_methods(["GET", "POST"])
@vary_on_headers("HX-Request")
def fueling_entry(request: HttpRequest) -> HttpResponse:
    site, sites, form, now = _simple_page(request, form_class=ef.FuelingForm, keep=("source", "at"))
    if request.method == "POST" and form.is_valid():
        d = form.cleaned_data
        fueling = fueling_record(
            unit=d["unit"], source=d["source"], at=d["fueled_at"], litres=d["amount"]
        )
        text = f"Fueling saved: {fueling.unit.fleet_number}, {fueling.litres:,.1f} L."
        keep = {"site": site.code, "source": request.POST.get("source", "")}
        return _saved(request, "fuel", text, keep | {"at": request.POST.get("fueled_at", "")})
    context = {"site": site, "sites": sites, "form": form, "recent": sel.recent_fuelings(site=site)}
    context["unit_numbers"] = _units_context(site, now)
    return _render(request, "fuel", context)


@entry_page
@require_http_methods(["GET", "POST"])
@vary_on_headers("HX-Request")
def delivery_entry(request: HttpRequest) -> HttpResponse:
    """A bulk delivery, with the sample taken from it if there is one."""
    site, sites, form, now = _simple_page(request, form_class=ef.DeliveryForm, keep=("source",))
    data = request.POST if request.method == "POST" else None
    lab = ef.LabResultForm(
        data, prefix="sample", site=site, now=now, initial=_lab_initial(site, now)
    )
    if data is not None and form.is_valid():
        with_sample = lab.has_entry()
        if not with_sample or lab.is_valid():
            d = form.cleaned_data
            delivery = delivery_record(
                source=d["source"],
                at=d["delivered_at"],
                litres=d["amount"],
                supplier=d["supplier"],
                ticket=d["ticket"],
                sample=lab.save(commit=False) if with_sample else None,
            )
            text = f"Delivery saved: {delivery.litres:,.0f} L into {delivery.source}."
            text += " Its sample was saved with it." if with_sample else ""
            return _saved(
                request, "delivery", text, {"site": site.code, "source": str(delivery.source_id)}
            )
    if data is not None and not lab.has_entry():
        lab = ef.LabResultForm(
            None, prefix="sample", site=site, now=now, initial=_lab_initial(site, now)
        )
    context = {"site": site, "sites": sites, "form": form, "lab": lab}
    context["recent"] = sel.recent_deliveries(site=site)
    return _render(request, "delivery", context)


@entry_page
@require_http_methods(["GET", "POST"])
@vary_on_headers("HX-Request")
def sample_entry(request: HttpRequest) -> HttpResponse:
    """A fuel sample's lab result, tied to a source, a delivery or a unit's tank."""
    site, sites, tie, now = _simple_page(request, form_class=ef.SampleTieForm, keep=())
    data = request.POST if request.method == "POST" else None
    lab = ef.LabResultForm(data, site=site, now=now, initial=_lab_initial(site, now))
    if data is not None and tie.is_valid() and lab.is_valid():
        sample = sample_record(sample=lab.save(commit=False), tie=tie.tie())  # type: ignore[attr-defined]
        return _saved(
            request, "sample", f"Lab result {sample.reference} saved.", {"site": site.code}
        )
    context = {"site": site, "sites": sites, "form": tie, "lab": lab}
    context["recent"] = sel.recent_samples(site=site)
    context["unit_numbers"] = _units_context(site, now)
    return _render(request, "sample", context)


@entry_page
@require_http_methods(["GET", "POST"])
@vary_on_headers("HX-Request")
def event_entry(request: HttpRequest) -> HttpResponse:
    """An engine-controller event typed from the controller's display or a service tool."""
    site, sites, form, now = _simple_page(request, form_class=ef.EngineEventForm, keep=("at",))
    if request.method == "POST" and form.is_valid():
        d = form.cleaned_data
        event = engine_event_record(
            unit=d["unit"],
            at=d["occurred_at"],
            hours=d["hours"],
            spn=d["spn"],
            fmi=d["fmi"],
            occurrences=d["occurrences"],
            kind=d["kind"],
        )
        text = f"Engine event saved: {event.unit.fleet_number} SPN {event.spn} FMI {event.fmi}."
        return _saved(
            request, "event", text, {"site": site.code, "at": request.POST.get("occurred_at", "")}
        )
    context = {"site": site, "sites": sites, "form": form, "recent": sel.recent_events(site=site)}
    context["unit_numbers"] = _units_context(site, now)
    return _render(request, "event", context)
