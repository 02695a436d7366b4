"""Shared building blocks of the forms: fields in the member's temperature unit, plain
number and yes/no fields, and showing a service's ValidationError on a form.

Forms validate only: limits on every number, °F entry converted to °C in clean_ methods.
Temperature fields are entered in the member's unit (°C or °F); absolute temperatures
convert with the offset, differences (camera accuracy) only with the 5/9 factor
(survey/thermal/units.py). Limits are written in °C and shown to the user in their unit.
"""

import datetime

from django import forms
from django.core.exceptions import ValidationError
from django.http import HttpRequest

from survey.models import Member
from survey.thermal import units

C, F = Member.TemperatureUnit.CELSIUS, Member.TemperatureUnit.FAHRENHEIT
# Free text is printed in reports: ten pages is plenty, a megabyte is a mistake.
TEXT_LIMIT = 20_000


FIRST_SURVEY_DATE = datetime.date(1950, 1, 1)


def submitted(request: HttpRequest):
    """The submitted data of a POST (even an empty one), None for a GET."""
    return request.POST if request.method == "POST" else None


def form_errors_text(form) -> str:
    parts = []
    for field, errors in form.errors.items():
        label = form.fields[field].label if field in form.fields else ""
        parts.append(f"{label}: {' '.join(errors)}" if label else " ".join(errors))
    return " ".join(parts)


def add_service_error(form: forms.Form, error: ValidationError) -> None:
    """Show a service's ValidationError on the form: on its field when the form has one."""
    if hasattr(error, "error_dict"):
        for field, errors in error.message_dict.items():
            form.add_error(field if field in form.fields else None, errors)
    else:
        form.add_error(None, error.messages)


class UnitFormMixin:
    """Builds temperature fields in the member's unit from limits given in °C.

    `temperatures` maps a field name to (label, low_c, high_c, required); `differences`
    likewise for temperature differences (no offset, lower limit 0).
    """

    temperatures: dict[str, tuple[str, float, float, bool]] = {}
    differences: dict[str, tuple[str, float, float, bool]] = {}

    def __init__(self, *args, unit: str = C, **kwargs):
        if unit not in (C, F):
            raise ValueError(f"unit must be C or F, not {unit!r}")
        self.unit = unit
        super().__init__(*args, **kwargs)
        for name, (label, low, high, required) in self.temperatures.items():
            self.fields[name] = self._number(
                label, units.from_celsius(low, unit), units.from_celsius(high, unit), required
            )
        for name, (label, low, high, required) in self.differences.items():
            self.fields[name] = self._number(
                label,
                units.difference_from_kelvin(low, unit),
                units.difference_from_kelvin(high, unit),
                required,
            )

    def _number(self, label: str, low: float, high: float, required: bool) -> forms.FloatField:
        symbol = units.symbol(self.unit)
        return forms.FloatField(
            label=f"{label} ({symbol})",
            required=required,
            min_value=round(low, 1),
            max_value=round(high, 1),
            error_messages={
                "min_value": f"Enter a temperature of at least %(limit_value)s {symbol}.",
                "max_value": f"Enter a temperature of at most %(limit_value)s {symbol}.",
                "invalid": f"Enter a number in {symbol}, for example 21.5.",
            },
        )

    def _temperature_c(self, name: str) -> float | None:
        return units.to_celsius(self.cleaned_data.get(name), self.unit)

    def _difference_c(self, name: str) -> float | None:
        return units.difference_to_kelvin(self.cleaned_data.get(name), self.unit)

    @classmethod
    def initial_in_unit(cls, values_c: dict, unit: str) -> dict:
        """Turn stored °C values into the initial values of the form for `unit`."""
        initial = dict(values_c)
        for name in cls.temperatures:
            initial[name] = units.rounded(units.from_celsius(values_c.get(name), unit))
        for name in cls.differences:
            initial[name] = units.rounded(units.difference_from_kelvin(values_c.get(name), unit))
        return initial


def number_field(label: str, low: float, high: float, required: bool = False, unit_text: str = ""):
    unit_text = unit_text.replace("%", "%%")
    return forms.FloatField(
        label=label,
        required=required,
        min_value=low,
        max_value=high,
        error_messages={
            "min_value": f"Enter at least %(limit_value)s{unit_text}.",
            "max_value": f"Enter at most %(limit_value)s{unit_text}.",
        },
    )


YES_NO = [("", "Not recorded"), ("yes", "Yes"), ("no", "No")]


def yes_no_field(label: str) -> forms.TypedChoiceField:
    return forms.TypedChoiceField(
        label=label,
        choices=YES_NO,
        required=False,
        coerce=lambda value: value == "yes",
        empty_value=None,
    )


def yes_no_initial(value: bool | None) -> str:
    return "" if value is None else ("yes" if value else "no")
