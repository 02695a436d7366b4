"""Forms of the asset register, rounds, survey view defaults, deleting and the survey list."""

from django import forms
from django.core.exceptions import ValidationError

from survey.forms.fields import TEXT_LIMIT, number_field
from survey.forms.thermograms import palette_choices
from survey.models import Asset, Finding, SpanRule, Survey


class AssetForm(forms.Form):
    name = forms.CharField(max_length=200)
    kind = forms.ChoiceField(choices=Asset.Kind.choices, initial=Asset.Kind.PANEL)
    tag = forms.CharField(
        max_length=100, required=False, label="Tag", help_text="The plant's equipment id."
    )
    location = forms.CharField(max_length=200, required=False)
    rating = number_field("Rating", 0.001, 1_000_000)
    rating_unit = forms.ChoiceField(
        choices=[("", "No rating"), *Asset.RatingUnit.choices],
        required=False,
        label="Rating unit",
    )
    criticality = forms.ChoiceField(
        choices=Asset.Criticality.choices, initial=Asset.Criticality.MEDIUM
    )
    inspection_interval_months = forms.IntegerField(
        label="Inspection interval (months)",
        min_value=1,
        max_value=120,
        initial=12,
        help_text="NFPA 70B (2023) asks for infrared inspection of electrical equipment at "
        "least every 12 months.",
        error_messages={
            "min_value": "Enter at least 1 month.",
            "max_value": "Enter at most 120 months.",
        },
    )
    round_order = forms.IntegerField(
        label="Place on the round",
        min_value=0,
        max_value=1_000_000,
        initial=0,
        required=False,
        help_text="Lower numbers are visited first.",
    )
    notes = forms.CharField(
        widget=forms.Textarea(attrs={"rows": 3}), required=False, max_length=TEXT_LIMIT
    )

    def clean_round_order(self):
        return self.cleaned_data.get("round_order") or 0

    def clean(self):
        cleaned = super().clean()
        if cleaned.get("rating") is not None and not cleaned.get("rating_unit"):
            self.add_error("rating_unit", "Say whether the rating is in A or kW.")
        if cleaned.get("rating") is None and cleaned.get("rating_unit"):
            self.add_error("rating", "Give the rating, or choose “No rating”.")
        return cleaned

    @staticmethod
    def initial_for(asset: Asset) -> dict:
        return {name: getattr(asset, name) for name in AssetForm.base_fields}


class AssetImportForm(forms.Form):
    file = forms.FileField(
        label="CSV file of assets",
        help_text="Columns: name (required), tag, kind, location, rating, rating_unit, "
        "criticality, inspection_interval_months, round_order, retired_on, notes.",
    )


class ConfirmForm(forms.Form):
    confirm = forms.BooleanField(
        label="Yes, delete it (it can be restored later)",
        error_messages={"required": "Tick the box to confirm."},
    )


class SkipForm(forms.Form):
    reason = forms.CharField(
        max_length=300,
        required=False,
        label="Reason not visited",
        help_text="For example: locked, no access, out of service. Empty takes it back.",
    )


class ViewDefaultsForm(forms.Form):
    palette = forms.ChoiceField(choices=[], label="Palette")
    span_rule = forms.ChoiceField(choices=SpanRule.choices, label="Span")

    def __init__(self, *args, **kwargs):
        super().__init__(*args, **kwargs)
        self.fields["palette"].choices = palette_choices()


class OrganizationForm(forms.Form):
    allow_self_review = forms.BooleanField(
        required=False,
        label="A thermographer may issue the report of their own survey",
        help_text="For one-person firms. Such reports say they were not independently reviewed.",
    )


class AssetTiesForm(forms.Form):
    """One asset choice per thermogram of a survey: tie them all in one step."""

    def __init__(self, *args, thermograms, assets, suggested=None, **kwargs):
        super().__init__(*args, **kwargs)
        suggested = suggested or {}
        self.thermograms = list(thermograms)
        self.rows = []
        for thermogram in self.thermograms:
            name = f"asset_{thermogram.pk}"
            self.fields[name] = forms.ModelChoiceField(
                queryset=assets,
                required=False,
                empty_label="No asset",
                label=f"Asset of {thermogram.sequence}. {thermogram}",
                initial=thermogram.asset_id or suggested.get(thermogram.pk),
            )
            self.rows.append(
                {
                    "thermogram": thermogram,
                    "field": self[name],
                    "suggested": thermogram.asset_id is None and thermogram.pk in suggested,
                }
            )

    def ties(self) -> dict:
        return {t: self.cleaned_data.get(f"asset_{t.pk}") for t in self.thermograms}


SEVERITY_CHOICES = [
    ("", "Any"),
    *[(str(level.value), level.label) for level in Finding.Level],
    ("none", "No open finding"),
]


class SurveyFilterForm(forms.Form):
    """The survey list's filters: every field optional, bad values ignored with a message."""

    q = forms.CharField(max_length=200, required=False, label="Search")
    client = forms.ModelChoiceField(queryset=None, required=False, empty_label="Any client")
    site = forms.ModelChoiceField(queryset=None, required=False, empty_label="Any site")
    kind = forms.ChoiceField(choices=[("", "Any kind"), *Survey.Kind.choices], required=False)
    severity = forms.ChoiceField(
        choices=SEVERITY_CHOICES, required=False, label="Most urgent open finding"
    )
    order = forms.ChoiceField(
        choices=[("newest", "Newest first"), ("oldest", "Oldest first")],
        required=False,
        label="Order",
    )

    def __init__(self, *args, clients, sites, facets=(), **kwargs):
        super().__init__(*args, **kwargs)
        self.fields["client"].queryset = clients
        self.fields["site"].queryset = sites
        self.facets = list(facets)
        for facet in self.facets:
            self.fields[facet.key] = forms.ChoiceField(
                choices=[("", "Any"), *facet.choices], required=False, label=facet.label
            )

    @property
    def facet_fields(self) -> list:
        return [self[facet.key] for facet in self.facets]

    def clean_q(self):
        value = self.cleaned_data.get("q", "").strip()
        if len(value) == 1:
            raise ValidationError("Type at least two characters to search.")
        return value
