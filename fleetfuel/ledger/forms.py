"""Forms of the history page: the filters (shared by the exports) and a manager's correction."""

from __future__ import annotations

from typing import Any
from zoneinfo import ZoneInfo

from django import forms
from django.db.models import QuerySet
from django.utils import timezone

from fleetfuel.accounts.hygiene import DateValidator, QuantityValidator, TextValidator
from fleetfuel.fleet.models import Component, ComponentKind, Site, Unit
from fleetfuel.renderers import FilterChoiceField
from services import bounds
from services.rules import cylinder_numbers

from .effective import effective_kind_of, version_in_effect
from .models import ExportLog, ServiceEvent
from .selectors import HistoryScope

_DATE = forms.DateInput(attrs={"type": "date"}, format="%Y-%m-%d")
_LINE = TextValidator(multiline=False)  # names, serials: one line (accounts/hygiene.py)


class HistoryFilterForm(forms.Form):
    site = FilterChoiceField(queryset=Site.objects.none(), required=False, empty_label="All sites")
    unit = forms.CharField(
        label="Unit (fleet number)",
        required=False,
        max_length=300,
        help_text="One or more, separated by commas.",
        widget=forms.TextInput(attrs={"placeholder": "e.g. N-001, N-002"}),
    )
    date_from = forms.DateField(label="From (depot day)", required=False, widget=_DATE)
    date_to = forms.DateField(label="To (depot day)", required=False, widget=_DATE)
    kind = forms.ChoiceField(
        label="Kind", required=False, choices=[("", "All kinds"), *ServiceEvent.Kind.choices]
    )
    recorded = forms.BooleanField(
        label="Every entry as recorded",
        required=False,
        help_text="Corrected entries and their corrections one by one, as the chain holds them.",
    )

    def __init__(self, *args: Any, sites: QuerySet[Site], **kwargs: Any) -> None:
        super().__init__(*args, **kwargs)
        self.fields["site"].queryset = sites  # type: ignore[attr-defined]

    def clean_unit(self) -> tuple[str, ...]:
        text = self.cleaned_data.get("unit") or ""
        return tuple(dict.fromkeys(n.strip() for n in text.split(",") if n.strip()))

    def clean(self) -> dict[str, Any]:
        data = super().clean() or {}
        start, end = data.get("date_from"), data.get("date_to")
        if start and end and start > end:
            self.add_error("date_to", "The end date is before the start date.")
        return data

    def scope(self, *, allowed_site_ids: list[int]) -> HistoryScope:
        """The filters that are valid (an invalid one is left out and shown as an error)."""
        data = self.cleaned_data if hasattr(self, "cleaned_data") else {}
        return HistoryScope(
            allowed_site_ids=tuple(allowed_site_ids),
            site=data.get("site"),
            fleet_numbers=data.get("unit") or (),
            date_from=data.get("date_from"),
            date_to=data.get("date_to"),
            kind=data.get("kind") or "",
            recorded=bool(data.get("recorded")),
        )


class ExportForm(HistoryFilterForm):
    format = forms.ChoiceField(choices=ExportLog.Format.choices)


KIND_CHOICES = [(v, label) for v, label in ServiceEvent.Kind.choices if v != "correction"]


def part_choices(unit: Unit) -> list[tuple[str, str]]:
    """The parts an entry may name: each of the unit's parts ("c<id>"), fitted or since
    removed, then a kind of part with no particular one ("k<kind>")."""
    parts = [
        (f"c{c.pk}", _part_label(c))
        for c in Component.objects.filter(unit=unit).order_by("removed_on", "kind", "position")
    ]
    kinds = [(f"k{v}", f"{label} (no particular part)") for v, label in ComponentKind.choices]
    return [("", "None"), *parts, *kinds]


def _part_label(comp: Component) -> str:
    label = str(ComponentKind(comp.kind).label)
    if comp.position:
        label += f", cylinder {comp.position}"
    if comp.serial:
        label += f", serial {comp.serial}"
    return label + (f" (removed {comp.removed_on:%Y-%m-%d})" if comp.removed_on else "")


