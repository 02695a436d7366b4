"""The unit filters of survey/templatetags/units.py and Django's floatformat, for print:
the same names and numbers, with true minus signs (U+2212) and a non-breaking space before
the unit. Loaded by the report's templates after `units`, so these names win there."""

from django import template
from django.template import defaultfilters

from reports.typography import MINUS, NBSP
from survey.templatetags import units as app_units

register = template.Library()


def _printed(text: str) -> str:
    text = str(text)
    if text.startswith("-"):
        text = MINUS + text[1:]
    if text.lstrip(MINUS).strip("0.") == "" and text.startswith(MINUS):
        text = text[1:]
    return text


def _with_unit(text: str) -> str:
    number, _, unit = str(text).partition(" ")
    return _printed(number) + (NBSP + unit if unit else "")


@register.filter
def temp(value_c, member_or_unit="C") -> str:
    return _with_unit(app_units.temp(value_c, member_or_unit))


@register.filter
def tdiff(value_k, member_or_unit="C") -> str:
    return _with_unit(app_units.tdiff(value_k, member_or_unit))


@register.filter
def tnum(value_c, member_or_unit="C") -> str:
    return _printed(app_units.tnum(value_c, member_or_unit))


@register.filter
def dnum(value_k, member_or_unit="C") -> str:
    return _printed(app_units.dnum(value_k, member_or_unit))


@register.filter
def length(value_m, member) -> str:
    return _with_unit(app_units.length(value_m, member))


@register.filter(is_safe=True)
def floatformat(value, arg=-1):
    return _printed(defaultfilters.floatformat(value, arg))


@register.filter
def printed_minus(text) -> str:
    """Any printed text with its negative numbers in true minus signs."""
    from reports.typography import typeset

    return typeset(str(text))


STATUS_WORDS = {
    "open": "open",
    "repaired": "repaired, awaiting verification",
    "verified": "verified repaired",
}


@register.filter
def status_words(status) -> str:
    """A finding's workflow state in words, sentence case: 'repaired, awaiting
    verification'."""
    return STATUS_WORDS.get(str(status), str(status).replace("_", " ").lower())
