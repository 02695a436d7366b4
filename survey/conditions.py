"""Survey conditions: what each kind of survey asks of the weather and the equipment.

Each criterion is data: the field of survey.models.Conditions it reads, the test, the
requirement as people say it, its source and how sure we are of it. The confidence labels
are those of docs/references.md: ``memory`` (recalled, not confirmed against the published
text), ``practice`` (common practice of the trade, no single source), ``source`` (confirmed
in a published text) and ``ours`` (a product default with no outside source; edit it to
your own practice).
"""

from __future__ import annotations

import datetime
import re
from dataclasses import dataclass

from survey.models import Conditions
from survey.thermal import units

CONFIDENCE_LABELS = {
    "source": "confirmed in a published text",
    "memory": "from memory, not confirmed against the published text",
    "practice": "common practice, no single source",
    "ours": "product default, no outside source",
}


_STANDARD_NAME = re.compile(
    r"\b(?:ANSI/NETA MTS|NETA MTS|NFPA 70[BE]?|ASTM [A-Z]\d+|EN \d+|ISO \d+(?:-\d+)?)"
)


@dataclass(frozen=True)
class Criterion:
    """One survey-conditions requirement on one field of survey.models.Conditions."""

    key: str
    label: str
    field: str  # a field of Conditions, or a value of DERIVED
    # "min" (value >= limit), "above" (value > limit), "max" (value <= limit), "true",
    # "equals", "recorded", "night" (a time of day from limit[0] to limit[1] across midnight)
    test: str
    requirement: str
    source: str
    confidence: str
    limit: float | str | tuple | None = None
    unit: str = ""

    @property
    def standard(self) -> str:
        """The published standards named in `source`, by name only, as a client sees them
        (the notes about how sure we are stay in the app's data and docs/references.md)."""
        names = []
        for name in _STANDARD_NAME.findall(self.source):
            if name not in names:
                names.append(name)
        return " / ".join(names) if names else "common practice"

    def evaluate(self, value) -> str:
        if value is None or value == "":
            return "not_recorded"
        if self.test == "min":
            ok = value >= self.limit
        elif self.test == "above":
            ok = value > self.limit
        elif self.test == "night":
            start, end = self.limit
            ok = value >= start or value <= end
        elif self.test == "max":
            ok = value <= self.limit
        elif self.test == "true":
            ok = value is True
        elif self.test == "equals":
            ok = value == self.limit
        elif self.test == "recorded":
            ok = True
        else:  # a typo in the data must not pass silently as "met"
            raise ValueError(f"unknown criterion test {self.test!r}")
        return "met" if ok else "not_met"


_DELTA_T = Criterion(
    key="inside_outside_difference",
    label="Inside–outside air temperature difference",
    field="inside_outside_difference_c",
    test="min",
    limit=10.0,
    unit="K",
    requirement="at least 10 K",
    source="EN 13187 / ISO 6781 and ASTM C1060 ask for about 10 K",
    confidence="memory",
)


_DELTA_T_HELD = Criterion(
    key="difference_held",
    label="Difference held before the survey",
    field="delta_t_hours",
    test="min",
    limit=24.0,
    unit="h",
    requirement="at least 24 h (ASTM C1060 asks about 4 h)",
    source="EN 13187 / ISO 6781 about 24 h; ASTM C1060 about 4 h",
    confidence="memory",
)


_NO_SUN = Criterion(
    key="no_direct_sun",
    label="No direct sun on the surveyed surfaces before the survey",
    field="hours_since_sun",
    test="min",
    limit=12.0,
    unit="h",
    requirement="at least 12 h since direct sun (some practice accepts 2–3 h)",
    source="several national versions of EN 13187 about 12 h; some practice 2–3 h",
    confidence="memory",
)


_WIND = Criterion(
    key="wind",
    label="Wind speed",
    field="wind_m_s",
    test="max",
    limit=5.0,
    unit="m/s",
    requirement="at most about 5 m/s",
    source="secondary sources on EN 13187 / ISO 6781",
    confidence="memory",
)


_NO_PRECIPITATION = Criterion(
    key="no_precipitation",
    label="No precipitation",
    field="precipitation",
    test="equals",
    limit="none",
    requirement="none during the survey",
    source="wet surfaces cool by evaporation and hide patterns",
    confidence="practice",
)


