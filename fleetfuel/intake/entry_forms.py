"""The entry pages' forms. Times are typed in the depot's own time zone; volumes in the
depot's unit system (litres or US gallons), stored in litres. Every text field refuses NUL
bytes (Django's ``ProhibitNullCharactersValidator``), which PostgreSQL text cannot hold."""

from __future__ import annotations

from collections.abc import Mapping
from datetime import UTC, datetime, timedelta
from typing import Any
from zoneinfo import ZoneInfo

from django import forms
from django.core.exceptions import ValidationError
from django.utils import timezone

from fleetfuel.fleet.checks import fueling_refusal_for
from fleetfuel.fleet.models import Delivery, EngineEvent, FuelSample, Site, Unit
from fleetfuel.renderers import ModelChoiceField
from services import units
from services.plausibility import time_refusal

from .entry_selectors import RoundRow, active_units, site_deliveries, site_sources

TIME_FORMAT = "%Y-%m-%dT%H:%M"
DELIVERY_CHOICE_DAYS = 120  # a sample's delivery is chosen among this many days' deliveries


class SiteTimeField(forms.DateTimeField):
    """A ``datetime-local`` input read in the site's time zone, refused in the future.

    Of a wall-clock time that occurs twice (the hour the clocks go back) the first is taken,
    which never lies in the future; one that does not occur (the clocks went forward) is
    refused with that reason."""

    widget = forms.DateTimeInput(attrs={"type": "datetime-local"}, format=TIME_FORMAT)

    def __init__(self, *, what: str, **kw: Any) -> None:
        kw.setdefault("input_formats", [TIME_FORMAT, "%Y-%m-%dT%H:%M:%S", "%Y-%m-%d %H:%M"])
        super().__init__(**kw)
        self.what, self.zone, self.now = what, ZoneInfo("UTC"), timezone.now()

    def to_python(self, value: Any) -> datetime | None:
        if isinstance(value, datetime):
            return value if timezone.is_aware(value) else self._local(value)
        text = str(value or "").strip()
        if not text:
            return None
        for fmt in self.input_formats:
            try:
                return self._local(datetime.strptime(text, fmt))
            except (TypeError, ValueError):
                continue
        raise ValidationError(self.error_messages["invalid"], code="invalid")

    def _local(self, naive: datetime) -> datetime:
        at = naive.replace(tzinfo=self.zone, fold=0)
        if at.astimezone(UTC).astimezone(self.zone).replace(tzinfo=None) != naive:
            raise ValidationError(
                f"{naive:%Y-%m-%d %H:%M} does not occur in {self.zone.key}: the clocks "
                "went forward that night."
            )
        return at

    def clean(self, value: Any) -> datetime | None:
        at = super().clean(value)
        if at is not None:
            refusal = time_refusal(at=at, now=self.now, what=self.what)
            if refusal:
                raise ValidationError(refusal)
        return at


class AmountField(forms.CharField):
    """A positive number typed with a decimal point or comma; in ``volume_l`` fields, in the
    site's unit system (US gal at a US site), stored in litres."""

    widget = forms.TextInput(attrs={"inputmode": "decimal", "autocomplete": "off"})

    def __init__(self, *, volume: bool = False, minimum: float = 0.0, **kw: Any) -> None:
        super().__init__(**kw)
        self.volume, self.minimum, self.system = volume, minimum, Site.UnitSystem.METRIC

    def clean(self, value: Any) -> float | None:
        text = super().clean(value)
        try:
            number = units.parse_number(raw=text, label=str(self.label), minimum=self.minimum)
        except ValueError as exc:
            raise ValidationError(str(exc)) from None
        if number is None or not self.volume or self.system != Site.UnitSystem.US:
            return number
        return units.us_gal_to_litres(number)


def volume_label(site: Site) -> str:
    return "US gal" if site.unit_system == Site.UnitSystem.US else "L"


