"""Survey conditions: what each kind of survey asks of the weather and the equipment.

Each criterion is data: the field of survey.models.Conditions it reads, the test, the
requirement as people say it, its source and how sure we are of it. The confidence labels
are those of docs/references.md: ``memory`` (recalled, not confirmed against the published
text), ``practice`` (common practice of the trade, no single source), ``source`` (confirmed
in a published text) and ``ours`` (a product default with no outside source; edit it to
your own practice).
"""

from __future__ import annotations

from dataclasses import dataclass

from survey.models import Conditions

CONFIDENCE_LABELS = {
    "source": "confirmed in a published text",
    "memory": "from memory, not confirmed against the published text",
    "practice": "common practice, no single source",
    "ours": "product default, no outside source",
}


@dataclass(frozen=True)
class Criterion:
    """One survey-conditions requirement on one field of survey.models.Conditions."""

    key: str
    label: str
    field: str
    test: str  # "min" (value >= limit), "max" (value <= limit), "true", "equals", "recorded"
    requirement: str
    source: str
    confidence: str
    limit: float | str | None = None
    unit: str = ""

    def evaluate(self, value) -> str:
        if value is None or value == "":
            return "not_recorded"
        if self.test == "min":
            ok = value >= self.limit
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


CONDITIONS_CRITERIA: dict[str, list[Criterion]] = {
    "envelope": [_DELTA_T, _DELTA_T_HELD, _NO_SUN, _WIND, _NO_PRECIPITATION, _DRY],
    "roof": [
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


def _value_text(criterion: Criterion, value, conditions) -> str:
    if value is None or value == "":
        return "not recorded"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, float | int):
        return f"{value:.1f} {criterion.unit}".strip()
    if criterion.field == "precipitation" and conditions is not None:
        return conditions.get_precipitation_display()
    return str(value)


def conditions_check(survey) -> list[dict]:
    """Check the survey's recorded conditions against the criteria of its kind.

    Returns one dict per criterion: ``criterion`` (label), ``status`` (``met``,
    ``not_met`` or ``not_recorded``), ``value`` (as recorded, or None), ``value_text``,
    ``requirement``, ``source``, ``confidence`` and ``key``.
    """
    try:
        conditions = survey.conditions
    except Conditions.DoesNotExist:
        conditions = None
    checks = []
    for criterion in CONDITIONS_CRITERIA.get(survey.kind, []):
        value = getattr(conditions, criterion.field, None) if conditions is not None else None
        checks.append(
            {
                "key": criterion.key,
                "criterion": criterion.label,
                "status": (status := criterion.evaluate(value)),
                "status_text": status.replace("_", " "),
                "value": value,
                "value_text": _value_text(criterion, value, conditions),
                "requirement": criterion.requirement,
                "source": criterion.source,
                "confidence": criterion.confidence,
                "confidence_text": CONFIDENCE_LABELS[criterion.confidence],
            }
        )
    return checks
