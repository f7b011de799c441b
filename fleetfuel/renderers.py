"""The form renderer: Django's own, with its commonest widget templates written as plain
Python so a page of form fields does not pay a template render per field and per option.

Django renders each widget through a template (``select.html`` includes ``attrs.html`` once
and ``select_option.html`` once per option); on the due list that was about a third of the
page's time. The functions below give the same bytes as those templates for the widgets they
cover (``tests/test_renderers.py`` compares them with Django's own renderer over many
widgets and values); any other template, or a case they do not cover, goes to Django's.

``ModelChoiceField`` here reads its choices in one plain query: Django's iterates a
server-side cursor (declare, fetch, close: four round trips on PostgreSQL) for a list of
depots or classes that fits in one.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

from django import forms
from django.core.exceptions import ValidationError
from django.forms.models import ModelChoiceIterator
from django.forms.renderers import DjangoTemplates
from django.utils.formats import localize
from django.utils.html import conditional_escape, escape
from django.utils.safestring import SafeData
from django.utils.timezone import template_localtime

WIDGETS = "django/forms/widgets/"
# Every widget whose template is only an include of input.html.
INPUT_TEMPLATES = {
    f"{WIDGETS}{name}.html"
    for name in (
        "input", "checkbox", "color", "date", "datetime", "email", "hidden", "number",
        "password", "search", "tel", "text", "time", "url",
    )
}  # fmt: skip


def _shown(value: Any) -> str:
    """``{{ value }}`` under autoescape (django.template.base.render_value_in_context)."""
    value = localize(template_localtime(value))
    return conditional_escape(value if isinstance(value, str) else str(value))


def _formatted(value: Any) -> str:
    """``{{ value|stringformat:'s' }}``: formatted without localising, escaped unless the
    value was already safe (the filter is ``is_safe``)."""
    text = "%s" % (str(value) if isinstance(value, tuple) else value)
    return text if isinstance(value, SafeData) else escape(text)


def _attrs(attrs: dict[str, Any]) -> str:
    """``attrs.html``: each attribute but those set to False; True ones bare."""
    out = []
    for name, value in attrs.items():
        if value is False:
            continue
        out.append(" " + _shown(name))
        if value is not True:
            out.append(f'="{_formatted(value)}"')
    return "".join(out)


def _input(widget: dict[str, Any]) -> str:
    value = widget["value"]
    shown = f' value="{_formatted(value)}"' if value is not None else ""
    return (
        f'<input type="{_shown(widget["type"])}" name="{_shown(widget["name"])}"'
        f"{shown}{_attrs(widget['attrs'])}>"
    )


def _option(option: dict[str, Any]) -> str:
    return (
        f'<option value="{_formatted(option["value"])}"{_attrs(option["attrs"])}>'
        f"{_shown(option['label'])}</option>\n"
    )


def _select(widget: dict[str, Any]) -> str | None:
    out = [f'<select name="{_shown(widget["name"])}"{_attrs(widget["attrs"])}>']
    for group_name, choices, _index in widget["optgroups"]:
        if group_name:
            out.append(f'\n  <optgroup label="{_shown(group_name)}">')
        for option in choices:
            if option["template_name"] != f"{WIDGETS}select_option.html":
                return None
            out.append("\n  " + _option(option))
        if group_name:
            out.append("\n  </optgroup>")
    out.append("\n</select>")
    return "".join(out)


def _textarea(widget: dict[str, Any]) -> str:
    value = widget["value"]
    return (
        f'<textarea name="{_shown(widget["name"])}"{_attrs(widget["attrs"])}>\n'
        f"{_shown(value) if value else ''}</textarea>"
    )


PYTHON_WIDGETS: dict[str, Callable[[dict[str, Any]], str | None]] = {
    **dict.fromkeys(INPUT_TEMPLATES, _input),
    f"{WIDGETS}select.html": _select,
    f"{WIDGETS}textarea.html": _textarea,
}


class FormRenderer(DjangoTemplates):
    """Django's template renderer, the widgets of PYTHON_WIDGETS excepted."""

    def render(self, template_name: str, context: dict[str, Any], request: Any = None) -> str:
        widget = context.get("widget")
        fn = PYTHON_WIDGETS.get(template_name)
        if fn is not None and isinstance(widget, dict) and not callable(widget.get("value")):
            html = fn(widget)
            if html is not None:
                return html.strip()
        return super().render(template_name, context, request)


class ListedChoices(ModelChoiceIterator):
    """The choices of a model choice field from one plain query (no ``iterator()``), kept
    on the form's own copy of the queryset for a second rendering."""

    def __iter__(self) -> Any:
        if self.field.empty_label is not None:
            yield ("", self.field.empty_label)
        for obj in self.queryset:
            yield self.choice(obj)


class ModelChoiceField(forms.ModelChoiceField):
    """Django's model choice field for short lists (depots, classes, sources)."""

    iterator = ListedChoices


class FilterChoiceField(ModelChoiceField):
    """A filter form's short list (depots, classes), shown with the results: the choice is
    checked against the listed rows, so one query serves the check and the select (Django's
    field reads the chosen row once more, by its key)."""

    def to_python(self, value: Any) -> Any:
        if value in self.empty_values:
            return None
        model = self.queryset.model
        key = self.to_field_name or model._meta.pk.name
        if isinstance(value, model):
            value = getattr(value, key)
        try:
            wanted = model._meta.get_field(key).to_python(value)
        except ValidationError:
            wanted = None
        for row in self.queryset:  # listed once, kept for the select's rendering
            if wanted is not None and getattr(row, key) == wanted:
                return row
        raise ValidationError(
            self.error_messages["invalid_choice"],
            code="invalid_choice",
            params={"value": value},
        )
