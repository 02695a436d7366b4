"""Forms of clients, sites, surveys (with their conditions) and the unit preference."""

import datetime

from django import forms
from django.core.exceptions import ValidationError

from survey.forms.fields import (
    FIRST_SURVEY_DATE,
    TEXT_LIMIT,
    UnitFormMixin,
    number_field,
    yes_no_field,
    yes_no_initial,
)
from survey.models import Conditions, Member, Survey


class ClientForm(forms.Form):
    name = forms.CharField(max_length=200)
    contact_name = forms.CharField(max_length=200, required=False)
    email = forms.EmailField(required=False)
    address = forms.CharField(widget=forms.Textarea(attrs={"rows": 3}), required=False)


class SiteForm(forms.Form):
    client = forms.ModelChoiceField(queryset=None, empty_label="Choose a client")
    name = forms.CharField(max_length=200, label="Site name")
    address = forms.CharField(widget=forms.Textarea(attrs={"rows": 3}), required=False)

    def __init__(self, *args, clients, **kwargs):
        super().__init__(*args, **kwargs)
        self.fields["client"].queryset = clients


CONDITION_CHOICE_FIELDS = ("sky", "precipitation")


CONDITION_BOOL_FIELDS = (
    "surfaces_dry",
    "sunny_day_before",
    "equipment_steady",
    "covers_opened_by_qualified",
)


CONDITION_NUMBER_FIELDS = (
    "indoor_rh_pct",
    "outdoor_rh_pct",
    "wind_m_s",  # a speed: shown in the member's unit (SurveyForm.speeds)
    "hours_since_sun",
    "delta_t_hours",
    "load_pct",
)


CONDITION_TEMPERATURE_FIELDS = ("indoor_air_c", "outdoor_air_c", "ambient_air_c")


