"""Display helpers of the judgement pages: {{ finding|category_label }}."""

from django import template

from survey import severity
from survey.services.readings import DECISION_TEXT

register = template.Library()


@register.filter
def category_label(finding) -> str:
    """The readable category of a finding, e.g. 'Missing or displaced insulation'."""
    return severity.category_label(finding.survey.kind, finding.category)


@register.filter
def decision(value) -> str:
    """The words of a guarded-acceptance decision: 'cannot tell within the camera's accuracy'."""
    return DECISION_TEXT.get(value, "") if value else ""
