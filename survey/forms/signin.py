"""The sign-in form: Django's, refusing while a username is throttled. It only validates;
the view records each attempt (survey/views/signin.py)."""

from django.contrib.auth.forms import AuthenticationForm
from django.core.exceptions import ValidationError

from survey.services.signin import client_address, login_wait, wait_message


class ThrottledAuthenticationForm(AuthenticationForm):
    throttled = False

    def clean(self):
        username = self.cleaned_data.get("username") or ""
        wait = login_wait(username, client_address(self.request))
        if wait is not None:
            self.throttled = True
            raise ValidationError(wait_message(wait), code="throttled")
        return super().clean()