class SiteForm(forms.Form):
    """A form for one site: times in its zone, volumes in its units, its units and sources."""

    def __init__(self, *args: Any, site: Site, now: datetime, **kw: Any) -> None:
        super().__init__(*args, **kw)
        self.site, self.now = site, now
        for field in self.fields.values():
            if isinstance(field, SiteTimeField):
                field.zone, field.now = ZoneInfo(site.time_zone), now
            if isinstance(field, AmountField) and field.volume:
                field.system = site.unit_system
                field.label = f"{field.label} ({volume_label(site)})"
        if "source" in self.fields:
            self.fields["source"].queryset = site_sources(site=site)  # type: ignore[attr-defined]
        if "delivery" in self.fields:
            since = now - timedelta(days=DELIVERY_CHOICE_DAYS)
            self.fields["delivery"].queryset = site_deliveries(site=site).filter(  # type: ignore[attr-defined]
                delivered_at__gte=since
            )

    def clean_unit(self) -> Unit | None:
        number = self.cleaned_data.get("unit", "")
        if not number:
            return None
        unit = (
            active_units(site=self.site, today=self.now.date())
            .select_related("unit_class")
            .filter(fleet_number__iexact=number)
            .first()
        )
        if unit is None:
            raise ValidationError(f"No active unit “{number}” at {self.site.name}.")
        return unit


def unit_field(required: bool = True) -> forms.CharField:
    """A fleet number typed (suggested from the site's units), not picked from a long list;
    a form that starts with it puts the cursor there, for the next entry."""
    attrs = {"list": "site-units", "autocomplete": "off", "autocapitalize": "characters"}
    if required:
        attrs["autofocus"] = ""
    return forms.CharField(
        label="Unit (fleet number)",
        max_length=30,
        required=required,
        widget=forms.TextInput(attrs=attrs),
    )


class FuelingForm(SiteForm):
    unit = unit_field()
    source = ModelChoiceField(queryset=None, required=False, empty_label="(not recorded)")
    fueled_at = SiteTimeField(label="Time", what="fueling")
    amount = AmountField(label="Fuel", volume=True)

    def clean(self) -> dict[str, Any]:
        data = super().clean()
        unit, litres = data.get("unit"), data.get("amount")
        if unit is not None and litres is not None:
            refusal = fueling_refusal_for(unit=unit, litres=litres)
            if refusal:
                self.add_error("amount", refusal)
        return data


class RoundForm(SiteForm):
    taken_at = SiteTimeField(label="Read at", what="reading")


class DeliveryForm(SiteForm):
    source = ModelChoiceField(queryset=None, label="Into (tank or bowser)", empty_label="(choose)")
    delivered_at = SiteTimeField(label="Delivered at", what="delivery")
    amount = AmountField(label="Delivered", volume=True, minimum=1)
    supplier = forms.CharField(max_length=100, required=False)
    ticket = forms.CharField(label="Ticket number", max_length=60, required=False)

    def clean(self) -> dict[str, Any]:
        data = super().clean()
        source, at = data.get("source"), data.get("delivered_at")
        if source and at and Delivery.objects.filter(source=source, delivered_at=at).exists():
            self.add_error("delivered_at", "This source already has a delivery at that time.")
        return data


LAB_FIELDS = [
    "reference",
    "iso4406",
    "count_4_per_ml",
    "count_6_per_ml",
    "count_14_per_ml",
    "water_mg_kg",
    "total_contamination_mg_kg",
    "appearance",
    "microbial",
    "fame_pct_v",
    "lab",
    "lab_method",
    "report_ref",
]


