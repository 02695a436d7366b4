from django import forms

from reports.services import SHARE_DAYS_MAX, SHARE_DAYS_MIN


class IssueForm(forms.Form):
    change_note = forms.CharField(
        required=False,
        max_length=4000,
        widget=forms.Textarea(attrs={"rows": 3}),
        label="What this version changes",
        help_text="Needed for every version after the first.",
    )


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
