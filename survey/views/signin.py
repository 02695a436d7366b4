"""Signing in, throttled: a refused attempt answers 429 with how long to wait, on our page
and on the admin's (survey.backends.ThrottledModelBackend records every attempt)."""

from django.contrib import admin
from django.contrib.auth.views import LoginView
from django.http import HttpRequest, HttpResponse

from survey.forms.signin import ThrottledAuthenticationForm


class ThrottledLoginView(LoginView):
    form_class = ThrottledAuthenticationForm

    def form_invalid(self, form):
        response = super().form_invalid(form)
        if form.throttled:
            response.status_code = 429
        return response


def admin_login(request: HttpRequest) -> HttpResponse:
    """The admin's own login page, answering 429 while the throttle refuses."""
    response = admin.site.login(request)
    if getattr(request, "signin_wait", None) is not None:
        response.status_code = 429
    return response
