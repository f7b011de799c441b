"""Input hygiene at one door: every text, number and date a person types is checked against
``services/bounds.py`` before anything stores it, and a bad one is a field error, never a 500.

``hygiene_install()`` (called once by the accounts app when Django starts) puts the checks on:

* every Django form field (``forms.Field.default_validators``): no control characters in text
  (a text area may hold line breaks), no number beyond any stored quantity, no date outside
  the planning window. Forms that know a field's quantity add ``QuantityValidator`` to it;
* every form made from a model field of any app (the admin, model forms): single-line text
  (``CharField``) refuses line breaks too; a ``FloatField`` is checked against the quantity
  its name says (``bounds.quantity_for_name``). The checks go on the form field the model
  field makes, not on the model field: the model's definition (and so its migrations) and
  what code writes directly (the ledger's own checks) stay as they are.

Parsers that read a post without a Django field (the tablet's job fields, a "not done"
reason) call ``text_error`` / ``number_error`` from here.
"""

from __future__ import annotations

import datetime as dt
from typing import Any

from django import forms
from django.apps import apps
from django.core.exceptions import ValidationError
from django.db import models
from django.utils import timezone
from django.utils.deconstruct import deconstructible

from services import bounds


@deconstructible
class TextValidator:
    """Refuses control characters in a string (line breaks too unless ``multiline``)."""

    code = "control_characters"

    def __init__(self, *, multiline: bool = True) -> None:
        self.multiline = multiline

    def __call__(self, value: Any) -> None:
        if isinstance(value, str):
            problem = bounds.text_problem(value=value, multiline=self.multiline)
            if problem:
                raise ValidationError(problem, code=self.code)

    def __eq__(self, other: object) -> bool:
        return isinstance(other, TextValidator) and other.multiline == self.multiline


@deconstructible
class QuantityValidator:
    """Refuses a number outside the plausible range of ``quantity`` (services/bounds.py)."""

    code = "out_of_range"

    def __init__(self, quantity: str) -> None:
        self.quantity = quantity

    def __call__(self, value: Any) -> None:
        if isinstance(value, int | float) and not isinstance(value, bool):
            problem = bounds.number_problem(value=float(value), quantity=self.quantity)
            if problem:
                raise ValidationError(problem, code=self.code)

    def __eq__(self, other: object) -> bool:
        return isinstance(other, QuantityValidator) and other.quantity == self.quantity


@deconstructible
class DateValidator:
    """Refuses a date (or a datetime's day) outside ``window`` around today."""

    code = "date_out_of_window"

    def __init__(self, window: str = "plan") -> None:
        self.window = window

    def __call__(self, value: Any) -> None:
        if isinstance(value, dt.datetime):
            value = value.date()
        if isinstance(value, dt.date):
            problem = bounds.date_problem(
                value=value, today=timezone.localdate(), window=self.window
            )
            if problem:
                raise ValidationError(problem, code=self.code)

    def __eq__(self, other: object) -> bool:
        return isinstance(other, DateValidator) and other.window == self.window


class InputValidator:
    """The check every form field gets: text (its characters and, where the field sets no
    shorter ``max_length``, a length cap), any number, any date."""

    def __init__(self) -> None:
        self.checks = (TextValidator(), QuantityValidator("magnitude"), DateValidator("plan"))

    def __call__(self, value: Any) -> None:
        if isinstance(value, str) and (problem := bounds.length_problem(value=value)):
            raise ValidationError(problem, code="too_long")
        for check in self.checks:
            check(value)


def text_error(value: str, *, label: str, multiline: bool = True) -> str:
    """What is wrong with typed text ("" when nothing), for parsers without a form field."""
    return bounds.text_problem(value=value, multiline=multiline, label=label)


def number_error(value: float | None, *, quantity: str, label: str) -> str:
    """What is wrong with a typed number ("" when nothing or blank)."""
    if value is None:
        return ""
    return bounds.number_problem(value=value, quantity=quantity, label=label)


def _model_field_checks(field: models.Field[Any, Any]) -> list[Any]:
    """What a form field made from ``field`` checks beyond ``InputValidator``."""
    if isinstance(field, models.CharField) and not field.choices:
        return [TextValidator(multiline=False)]
    if isinstance(field, models.FloatField):
        return [QuantityValidator(bounds.quantity_for_name(name=field.name))]
    return []


def _formfield_checked(field: models.Field[Any, Any], checks: list[Any]) -> Any:
    make = field.formfield

    def formfield(**kwargs: Any) -> forms.Field | None:
        form_field = make(**kwargs)
        if form_field is not None:
            form_field.validators.extend(checks)
        return form_field

    return formfield


def hygiene_install() -> None:
    """Put the checks on every form field (see the module's text)."""
    forms.Field.default_validators = [InputValidator()]
    for model in apps.get_models(include_auto_created=True):
        for field in model._meta.concrete_fields:
            if checks := _model_field_checks(field):
                field.formfield = _formfield_checked(field, checks)  # type: ignore[method-assign]