class LabResultForm(forms.ModelForm):  # type: ignore[type-arg]
    """A sample's lab result. The model's own ``clean`` reads the ISO 4406 code (with its
    ``>=`` marks) or works it out from the counts, and wants a code, counts or a water
    content; its validators refuse negative amounts."""

    sampled_at = SiteTimeField(label="Sampled at", what="sample")

    class Meta:
        model = FuelSample
        fields = ["sampled_at", *LAB_FIELDS]
        labels = {
            "reference": "Sample reference",
            "iso4406": "ISO 4406 code",
            "count_4_per_ml": "≥4 µm(c) per mL",
            "count_6_per_ml": "≥6 µm(c) per mL",
            "count_14_per_ml": "≥14 µm(c) per mL",
        }
        help_texts = {
            "water_mg_kg": "Karl Fischer, EN ISO 12937 / ASTM D6304.",
            "iso4406": "e.g. 18/16/13, -/16/13 or >=24/21/18; or give the counts below.",
        }

    def __init__(self, *args: Any, site: Site, now: datetime, **kw: Any) -> None:
        super().__init__(*args, **kw)
        field = self.fields["sampled_at"]
        field.zone, field.now = ZoneInfo(site.time_zone), now  # type: ignore[attr-defined]
        for name in ("count_4_per_ml", "count_6_per_ml", "count_14_per_ml"):
            self.fields[name].widget.attrs["step"] = "any"

    def has_entry(self) -> bool:
        """Whether anything of a sample was typed (a delivery's sample is optional)."""
        return any(str(self.data.get(self.add_prefix(n), "")).strip() for n in LAB_FIELDS)


class SampleTieForm(SiteForm):
    """What a sample was taken from: a fuel source, a delivery, or a unit's own tank."""

    TIES = [("source", "A fuel source"), ("delivery", "A delivery"), ("unit", "A unit's tank")]
    taken_from = forms.ChoiceField(choices=TIES, widget=forms.RadioSelect, initial="source")
    source = ModelChoiceField(queryset=None, required=False, empty_label="(choose)")
    delivery = ModelChoiceField(queryset=None, required=False, empty_label="(choose)")
    unit = unit_field(required=False)

    def clean(self) -> dict[str, Any]:
        data = super().clean()
        tie = data.get("taken_from")
        if tie and not data.get(tie) and tie not in self.errors:
            self.add_error(tie, f"Choose the {dict(self.TIES)[tie].split(' ', 1)[1]}.")
        return data

    def tie(self) -> dict[str, Any]:
        """The sample's source, delivery and unit from what was chosen."""
        data, tie = self.cleaned_data, self.cleaned_data["taken_from"]
        if tie == "unit":
            return {"unit": data["unit"], "source": None, "delivery": None}
        if tie == "delivery":
            return {"source": data["delivery"].source, "delivery": data["delivery"], "unit": None}
        return {"source": data["source"], "delivery": None, "unit": None}


class EngineEventForm(SiteForm):
    unit = unit_field()
    occurred_at = SiteTimeField(label="Time", what="engine event")
    hours = AmountField(label="Hour meter (h)", required=False)
    spn = forms.IntegerField(
        label="SPN",
        min_value=0,
        max_value=524_287,
        help_text="SAE J1939; above 520,191 manufacturer-proprietary, stored as given.",
    )
    fmi = forms.IntegerField(label="FMI", min_value=0, max_value=31)
    occurrences = forms.IntegerField(label="Count", min_value=1, initial=1)
    kind = forms.ChoiceField(choices=EngineEvent.Kind.choices, initial=EngineEvent.Kind.OTHER)


def round_parse(
    *, data: Mapping[str, Any], rows: list[RoundRow]
) -> tuple[dict[int, float], dict[int, str]]:
    """The filled rows of an hour-meter round: (unit id -> hours, unit id -> field error).
    Blank rows are left out; a row whose text is no number, is negative or holds a NUL byte
    gets its error."""
    hours, errors = {}, {}
    for row in rows:
        raw = str(data.get(f"h-{row.unit_id}", ""))
        if "\x00" in raw:
            errors[row.unit_id] = "Null characters are not allowed."
            continue
        try:
            value = units.parse_number(raw=raw[:30], label="Hour meter")
        except ValueError as exc:
            errors[row.unit_id] = str(exc)
            continue
        if value is not None:
            hours[row.unit_id] = value
    return hours, errors
