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
    """A temperature difference, e.g. 12.0 K or 21.6 Δ°F (labelled as a difference)."""
    if value_k is None or value_k == "":
        return "—"
    unit = _unit(member_or_unit)
    return (
        f"{units.difference_from_kelvin(float(value_k), unit):.1f} {units.difference_label(unit)}"
    )


@register.filter
def tdiff_label(member_or_unit="C") -> str:
    """The label of a temperature difference in the member's unit: K or Δ°F."""
    return units.difference_label(_unit(member_or_unit))


@register.filter
def speed(value_m_s, member) -> str:
    """A wind speed in the member's unit, e.g. 2.5 m/s or 5.6 mph."""
    if value_m_s is None or value_m_s == "":
        return "—"
    unit = member if isinstance(member, str) else getattr(member, "speed_unit", None) or "m_s"
    return f"{units.speed_from_m_s(float(value_m_s), unit):.1f} {units.speed_symbol(unit)}"


@register.filter
def length(value_m, member) -> str:
    """A distance in the member's unit, e.g. 3.0 m or 9.8 ft."""
    if value_m is None or value_m == "":
        return "—"
    unit = member if isinstance(member, str) else getattr(member, "length_unit", None) or "m"
    return f"{units.length_from_m(float(value_m), unit):.1f} {units.length_symbol(unit)}"


@register.filter
def size(value_m, member) -> str:
    """A dimension to three significant digits in the member's unit, e.g. 0.0508 m."""
    if value_m is None or value_m == "":
        return "—"
    unit = member if isinstance(member, str) else getattr(member, "length_unit", None) or "m"
    return f"{units.length_from_m(float(value_m), unit):.3g} {units.length_symbol(unit)}"


@register.filter
def area(value_m2, member) -> str:
    """An area to three significant digits in the square of the member's length unit."""
    if value_m2 is None or value_m2 == "":
        return "—"
    unit = member if isinstance(member, str) else getattr(member, "length_unit", None) or "m"
    shown = units.length_from_m(units.length_from_m(float(value_m2), unit), unit)
    return f"{shown:.3g} {units.length_symbol(unit)}²"


@register.filter
def in_unit_text(text, member_or_unit="C") -> str:
    """A sentence written in °C and K (judgement reasons, criteria rows) in the member's unit."""
    if not text:
        return text
    return units.text_in_unit(str(text), _unit(member_or_unit))


@register.filter
def unit_symbol(member_or_unit="C") -> str:
    return units.symbol(_unit(member_or_unit))


@register.filter
def tnum(value_c, member_or_unit="C") -> str:
    """The number of a temperature in the unit, one decimal, no symbol (tables with the unit
    in the header); "—" when missing."""
    if value_c is None or value_c == "":
        return "—"
    return f"{units.from_celsius(float(value_c), _unit(member_or_unit)):.1f}"


@register.filter
def dnum(value_k, member_or_unit="C") -> str:
    """The number of a temperature difference in the unit, one decimal, no symbol."""
    if value_k is None or value_k == "":
        return "—"
    return f"{units.difference_from_kelvin(float(value_k), _unit(member_or_unit)):.1f}"
