"""Middleware: limits checked before any view reads a request, and response headers.

- RequestLimitsMiddleware (first, before CSRF reads the body): a request larger than
  UPLOAD_MAX_REQUEST_BYTES answers 413 before a byte of it is read; NUL characters in the
  path answer 404, in the query or a form 400 (PostgreSQL refuses them in text, which
  would otherwise end as 500 deep in a query).
- PrivateCacheMiddleware (after authentication): pages, JSON and CSV a signed-in member
  sees are never kept by a browser or proxy cache (`Cache-Control: private, no-store`),
  unless the view chose its own caching (images, the temperature array).
- ContentSecurityPolicyMiddleware: no inline script or style anywhere.
"""

from django.conf import settings
from django.http import Http404, HttpRequest, HttpResponse

from survey.views.errors import refusal

# No inline script or style anywhere: every page loads its code from /static/.
CONTENT_SECURITY_POLICY = (
    "default-src 'self'; img-src 'self' data: blob:; style-src 'self'; script-src 'self'; "
    "object-src 'none'; base-uri 'self'; frame-ancestors 'none'; form-action 'self'"
)
NO_STORE = "private, no-store"
FORM_TYPES = ("application/x-www-form-urlencoded",)


def _megabytes(size: int) -> str:
    from survey.thermal.decode import size_text

    return size_text(size, 0)


def _holds_nul(data) -> bool:
    return any("\x00" in key or any("\x00" in v for v in values) for key, values in data.lists())


class RequestLimitsMiddleware:
    def __init__(self, get_response):
        self.get_response = get_response

    def __call__(self, request: HttpRequest) -> HttpResponse:
        try:
            length = int(request.META.get("CONTENT_LENGTH") or 0)
        except ValueError:
            length = 0
        limit = settings.UPLOAD_MAX_REQUEST_BYTES
        if length > limit:
            return refusal(
                request,
                413,
                f"This request is {_megabytes(length)}; one request may send at most "
                f"{_megabytes(limit)}. Upload the files in several smaller batches.",
            )
        if "\x00" in request.path:
            if request.path.startswith("/api/"):
                return refusal(request, 404, "Not found.")
            raise Http404("No such page")
        if _holds_nul(request.GET):
            return refusal(request, 400, "The address holds a NUL character; remove it.")
        if request.method == "POST" and request.content_type in FORM_TYPES:
            if _holds_nul(request.POST):
                return refusal(request, 400, "The form holds a NUL character; remove it.")
        return self.get_response(request)


class PrivateCacheMiddleware:
    def __init__(self, get_response):
        self.get_response = get_response

    def __call__(self, request: HttpRequest) -> HttpResponse:
        response = self.get_response(request)
        user = getattr(request, "user", None)
        if user is not None and user.is_authenticated and "Cache-Control" not in response:
            response["Cache-Control"] = NO_STORE
        return response


class ContentSecurityPolicyMiddleware:
    def __init__(self, get_response):
        self.get_response = get_response

    def __call__(self, request: HttpRequest) -> HttpResponse:
        response = self.get_response(request)
        response.setdefault("Content-Security-Policy", CONTENT_SECURITY_POLICY)
        return response
