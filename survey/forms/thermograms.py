"""Forms of thermograms: upload (with false-colour decoding options), capture and display
settings, and decoding again."""

from django import forms
from django.core.exceptions import ValidationError
from django.utils import timezone

from survey import thermal
from survey.forms.fields import TEXT_LIMIT, UnitFormMixin, number_field
from survey.models import SpanRule, Thermogram


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
        self.fields["scale"] = number_field("Integer scale (value × scale + offset)", -1e6, 1e6)
        self.fields["offset"] = number_field("Offset", -1e6, 1e6)
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


def captured_at_field(help_text: str) -> forms.DateTimeField:
    """A capture time typed as the site's wall-clock time (the survey's time zone)."""
    return forms.DateTimeField(
        required=False,
        label="Taken at (local time)",
        widget=forms.DateTimeInput(
            attrs={"type": "datetime-local", "step": "1"}, format="%Y-%m-%dT%H:%M:%S"
        ),
        input_formats=["%Y-%m-%dT%H:%M", "%Y-%m-%dT%H:%M:%S", "%Y-%m-%d %H:%M"],
        help_text=help_text,
    )


def wall_clock(value):
    """The time as typed, without a zone: the service applies the survey's time zone."""
    if value is None or timezone.is_naive(value):
        return value
    return timezone.make_naive(value, timezone.get_current_timezone())


class UploadForm(DecodeFieldsMixin, UnitFormMixin, forms.Form):
    temperatures = {
        "reflected_c": ("Reflected apparent temperature", -60, 500, False),
        "scale_low": ("Bottom of the scale bar", -100, 2000, False),
        "scale_high": ("Top of the scale bar", -100, 2000, False),
    }
    lengths = {"distance_m": ("Distance", 0.01, 10000, False)}

    files = MultipleFileField(label="Thermograms")
    photos = MultipleFileField(label="Visual photos (paired by file name)", required=False)
    emissivity = number_field("Emissivity", 0.01, 1.0)
    asset = forms.ModelChoiceField(queryset=None, required=False, empty_label="No asset")
    captured_at = captured_at_field("For files without their own date-time tag; a file's tag wins.")

    def __init__(self, *args, assets, **kwargs):
        super().__init__(*args, **kwargs)
        self._add_decode_fields()
        self.fields["asset"].queryset = assets

    def clean_captured_at(self):
        return wall_clock(self.cleaned_data.get("captured_at"))

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
            "captured_at": data.get("captured_at"),
        }


class ThermogramSettingsForm(UnitFormMixin, forms.Form):
    temperatures = {
        "reflected_c": ("Reflected apparent temperature", -60, 500, True),
        "span_low_c": ("Span bottom", -100, 2000, False),
        "span_high_c": ("Span top", -100, 2000, False),
    }
    lengths = {"distance_m": ("Distance", 0.01, 10000, False)}

    title = forms.CharField(max_length=200, required=False)
    emissivity = number_field("Emissivity", 0.01, 1.0, required=True)
    emissivity_method = forms.ChoiceField(
        choices=[("", "Not recorded"), *Thermogram.EmissivityMethod.choices],
        required=False,
        label="How the emissivity was determined",
    )
    reflected_method = forms.ChoiceField(
        choices=[("", "Not recorded"), *Thermogram.ReflectedMethod.choices],
        required=False,
        label="How the reflected temperature was determined",
    )
    palette = forms.ChoiceField(choices=[])
    span_rule = forms.ChoiceField(
        choices=SpanRule.choices,
        label="Span when none is fixed",
        initial=SpanRule.AUTO,
        required=False,
    )
    asset = forms.ModelChoiceField(queryset=None, required=False, empty_label="No asset")
    note = forms.CharField(
        widget=forms.Textarea(attrs={"rows": 3}), required=False, max_length=TEXT_LIMIT
    )
    captured_at = captured_at_field(
        "In the survey's time zone. A file's own date-time tag sets it again when the file "
        "is read again."
    )
    load_l1_a = number_field("Load, phase L1 (A)", 0, 100000, unit_text=" A")
    load_l2_a = number_field("Load, phase L2 (A)", 0, 100000, unit_text=" A")
    load_l3_a = number_field("Load, phase L3 (A)", 0, 100000, unit_text=" A")
    load_method = forms.ChoiceField(
        choices=[("", "Not recorded"), *Thermogram.LoadMethod.choices],
        required=False,
        label="How the load was measured",
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

    def clean_captured_at(self):
        return wall_clock(self.cleaned_data.get("captured_at"))

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
        if not cleaned.get("span_rule"):
            cleaned.pop("span_rule", None)  # not sent: the thermogram keeps its rule
        return cleaned

    @classmethod
    def initial_for(cls, thermogram, unit: str, speed_unit="m_s", length_unit="m") -> dict:
        values = {
            name: getattr(thermogram, name)
            for name in (
                "title emissivity distance_m palette note reflected_c span_low_c span_high_c "
                "span_rule emissivity_method reflected_method load_l1_a load_l2_a load_l3_a "
                "load_method"
            ).split()
        }
        values["asset"] = thermogram.asset_id
        return cls.initial_in_unit(values, unit, speed_unit, length_unit)


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