class CorrectionForm(forms.Form):
    """What a manager may restate about an entry, prefilled with the version in effect.

    Times are the depot's local time; the view activates the depot's time zone around it.
    """

    kind = forms.ChoiceField(label="What was done", choices=KIND_CHOICES)
    component = forms.ChoiceField(label="Part", required=False)
    cylinder = forms.TypedChoiceField(
        label="Cylinder", required=False, coerce=int, empty_value=None
    )
    performed_at = forms.DateTimeField(
        label="Done at (depot time)",
        widget=forms.DateTimeInput(attrs={"type": "datetime-local"}, format="%Y-%m-%dT%H:%M"),
        input_formats=["%Y-%m-%dT%H:%M", "%Y-%m-%d %H:%M"],
        validators=[DateValidator("done")],
    )
    hour_meter = forms.FloatField(
        label="Hour meter (h)", required=False, validators=[QuantityValidator("hours")]
    )
    part_number = forms.CharField(required=False, max_length=60, validators=[_LINE])
    old_serial = forms.CharField(
        label="Old serial", required=False, max_length=60, validators=[_LINE]
    )
    new_serial = forms.CharField(
        label="New serial", required=False, max_length=60, validators=[_LINE]
    )
    water_ml = forms.FloatField(
        label="Water drained (mL)", required=False, validators=[QuantityValidator("volume_ml")]
    )
    dp_before_bar = forms.FloatField(
        label="Filter dP before (bar)",
        required=False,
        validators=[QuantityValidator("pressure_bar_gauge")],
    )
    value = forms.FloatField(label="Measured value", required=False)
    passed = forms.NullBooleanField(label="Measurement passed", required=False)
    notes = forms.CharField(
        required=False, max_length=bounds.NOTE_MAX, widget=forms.Textarea(attrs={"rows": 2})
    )
    reason = forms.CharField(
        label="Why is this being corrected?",
        max_length=bounds.NOTE_MAX,
        widget=forms.Textarea(attrs={"rows": 2}),
    )

    def __init__(self, *args: Any, event: ServiceEvent, **kwargs: Any) -> None:
        self.event = event
        self.current = current = version_in_effect(event)
        unit = event.unit
        zone = ZoneInfo(unit.site.time_zone)
        initial = {
            name: getattr(current, name)
            for name in self.base_fields
            if name not in {"reason", "kind", "component"}
        }
        initial["kind"] = effective_kind_of(current)
        initial["component"] = (
            f"c{current.component_id}"
            if current.component_id
            else (f"k{current.component_kind}" if current.component_kind else "")
        )
        initial["performed_at"] = timezone.localtime(current.performed_at, zone).replace(
            second=0, microsecond=0, tzinfo=None
        )
        super().__init__(*args, initial=initial, **kwargs)
        self.fields["component"].choices = part_choices(unit)  # type: ignore[attr-defined]
        self.fields["cylinder"].choices = [  # type: ignore[attr-defined]
            ("", "None"),
            *((n, str(n)) for n in cylinder_numbers(cylinders=unit.cylinders)),
        ]

    def clean_component(self) -> tuple[Component | None, str]:
        """(the part, its kind) from the choice."""
        choice = self.cleaned_data.get("component") or ""
        if choice.startswith("c"):
            comp = Component.objects.filter(pk=int(choice[1:]), unit_id=self.event.unit_id).first()
            if comp is None:
                raise forms.ValidationError("Choose one of this unit's parts.")
            return comp, comp.kind
        return None, choice[1:]

    def changed_fields(self) -> dict[str, Any]:
        """The entered values, the unchanged minute of ``performed_at`` kept to the second."""
        values = {k: v for k, v in self.cleaned_data.items() if k not in {"reason", "kind"}}
        values["component"], values["component_kind"] = values["component"]
        original = self.current.performed_at
        if values["performed_at"] == original.replace(second=0, microsecond=0):
            values["performed_at"] = original
        for name in ("part_number", "old_serial", "new_serial", "notes"):
            values[name] = values[name] or ""
        return values
