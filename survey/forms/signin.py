"""The sign-in forms: Django's, saying how long to wait when the throttle refused the
attempt (survey.backends.ThrottledModelBackend decides and records). They only validate."""

from django.contrib.admin.forms import AdminAuthenticationForm
from django.contrib.auth.forms import AuthenticationForm
from django.core.exceptions import ValidationError


class ThrottledFormMixin:
    throttled = False

    def get_invalid_login_error(self):
        wait = getattr(self.request, "signin_wait", None)
        if wait is not None:
            self.throttled = True
            return ValidationError(wait.message, code="throttled")
        return super().get_invalid_login_error()


class ThrottledAuthenticationForm(ThrottledFormMixin, AuthenticationForm):
    pass


class ThrottledAdminAuthenticationForm(ThrottledFormMixin, AdminAuthenticationForm):
    pass
