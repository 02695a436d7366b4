"""Forms of the judgement pages: they only validate; services decide."""

import json

from django import forms
from django.core.exceptions import ValidationError

from survey import severity
from survey.forms.fields import UnitFormMixin, number_field
from survey.inputs import holds_nul
from survey.models import Asset, Finding, Mark, Survey, Thermogram
from survey.thermal import units

LEVEL_CHOICES = [("", "Use the suggested level")] + [
    (value, label) for value, label in Finding.Level.choices
]


def finding_label(finding: Finding) -> str:
    """A finding as a person picks it: survey date, asset, marks, category and level."""
    marks = ", ".join(sorted((m.title for m in finding.marks.all()), key=lambda t: (len(t), t)))
    parts = [
        finding.survey.date.isoformat(),
        str(finding.asset) if finding.asset_id else "no asset",
        f"mark {marks}" if marks else "whole thermogram",
        severity.category_label(finding.survey.kind, finding.category),
        finding.get_level_display() if finding.level else "no level",
    ]
    return " · ".join(parts) + f" (#{finding.pk})"


class FindingChoiceField(forms.ModelChoiceField):
    def label_from_instance(self, obj: Finding) -> str:
        return finding_label(obj)


class MarkChoiceField(forms.ModelChoiceField):
    def label_from_instance(self, obj: Mark) -> str:
        return f"{obj.title} ({obj.get_kind_display().lower()})"


class MarkMultipleChoiceField(forms.ModelMultipleChoiceField):
    def label_from_instance(self, obj: Mark) -> str:
        return f"{obj.title} ({obj.get_kind_display().lower()})"


class SurveyMarkChoiceField(forms.ModelChoiceField):
    def label_from_instance(self, obj: Mark) -> str:
        thermogram = obj.thermogram
        return f"{thermogram.sequence}. {thermogram} · mark {obj.title}"


def earlier_findings(finding_or_survey):
    """Findings a new or edited finding may re-measure: same site, earlier visits."""
    survey = getattr(finding_or_survey, "survey", finding_or_survey)
    queryset = (
        Finding.objects.filter(
            organization=survey.organization,
            survey__site=survey.site,
            survey__status=Survey.Status.ACTIVE,
            survey__date__lte=survey.date,
        )
        .exclude(survey=survey)
        .select_related("survey", "asset")
        .prefetch_related("marks")
        .order_by("-survey__date", "id")
    )
    return queryset


def _optional_float(label, low, high, **kwargs):
    return forms.FloatField(
        label=label,
        required=False,
        min_value=low,
        max_value=high,
        error_messages={
            "min_value": f"{label}: at least {low}.",
            "max_value": f"{label}: at most {high}.",
            "invalid": f"{label}: enter a number.",
        },
        **kwargs,
    )


