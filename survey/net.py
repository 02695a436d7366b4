"""Who is on the other end of a request: the client's address, behind proxies or not.

A header such as X-Forwarded-For is written by whoever sends the request, so it is read
only when the operator says a proxy of theirs sets it (TRUSTED_PROXY_HEADER), and then only
the entry that proxy appended: TRUSTED_PROXY_COUNT entries from the right, one per trusted
proxy in front of the app. Everything to the left of it is the client's own claim.
"""

import ipaddress

from django.conf import settings
from django.http import HttpRequest


def _address(value: str) -> str | None:
    """A valid IPv4 or IPv6 address in its usual text form, or None."""
    value = value.strip()
    if value.startswith("[") and "]" in value:  # "[2001:db8::1]:443"
        value = value[1 : value.index("]")]
    elif value.count(":") == 1:  # "192.0.2.1:443"
        value = value.split(":", 1)[0]
    try:
        return str(ipaddress.ip_address(value))
    except ValueError:
        return None


def client_address(request: HttpRequest | None) -> str:
    """The client's address: from the trusted proxy header when one is configured and
    present, else the address the connection came from; "unknown" when neither is valid.

    Examples (with TRUSTED_PROXY_HEADER = "X-Forwarded-For" and one trusted proxy):
    "203.0.113.9, 198.51.100.4" gives 198.51.100.4, the address the proxy saw; the first
    entry is whatever the client wrote and is never used.
    """
    if request is None:
        return "unknown"
    header = settings.TRUSTED_PROXY_HEADER
    if header:
        key = header.upper().replace("-", "_")
        # "X-Forwarded-For" as the proxy writes it, or "HTTP_X_FORWARDED_FOR" as Django does.
        value = request.META.get(key if key.startswith("HTTP_") else "HTTP_" + key, "")
        hops = [hop for hop in value.split(",") if hop.strip()]
        if len(hops) >= settings.TRUSTED_PROXY_COUNT:
            found = _address(hops[-settings.TRUSTED_PROXY_COUNT])
            if found:
                return found
    return _address(request.META.get("REMOTE_ADDR", "")) or "unknown"
