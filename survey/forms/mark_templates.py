"""Forms of mark templates: save one thermogram's marks, apply a template to thermograms,
align one thermogram by two or three matching points."""

from django import forms
from django.core.exceptions import ValidationError

from survey.forms.fields import number_field


class TemplateCreateForm(forms.Form):
    name = forms.CharField(
        max_length=200,
        label="Template name",
        help_text="What the marks are on, for example: three-phase breaker, 250 A.",
    )


class TemplateApplyForm(forms.Form):
    METHODS = [
        ("register", "Automatically, from the temperatures (same size, small turn and shift)"),
        ("points", "By two or three matching points on each thermogram"),
    ]

    template = forms.ModelChoiceField(queryset=None, empty_label="Choose a template")
    thermograms = forms.ModelMultipleChoiceField(
        queryset=None,
        widget=forms.CheckboxSelectMultiple,
        label="Thermograms of the same kind of equipment",
        error_messages={"required": "Tick at least one thermogram."},
    )
    method = forms.ChoiceField(
        choices=METHODS, widget=forms.RadioSelect, initial="register", label="Align"
    )

    def __init__(self, *args, templates, thermograms, **kwargs):
        super().__init__(*args, **kwargs)
        self.fields["template"].queryset = templates
        self.fields["thermograms"].queryset = thermograms
        self.fields["thermograms"].label_from_instance = lambda t: f"{t.sequence}. {t}"


PAIR_FIELDS = [
    (f"{side}{n}_{axis}", n, side, axis)
    for n in (1, 2, 3)
    for side in ("template", "image")
    for axis in ("x", "y")
]


class PointAlignmentForm(forms.Form):
    """Two or three pairs: a point on the template's thermogram and the same on this one."""

    def __init__(self, *args, template_size, image_size, **kwargs):
        super().__init__(*args, **kwargs)
        self.sizes = {"template": template_size, "image": image_size}
        for name, n, side, axis in PAIR_FIELDS:
            width, height = self.sizes[side]
            limit = (width if axis == "x" else height) - 1
            where = "template" if side == "template" else "this thermogram"
            self.fields[name] = number_field(
                f"Point {n} on the {where}: {axis} (px)", 0, limit, required=n < 3
            )
            self.fields[name].widget.attrs.update({"step": "0.5", "data-pair": str(n)})

    def clean(self):
        cleaned = super().clean()
        third = [cleaned.get(f"{side}3_{axis}") for side in ("template", "image") for axis in "xy"]
        if any(v is not None for v in third) and not all(v is not None for v in third):
            raise ValidationError("Give all four numbers of point 3, or none.")
        return cleaned

    def pairs(self) -> list:
        data = self.cleaned_data
        pairs = []
        for n in (1, 2, 3):
            values = [
                data.get(f"{side}{n}_{axis}") for side in ("template", "image") for axis in "xy"
            ]
            if all(v is not None for v in values):
                pairs.append([values[:2], values[2:]])
        return pairs
