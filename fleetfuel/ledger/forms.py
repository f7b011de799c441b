"""Forms of the history page: the filters (shared by the exports) and a manager's correction."""

from __future__ import annotations

from typing import Any
from zoneinfo import ZoneInfo

from django import forms
from django.db.models import QuerySet
from django.utils import timezone

from fleetfuel.accounts.hygiene import DateValidator, QuantityValidator, TextValidator
from fleetfuel.fleet.models import Site
from services import bounds

from .models import ExportLog, ServiceEvent
from .selectors import HistoryScope

_DATE = forms.DateInput(attrs={"type": "date"}, format="%Y-%m-%d")
_LINE = TextValidator(multiline=False)  # names, serials: one line (accounts/hygiene.py)


class HistoryFilterForm(forms.Form):
    site = forms.ModelChoiceField(
        queryset=Site.objects.none(), required=False, empty_label="All sites"
    )
    unit = forms.CharField(
        label="Unit (fleet number)",
        required=False,
        max_length=300,
        help_text="One or more, separated by commas.",
        widget=forms.TextInput(attrs={"placeholder": "e.g. N-001, N-002"}),
    )
    date_from = forms.DateField(label="From (UTC day)", required=False, widget=_DATE)
    date_to = forms.DateField(label="To (UTC day)", required=False, widget=_DATE)
    kind = forms.ChoiceField(
        label="Kind", required=False, choices=[("", "All kinds"), *ServiceEvent.Kind.choices]
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
        )


class ExportForm(HistoryFilterForm):
    format = forms.ChoiceField(choices=ExportLog.Format.choices)


class CorrectionForm(forms.Form):
    """What a manager may restate about an entry, prefilled with the entry's values.

    Times are the site's local time; the view activates the site's time zone around it.
    """

    performed_at = forms.DateTimeField(
        label="Done at (site time)",
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
        zone = ZoneInfo(event.unit.site.time_zone)
        initial = {name: getattr(event, name) for name in self.base_fields if name != "reason"}
        initial["performed_at"] = timezone.localtime(event.performed_at, zone).replace(
            second=0, microsecond=0, tzinfo=None
        )
        super().__init__(*args, initial=initial, **kwargs)

    def changed_fields(self) -> dict[str, Any]:
        """The entered values, the unchanged minute of ``performed_at`` kept to the second."""
        values = {k: v for k, v in self.cleaned_data.items() if k != "reason"}
        original = self.event.performed_at
        if values["performed_at"] == original.replace(second=0, microsecond=0):
            values["performed_at"] = original
        for name in ("part_number", "old_serial", "new_serial", "notes"):
            values[name] = values[name] or ""
        return values
