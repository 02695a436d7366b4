"""Forms of a logger import: first the file and its role, then the columns and how to read
them. Between the two steps the file travels back signed and compressed in the form
itself, so nothing is stored until the whole file reads cleanly."""

import base64
import zlib

from django import forms
from django.core import signing
from django.core.exceptions import ValidationError

from survey.models import ConditionLog
from survey.thermal.logger import TEMPERATURE_UNITS, WIND_UNITS, parse_time_zone

MAX_FILE_BYTES = 10 * 1024 * 1024
UPLOAD_SALT = "heatmark.logger-upload"
UPLOAD_MAX_AGE_S = 6 * 3600

DELIMITERS = [("", "Guess from the header"), (",", "Comma"), (";", "Semicolon"), ("\t", "Tab")]
DECIMALS = [("", "Guess from the values"), (".", "Point (21.5)"), (",", "Comma (21,5)")]
TIME_FORMATS = [
    ("", "ISO 8601: 2026-01-17 22:00, 2026-01-17T22:00:00+01:00"),
    ("%d.%m.%Y %H:%M:%S", "17.01.2026 22:00:00"),
    ("%d.%m.%Y %H:%M", "17.01.2026 22:00"),
    ("%d/%m/%Y %H:%M:%S", "17/01/2026 22:00:00 (day first)"),
    ("%d/%m/%Y %H:%M", "17/01/2026 22:00 (day first)"),
    ("%m/%d/%Y %H:%M:%S", "01/17/2026 22:00:00 (month first)"),
    ("%m/%d/%Y %I:%M:%S %p", "01/17/2026 10:00:00 PM (month first, 12 h)"),
    ("custom", "Other: give the format below"),
]
TEMPERATURE_UNIT_CHOICES = [
    (u, {"C": "°C", "F": "°F", "K": "kelvin"}[u]) for u in TEMPERATURE_UNITS
]
WIND_UNIT_CHOICES = [(u, u) for u in WIND_UNITS]


def pack_upload(name: str, data: bytes) -> str:
    """The file, compressed and signed, to carry in the second step's form."""
    blob = base64.urlsafe_b64encode(zlib.compress(data, 6)).decode("ascii")
    label = base64.urlsafe_b64encode(name.encode("utf-8")).decode("ascii")
    return signing.TimestampSigner(salt=UPLOAD_SALT).sign(f"{label}.{blob}")


def unpack_upload(token: str) -> tuple[str, bytes]:
    try:
        value = signing.TimestampSigner(salt=UPLOAD_SALT).unsign(token, max_age=UPLOAD_MAX_AGE_S)
        label, blob = value.split(".", 1)
        inflater = zlib.decompressobj()
        data = inflater.decompress(base64.urlsafe_b64decode(blob), MAX_FILE_BYTES + 1)
        name = base64.urlsafe_b64decode(label).decode("utf-8")
    except (signing.BadSignature, ValueError, zlib.error):
        raise ValidationError(
            "The file could not be carried over (too old or changed); choose it again."
        ) from None
    if len(data) > MAX_FILE_BYTES or inflater.unconsumed_tail:
        raise ValidationError("The logger file is larger than 10 MB; export a shorter period.")
    return name, data


class LoggerUploadForm(forms.Form):
    role = forms.ChoiceField(
        choices=ConditionLog.Role.choices, widget=forms.RadioSelect, label="Where the logger was"
    )
    file = forms.FileField(label="Logger file (CSV or text table)")
    skip_rows = forms.IntegerField(
        label="Lines above the header row",
        min_value=0,
        max_value=100,
        initial=0,
        required=False,
        help_text="Logger name, serial number and the like before the row naming the columns.",
    )

    def clean_file(self):
        upload = self.cleaned_data["file"]
        if upload.size > MAX_FILE_BYTES:
            raise ValidationError(
                f"The file is {upload.size / 1e6:.1f} MB; the limit is 10 MB. "
                "Export a shorter period."
            )
        return upload

    def clean_skip_rows(self):
        return self.cleaned_data.get("skip_rows") or 0


def _guess(columns: list[str], words: tuple[str, ...]) -> str:
    for column in columns:
        if any(word in column.lower() for word in words):
            return column
    return ""


