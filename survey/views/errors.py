"""Answers given before a view runs: a refused CSRF check, a request too large or holding
NUL characters. The JSON API (/api/) gets the documented JSON error; pages get a short
page saying what to do."""

from django.http import HttpRequest, HttpResponse, JsonResponse
from django.template.loader import render_to_string
from django.views.csrf import csrf_failure as django_csrf_failure

API_PREFIX = "/api/"


def is_api(request: HttpRequest) -> bool:
    return request.path.startswith(API_PREFIX)


def refusal(request: HttpRequest, status: int, message: str) -> HttpResponse:
    """`message` as {"error", "fields"} for the API, or as a small page."""
    if is_api(request):
        return JsonResponse({"error": message, "fields": {}}, status=status)
    body = render_to_string("refused.html", {"message": message, "status": status})
    return HttpResponse(body, status=status)


def csrf_failure(request: HttpRequest, reason: str = "") -> HttpResponse:
    """CSRF_FAILURE_VIEW: JSON for the API, Django's own page elsewhere."""
    if is_api(request):
        return refusal(
            request,
            403,
            "The request lacks a valid CSRF token: send the csrftoken cookie back in an "
            "X-CSRFToken header.",
        )
    return django_csrf_failure(request, reason=reason)
