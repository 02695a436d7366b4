"""Forms of the organization's members (admins manage them)."""

from django import forms

from survey.models import Member


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
