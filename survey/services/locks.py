"""What may no longer change: a thermogram that an issued (or issuing) report shows.

The reports app says which ones through survey/dependents.py; every service that changes or
deletes a thermogram, its marks or its alignment asks here first.
"""

from django.core.exceptions import ValidationError

from survey.dependents import thermogram_hold
from survey.models import Thermogram


def thermogram_check_unlocked(thermogram: Thermogram) -> None:
    """Refuse to change a thermogram that an issued (or issuing) report shows."""
    reason = thermogram_hold(thermogram)
    if reason:
        raise ValidationError(f"{reason} It can no longer be changed or deleted.")
