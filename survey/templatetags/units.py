"""Show stored °C values in the member's unit: {{ value|temp:membership }}."""

from django import template

from survey.thermal import units

register = template.Library()


def _unit(member_or_unit) -> str:
    if isinstance(member_or_unit, str):
        return member_or_unit or units.CELSIUS
    return getattr(member_or_unit, "temperature_unit", units.CELSIUS) or units.CELSIUS


@register.filter
def temp(value_c, member_or_unit="C") -> str:
    """An absolute temperature, e.g. 21.5 °C or 70.7 °F; empty when not recorded."""
    if value_c is None or value_c == "":
        return "—"
    unit = _unit(member_or_unit)
    return f"{units.from_celsius(float(value_c), unit):.1f} {units.symbol(unit)}"


@register.filter
def tdiff(value_k, member_or_unit="C") -> str:
    """A temperature difference, e.g. 12.0 K or 21.6 °F."""
    if value_k is None or value_k == "":
        return "—"
    unit = _unit(member_or_unit)
    return (
        f"{units.difference_from_kelvin(float(value_k), unit):.1f} {units.difference_symbol(unit)}"
    )


@register.filter
def unit_symbol(member_or_unit="C") -> str:
    return units.symbol(_unit(member_or_unit))