_DRY = Criterion(
    key="surfaces_dry",
    label="Surveyed surfaces dry",
    field="surfaces_dry",
    test="true",
    requirement="dry",
    source="wet surfaces cool by evaporation and hide patterns",
    confidence="practice",
)


# A night survey as common practice puts it: from the evening, after the sun has left the
# roof, to before sunrise. The clock window is a rule of thumb, not the sunset of the place.
NIGHT_FROM, NIGHT_TO = datetime.time(18, 0), datetime.time(6, 0)


_ROOF_ABOVE_DEW_POINT = Criterion(
    key="roof_above_dew_point",
    label="Roof membrane above the outdoor dew point (frost point below 0 °C)",
    field="roof_margin_to_dew_point_k",
    test="above",
    limit=0.0,
    unit="K",
    requirement="above it: dew or frost on the membrane hides wet insulation",
    source="ASTM C1153 (dry membrane); dew or frost point over ice below 0 °C (ISO 13788)",
    confidence="practice",
)


_NIGHT_SURVEY = Criterion(
    key="night_survey",
    label="Surveyed at night",
    field="survey_start_time",
    test="night",
    limit=(NIGHT_FROM, NIGHT_TO),
    requirement="started between 18:00 and 06:00 (after sunset; check the sunset of the day)",
    source="ASTM C1153 (night survey after a sunny day); the clock window is common practice",
    confidence="practice",
)


CONDITIONS_CRITERIA: dict[str, list[Criterion]] = {
    "envelope": [_DELTA_T, _DELTA_T_HELD, _NO_SUN, _WIND, _NO_PRECIPITATION, _DRY],
    "roof": [
        _NIGHT_SURVEY,
        Criterion(
            key="sunny_day_before",
            label="Sunny day before the survey",
            field="sunny_day_before",
            test="true",
            requirement="a sunny day warmed the roof",
            source="ASTM C1153 (scope) and common practice",
            confidence="practice",
        ),
        Criterion(
            key="after_sunset",
            label="Surveyed in the evening, after the sun left the roof",
            field="hours_since_sun",
            test="min",
            limit=1.0,
            unit="h",
            requirement="at least 1 h since direct sun",
            source="ASTM C1153 (night survey); the hour is common practice",
            confidence="practice",
        ),
        Criterion(
            key="roof_dry",
            label="Roof surface dry, no standing water",
            field="surfaces_dry",
            test="true",
            requirement="dry",
            source="ASTM C1153 (scope)",
            confidence="memory",
        ),
        _NO_PRECIPITATION,
        Criterion(
            key="roof_wind",
            label="Wind speed",
            field="wind_m_s",
            test="max",
            limit=6.7,
            unit="m/s",
            requirement="below about 24 km/h (6.7 m/s)",
            source="ASTM C1153",
            confidence="memory",
        ),
        _ROOF_ABOVE_DEW_POINT,
    ],
    "electrical": [
        Criterion(
            key="load",
            label="Electrical load at the time of the survey",
            field="load_pct",
            test="min",
            limit=40.0,
            unit="% of rating",
            requirement="at least 40 % of rating",
            source="common practice; NFPA 70B asks for at least 40 % of normal load",
            confidence="practice",
        ),
        Criterion(
            key="covers_by_qualified",
            label="Enclosure covers opened only by qualified persons",
            field="covers_opened_by_qualified",
            test="true",
            requirement="yes, with the protective equipment the local rules require",
            source="NFPA 70E (general) and local electrical-safety rules",
            confidence="practice",
        ),
        Criterion(
            key="ambient_recorded",
            label="Ambient air temperature near the equipment",
            field="ambient_air_c",
            test="recorded",
            unit="°C",
            requirement="recorded (needed for rises over ambient)",
            source="ASTM E1934 report fields",
            confidence="memory",
        ),
    ],
    "mechanical": [
        Criterion(
            key="steady_state",
            label="Equipment running at steady state",
            field="equipment_steady",
            test="true",
            requirement="yes",
            source="common practice",
            confidence="practice",
        ),
        Criterion(
            key="ambient_recorded",
            label="Ambient air temperature near the equipment",
            field="ambient_air_c",
            test="recorded",
            unit="°C",
            requirement="recorded (needed for rises over ambient)",
            source="ASTM E1934 report fields",
            confidence="memory",
        ),
    ],
}


