"""What apps built on the survey app keep of a survey.

Layers point down: the survey app never imports the apps above it. An app that keeps rows
made from a survey (the reports app keeps reports and their PDFs) registers a Dependent from
its AppConfig.ready(). Its `hold` says why a survey must stay (None when it need not), and
its `release` deletes the app's rows of a survey being purged and returns the media paths to
remove once those rows are gone for good. Its optional `thermogram_hold` says why one
thermogram must stay exactly as it is (an issued report shows it), and `survey_facets` add
columns and filters to the survey list (the state of a survey's report).
"""

from collections.abc import Callable
from dataclasses import dataclass, field

from django.db.models import QuerySet

from survey.models import Survey, Thermogram


@dataclass(frozen=True)
class SurveyFacet:
    """A column and filter of the survey list that another app knows the answer to.

    `apply(surveys, value)` narrows a queryset to the surveys whose answer is `value` (one
    of `choices`); `describe(surveys)` gives the column's text for each survey id.
    """

    key: str
    label: str
    choices: list[tuple[str, str]]
    apply: Callable[[QuerySet, str], QuerySet]
    describe: Callable[[list[Survey]], dict[int, str]]


@dataclass(frozen=True)
class Dependent:
    name: str
    hold: Callable[[Survey], str | None]
    release: Callable[[Survey], list[str]]
    thermogram_hold: Callable[[Thermogram], str | None] | None = None
    survey_facets: list[SurveyFacet] = field(default_factory=list)


_DEPENDENTS: dict[str, Dependent] = {}


def register(dependent: Dependent) -> None:
    """Register (or replace, by name) what an app keeps of surveys."""
    _DEPENDENTS[dependent.name] = dependent


def survey_hold(survey: Survey) -> str | None:
    """The first reason a registered app gives for keeping `survey`, or None."""
    for dependent in _DEPENDENTS.values():
        reason = dependent.hold(survey)
        if reason:
            return reason
    return None


def survey_release(survey: Survey) -> list[str]:
    """Let every registered app delete its rows of `survey`; the media paths they leave."""
    paths: list[str] = []
    for dependent in _DEPENDENTS.values():
        paths += dependent.release(survey)
    return paths


def thermogram_hold(thermogram: Thermogram) -> str | None:
    """The first reason a registered app gives for keeping `thermogram` as it is, or None."""
    for dependent in _DEPENDENTS.values():
        if dependent.thermogram_hold is not None:
            reason = dependent.thermogram_hold(thermogram)
            if reason:
                return reason
    return None


def survey_facets() -> list[SurveyFacet]:
    """Every registered app's columns and filters of the survey list."""
    return [facet for dependent in _DEPENDENTS.values() for facet in dependent.survey_facets]
