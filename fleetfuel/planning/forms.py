"""Forms of the planning app: the due list's filters and a manager's work-list settings."""

from __future__ import annotations

from typing import Any

from django import forms
from django.db.models import QuerySet

from fleetfuel.accounts.models import Profile
from fleetfuel.fleet.models import Site, UnitClass
from fleetfuel.renderers import FilterChoiceField

from .models import DueItem
from .source_models import SourceDecision


class DueFilterForm(forms.Form):
    """The due list's filters: a plain GET form (works without JavaScript)."""

    site = FilterChoiceField(queryset=Site.objects.none(), required=False, empty_label="All sites")
    unit_class = FilterChoiceField(
        queryset=UnitClass.objects.none(), required=False, empty_label="All classes"
    )
    task = forms.ChoiceField(choices=[("", "All tasks"), *DueItem.Task.choices], required=False)
    status = forms.ChoiceField(
        choices=[("", "Any status"), *DueItem.Status.choices], required=False
    )
    within_days = forms.IntegerField(
        min_value=0, max_value=3650, required=False, label="Due within (days)"
    )
    within_hours = forms.FloatField(
        min_value=0, max_value=100_000, required=False, label="Due within (h)"
    )
    flagged = forms.BooleanField(required=False, label="Flagged units only")
    q = forms.CharField(required=False, max_length=30, label="Fleet number")
    sort = forms.ChoiceField(
        choices=[
            ("urgency", "Urgency"),
            ("due", "Due date"),
            ("unit", "Unit"),
            ("task", "Task"),
            ("status", "Status"),
        ],
        required=False,
    )
    page = forms.IntegerField(min_value=1, required=False)

    def __init__(self, *args: Any, sites: QuerySet[Site], classes: QuerySet[UnitClass], **kw: Any):
        super().__init__(*args, **kw)
        self.fields["site"].queryset = sites  # type: ignore[attr-defined]
        self.fields["unit_class"].queryset = classes  # type: ignore[attr-defined]


_NUMBER_ERRORS = ("min_value", "max_value", "invalid", "required")


class WorkListSettingsForm(forms.ModelForm):
    class Meta:
        model = Profile
        fields = ["work_list_subscribed", "work_list_hour", "work_list_days_ahead"]
        error_messages = {
            "work_list_hour": dict.fromkeys(_NUMBER_ERRORS, "Give a whole hour from 0 to 23 "
                                            "(the site's local time), e.g. 6."),
            "work_list_days_ahead": dict.fromkeys(_NUMBER_ERRORS, "Give a number of days from "
                                                  "1 to 60, e.g. 7."),
        }  # fmt: skip


class SourceDecisionResolveForm(forms.Form):
    """What a manager records when closing a decision at a fuel source."""

    outcome = forms.ChoiceField(
        label="What was done",
        choices=[
            (o.value, o.label)
            for o in SourceDecision.Outcome
            if o in SourceDecision.MANAGER_OUTCOMES
        ],
        widget=forms.RadioSelect,
    )
    note = forms.CharField(label="Note", required=False, widget=forms.Textarea(attrs={"rows": 3}))
    new_sample_reference = forms.CharField(
        label="New sample (lab reference)",
        max_length=40,
        required=False,
        help_text="Linked to the lab result when that reference is on file.",
    )
