"""Follow-up work the survey services ask for without importing who does it.

The marks services run inside Celery tasks (a proposal accepted by the worker, a template
applied) and also ask for Celery work (the previews drawn again when marks change). Importing
the task module from the services would make a cycle, so the services call a hook here and
the app wires the hook to the task queue in SurveyConfig.ready().
"""

from collections.abc import Callable

_marks_changed: list[Callable[[int], None]] = []


def on_marks_changed(callback: Callable[[int], None]) -> None:
    """Call `callback(thermogram_id)` whenever a thermogram's marks change."""
    if callback not in _marks_changed:
        _marks_changed.append(callback)


def marks_changed(thermogram_id: int) -> None:
    for callback in list(_marks_changed):
        callback(thermogram_id)