class LoggerColumnsForm(forms.Form):
    """The columns and the reading rules; the file comes in `payload`."""

    payload = forms.CharField(widget=forms.HiddenInput)
    skip_rows = forms.IntegerField(widget=forms.HiddenInput, min_value=0, max_value=100)
    role = forms.ChoiceField(
        choices=ConditionLog.Role.choices, widget=forms.RadioSelect, label="Where the logger was"
    )
    time_column = forms.ChoiceField(label="Time column")
    temperature_column = forms.ChoiceField(label="Air temperature column")
    humidity_column = forms.ChoiceField(label="Relative humidity column (%)", required=False)
    wind_column = forms.ChoiceField(label="Wind speed column", required=False)
    temperature_unit = forms.ChoiceField(choices=TEMPERATURE_UNIT_CHOICES, label="Temperatures in")
    wind_unit = forms.ChoiceField(choices=WIND_UNIT_CHOICES, label="Wind speed in")
    delimiter = forms.ChoiceField(choices=DELIMITERS, required=False, label="Between cells")
    decimal = forms.ChoiceField(choices=DECIMALS, required=False, label="Decimal mark")
    time_format = forms.ChoiceField(choices=TIME_FORMATS, required=False, label="Times written as")
    custom_time_format = forms.CharField(
        max_length=60,
        required=False,
        label="Other time format",
        help_text="In strftime codes, for example %Y%m%d %H%M for 20260117 2200.",
    )
    time_zone = forms.CharField(
        max_length=64,
        label="Logger clock's time zone",
        help_text="A name such as Europe/Berlin (follows daylight saving) or a fixed offset "
        "such as +01:00 for a logger kept on standard time. Times written with an offset "
        "keep it.",
    )

    def __init__(self, *args, columns: list[str], **kwargs):
        super().__init__(*args, **kwargs)
        choices = [(name, name) for name in columns]
        none = [("", "Not logged")]
        self.fields["time_column"].choices = choices
        self.fields["temperature_column"].choices = choices
        self.fields["humidity_column"].choices = none + choices
        self.fields["wind_column"].choices = none + choices
        if not self.is_bound:
            self.initial.setdefault("time_column", _guess(columns, ("time", "date", "zeit")))
            self.initial.setdefault("temperature_column", _guess(columns, ("temp", "°c", "°f")))
            self.initial.setdefault("humidity_column", _guess(columns, ("rh", "humid", "%")))
            self.initial.setdefault("wind_column", _guess(columns, ("wind",)))

    def clean_payload(self) -> tuple[str, bytes]:
        return unpack_upload(self.cleaned_data["payload"])

    def clean_time_zone(self) -> str:
        value = self.cleaned_data["time_zone"].strip()
        try:
            parse_time_zone(value)
        except ValueError:
            raise ValidationError(
                "Give a time zone name such as Europe/Berlin or a UTC offset such as +01:00."
            ) from None
        return value

    def clean(self):
        cleaned = super().clean()
        chosen = cleaned.get("time_format")
        if chosen == "custom":
            custom = (cleaned.get("custom_time_format") or "").strip()
            if "%" not in custom:
                self.add_error("custom_time_format", "Give the format with % codes.")
            cleaned["time_format"] = custom
        time, temperature = cleaned.get("time_column"), cleaned.get("temperature_column")
        if time and time == temperature:
            self.add_error("temperature_column", "Choose a column other than the time.")
        return cleaned

    def import_options(self) -> dict:
        """The service's keyword arguments (survey/services/loggers.condition_log_import)."""
        data = self.cleaned_data
        name, content = data["payload"]
        return {
            "role": data["role"],
            "name": name,
            "data": content,
            "time_column": data["time_column"],
            "temperature_column": data["temperature_column"],
            "humidity_column": data.get("humidity_column") or None,
            "wind_column": data.get("wind_column") or None,
            "delimiter": data.get("delimiter") or None,
            "decimal": data.get("decimal") or None,
            "time_format": data.get("time_format") or None,
            "time_zone": data["time_zone"],
            "temperature_unit": data["temperature_unit"],
            "wind_unit": data["wind_unit"],
            "skip_rows": data["skip_rows"],
        }
