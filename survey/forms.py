"""Forms validate only: limits on every number, °F entry converted to °C in clean_ methods.

Temperature fields are entered in the member's unit (°C or °F); absolute temperatures
convert with the offset, differences (camera accuracy) only with the 5/9 factor. Limits
below are written in °C and shown to the user in their unit.
"""

import datetime

from django import forms
from django.core.exceptions import ValidationError

from survey.models import Asset, Conditions, Member, Survey
from survey.thermal import units

C, F = Member.TemperatureUnit.CELSIUS, Member.TemperatureUnit.FAHRENHEIT
# Free text is printed in reports: ten pages is plenty, a megabyte is a mistake.
TEXT_LIMIT = 20_000
FIRST_SURVEY_DATE = datetime.date(1950, 1, 1)


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


def _number(label: str, low: float, high: float, required: bool = False, unit_text: str = ""):
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


def _yes_no(label: str) -> forms.TypedChoiceField:
    return forms.TypedChoiceField(
        label=label,
        choices=YES_NO,
        required=False,
        coerce=lambda value: value == "yes",
        empty_value=None,
    )


def yes_no_initial(value: bool | None) -> str:
    return "" if value is None else ("yes" if value else "no")


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


class AssetForm(forms.Form):
    site = forms.ModelChoiceField(queryset=None, empty_label="Choose a site")
    name = forms.CharField(max_length=200)
    kind = forms.ChoiceField(choices=Asset.Kind.choices)
    tag = forms.CharField(max_length=100, required=False, label="Equipment id")
    location = forms.CharField(max_length=200, required=False)

    def __init__(self, *args, sites, **kwargs):
        super().__init__(*args, **kwargs)
        self.fields["site"].queryset = sites


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
    "wind_m_s",
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
    }
    differences = {"camera_accuracy_c": ("Camera accuracy ±", 0, 50, True)}

    site = forms.ModelChoiceField(queryset=None, empty_label="Choose a site")
    kind = forms.ChoiceField(choices=Survey.Kind.choices)
    title = forms.CharField(max_length=200, required=False)
    date = forms.DateField(widget=forms.DateInput(attrs={"type": "date"}))
    crew = forms.CharField(max_length=300, required=False)
    thermographer = forms.ModelChoiceField(queryset=None, required=False)
    reviewer = forms.ModelChoiceField(queryset=None, required=False)
    instrument = forms.CharField(max_length=200, required=False, label="Camera make, model, serial")
    ifov_mrad = _number("IFOV of one pixel (mrad)", 0.01, 100, unit_text=" mrad")
    camera_accuracy_pct = _number("Camera accuracy ± % of reading", 0, 50, True, " %")
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
    # Conditions
    indoor_rh_pct = _number("Indoor RH (%)", 0, 100, unit_text=" %")
    outdoor_rh_pct = _number("Outdoor RH (%)", 0, 100, unit_text=" %")
    wind_m_s = _number("Wind (m/s)", 0, 80, unit_text=" m/s")
    sky = forms.ChoiceField(choices=[("", "Not recorded"), *Conditions.Sky.choices], required=False)
    precipitation = forms.ChoiceField(
        choices=[("", "Not recorded"), *Conditions.Precipitation.choices], required=False
    )
    surfaces_dry = _yes_no("Surfaces dry")
    hours_since_sun = _number("Hours since sun on the surfaces", 0, 1000, unit_text=" h")
    delta_t_hours = _number("Hours the inside–outside difference had held", 0, 1000, unit_text=" h")
    sunny_day_before = _yes_no("Sunny day before (roof surveys)")
    load_pct = _number("Electrical load (% of rating)", 0, 150, unit_text=" %")
    equipment_steady = _yes_no("Equipment at steady load")
    covers_opened_by_qualified = _yes_no("Covers opened by a qualified person")
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

    def survey_values(self) -> dict:
        names = (
            "site kind title date crew thermographer reviewer instrument ifov_mrad "
            "camera_accuracy_c camera_accuracy_pct scope_examined scope_not_examined notes"
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
    def initial_for(cls, survey: Survey, unit: str) -> dict:
        values = {
            name: getattr(survey, name)
            for name in (
                "kind title date crew instrument ifov_mrad camera_accuracy_c "
                "camera_accuracy_pct scope_examined scope_not_examined notes"
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
        return cls.initial_in_unit(values, unit)


class MultipleFileInput(forms.ClearableFileInput):
    allow_multiple_selected = True


class MultipleFileField(forms.FileField):
    def __init__(self, *args, **kwargs):
        kwargs.setdefault("widget", MultipleFileInput(attrs={"multiple": True}))
        super().__init__(*args, **kwargs)

    def clean(self, data, initial=None):
        single = super().clean
        if isinstance(data, list | tuple):
            return [single(item, initial) for item in data]
        return [single(data, initial)] if data else []


def palette_choices(blank: str | None = None) -> list[tuple[str, str]]:
    from survey import thermal

    choices = [(name, name) for name in thermal.PALETTES]
    return [("", blank), *choices] if blank is not None else choices


DECODE_UNITS = [("C", "°C"), ("F", "°F"), ("K", "kelvin")]
SCALE_BAR_FIELDS = {
    "bar_left": "left",
    "bar_top": "top",
    "bar_right": "right",
    "bar_bottom": "bottom",
}
# Larger than any thermal camera or screenshot; the decoder checks the real picture size.
MAX_PICTURE_SIDE_PX = 20_000


class DecodeFieldsMixin:
    """How to read the files: unit, integer scale/offset, or a false-colour scale range."""

    def _add_decode_fields(self) -> None:
        self.fields["source_unit"] = forms.ChoiceField(
            choices=DECODE_UNITS,
            initial="C",
            label="Values in the files are in",
        )
        self.fields["scale"] = _number("Integer scale (value × scale + offset)", -1e6, 1e6)
        self.fields["offset"] = _number("Offset", -1e6, 1e6)
        self.fields["false_colour_palette"] = forms.ChoiceField(
            choices=palette_choices("Not a false-colour picture"),
            required=False,
            label="False-colour picture: its palette",
        )
        for name, label in SCALE_BAR_FIELDS.items():
            self.fields[name] = forms.IntegerField(
                label=f"Scale bar box: {label} (px)",
                required=False,
                min_value=0,
                max_value=MAX_PICTURE_SIDE_PX,
                error_messages={
                    "min_value": "Enter a pixel position of at least %(limit_value)s.",
                    "max_value": "Enter a pixel position of at most %(limit_value)s.",
                    "invalid": "Enter a whole number of pixels, for example 312.",
                },
            )

    def scale_bar_box(self) -> list[int] | None:
        box = [self.cleaned_data.get(name) for name in SCALE_BAR_FIELDS]
        return None if any(value is None for value in box) else box

    def false_colour(self) -> dict | None:
        palette = self.cleaned_data.get("false_colour_palette") or None
        box = self.scale_bar_box()
        if not palette and box is None:
            return None
        source = {
            "palette": palette,
            "low_c": self.cleaned_data.get("scale_low"),
            "high_c": self.cleaned_data.get("scale_high"),
        }
        if box is not None:
            source["scale_bar_box"] = box
        return source

    def _check_scale_bar_box(self) -> None:
        if any(self.has_error(name) for name in SCALE_BAR_FIELDS):
            return
        given = [self.cleaned_data.get(name) is not None for name in SCALE_BAR_FIELDS]
        if any(given) and not all(given):
            raise ValidationError(
                "Give all four sides of the scale bar box (left, top, right, bottom), "
                "or leave all four empty."
            )
        box = self.scale_bar_box()
        if box is not None:
            left, top, right, bottom = box
            if not left < right:
                raise ValidationError(
                    "The right side of the scale bar box must be to the right of its left side."
                )
            if not top < bottom:
                raise ValidationError(
                    "The bottom of the scale bar box must be below its top (pixel rows count "
                    "down from the top of the picture)."
                )

    def _check_false_colour(self) -> None:
        self._check_scale_bar_box()
        palette = self.cleaned_data.get("false_colour_palette")
        colours = palette or self.scale_bar_box() is not None
        low, high = self.cleaned_data.get("scale_low"), self.cleaned_data.get("scale_high")
        if colours and (low is None or high is None):
            raise ValidationError(
                "For a false-colour picture give the temperatures at both ends of its scale bar."
            )
        if low is not None and high is not None and not low < high:
            raise ValidationError("The top of the scale bar must be warmer than the bottom.")
        if (low is not None or high is not None) and not colours:
            raise ValidationError(
                "A scale range was given: also choose the picture's palette, or give the box "
                "of the scale bar drawn in it."
            )


class UploadForm(DecodeFieldsMixin, UnitFormMixin, forms.Form):
    temperatures = {
        "reflected_c": ("Reflected apparent temperature", -60, 500, False),
        "scale_low": ("Bottom of the scale bar", -100, 2000, False),
        "scale_high": ("Top of the scale bar", -100, 2000, False),
    }

    files = MultipleFileField(label="Thermograms")
    photos = MultipleFileField(label="Visual photos (paired by file name)", required=False)
    emissivity = _number("Emissivity", 0.01, 1.0)
    distance_m = _number("Distance (m)", 0.01, 10000, unit_text=" m")
    asset = forms.ModelChoiceField(queryset=None, required=False, empty_label="No asset")

    def __init__(self, *args, assets, **kwargs):
        super().__init__(*args, **kwargs)
        self._add_decode_fields()
        self.fields["asset"].queryset = assets

    def clean_reflected_c(self):
        return self._temperature_c("reflected_c")

    def clean_scale_low(self):
        return self._temperature_c("scale_low")

    def clean_scale_high(self):
        return self._temperature_c("scale_high")

    def clean(self):
        cleaned = super().clean()
        self._check_false_colour()
        return cleaned

    def ingest_defaults(self) -> dict:
        data = self.cleaned_data
        return {
            "unit": data["source_unit"],
            "scale": data.get("scale"),
            "offset": data.get("offset"),
            "palette_source": self.false_colour(),
            "emissivity": data.get("emissivity"),
            "reflected_c": data.get("reflected_c"),
            "distance_m": data.get("distance_m"),
            "asset": data.get("asset"),
        }


class ThermogramSettingsForm(UnitFormMixin, forms.Form):
    temperatures = {
        "reflected_c": ("Reflected apparent temperature", -60, 500, True),
        "span_low_c": ("Span bottom", -100, 2000, False),
        "span_high_c": ("Span top", -100, 2000, False),
    }

    title = forms.CharField(max_length=200, required=False)
    emissivity = _number("Emissivity", 0.01, 1.0, required=True)
    distance_m = _number("Distance (m)", 0.01, 10000, unit_text=" m")
    palette = forms.ChoiceField(choices=[])
    asset = forms.ModelChoiceField(queryset=None, required=False, empty_label="No asset")
    note = forms.CharField(
        widget=forms.Textarea(attrs={"rows": 3}), required=False, max_length=TEXT_LIMIT
    )

    def __init__(self, *args, assets, **kwargs):
        super().__init__(*args, **kwargs)
        self.fields["palette"].choices = palette_choices()
        self.fields["asset"].queryset = assets

    def clean_reflected_c(self):
        return self._temperature_c("reflected_c")

    def clean_span_low_c(self):
        return self._temperature_c("span_low_c")

    def clean_span_high_c(self):
        return self._temperature_c("span_high_c")

    def clean(self):
        cleaned = super().clean()
        low, high = cleaned.get("span_low_c"), cleaned.get("span_high_c")
        if (
            (low is None) != (high is None)
            and not self.has_error("span_low_c")
            and not self.has_error("span_high_c")
        ):
            raise ValidationError("Give both ends of the span, or leave both empty for automatic.")
        if low is not None and high is not None and not low < high:
            raise ValidationError("The top of the span must be warmer than the bottom.")
        return cleaned

    @classmethod
    def initial_for(cls, thermogram, unit: str) -> dict:
        values = {
            name: getattr(thermogram, name)
            for name in (
                "title emissivity distance_m palette note reflected_c span_low_c span_high_c"
            ).split()
        }
        values["asset"] = thermogram.asset_id
        return cls.initial_in_unit(values, unit)


class ReprocessForm(DecodeFieldsMixin, UnitFormMixin, forms.Form):
    temperatures = {
        "scale_low": ("Bottom of the scale bar", -100, 2000, False),
        "scale_high": ("Top of the scale bar", -100, 2000, False),
    }

    def __init__(self, *args, **kwargs):
        super().__init__(*args, **kwargs)
        self._add_decode_fields()

    def clean_scale_low(self):
        return self._temperature_c("scale_low")

    def clean_scale_high(self):
        return self._temperature_c("scale_high")

    def clean(self):
        cleaned = super().clean()
        self._check_false_colour()
        return cleaned


class PreferenceForm(forms.Form):
    temperature_unit = forms.ChoiceField(
        choices=Member.TemperatureUnit.choices,
        widget=forms.RadioSelect,
        label="Show and enter temperatures in",
    )


class DeleteForm(forms.Form):
    confirm = forms.BooleanField(
        label="Yes, delete this survey (it can be restored later)",
        error_messages={"required": "Tick the box to confirm."},
    )


class MemberAddForm(forms.Form):
    username = forms.CharField(
        max_length=150,
        label="User name",
        help_text="What they type to sign in: letters, digits and @ . + - _ only.",
    )
    full_name = forms.CharField(max_length=150, required=False, label="Full name")
    email = forms.EmailField(required=False, label="E-mail")
    role = forms.ChoiceField(choices=Member.Role.choices, initial=Member.Role.THERMOGRAPHER)
    qualification = forms.CharField(
        max_length=200,
        required=False,
        help_text="As printed on reports, e.g. a certification level.",
    )
    password = forms.CharField(
        max_length=128,
        required=False,
        strip=False,
        label="Temporary password",
        widget=forms.PasswordInput(attrs={"autocomplete": "new-password"}),
        help_text="Leave empty to have one made up and shown to you once.",
    )


class MemberEditForm(forms.Form):
    role = forms.ChoiceField(choices=Member.Role.choices)
    qualification = forms.CharField(
        max_length=200,
        required=False,
        help_text="As printed on reports, e.g. a certification level.",
    )
