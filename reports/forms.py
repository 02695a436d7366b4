from django import forms

from reports.services import SHARE_DAYS_MAX, SHARE_DAYS_MIN, SHARE_MESSAGE_LIMIT


class IssueForm(forms.Form):
    change_note = forms.CharField(
        required=False,
        max_length=4000,
        widget=forms.Textarea(attrs={"rows": 3}),
        label="What this version changes",
        help_text="Needed for every version after the first.",
    )


class IssueConfirmForm(IssueForm):
    confirm = forms.BooleanField(
        label="Yes, issue this version: its PDF is made once and never changed",
        error_messages={"required": "Tick the box to confirm."},
    )
    accept_criteria = forms.BooleanField(
        required=False,
        label="I accept the criteria tables not yet reviewed by our firm for this report; "
        "the report will name me as having accepted them",
    )


class RevokeForm(forms.Form):
    confirm = forms.BooleanField(
        label="Yes, revoke this link: the client can no longer open the report with it",
        error_messages={"required": "Tick the box to confirm."},
    )


class ShareEmailForm(forms.Form):
    to = forms.EmailField(
        label="Send to",
        error_messages={
            "invalid": "Enter the client's e-mail address.",
            "required": "Enter the client's e-mail address.",
        },
    )
    message = forms.CharField(
        required=False,
        max_length=SHARE_MESSAGE_LIMIT,
        widget=forms.Textarea(attrs={"rows": 5}),
        label="Short message",
        help_text="Sent above the link, the report's number and its fingerprint.",
    )


class AcknowledgeForm(forms.Form):
    repair_scheduled_for = forms.DateField(
        required=False,
        label="Repair scheduled for",
        widget=forms.DateInput(attrs={"type": "date"}),
        error_messages={"invalid": "Enter a date, for example 2026-09-30."},
    )
    note = forms.CharField(
        required=False,
        max_length=2000,
        widget=forms.Textarea(attrs={"rows": 2}),
        label="Note to the inspection firm",
    )
    name = forms.CharField(required=False, max_length=200, label="Your name")

    def clean(self):
        cleaned = super().clean()
        if not self.errors and not cleaned.get("repair_scheduled_for") and not cleaned.get("note"):
            raise forms.ValidationError("Give the date the repair is scheduled for, or a note.")
        return cleaned


class ShareLinkForm(forms.Form):
    days = forms.IntegerField(
        min_value=SHARE_DAYS_MIN,
        max_value=SHARE_DAYS_MAX,
        initial=30,
        label="Link valid for (days)",
        error_messages={
            "invalid": "Enter the number of days as a whole number.",
            "min_value": f"A link lasts at least {SHARE_DAYS_MIN} day.",
            "max_value": f"A link lasts at most {SHARE_DAYS_MAX} days.",
        },
    )