def _roof_margin_to_dew_point_k(survey, conditions) -> float | None:
    """Roof membrane minus the outdoor air's dew point (frost point below 0 °C), K."""
    from survey.thermal import surface_margin_k

    if conditions is None:
        return None
    values = (conditions.roof_surface_c, conditions.outdoor_air_c, conditions.outdoor_rh_pct)
    if None in values or not conditions.outdoor_rh_pct > 0:
        return None
    t_surface, t_air, rh = values
    try:
        return float(surface_margin_k(t_air, rh, t_surface, 100.0))
    except ValueError:
        return None


# Values computed from the survey and its conditions, by the name a criterion reads.
DERIVED = {
    "roof_margin_to_dew_point_k": _roof_margin_to_dew_point_k,
    "survey_start_time": lambda survey, conditions: survey.start_time,
}


def _value(survey, conditions, field: str):
    if field in DERIVED:
        return DERIVED[field](survey, conditions)
    return getattr(conditions, field, None) if conditions is not None else None


def _in_units(value: float, unit: str, temperature_unit: str, speed_unit: str) -> str:
    """A recorded number with its unit, in the member's units (°C/K or °F, m/s or mph)."""
    if unit == "K":
        converted = units.difference_from_kelvin(value, temperature_unit)
        return f"{converted:.1f} {units.difference_label(temperature_unit)}"
    if unit == "°C":
        converted = units.from_celsius(value, temperature_unit)
        return f"{converted:.1f} {units.symbol(temperature_unit)}"
    if unit == "m/s":
        converted = units.speed_from_m_s(value, speed_unit)
        return f"{converted:.1f} {units.speed_symbol(speed_unit)}"
    if unit.startswith("%"):  # a share is read to the whole percent: "62 %", as elsewhere
        return f"{value:.0f} %"
    return f"{value:.1f} {unit}".strip()


def _value_text(criterion: Criterion, value, conditions, temperature_unit="C", speed_unit="m_s"):
    if value is None or value == "":
        return "not recorded"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, datetime.time):
        return value.strftime("%H:%M")
    if criterion.field == "roof_margin_to_dew_point_k":
        side = "above" if value > 0 else "below"
        return f"{abs(value):.1f} K {side} it"
    if isinstance(value, float | int):
        return _in_units(float(value), criterion.unit, temperature_unit, speed_unit)
    if criterion.field == "precipitation" and conditions is not None:
        return conditions.get_precipitation_display()
    return str(value)


def _row(criterion: Criterion, status: str, value, value_text: str) -> dict:
    return {
        "key": criterion.key,
        "criterion": criterion.label,
        "status": status,
        "status_text": status.replace("_", " "),
        "value": value,
        "value_text": value_text,
        "requirement": criterion.requirement,
        "source": criterion.source,
        "standard": criterion.standard,
        "confidence": criterion.confidence,
        "confidence_text": CONFIDENCE_LABELS[criterion.confidence],
        "from_logger": True,
    }


_OUTDOOR_RANGE = Criterion(
    key="outdoor_range",
    label="Outdoor air over the 24 h before the first thermogram",
    field="",
    test="recorded",
    requirement="logged: a warm day or a frost before the survey shows here",
    source="read from the outside logger; no limit is asked",
    confidence="practice",
)


def _window_text(result, what: str) -> str:
    if result.value is not None:
        return what
    if result.observed is None:
        return "the logs do not cover this window"
    return (
        f"the logs cover only {result.coverage * 100:.0f} % of the window "
        f"({result.observed:.1f} where covered)"
    )


