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
from survey.models import Conditions, Member, Survey, validate_time_zone


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


CONDITION_CHOICE_FIELDS = ("sky", "precipitation", "pressure_method")


CONDITION_BOOL_FIELDS = (
    "surfaces_dry",
    "sunny_day_before",
    "equipment_steady",
    "covers_opened_by_qualified",
)


CONDITION_NUMBER_FIELDS = (
    "indoor_rh_pct",
    "design_indoor_rh_pct",
    "outdoor_rh_pct",
    "wind_m_s",  # a speed: shown in the member's unit (SurveyForm.speeds)
    "hours_since_sun",
    "delta_t_hours",
    "load_pct",
    "rain_24h_mm",
    "pressure_difference_pa",
)


CONDITION_TEMPERATURE_FIELDS = (
    "indoor_air_c",
    "outdoor_air_c",
    "ambient_air_c",
    "roof_surface_c",
    "design_indoor_c",
    "design_outdoor_c",
)


class SurveyForm(UnitFormMixin, forms.Form):
    """A survey and its conditions on one page."""

    temperatures = {
        "indoor_air_c": ("Indoor air", -50, 80, False),
        "outdoor_air_c": ("Outdoor air", -60, 60, False),
        "ambient_air_c": ("Air around the equipment", -60, 200, False),
        "roof_surface_c": ("Roof membrane, coldest dry part", -60, 80, False),
        "design_indoor_c": ("Design indoor air", -10, 40, False),
        "design_outdoor_c": ("Design outdoor air", -60, 30, False),
        "default_reflected_c": ("Reflected temperature for uploads", -60, 500, False),
    }
    differences = {"camera_accuracy_c": ("Camera accuracy ±", 0, 50, True)}
    speeds = {"wind_m_s": ("Wind", 0, 80, False)}

    site = forms.ModelChoiceField(queryset=None, empty_label="Choose a site")
    kind = forms.ChoiceField(choices=Survey.Kind.choices)
    title = forms.CharField(max_length=200, required=False)
    date = forms.DateField(widget=forms.DateInput(attrs={"type": "date"}))
    start_time = forms.TimeField(
        required=False,
        label="Start time",
        widget=forms.TimeInput(attrs={"type": "time"}, format="%H:%M"),
        help_text="Local time the survey began; a roof survey is made at night.",
        error_messages={"invalid": "Enter the time as hours and minutes, for example 21:30."},
    )
    end_time = forms.TimeField(
        required=False,
        label="End time",
        widget=forms.TimeInput(attrs={"type": "time"}, format="%H:%M"),
        help_text="Local time the survey ended.",
        error_messages={"invalid": "Enter the time as hours and minutes, for example 23:15."},
    )
    crew = forms.CharField(max_length=300, required=False)
    thermographer = forms.ModelChoiceField(queryset=None, required=False)
    reviewer = forms.ModelChoiceField(queryset=None, required=False)
    camera = forms.ModelChoiceField(
        queryset=None,
        required=False,
        label="Camera",
        empty_label="Not one of our instruments",
        help_text="Its field of view and detector width give the pixel footprint; its stated "
        "accuracy replaces the two accuracy fields below.",
    )
    instrument = forms.CharField(
        max_length=200,
        required=False,
        label="Camera make, model, serial (if not one of our instruments)",
    )
    ifov_mrad = number_field(
        "IFOV of one pixel (mrad, if not one of our instruments)", 0.01, 100, unit_text=" mrad"
    )
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
    deviations = forms.CharField(
        widget=forms.Textarea(attrs={"rows": 2}),
        required=False,
        label="Deviations from the procedure",
        help_text="Where the work departed from the firm's procedure, and why; printed in the "
        "report's method.",
        max_length=TEXT_LIMIT,
    )
    notes = forms.CharField(
        widget=forms.Textarea(attrs={"rows": 3}), required=False, max_length=TEXT_LIMIT
    )
    building_description = forms.CharField(
        widget=forms.Textarea(attrs={"rows": 3}),
        required=False,
        label="Building and construction",
        help_text="Walls, roof, insulation, windows, age: what the reader needs to place the "
        "findings.",
        max_length=4000,
    )
    roof_membrane = forms.CharField(max_length=200, required=False, label="Roof membrane")
    roof_insulation = forms.CharField(max_length=200, required=False, label="Roof insulation")
    time_zone = forms.CharField(
        max_length=64,
        required=False,
        label="Time zone of the site's clocks",
        help_text="For camera and logger times, e.g. Europe/Berlin; empty: the server's.",
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
    rain_24h_mm = number_field("Rain in the 24 h before (mm)", 0, 500, unit_text=" mm")
    pressure_difference_pa = number_field(
        "Pressure difference inside–outside (Pa)", -200, 200, unit_text=" Pa"
    )
    pressure_method = forms.ChoiceField(
        choices=[("", "Not measured"), *Conditions.PressureMethod.choices],
        required=False,
        label="Pressure difference made by",
    )
    design_indoor_rh_pct = number_field("Design indoor RH (%)", 1, 100, unit_text=" %")
    equipment_steady = yes_no_field("Equipment at steady load")
    covers_opened_by_qualified = yes_no_field("Covers opened by a qualified person")
    conditions_notes = forms.CharField(
        widget=forms.Textarea(attrs={"rows": 2}),
        required=False,
        label="Notes on conditions",
        max_length=TEXT_LIMIT,
    )

    def __init__(self, *args, sites, members, instruments, **kwargs):
        super().__init__(*args, **kwargs)
        self.fields["site"].queryset = sites
        self.fields["thermographer"].queryset = members
        self.fields["reviewer"].queryset = members
        self.fields["camera"].queryset = instruments

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

    def clean_roof_surface_c(self):
        return self._temperature_c("roof_surface_c")

    def clean_design_indoor_c(self):
        return self._temperature_c("design_indoor_c")

    def clean_design_outdoor_c(self):
        return self._temperature_c("design_outdoor_c")

    def clean(self):
        data = super().clean()
        design = [
            data.get(n) for n in ("design_indoor_c", "design_indoor_rh_pct", "design_outdoor_c")
        ]
        if any(v is not None for v in design) and None in design:
            raise ValidationError(
                "For design conditions give the indoor temperature, the indoor humidity and "
                "the outdoor temperature, or none of them."
            )
        if None not in design and design[2] >= design[0]:
            self.add_error(
                "design_outdoor_c", "The design outdoor air must be colder than indoors."
            )
        return data

    def clean_camera_accuracy_c(self):
        return self._difference_c("camera_accuracy_c")

    def clean_pressure_method(self):
        method = self.cleaned_data.get("pressure_method") or ""
        pressure = self.cleaned_data.get("pressure_difference_pa")
        if pressure is not None and not method:
            raise ValidationError("Say how the pressure difference was made, or clear it.")
        return method

    def clean_time_zone(self):
        value = (self.cleaned_data.get("time_zone") or "").strip()
        validate_time_zone(value)
        return value

    def clean_default_reflected_c(self):
        return self._temperature_c("default_reflected_c")

    def survey_values(self) -> dict:
        names = (
            "site kind title date start_time end_time crew thermographer reviewer camera "
            "instrument ifov_mrad camera_accuracy_c camera_accuracy_pct scope_examined "
            "scope_not_examined deviations notes building_description roof_membrane "
            "roof_insulation time_zone default_emissivity default_reflected_c"
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
                "kind title date start_time end_time crew instrument ifov_mrad "
                "camera_accuracy_c camera_accuracy_pct scope_examined scope_not_examined "
                "deviations notes building_description roof_membrane roof_insulation time_zone "
                "default_emissivity default_reflected_c"
            ).split()
        }
        values.update(
            site=survey.site_id,
            thermographer=survey.thermographer_id,
            reviewer=survey.reviewer_id,
            camera=survey.camera_id,
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
        related = ("thermographer", "reviewer", "camera")
        values = {k: v for k, v in survey_values.items() if k not in related}
        for name in related:
            row = survey_values.get(name)
            values[name] = row.pk if row is not None else None
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


class InstrumentForm(forms.Form):
    """A camera of the organization, as its data sheet and calibration certificate say."""

    model_name = forms.CharField(max_length=200, label="Make and model")
    serial_number = forms.CharField(max_length=100, required=False)
    detector_width_px = forms.IntegerField(
        label="Detector width (pixels)", min_value=8, max_value=10000
    )
    detector_height_px = forms.IntegerField(
        label="Detector height (pixels)", min_value=8, max_value=10000
    )
    lens_hfov_deg = forms.FloatField(
        label="Lens horizontal field of view (°)",
        min_value=1,
        max_value=170,
        help_text="Across the detector's width, from the lens's data sheet (for example 24).",
    )
    netd_mk = number_field("Thermal sensitivity, NETD (mK)", 1, 1000, unit_text=" mK")
    accuracy_c = number_field("Stated accuracy ± (°C)", 0, 50, True, " °C")
    accuracy_pct = number_field("Stated accuracy ± (% of reading)", 0, 50, True, " %")
    calibration_date = forms.DateField(
        required=False, widget=forms.DateInput(attrs={"type": "date"}), label="Calibrated on"
    )
    calibration_due = forms.DateField(
        required=False, widget=forms.DateInput(attrs={"type": "date"}), label="Calibration due"
    )
    certificate_reference = forms.CharField(
        max_length=200, required=False, label="Calibration certificate reference"
    )
