"""The thresholds of the proposal detectors, for an organization's survey kind or one survey.

A blank field inherits (survey → organization → product default); rises are entered in the
member's unit (a difference: °F converts by 5/9 only).
"""

from django import forms

from survey.forms.fields import UnitFormMixin, number_field
from survey.models import ProposalSettings

INHERIT = [("", "As the level above"), ("yes", "Yes"), ("no", "No")]
# Which settings each kind of survey uses (survey/services/proposals.DEFAULTS).
FIELDS_BY_KIND = {
    "envelope": ("enabled", "min_area_px", "min_area_m2", "limit_rh_pct", "f_rsi_min"),
    "roof": ("enabled", "min_rise_c", "min_area_px", "min_area_m2"),
    "electrical": ("enabled", "min_rise_c", "hot_spot_shape"),
    "mechanical": ("enabled", "min_rise_c", "hot_spot_shape"),
}


class ProposalSettingsForm(UnitFormMixin, forms.Form):
    differences = {"min_rise_c": ("Least rise above the surroundings", 0.1, 200, False)}

    enabled = forms.TypedChoiceField(
        choices=INHERIT,
        required=False,
        coerce=lambda value: value == "yes",
        empty_value=None,
        label="Propose marks when a thermogram is processed",
    )
    min_area_px = forms.IntegerField(
        label="Least area (pixels)", min_value=1, max_value=1_000_000, required=False
    )
    min_area_m2 = number_field("Least area (m², needs distance and IFOV)", 0, 10_000, False, " m²")
    limit_rh_pct = number_field("Surface RH limit (%)", 50, 100, False, " %")
    f_rsi_min = number_field("Critical temperature factor fRsi (design value)", 0.01, 0.99)
    hot_spot_shape = forms.ChoiceField(
        choices=[("", "As the level above"), *ProposalSettings.Shape.choices],
        required=False,
        label="Mark a hot spot with",
    )

    def __init__(self, *args, kind: str, **kwargs):
        super().__init__(*args, **kwargs)
        wanted = FIELDS_BY_KIND[kind]
        for name in list(self.fields):
            if name not in wanted:
                del self.fields[name]
        if "min_rise_c" in self.fields:
            self.fields["min_rise_c"].help_text = (
                "Roof: above the roof field's background. Electrical and mechanical: above the "
                "spot's surroundings and its like components."
            )

    def clean_min_rise_c(self):
        return self._difference_c("min_rise_c")

    def values(self) -> dict:
        return {name: self.cleaned_data.get(name) for name in self.fields} | (
            {"hot_spot_shape": self.cleaned_data.get("hot_spot_shape") or ""}
            if "hot_spot_shape" in self.fields
            else {}
        )

    @classmethod
    def initial_for(cls, row: ProposalSettings, kind: str, unit: str) -> dict:
        values = {name: getattr(row, name) for name in FIELDS_BY_KIND[kind]}
        if "enabled" in values:
            values["enabled"] = "" if row.enabled is None else ("yes" if row.enabled else "no")
        return cls.initial_in_unit(values, unit)
