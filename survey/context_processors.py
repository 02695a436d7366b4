from django.http import HttpRequest


def membership(request: HttpRequest) -> dict:
    """The signed-in user's membership, for the navigation bar and unit display."""
    user = getattr(request, "user", None)
    if user is None or not user.is_authenticated:
        return {"membership": None}
    return {"membership": getattr(user, "membership", None)}
