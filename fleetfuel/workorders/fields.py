"""The fields of the task forms (forms.py): each reads its value from a task, writes what was
typed into a draft, and shows it as an input's value or as read-only text.

Number fields are unit-aware: typed in the site's unit system (bar(g) or psig, mL or US fl oz,
L/h or US gal/h), stored in the SI-style unit (services/units.py). A field's ``needed`` says
the work order cannot close while it is blank; drafts may be saved with any field blank.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from django import forms
from django.core.exceptions import ValidationError

from fleetfuel.accounts.hygiene import TextValidator, number_error
from fleetfuel.ledger.models import ServiceEvent
from services import rules, units

from .context import limit_text

if TYPE_CHECKING:
    from .forms import TaskDraft, TaskForm

MAX_TEXT = 60  # part numbers and serials (the ledger's column width)
MAX_NOTE = 2000


class TaskField(forms.Field):
    """A field of a task form. ``key`` is where its value is kept in the task's entry."""

    def __init__(self, *, needed: bool = False, key: str = "", wide: bool = False, **kw: Any):
        kw.setdefault("required", False)
        super().__init__(**kw)
        self.needed, self.key, self.wide = needed, key, wide

    @property
    def unit(self) -> str:
        return ""

    def bind(self, form: TaskForm, name: str) -> None:
        """Called once the form knows its task and unit."""
        self.key = self.key or name

    def stored(self, form: TaskForm) -> Any:
        return form.task.entry.get(self.key)

    def store(self, draft: TaskDraft, value: Any) -> None:
        draft.entry[self.key] = value

    def as_input(self, value: Any, form: TaskForm) -> str:
        return "" if value is None else str(value)

    def as_text(self, value: Any, form: TaskForm) -> str:
        return self.as_input(value, form) or "—"

    def missing(self, form: TaskForm) -> bool:
        value = self.stored(form)
        return self.needed and (value is None or not str(value).strip())


class TextField(TaskField):
    widget = forms.TextInput(attrs={"autocomplete": "off", "autocapitalize": "characters"})
    multiline = False  # a line break is refused (accounts/hygiene.py)

    def __init__(self, *, max_chars: int = MAX_TEXT, **kw: Any):
        super().__init__(**kw)
        self.max_chars = max_chars
        self.validators.append(TextValidator(multiline=self.multiline))

    def to_python(self, value: Any) -> str:
        return str(value or "").strip()[: self.max_chars]


class NoteField(TextField):
    widget = forms.Textarea(attrs={"rows": 2})
    multiline = True

    def __init__(self, **kw: Any):
        super().__init__(max_chars=MAX_NOTE, wide=True, **kw)


class FittedSerialField(TextField):
    """The serial of the part taken off: the fitted part's, as recorded, until one is typed."""

    def stored(self, form: TaskForm) -> Any:
        if self.key in form.task.entry or form.fitted is None:
            return super().stored(form)
        return form.fitted.serial


class QuantityField(TaskField):
    """A number of ``quantity``, typed in the site's unit system and stored SI-style."""

    widget = forms.TextInput(attrs={"inputmode": "decimal", "autocomplete": "off"})

    def __init__(self, *, quantity: str, minimum: float | None = 0.0, **kw: Any):
        super().__init__(**kw)
        self.quantity, self.minimum, self.system = quantity, minimum, "metric"

    @property
    def unit(self) -> str:
        return units.input_unit(quantity=self.quantity, system=self.system).label

    def bind(self, form: TaskForm, name: str) -> None:
        super().bind(form, name)
        self.system = form.ctx.system

    def to_python(self, value: Any) -> float | None:
        try:
            number = units.parse_number(
                raw=str(value or ""), label=str(self.label), minimum=self.minimum
            )
        except ValueError as exc:
            raise ValidationError(str(exc)) from None
        if number is None:
            return None
        stored = units.to_si(value=number, quantity=self.quantity, system=self.system)
        if problem := number_error(stored, quantity=self.quantity, label=str(self.label)):
            raise ValidationError(problem)
        return stored

    def as_input(self, value: Any, form: TaskForm) -> str:
        if not isinstance(value, int | float):
            return ""
        return units.number_text(
            units.from_si(value=value, quantity=self.quantity, system=self.system)
        )

    def as_text(self, value: Any, form: TaskForm) -> str:
        number = value if isinstance(value, int | float) else None
        return units.display_quantity(value=number, quantity=self.quantity, system=self.system)


class MeasuredField(QuantityField):
    """The measured value, in the quantity of the limit it is measured against."""

    def store(self, draft: TaskDraft, value: Any) -> None:
        draft.entry[self.key] = value
        draft.entry["quantity"] = self.quantity


