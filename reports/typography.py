"""Print typography of the report: true minus signs, numbers kept with their units.

The report's template loads reports/templatetags/printed.py, whose filters carry the names
of the app's own (temp, tnum, floatformat…) but print through these helpers.
"""

import re

MINUS = "\u2212"
NBSP = "\u00a0"

# A number followed by a space and a unit: the space becomes non-breaking so the two are
# never split across lines. Only text between tags is touched (never attributes or CSS).
_UNITS = r"%|°C|°F|Δ°F|K\b|m²|m\b|mm\b|W\b|kW\b|kWh\b|h\b|A\b|mrad\b|µm\b|px\b|m/s|mph\b|ft\b"
_UNIT_AFTER_NUMBER = re.compile(rf"(?<=\d) (?=(?:{_UNITS}))")
_TAG = re.compile(r"(<[^>]*>)")
_TAG_NAME = re.compile(r"<(/?[A-Za-z]+)")
# A hyphen-minus that is a negative sign: after a space, an opening bracket or a separator,
# or at the start of a text, and before a digit.
_NEGATIVE = re.compile(r"(^|[\s(\[/;:=±·–])-(?=\d)")


def minus(text: str) -> str:
    """`text` with the hyphen-minus of a negative number as a true minus sign (U+2212).

    Examples
    --------
    >>> minus("-3.5 to 2.0") == "\u22123.5 to 2.0"
    True
    """
    return text.replace("-", MINUS) if text.startswith("-") else text


def printed_number(value: float, decimals: int) -> str:
    """`value` with `decimals` decimals and a true minus sign; "−0.0" prints as "0.0".

    Examples
    --------
    >>> printed_number(-1.04, 1) == "\u22121.0", printed_number(-0.01, 1)
    (True, '0.0')
    """
    text = f"{value:.{decimals}f}"
    if text.lstrip("-").strip("0.") == "":
        text = text.lstrip("-")
    return minus(text)


def typeset(html: str) -> str:
    """The report's HTML with numbers and units held together and true minus signs in
    the text (not inside tags, scripts or styles)."""
    parts = _TAG.split(html)
    inside_raw = False
    for index, part in enumerate(parts):
        if index % 2:  # a tag
            name = _TAG_NAME.match(part)
            name = name.group(1).lower() if name else ""
            if name in ("style", "script"):
                inside_raw = True
            elif name in ("/style", "/script"):
                inside_raw = False
            continue
        if inside_raw or not part:
            continue
        part = _UNIT_AFTER_NUMBER.sub(NBSP, part)
        parts[index] = _NEGATIVE.sub(lambda m: m.group(1) + MINUS, part)
    return "".join(parts)