class FindingForm(UnitFormMixin, forms.Form):
    # Design temperatures in the member's unit; cleaned_data keeps what was typed, and
    # suggest_arguments() hands °C to the service.
    temperatures = {
        "design_inside_c": ("Design indoor temperature", -10, 40, False),
        "design_outside_c": ("Design outdoor temperature", -60, 30, False),
    }

    marks = MarkMultipleChoiceField(
        queryset=Mark.objects.none(),
        required=False,
        widget=forms.CheckboxSelectMultiple,
        help_text="The first ticked mark is the place judged. None ticked: the whole thermogram.",
    )
    basis = forms.ChoiceField(label="Judge by")
    reference = MarkChoiceField(
        queryset=Mark.objects.none(),
        required=False,
        label="Reference (like component)",
        help_text="Only for a rise over a like component; defaults to the mark's own reference.",
    )
    rise_method = forms.ChoiceField(
        choices=[("", "As the judged mark says (hottest to hottest unless set otherwise)")]
        + Mark.RiseMethod.choices,
        required=False,
        label="Rise over the like component taken",
        help_text="Hottest to hottest compares the same point of like components; hottest to "
        "mean is shown labelled as such with the rise.",
    )
    load_exponent = forms.FloatField(
        label="Load-correction exponent",
        initial=2.0,
        min_value=1.0,
        max_value=3.0,
        required=False,
        help_text="2 from I²R heating; 1.6–2 in practice.",
        error_messages={
            "min_value": "The exponent is between 1 and 3.",
            "max_value": "The exponent is between 1 and 3.",
        },
    )
    design_inside_rh_pct = _optional_float("Design indoor humidity (%)", 1, 100)
    view_angle_deg = _optional_float(
        "Viewing angle (°)", 0, 79, help_text="0° is square-on to the roof."
    )
    category = forms.ChoiceField()
    level = forms.TypedChoiceField(
        choices=LEVEL_CHOICES, coerce=int, empty_value=None, required=False, label="Level"
    )
    override_reason = forms.CharField(
        widget=forms.Textarea(attrs={"rows": 2}),
        required=False,
        max_length=2000,
        label="Reason for another level",
    )
    recommendation = forms.CharField(
        widget=forms.Textarea(attrs={"rows": 2}), required=False, max_length=4000
    )
    location = forms.CharField(required=False, max_length=200)
    description = forms.CharField(
        widget=forms.Textarea(attrs={"rows": 3}), required=False, max_length=4000
    )
    asset = forms.ModelChoiceField(queryset=Asset.objects.none(), required=False)
    previous = FindingChoiceField(
        queryset=Finding.objects.none(),
        required=False,
        label="Re-measures the earlier finding",
    )

    def __init__(self, *args, thermogram: Thermogram, **kwargs):
        super().__init__(*args, **kwargs)
        survey = thermogram.survey
        self.thermogram = thermogram
        marks = thermogram.marks.all()
        self.fields["marks"].queryset = marks
        self.fields["reference"].queryset = marks
        self.fields["basis"].choices = severity.BASES[survey.kind]
        self.fields["category"].choices = severity.FINDING_CATEGORIES[survey.kind]
        self.fields["asset"].queryset = Asset.objects.filter(
            organization=survey.organization, site=survey.site
        )
        self.fields["previous"].queryset = earlier_findings(survey).filter(
            status__in=[Finding.Status.OPEN, Finding.Status.REPAIRED]
        )
        kind_fields = {
            "envelope": {"design_inside_c", "design_inside_rh_pct", "design_outside_c"},
            "roof": {"view_angle_deg"},
            "electrical": {"reference", "rise_method", "load_exponent"},
            "mechanical": {"reference", "rise_method", "load_exponent"},
        }
        for name in {
            "design_inside_c",
            "design_inside_rh_pct",
            "design_outside_c",
            "view_angle_deg",
            "reference",
            "rise_method",
            "load_exponent",
        } - kind_fields[survey.kind]:
            del self.fields[name]
        conditions = getattr(survey, "conditions", None)
        if "design_inside_c" in self.fields and conditions is not None:
            shown = units.from_celsius
            self.initial.setdefault("design_inside_c", shown(conditions.design_indoor_c, self.unit))
            self.initial.setdefault("design_inside_rh_pct", conditions.design_indoor_rh_pct)
            self.initial.setdefault(
                "design_outside_c", shown(conditions.design_outdoor_c, self.unit)
            )

    def suggest_arguments(self) -> dict:
        data = self.cleaned_data
        ordered = sorted(data["marks"], key=lambda m: (len(m.label), m.label))
        arguments = {
            "survey": self.thermogram.survey,
            "basis": data["basis"],
            "marks": ordered,
            "thermogram": self.thermogram,
        }
        for name in (
            "reference",
            "rise_method",
            "design_inside_c",
            "design_inside_rh_pct",
            "design_outside_c",
            "view_angle_deg",
        ):
            if name in data and data[name] not in (None, ""):
                arguments[name] = data[name]
        for name in self.temperatures:
            if name in arguments:
                arguments[name] = self._temperature_c(name)
        if data.get("load_exponent"):
            arguments["load_exponent"] = data["load_exponent"]
        return arguments

    def create_arguments(self) -> dict:
        data = self.cleaned_data
        names = (
            "category",
            "level",
            "override_reason",
            "recommendation",
            "location",
            "description",
            "asset",
            "previous",
        )
        return {name: data[name] for name in names if name in data}


