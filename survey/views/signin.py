"""Signing in, throttled: every attempt is recorded, a throttled one answers 429."""

from django.contrib.auth.views import LoginView

from survey.forms.signin import ThrottledAuthenticationForm
from survey.services.signin import client_address, login_record


class ThrottledLoginView(LoginView):
    form_class = ThrottledAuthenticationForm

    def form_valid(self, form):
        login_record(
            username=form.cleaned_data["username"],
            address=client_address(self.request),
            succeeded=True,
        )
        return super().form_valid(form)

    def form_invalid(self, form):
        username = form.cleaned_data.get("username") or ""
        if username and not form.throttled:
            login_record(username=username, address=client_address(self.request), succeeded=False)
        response = super().form_invalid(form)
        if form.throttled:
            response.status_code = 429
        return response
