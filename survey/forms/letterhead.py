"""Forms of what reports say about the firm and its people: the letterhead, the level times,
a member's qualification record and signature."""

import datetime

from django import forms
from django.core.exceptions import ValidationError

from survey.models import LEVEL_TIME_DEFAULTS
from survey.services.letterhead import PICTURE_MAX_BYTES


def _picture_bytes(upload) -> bytes | None:
    """The upload's bytes, read at most one byte past the limit (the service says why
    a larger one is refused)."""
    if not upload:
        return None
    if upload.size is not None and upload.size > PICTURE_MAX_BYTES:
        raise ValidationError(
            f"The file is {upload.size / 1048576:.1f} MB; the limit is "
            f"{PICTURE_MAX_BYTES / 1048576:.1f} MB. Save it smaller and upload it again."
        )
    return upload.read(PICTURE_MAX_BYTES + 1)


class LetterheadForm(forms.Form):
    name = forms.CharField(max_length=200, label="Firm name")
    address = forms.CharField(widget=forms.Textarea(attrs={"rows": 3}), required=False)
    phone = forms.CharField(max_length=50, required=False, label="Telephone")
    email = forms.EmailField(required=False, label="E-mail")
    website = forms.CharField(max_length=200, required=False, label="Web address")
    logo = forms.FileField(
        required=False,
        label="Logo",
        help_text="PNG or JPEG, at most 2 MB; printed on the cover and in the page footers.",
        widget=forms.FileInput(attrs={"accept": "image/png,image/jpeg"}),
    )
    remove_logo = forms.BooleanField(required=False, label="Remove the logo")
    reinspection_interval_months = forms.IntegerField(
        min_value=1,
        max_value=120,
        label="Re-inspection interval (months) for equipment without its own",
        help_text="NFPA 70B asks for infrared inspection of electrical equipment at least "
        "every 12 months.",
    )
    level_1_time = forms.CharField(max_length=200, required=False, label="Level 1, act now")
    level_2_time = forms.CharField(max_length=200, required=False, label="Level 2, act soon")
    level_3_time = forms.CharField(max_length=200, required=False, label="Level 3, plan repair")
    level_4_time = forms.CharField(max_length=200, required=False, label="Level 4, watch")

    def clean_logo(self):
        return _picture_bytes(self.cleaned_data.get("logo"))

    def clean(self):
        cleaned = super().clean()
        for level, default in LEVEL_TIME_DEFAULTS.items():
            name = f"level_{level}_time"
            if name in cleaned and not cleaned[name].strip():
                cleaned[name] = default  # an emptied box goes back to the default wording
        return cleaned

    @classmethod
    def initial_for(cls, organization) -> dict:
        names = (
            "name address phone email website reinspection_interval_months level_1_time "
            "level_2_time level_3_time level_4_time"
        ).split()
        return {name: getattr(organization, name) for name in names}


class QualificationForm(forms.Form):
    qualification_scheme = forms.CharField(
        max_length=120,
        required=False,
        label="Certification scheme or body",
        help_text="For example the body or standard the thermography certificate is issued under.",
    )
    qualification_level = forms.CharField(max_length=60, required=False, label="Level")
    certificate_number = forms.CharField(max_length=100, required=False)
    qualification_expires = forms.DateField(
        required=False,
        label="Valid until",
        widget=forms.DateInput(attrs={"type": "date"}),
        error_messages={"invalid": "Enter the date as year-month-day, for example 2027-06-30."},
    )
    signature = forms.FileField(
        required=False,
        label="Signature picture",
        help_text="PNG or JPEG, at most 2 MB; printed in the sign-off of reports this person "
        "issues.",
        widget=forms.FileInput(attrs={"accept": "image/png,image/jpeg"}),
    )
    remove_signature = forms.BooleanField(required=False, label="Remove the signature")

    def clean_qualification_expires(self):
        value = self.cleaned_data.get("qualification_expires")
        if value is not None and not datetime.date(1950, 1, 1) <= value <= datetime.date(
            2200, 1, 1
        ):
            raise ValidationError("Enter the date the certificate is valid until.")
        return value

    def clean_signature(self):
        return _picture_bytes(self.cleaned_data.get("signature"))

    @classmethod
    def initial_for(cls, member) -> dict:
        names = "qualification_scheme qualification_level certificate_number qualification_expires"
        return {name: getattr(member, name) for name in names.split()}