class FindingEditForm(forms.Form):
    category = forms.ChoiceField()
    level = forms.TypedChoiceField(choices=Finding.Level.choices, coerce=int, label="Level")
    override_reason = forms.CharField(
        widget=forms.Textarea(attrs={"rows": 2}),
        required=False,
        max_length=2000,
        label="Reason for another level than suggested",
    )
    recommendation = forms.CharField(
        widget=forms.Textarea(attrs={"rows": 2}), required=False, max_length=4000
    )
    location = forms.CharField(required=False, max_length=200)
    description = forms.CharField(
        widget=forms.Textarea(attrs={"rows": 3}), required=False, max_length=4000
    )
    asset = forms.ModelChoiceField(queryset=Asset.objects.none(), required=False)
    previous = FindingChoiceField(
        queryset=Finding.objects.none(),
        required=False,
        label="Re-measures the earlier finding",
    )

    def __init__(self, *args, finding: Finding, **kwargs):
        kwargs.setdefault(
            "initial",
            {
                "category": finding.category,
                "level": finding.level,
                "override_reason": finding.override_reason,
                "recommendation": finding.recommendation,
                "location": finding.location,
                "description": finding.description,
                "asset": finding.asset_id,
                "previous": finding.previous_id,
            },
        )
        super().__init__(*args, **kwargs)
        self.fields["category"].choices = severity.FINDING_CATEGORIES[finding.survey.kind]
        self.fields["asset"].queryset = Asset.objects.filter(
            organization=finding.organization, site=finding.survey.site
        )
        self.fields["previous"].queryset = earlier_findings(finding).exclude(pk=finding.pk)


class FindingStatusForm(forms.Form):
    """Open or repaired; verified needs evidence (FindingVerifyOverrideForm or a measurement)."""

    status = forms.ChoiceField(
        choices=[
            (Finding.Status.OPEN, Finding.Status.OPEN.label),
            (Finding.Status.REPAIRED, Finding.Status.REPAIRED.label),
        ],
        error_messages={
            "invalid_choice": "Choose open or repaired: verified needs a later measurement "
            "that passes the check, or a reason."
        },
    )
    note = forms.CharField(required=False, max_length=1000, label="Note")


class FindingVerifyOverrideForm(forms.Form):
    reason = forms.CharField(
        widget=forms.Textarea(attrs={"rows": 2}),
        max_length=2000,
        label="Why verified without a later measurement",
        help_text="For example: the lug was replaced (work order 1234) and no survey at load "
        "is planned. Kept with the finding and printed in the report.",
        error_messages={"required": "Say how the repair was confirmed."},
    )


GEOMETRY_CHOICES = [
    ("vertical", "Vertical wall or plate (size = height)"),
    ("horizontal_up", "Horizontal surface, warm side up (size = side length)"),
    ("horizontal_down", "Horizontal surface, warm side down (size = side length)"),
    ("cylinder", "Horizontal pipe (size = outside diameter)"),
]


SIDE_CHOICES = [
    ("inside", "Inside surface of the building (a cold patch seen from the room)"),
    ("outside", "Outside surface, roof, or the outside of a pipe, duct or vessel"),
]