class PickField(TaskField):
    """One of a list of options (a select); ``invalid`` is said of anything else."""

    widget = forms.Select
    invalid = "Choose one of the listed options."
    empty: Any = None  # stored when nothing is chosen

    def __init__(self, **kw: Any):
        super().__init__(**kw)
        self.options: list[tuple[str, str]] = []

    def bind(self, form: TaskForm, name: str) -> None:
        super().bind(form, name)
        self.options = self.options_for(form)
        self.widget.choices = [("", "Choose…"), *self.options]

    def options_for(self, form: TaskForm) -> list[tuple[str, str]]:
        raise NotImplementedError

    def to_python(self, value: Any) -> Any:
        raw = str(value or "")
        if not raw:
            return self.empty
        if raw not in dict(self.options):
            raise ValidationError(self.invalid)
        return self.value_of(raw)

    def value_of(self, raw: str) -> Any:
        return int(raw)

    def as_text(self, value: Any, form: TaskForm) -> str:
        return dict(self.options).get(self.as_input(value, form), "—")


class AppearanceField(PickField):
    invalid = "What came out: choose one of the listed appearances."
    empty = ""

    def options_for(self, form: TaskForm) -> list[tuple[str, str]]:
        return list(ServiceEvent.Appearance.choices)

    def value_of(self, raw: str) -> Any:
        return raw


class FilterField(PickField):
    """Which fitted filter: kept as the task's component. A task made from a due item is
    bound to that item's filter: it is the one option, shown but not changeable, and a post
    naming another is refused (another filter is another task)."""

    invalid = "Filter: choose one of the fitted filters."
    bound: int | None = None  # the due item's filter, for a task made from one

    def bind(self, form: TaskForm, name: str) -> None:
        super().bind(form, name)
        self.bound = form.task.bound_component_id
        if self.bound is not None:
            self.widget.attrs["disabled"] = True
            self.help_text = (
                "From the due list: this task is for this filter. Another filter changed is "
                "another task: add it under “Add a task”."
            )
            shown = self.options[0][1] if self.options else "the due list's filter"
            self.invalid = (
                f"Filter: this task is for the {shown.lower()} (from the due list) and cannot "
                f"be switched to another. Another filter changed is another task: add it "
                f"under “Add a task”."
            )

    def to_python(self, value: Any) -> Any:
        if self.bound is not None and str(value or "") != str(self.bound):
            raise ValidationError(self.invalid)
        return super().to_python(value)

    def options_for(self, form: TaskForm) -> list[tuple[str, str]]:
        bound = form.task.bound_component_id
        return [
            (str(c.pk), c.get_kind_display())
            for c in form.ctx.filters()
            if bound is None or c.pk == bound
        ]

    def stored(self, form: TaskForm) -> Any:
        return form.task.component_id

    def store(self, draft: TaskDraft, value: Any) -> None:
        draft.component_id = value

    def as_text(self, value: Any, form: TaskForm) -> str:
        component = form.task.component
        return component.get_kind_display() if component else "—"


class LimitField(PickField):
    """Which of the plan's measurements (a MeasurementLimit), kept in the entry's limit_id."""

    invalid = "Measurement: choose one of the plan's measurements."

    def options_for(self, form: TaskForm) -> list[tuple[str, str]]:
        system = form.ctx.system
        return [
            (str(lim.pk), f"{lim.name} ({limit_text(lim, system)})")
            for lim in form.ctx.limits.values()
        ]

    def stored(self, form: TaskForm) -> Any:
        limit = form.ctx.limit_for(form.task)
        return limit.pk if limit else None

    def as_text(self, value: Any, form: TaskForm) -> str:
        limit = form.ctx.limits.get(value) if value is not None else None
        return limit.name if limit else "—"


class CylinderField(PickField):
    """The cylinder, kept on the task. A missing cylinder is named by the closing rules."""

    def bind(self, form: TaskForm, name: str) -> None:
        self.cylinders = form.ctx.cylinders
        super().bind(form, name)

    def options_for(self, form: TaskForm) -> list[tuple[str, str]]:
        return [(str(n), f"Cylinder {n}") for n in rules.cylinder_numbers(cylinders=self.cylinders)]

    def to_python(self, value: Any) -> int | None:
        raw = str(value or "")
        try:
            number = units.parse_number(raw=raw, label=str(self.label), minimum=None)
        except ValueError as exc:
            raise ValidationError(str(exc)) from None
        if number is None:
            return None
        if not rules.cylinder_exists(cylinder=number, cylinders=self.cylinders):
            raise ValidationError(
                f"Cylinder {raw.strip()} does not exist on this engine "
                f"(cylinders 1 to {self.cylinders})."
            )
        return int(number)

    def stored(self, form: TaskForm) -> Any:
        return form.task.cylinder

    def store(self, draft: TaskDraft, value: Any) -> None:
        draft.cylinder = value

    def missing(self, form: TaskForm) -> bool:
        return False
