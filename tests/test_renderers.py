"""The form renderer's Python widgets give the same bytes as Django's own widget templates.

Reference: Django's own renderer (django.forms.renderers.DjangoTemplates, the templates under
django/forms/templates/django/forms/widgets/ of the installed Django), run on the same widget,
name, value and attributes.
"""

from __future__ import annotations

import datetime as dt
from decimal import Decimal
from typing import Any

import pytest
from django import forms
from django.forms.renderers import DjangoTemplates
from django.utils.safestring import mark_safe
from django.utils.translation import gettext_lazy
from hypothesis import given
from hypothesis import strategies as st

from fleetfuel.fleet.models import Site
from fleetfuel.renderers import PYTHON_WIDGETS, FilterChoiceField, FormRenderer

OURS, DJANGO = FormRenderer(), DjangoTemplates()

CHOICES = [
    ("", "All sites"),
    (1, "North <depot> & yard"),
    ("2", gettext_lazy("Lazy label")),
    ('Group "A"', [(3, "Three"), (4, 'Four "quoted"')]),
    (5.5, 12345),
]
ATTRS = {"id": "id_x", "class": "a b", "required": True, "disabled": False, "min": 0,
         "data-x": "<&\">", "placeholder": mark_safe("<i>safe</i>")}  # fmt: skip

WIDGETS = [
    forms.TextInput(),
    forms.TextInput(attrs={"inputmode": "decimal", "autocomplete": "off"}),
    forms.NumberInput(attrs={"step": "any"}),
    forms.EmailInput(),
    forms.HiddenInput(),
    forms.PasswordInput(render_value=True),
    forms.DateInput(format="%Y-%m-%d"),
    forms.DateTimeInput(attrs={"type": "datetime-local"}, format="%Y-%m-%dT%H:%M"),
    forms.TimeInput(),
    forms.URLInput(),
    forms.CheckboxInput(),
    forms.Textarea(attrs={"rows": 3}),
    forms.Select(choices=CHOICES),
    forms.SelectMultiple(choices=CHOICES),
    forms.NullBooleanSelect(),
]
VALUES = [None, "", "plain", "<script>&'\"", mark_safe("<b>safe</b>"), 0, 1, 3, "2", True,
          False, 12345.5, Decimal("1.50"), dt.date(2026, 12, 2),
          dt.datetime(2026, 12, 2, 14, 5), ["1", "4"], (1, 2)]  # fmt: skip


def rendered(widget: forms.Widget, value: object, attrs: dict | None, renderer) -> str:
    """The HTML, or the error's type where the widget itself refuses the value (as
    NullBooleanSelect refuses a list) before any template is reached."""
    try:
        return widget.render("field", value, attrs=attrs, renderer=renderer)
    except (TypeError, KeyError) as exc:
        return type(exc).__name__


def both(widget: forms.Widget, value: object, attrs: dict | None) -> tuple[str, str]:
    return rendered(widget, value, attrs, OURS), rendered(widget, value, attrs, DJANGO)


@pytest.mark.parametrize("widget", WIDGETS, ids=lambda w: type(w).__name__)
@pytest.mark.parametrize("value", VALUES, ids=repr)
@pytest.mark.parametrize("attrs", [None, ATTRS], ids=["no-attrs", "attrs"])
def test_python_widgets_match_django_templates(widget, value, attrs):
    ours, django = both(widget, value, attrs)
    assert ours == django


@given(value=st.text(), label=st.text(), attr=st.one_of(st.text(), st.integers(), st.booleans()))
def test_any_text_matches_django_templates(value, label, attr):
    for widget in (
        forms.TextInput(attrs={"data-v": attr}),
        forms.Textarea(attrs={"data-v": attr}),
        forms.Select(choices=[(value, label), ("x", label)], attrs={"data-v": attr}),
    ):
        ours, django = both(widget, value, None)
        assert ours == django


def test_other_widgets_go_to_django_templates():
    """A widget it does not cover (radio buttons) is rendered by Django's templates."""
    assert "django/forms/widgets/radio.html" not in PYTHON_WIDGETS
    radio = forms.RadioSelect(choices=[("a", "A"), ("b", "B")])
    ours, django = both(radio, "a", {"id": "id_r"})
    assert ours == django and 'type="radio"' in ours


def test_the_settings_use_it(settings):
    assert settings.FORM_RENDERER == "fleetfuel.renderers.FormRenderer"
    form = forms.Form()
    assert isinstance(form.renderer, FormRenderer)


@pytest.mark.parametrize("raw", ["", None, "PK", " PK ", "abc", "999999", "1.5", "OBJ"])
def test_a_filter_choice_is_checked_as_djangos_field_checks_it(site: Any, raw: Any) -> None:
    # Reference: Django's own ModelChoiceField.clean over the same queryset: the same row
    # or the same error code, whatever the input (the listed rows stand in for its lookup).
    value = {"PK": str(site.pk), " PK ": f" {site.pk} ", "OBJ": site}.get(raw, raw)

    def outcome(field: forms.ModelChoiceField) -> Any:
        try:
            return field.clean(value)
        except forms.ValidationError as exc:
            return exc.code

    ours = FilterChoiceField(queryset=Site.objects.order_by("name"), required=False)
    theirs = forms.ModelChoiceField(queryset=Site.objects.order_by("name"), required=False)
    assert outcome(ours) == outcome(theirs)


def test_a_filter_choice_and_its_select_are_one_query(
    site: Any, django_assert_num_queries: Any
) -> None:
    class Filters(forms.Form):
        site = FilterChoiceField(queryset=Site.objects.order_by("name"), required=False)

    with django_assert_num_queries(1):
        form = Filters({"site": str(site.pk)})
        assert form.is_valid() and form.cleaned_data["site"] == site
        assert f'<option value="{site.pk}" selected>' in str(form["site"])
