"""Checks of raw input shared by the forms, the JSON API and survey imports."""


def holds_nul(value) -> bool:
    """True when a NUL character hides in decoded JSON (keys, strings, nested): PostgreSQL
    stores no NUL in text or jsonb, so such input is refused with a message."""
    if isinstance(value, str):
        return "\x00" in value
    if isinstance(value, dict):
        return any(holds_nul(key) or holds_nul(item) for key, item in value.items())
    if isinstance(value, list | tuple):
        return any(holds_nul(item) for item in value)
    return False
