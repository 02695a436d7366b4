"""Show stored °C values in the member's unit: {{ value|temp:membership }}."""

from django import template

register = template.Library()


def _unit(member_or_unit) -> str:
    if isinstance(member_or_unit, str):
        return member_or_unit or "C"
    return getattr(member_or_unit, "temperature_unit", "C") or "C"


@register.filter
def temp(value_c, member_or_unit="C") -> str:
    """An absolute temperature, e.g. 21.5 °C or 70.7 °F; empty when not recorded."""
    if value_c is None or value_c == "":
        return "—"
    if _unit(member_or_unit) == "F":
        return f"{float(value_c) * 9 / 5 + 32:.1f} °F"
    return f"{float(value_c):.1f} °C"


@register.filter
def tdiff(value_k, member_or_unit="C") -> str:
    """A temperature difference, e.g. 12.0 K or 21.6 °F."""
    if value_k is None or value_k == "":
        return "—"
    if _unit(member_or_unit) == "F":
        return f"{float(value_k) * 9 / 5:.1f} °F"
    return f"{float(value_k):.1f} K"


@register.filter
def unit_symbol(member_or_unit="C") -> str:
    return "°F" if _unit(member_or_unit) == "F" else "°C"