class HeatLossForm(UnitFormMixin, forms.Form):
    """Temperatures, wind, size and area in the member's units; cleaned_data in °C, m/s, m
    and m², as the service takes them."""

    temperatures = {
        "t_surface_c": ("Surface temperature", -60, 600, False),
        "t_reference_c": ("Sound surface nearby", -60, 600, False),
        "t_air_c": ("Air temperature", -60, 100, True),
        "t_surroundings_c": ("Surroundings", -60, 100, False),
    }
    speeds = {"wind_m_s": ("Wind", 0, 40, True)}
    lengths = {"size_m": ("Size", 0.001, 100, True)}
    help_texts = {
        "t_surface_c": "Leave empty to take the mark's corrected mean.",
        "t_reference_c": "Optional: estimate only the excess lost because of the defect.",
        "t_surroundings_c": "Defaults to the air temperature.",
    }

    label = forms.CharField(max_length=200, initial="Heat loss")
    side = forms.ChoiceField(
        choices=SIDE_CHOICES,
        widget=forms.RadioSelect,
        label="Which surface",
        help_text="Heat leaving the building (or the pipe) is counted positive.",
        error_messages={"required": "Say whether this is an inside or an outside surface."},
    )
    mark = SurveyMarkChoiceField(queryset=Mark.objects.none(), required=False)
    finding = FindingChoiceField(queryset=Finding.objects.none(), required=False)
    emissivity = forms.FloatField(
        min_value=0.01,
        max_value=1.0,
        required=False,
        help_text="Leave empty to take the mark's emissivity.",
    )
    geometry = forms.ChoiceField(choices=GEOMETRY_CHOICES)
    hours_per_year = forms.FloatField(
        label="Hours per year",
        min_value=0,
        max_value=8784,
        initial=5000,
        help_text="Hours a year the surface is at these temperatures.",
    )
    price_per_kwh = forms.FloatField(
        label="Energy price per kWh", min_value=0, max_value=100, initial=0.0
    )
    currency = forms.CharField(max_length=10, required=False, initial="EUR")
    efficiency_pct = forms.FloatField(
        label="Heat source efficiency (%)",
        min_value=1,
        max_value=600,
        initial=90,
        help_text="Boiler efficiency, or a heat pump's COP × 100.",
    )

    def __init__(self, *args, survey: Survey, **kwargs):
        super().__init__(*args, **kwargs)
        for name, text in self.help_texts.items():
            self.fields[name].help_text = text
        self.fields["wind_m_s"].initial = 0
        # An area in the square of the member's length unit (m² or ft²).
        symbol = units.length_symbol(self.length_unit)
        self.fields["area_m2"] = number_field(
            f"Area ({symbol}²)",
            round(
                units.length_from_m(
                    units.length_from_m(0.0001, self.length_unit), self.length_unit
                ),
                4,
            ),
            round(
                units.length_from_m(units.length_from_m(1e5, self.length_unit), self.length_unit)
            ),
            True,
            f" {symbol}²",
        )
        self.fields["mark"].queryset = Mark.objects.filter(
            thermogram__survey=survey, kind__in=["rectangle", "ellipse", "polygon", "point"]
        ).select_related("thermogram")
        self.fields["finding"].queryset = (
            Finding.objects.filter(survey=survey)
            .select_related("survey", "asset")
            .prefetch_related("marks")
        )

    def clean(self):
        data = super().clean()
        for name in self.temperatures:
            if data.get(name) is not None:
                data[name] = self._temperature_c(name)
        if data.get("area_m2") is not None:
            data["area_m2"] = units.length_to_m(
                units.length_to_m(data["area_m2"], self.length_unit), self.length_unit
            )
        mark = data.get("mark")
        if mark is None:
            if data.get("t_surface_c") is None:
                self.add_error("t_surface_c", "Give the surface temperature, or pick a mark.")
            if data.get("emissivity") is None:
                self.add_error("emissivity", "Give the emissivity, or pick a mark.")
        return data


class CriteriaRowsForm(forms.Form):
    rows = forms.CharField(
        widget=forms.Textarea(attrs={"rows": 14, "cols": 80}),
        help_text="A JSON list of rows, as explained above.",
    )
    source = forms.CharField(
        widget=forms.Textarea(attrs={"rows": 2}),
        required=False,
        label="Internal notes",
        help_text="For your firm only: never printed in a report. The basis printed is set "
        "when the table is reviewed.",
    )

    def clean_rows(self):
        try:
            rows = json.loads(self.cleaned_data["rows"])
        except json.JSONDecodeError as error:
            raise ValidationError(f"Not valid JSON (line {error.lineno}): {error.msg}.") from None
        if not isinstance(rows, list):
            raise ValidationError("The rows must be a JSON list, [ … ].")
        if holds_nul(rows):
            raise ValidationError("The rows hold a NUL character (\\u0000); remove it.")
        return rows


class CriteriaReviewForm(forms.Form):
    basis = forms.CharField(
        max_length=300,
        label="Basis",
        help_text="The standard and clause the bands rest on, as the report prints it.",
        error_messages={"required": "Name the standard and clause the bands rest on."},
    )
    confirm = forms.BooleanField(
        label="I have reviewed the bands, levels and actions of this table for our firm",
        error_messages={"required": "Tick the box to record your review."},
    )
