"""What apps built on the survey app keep of a survey.

Layers point down: the survey app never imports the apps above it. An app that keeps rows
made from a survey (the reports app keeps reports and their PDFs) registers a Dependent from
its AppConfig.ready(). Its `hold` says why a survey must stay (None when it need not), and
its `release` deletes the app's rows of a survey being purged and returns the media paths to
remove once those rows are gone for good.
"""

from collections.abc import Callable
from dataclasses import dataclass

from survey.models import Survey


@dataclass(frozen=True)
class Dependent:
    name: str
    hold: Callable[[Survey], str | None]
    release: Callable[[Survey], list[str]]


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