class SurveyForm(UnitFormMixin, forms.Form):
    """A survey and its conditions on one page."""

    temperatures = {
        "indoor_air_c": ("Indoor air", -50, 80, False),
        "outdoor_air_c": ("Outdoor air", -60, 60, False),
        "ambient_air_c": ("Air around the equipment", -60, 200, False),
        "default_reflected_c": ("Reflected temperature for uploads", -60, 500, False),
    }
    differences = {"camera_accuracy_c": ("Camera accuracy ±", 0, 50, True)}
    speeds = {"wind_m_s": ("Wind", 0, 80, False)}

    site = forms.ModelChoiceField(queryset=None, empty_label="Choose a site")
    kind = forms.ChoiceField(choices=Survey.Kind.choices)
    title = forms.CharField(max_length=200, required=False)
    date = forms.DateField(widget=forms.DateInput(attrs={"type": "date"}))
    crew = forms.CharField(max_length=300, required=False)
    thermographer = forms.ModelChoiceField(queryset=None, required=False)
    reviewer = forms.ModelChoiceField(queryset=None, required=False)
    instrument = forms.CharField(max_length=200, required=False, label="Camera make, model, serial")
    ifov_mrad = number_field("IFOV of one pixel (mrad)", 0.01, 100, unit_text=" mrad")
    camera_accuracy_pct = number_field("Camera accuracy ± % of reading", 0, 50, True, " %")
    scope_examined = forms.CharField(
        widget=forms.Textarea(attrs={"rows": 3}), required=False, max_length=TEXT_LIMIT
    )
    scope_not_examined = forms.CharField(
        widget=forms.Textarea(attrs={"rows": 3}),
        required=False,
        label="Not examined, and why",
        max_length=TEXT_LIMIT,
    )
    notes = forms.CharField(
        widget=forms.Textarea(attrs={"rows": 3}), required=False, max_length=TEXT_LIMIT
    )
    default_emissivity = number_field("Emissivity for uploads", 0.01, 1.0)
    # Conditions
    indoor_rh_pct = number_field("Indoor RH (%)", 0, 100, unit_text=" %")
    outdoor_rh_pct = number_field("Outdoor RH (%)", 0, 100, unit_text=" %")
    sky = forms.ChoiceField(choices=[("", "Not recorded"), *Conditions.Sky.choices], required=False)
    precipitation = forms.ChoiceField(
        choices=[("", "Not recorded"), *Conditions.Precipitation.choices], required=False
    )
    surfaces_dry = yes_no_field("Surfaces dry")
    hours_since_sun = number_field("Hours since sun on the surfaces", 0, 1000, unit_text=" h")
    delta_t_hours = number_field(
        "Hours the inside–outside difference had held", 0, 1000, unit_text=" h"
    )
    sunny_day_before = yes_no_field("Sunny day before (roof surveys)")
    load_pct = number_field("Electrical load (% of rating)", 0, 150, unit_text=" %")
    equipment_steady = yes_no_field("Equipment at steady load")
    covers_opened_by_qualified = yes_no_field("Covers opened by a qualified person")
    conditions_notes = forms.CharField(
        widget=forms.Textarea(attrs={"rows": 2}),
        required=False,
        label="Notes on conditions",
        max_length=TEXT_LIMIT,
    )

    def __init__(self, *args, sites, members, **kwargs):
        super().__init__(*args, **kwargs)
        self.fields["site"].queryset = sites
        self.fields["thermographer"].queryset = members
        self.fields["reviewer"].queryset = members

    def clean_date(self):
        value = self.cleaned_data["date"]
        latest = datetime.date.today() + datetime.timedelta(days=366)
        if not FIRST_SURVEY_DATE <= value <= latest:
            raise ValidationError(
                f"Enter the date of the visit, between {FIRST_SURVEY_DATE:%Y} "
                "and a year from today."
            )
        return value

    def clean_indoor_air_c(self):
        return self._temperature_c("indoor_air_c")

    def clean_outdoor_air_c(self):
        return self._temperature_c("outdoor_air_c")

    def clean_ambient_air_c(self):
        return self._temperature_c("ambient_air_c")

    def clean_camera_accuracy_c(self):
        return self._difference_c("camera_accuracy_c")

    def clean_default_reflected_c(self):
        return self._temperature_c("default_reflected_c")

    def survey_values(self) -> dict:
        names = (
            "site kind title date crew thermographer reviewer instrument ifov_mrad "
            "camera_accuracy_c camera_accuracy_pct scope_examined scope_not_examined notes "
            "default_emissivity default_reflected_c"
        ).split()
        return {name: self.cleaned_data[name] for name in names}

    def conditions_values(self) -> dict:
        names = (
            CONDITION_CHOICE_FIELDS
            + CONDITION_BOOL_FIELDS
            + CONDITION_NUMBER_FIELDS
            + CONDITION_TEMPERATURE_FIELDS
        )
        values = {name: self.cleaned_data[name] for name in names}
        values["notes"] = self.cleaned_data["conditions_notes"]
        return values

    @classmethod
    def initial_for(
        cls, survey: Survey, unit: str, speed_unit: str = "m_s", length_unit: str = "m"
    ) -> dict:
        values = {
            name: getattr(survey, name)
            for name in (
                "kind title date crew instrument ifov_mrad camera_accuracy_c "
                "camera_accuracy_pct scope_examined scope_not_examined notes "
                "default_emissivity default_reflected_c"
            ).split()
        }
        values.update(
            site=survey.site_id, thermographer=survey.thermographer_id, reviewer=survey.reviewer_id
        )
        conditions = getattr(survey, "conditions", None)
        if conditions is not None:
            for name in (
                CONDITION_CHOICE_FIELDS + CONDITION_NUMBER_FIELDS + CONDITION_TEMPERATURE_FIELDS
            ):
                values[name] = getattr(conditions, name)
            for name in CONDITION_BOOL_FIELDS:
                values[name] = yes_no_initial(getattr(conditions, name))
            values["conditions_notes"] = conditions.notes
        return cls.initial_in_unit(values, unit, speed_unit, length_unit)

    @classmethod
    def initial_from_values(
        cls,
        survey_values: dict,
        conditions: dict,
        unit: str,
        speed_unit: str = "m_s",
        length_unit: str = "m",
    ) -> dict:
        """Initial values from stored survey and conditions values (a new visit's copy)."""
        values = {k: v for k, v in survey_values.items() if k not in ("thermographer", "reviewer")}
        for name in ("thermographer", "reviewer"):
            member = survey_values.get(name)
            values[name] = member.pk if member is not None else None
        for name, value in conditions.items():
            values[name] = yes_no_initial(value) if name in CONDITION_BOOL_FIELDS else value
        return cls.initial_in_unit(values, unit, speed_unit, length_unit)


class PreferenceForm(forms.Form):
    temperature_unit = forms.ChoiceField(
        choices=Member.TemperatureUnit.choices,
        widget=forms.RadioSelect,
        label="Show and enter temperatures in",
    )
    speed_unit = forms.ChoiceField(
        choices=Member.SpeedUnit.choices,
        widget=forms.RadioSelect,
        label="Show and enter wind speeds in",
        required=False,
    )
    length_unit = forms.ChoiceField(
        choices=Member.LengthUnit.choices,
        widget=forms.RadioSelect,
        label="Show and enter distances in",
        required=False,
    )

    def clean_speed_unit(self):
        return self.cleaned_data.get("speed_unit") or None

    def clean_length_unit(self):
        return self.cleaned_data.get("length_unit") or None


class DeleteForm(forms.Form):
    confirm = forms.BooleanField(
        label="Yes, delete this survey (it can be restored later)",
        error_messages={"required": "Tick the box to confirm."},
    )
