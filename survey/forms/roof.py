"""Forms of roof surveys: the plan, a thermogram's place on it, a moisture check."""

import datetime

from django import forms
from django.core.exceptions import ValidationError

from survey.forms.fields import FIRST_SURVEY_DATE, number_field
from survey.models import MoistureCheck


class RoofPlanForm(forms.Form):
    plan = forms.FileField(
        label="Roof plan (PNG or JPEG)",
        help_text="A drawing or aerial photo of the roof; at most 20 MB.",
        error_messages={"required": "Choose the plan's picture file."},
    )


class PlanPositionForm(forms.Form):
    """Where a thermogram was taken on the plan, in percent from the top-left corner."""

    x_pct = number_field("Across (% of width from the left)", 0, 100, unit_text=" %")
    y_pct = number_field("Down (% of height from the top)", 0, 100, unit_text=" %")

    def clean(self):
        data = super().clean()
        if not self.errors and (data.get("x_pct") is None) != (data.get("y_pct") is None):
            raise ValidationError("Give both positions on the plan, or clear both.")
        return data


class MoistureCheckForm(forms.Form):
    PREFIX = "check"  # the finding page holds other forms with a note field

    method = forms.ChoiceField(choices=MoistureCheck.Method.choices, label="Checked by")
    checked_on = forms.DateField(
        label="Date",
        widget=forms.DateInput(attrs={"type": "date"}),
        error_messages={"invalid": "Enter the date of the check, for example 2026-04-24."},
    )
    result = forms.ChoiceField(choices=MoistureCheck.Result.choices, label="Insulation found")
    reading = forms.CharField(
        max_length=100,
        required=False,
        label="Reading",
        help_text="With its scale, e.g. 38 % WME, or what the core showed.",
    )
    note = forms.CharField(
        widget=forms.Textarea(attrs={"rows": 2}), required=False, max_length=2000
    )

    def clean_checked_on(self):
        value = self.cleaned_data["checked_on"]
        latest = datetime.date.today() + datetime.timedelta(days=1)
        if not FIRST_SURVEY_DATE <= value <= latest:
            raise ValidationError("Enter the date the check was made (not in the future).")
        return value
