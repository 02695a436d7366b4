"""Display helpers of the judgement pages: {{ finding|category_label }}."""

from django import template

from survey import severity

register = template.Library()


@register.filter
def category_label(finding) -> str:
    """The readable category of a finding, e.g. 'Missing or displaced insulation'."""
    return severity.category_label(finding.survey.kind, finding.category)