def logged_checks(survey, checks: list[dict]) -> list[dict]:
    """The checks with what the loggers measured in place of typed values.

    The inside–outside difference becomes the smallest difference actually held from 24 h
    before the first thermogram to the last, the hours held are read from the logs, and the
    outdoor minimum and maximum over the 24 h before are added.
    """
    from survey.services.loggers import LOGGER_LABEL, survey_logged_window

    window = survey_logged_window(survey, difference_k=float(_DELTA_T.limit))
    if window is None or window["span"] is None:
        return checks
    by_key = {check["key"]: index for index, check in enumerate(checks)}
    if "difference" in window and _DELTA_T.key in by_key:
        result = window["difference"]
        status = _DELTA_T.evaluate(result.value)
        text = _window_text(
            result,
            f"{result.value:.1f} K lowest, from 24 h before the first thermogram to the last "
            f"({LOGGER_LABEL})"
            if result.value is not None
            else "",
        )
        checks[by_key[_DELTA_T.key]] = _row(_DELTA_T, status, result.value, text)
    if "held_h" in window and _DELTA_T_HELD.key in by_key:
        held, whole_log = window["held_h"], window["held_whole_log"]
        status = _DELTA_T_HELD.evaluate(held)
        text = f"{held:.1f} h at {_DELTA_T.limit:g} K or more before the first thermogram"
        if whole_log:
            text = f"at least {held:.1f} h: the logs start then"
            if status == "not_met":
                status = "not_recorded"
        checks[by_key[_DELTA_T_HELD.key]] = _row(
            _DELTA_T_HELD, status, held, f"{text} ({LOGGER_LABEL})"
        )
    ambient = next((c for c in checks if c["key"] == "ambient_recorded"), None)
    if ambient is not None and "inside" in window["logs"]:
        criterion = next(c for c in CONDITIONS_CRITERIA[survey.kind] if c.key == ambient["key"])
        checks[checks.index(ambient)] = _row(
            criterion, "met", None, f"logged by the inside logger ({LOGGER_LABEL})"
        )
    if "outdoor_min" in window and survey.kind in ("envelope", "roof"):
        low, high = window["outdoor_min"], window["outdoor_max"]
        covered = low.value is not None and high.value is not None
        text = _window_text(
            low,
            f"{low.value:.1f} to {high.value:.1f} °C ({LOGGER_LABEL})" if covered else "",
        )
        checks.append(_row(_OUTDOOR_RANGE, "met" if covered else "not_recorded", low.value, text))
    return checks


def requirement_text(criterion: Criterion, temperature_unit: str = "C", speed_unit="m_s") -> str:
    """The requirement as people say it, its limit in the member's units.

    Examples
    --------
    >>> requirement_text(CONDITIONS_CRITERIA["envelope"][0], "F")
    'at least 18.0 Δ°F'
    >>> requirement_text(CONDITIONS_CRITERIA["envelope"][3], speed_unit="mph")
    'at most about 11.2 mph'
    """
    metric = (criterion.unit == "K" and temperature_unit == "C") or (
        criterion.unit == "m/s" and speed_unit == "m_s"
    )
    if metric or criterion.unit not in ("K", "m/s") or not isinstance(criterion.limit, float):
        return criterion.requirement
    words = {"min": "at least", "max": "at most"}[criterion.test]
    if "about" in criterion.requirement:
        words += " about"
    return f"{words} {_in_units(criterion.limit, criterion.unit, temperature_unit, speed_unit)}"


def conditions_check(survey, unit: str = "C", speed_unit: str = "m_s", **_units) -> list[dict]:
    """Check the survey's recorded conditions against the criteria of its kind.

    Returns one dict per criterion: ``criterion`` (label), ``status`` (``met``,
    ``not_met`` or ``not_recorded``), ``value`` (as recorded, or None), ``value_text`` and
    ``requirement`` (in `unit` and `speed_unit`), ``source``, ``confidence`` and ``key``.
    """
    try:
        conditions = survey.conditions
    except Conditions.DoesNotExist:
        conditions = None
    checks = []
    for criterion in CONDITIONS_CRITERIA.get(survey.kind, []):
        value = _value(survey, conditions, criterion.field)
        checks.append(
            {
                "key": criterion.key,
                "criterion": criterion.label,
                "status": (status := criterion.evaluate(value)),
                "status_text": status.replace("_", " "),
                "value": value.strftime("%H:%M") if isinstance(value, datetime.time) else value,
                "value_text": _value_text(criterion, value, conditions, unit, speed_unit),
                "requirement": requirement_text(criterion, unit, speed_unit),
                "source": criterion.source,
                "standard": criterion.standard,
                "confidence": criterion.confidence,
                "confidence_text": CONFIDENCE_LABELS[criterion.confidence],
            }
        )
    return logged_checks(survey, checks) if survey.pk else checks
