"""The authentication backend: Django's, with the sign-in throttle around it.

Every form that signs people in (ours, the admin's, any added later) calls authenticate(),
so the throttle cannot be bypassed by choosing another login page: a throttled attempt is
refused before the password is looked at, and every other attempt is counted.
"""

from django.contrib.auth import get_user_model
from django.contrib.auth.backends import ModelBackend
from django.core.exceptions import PermissionDenied

from survey.net import client_address
from survey.services.signin import signin_failed, signin_succeeded, signin_wait


class ThrottledModelBackend(ModelBackend):
    def authenticate(self, request, username=None, password=None, **kwargs):
        if username is None:
            username = kwargs.get(get_user_model().USERNAME_FIELD)
        if username is None or password is None:
            return None
        address = client_address(request)
        wait = signin_wait(username, address)
        if wait is not None:
            if request is not None:
                request.signin_wait = wait  # for the form's message and the 429
            raise PermissionDenied(wait.message)  # ends authenticate(): no other backend
        user = super().authenticate(request, username=username, password=password, **kwargs)
        if user is None:
            signin_failed(username=username, address=address)
        else:
            signin_succeeded(user=user, address=address)
        return user
