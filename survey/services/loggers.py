"""Conditions from data loggers: import a logger's CSV into a survey, and read the air at
each thermogram's capture time and over the hours before the survey.

A survey holds at most one log per role (inside, outside); importing another replaces it.
The series are read by survey/thermal/logger.py and evaluated by survey/thermal/timeseries.py;
here they are stored, looked up and labelled. A thermogram whose capture time falls outside
the logged period has *no logged conditions* and keeps the survey's recorded ones.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import math
from dataclasses import dataclass

import numpy as np
from django.conf import settings
from django.contrib.auth.models import AbstractBaseUser
from django.core.exceptions import ValidationError
from django.db import transaction

from survey.models import ConditionLog, Survey, Thermogram
from survey.services.audit import audit_record
from survey.thermal import logger as logger_files
from survey.thermal import timeseries
from survey.thermal.capture_time import read_capture_time
from survey.thermal.logger import LoggerFileError

MAX_LOGGER_FILE_BYTES = 10 * 1024 * 1024
# The conditions check looks this far back before the first thermogram (the envelope
# criteria ask for the difference held about 24 h; EN 13187 / ISO 6781, from memory).
WINDOW_HOURS = 24.0
LOGGER_LABEL = "from the logger"
NO_LOGGED_CONDITIONS = "no logged conditions"


# --- time zones and capture times ------------------------------------------------------------


def survey_time_zone(survey: Survey) -> dt.tzinfo:
    """The survey's clock zone (blank: the server's TIME_ZONE)."""
    return logger_files.parse_time_zone(survey.time_zone or settings.TIME_ZONE)


def survey_time_zone_name(survey: Survey) -> str:
    return survey.time_zone or settings.TIME_ZONE


def local_to_aware(survey: Survey, local: dt.datetime) -> dt.datetime:
    """A naive local time of the survey's clocks as an aware datetime.

    A time repeated by a daylight-saving change reads as its first instant (fold 0); a
    skipped one is taken as the clock would have shown it before the change.
    """
    if local.tzinfo is not None:
        return local
    return local.replace(tzinfo=survey_time_zone(survey))


def local_wall_clock(survey: Survey, moment: dt.datetime | None) -> dt.datetime | None:
    """An aware moment as the survey's naive wall-clock time (what a form shows)."""
    if moment is None:
        return None
    return moment.astimezone(survey_time_zone(survey)).replace(tzinfo=None)


def capture_time_from_file(survey: Survey, data: bytes) -> dt.datetime | None:
    """The capture time tagged in an original, made aware in the survey's zone (or None)."""
    local = read_capture_time(data)
    return None if local is None else local_to_aware(survey, local)


# --- import ------------------------------------------------------------------------------------


def logger_file_text(data: bytes) -> str:
    if not data:
        raise ValidationError("The logger file is empty.")
    if len(data) > MAX_LOGGER_FILE_BYTES:
        raise ValidationError(
            f"The logger file is {len(data) / 1e6:.1f} MB; the limit is "
            f"{MAX_LOGGER_FILE_BYTES / 1e6:.0f} MB. Export a shorter period."
        )
    if b"\x00" in data[:4096] and not data.startswith((b"\xff\xfe", b"\xfe\xff")):
        raise ValidationError("This is not a text (CSV) file.")
    return logger_files.decode_text(data)


def logger_file_columns(*, text: str, skip_rows: int = 0, delimiter: str | None = None) -> list:
    """The header's column names, for the user to choose from."""
    columns = logger_files.logger_columns(text, delimiter=delimiter or None, skip_rows=skip_rows)
    columns = [name for name in columns if name]
    if len(columns) < 2:
        raise ValidationError(
            "No columns found in the header line: the file needs a header naming at least a "
            "time and a temperature column (skip any lines above it)."
        )
    return columns


def _json_list(values) -> list | None:
    if values is None:
        return None
    return [None if not math.isfinite(v) else round(float(v), 4) for v in values.tolist()]


@transaction.atomic
def condition_log_import(
    *,
    survey: Survey,
    role: str,
    name: str,
    data: bytes,
    user: AbstractBaseUser | None,
    time_column: str,
    temperature_column: str,
    humidity_column: str | None = None,
    wind_column: str | None = None,
    delimiter: str | None = None,
    decimal: str | None = None,
    time_format: str | None = None,
    time_zone: str | None = None,
    temperature_unit: str = "C",
    wind_unit: str = "m/s",
    skip_rows: int = 0,
) -> ConditionLog:
    """Read a logger's CSV and store its series as the survey's inside or outside log.

    Raises thermal.logger.LoggerFileError listing each bad row, or ValidationError; in both
    cases nothing is saved and an existing log of that role is kept.
    """
    if role not in ConditionLog.Role.values:
        raise ValidationError({"role": "Choose inside or outside."})
    text = logger_file_text(data)
    zone = time_zone or survey_time_zone_name(survey)
    try:
        series = logger_files.read_logger_csv(
            text,
            time_column=time_column,
            temperature_column=temperature_column,
            humidity_column=humidity_column or None,
            wind_column=wind_column or None,
            delimiter=delimiter or None,
            decimal=decimal or None,
            time_format=time_format or None,
            time_zone=zone,
            temperature_unit=temperature_unit,
            wind_unit=wind_unit,
            skip_rows=skip_rows,
        )
    except LoggerFileError:
        raise
    except ValueError as error:
        raise ValidationError(str(error)) from None
    if len(series) < 2:
        raise ValidationError("The file holds fewer than two readings: nothing to interpolate.")
    times = series.times_s
    log = ConditionLog(
        organization=survey.organization,
        survey=survey,
        role=role,
        original_name=name[:255],
        original_sha256=hashlib.sha256(data).hexdigest(),
        read_settings={
            "time_column": time_column,
            "temperature_column": temperature_column,
            "humidity_column": humidity_column or None,
            "wind_column": wind_column or None,
            "delimiter": series.delimiter,
            "decimal": series.decimal,
            "time_format": time_format or None,
            "time_zone": zone,
            "temperature_unit": temperature_unit,
            "wind_unit": wind_unit,
            "skip_rows": skip_rows,
        },
        times_s=[float(t) for t in times.tolist()],
        temperature_c=_json_list(series.temperature_c),
        rh_pct=_json_list(series.rh_pct),
        wind_m_s=_json_list(series.wind_m_s),
        row_count=len(series),
        started_at=dt.datetime.fromtimestamp(float(times[0]), dt.UTC),
        ended_at=dt.datetime.fromtimestamp(float(times[-1]), dt.UTC),
        created_by=user,
    )
    replaced = ConditionLog.objects.filter(survey=survey, role=role).delete()[0]
    log.full_clean()
    log.save()
    audit_record(
        organization=survey.organization,
        actor=user,
        action="logger_import",
        obj=log,
        detail={
            "role": role,
            "name": log.original_name,
            "rows": log.row_count,
            "replaced": replaced,
        },
    )
    _forget(survey)
    return log


@transaction.atomic
def condition_log_delete(*, log: ConditionLog, user: AbstractBaseUser | None) -> None:
    detail = {"role": log.role, "name": log.original_name, "survey": log.survey_id}
    log.delete()
    audit_record(
        organization=log.organization,
        actor=user,
        action="logger_delete",
        object_type="ConditionLog",
        detail=detail,
    )


# --- the logged series ---------------------------------------------------------------------


@dataclass(frozen=True)
class Series:
    """A stored log as arrays (NaN where blank), what survey.thermal.timeseries takes."""

    role: str
    name: str
    times_s: np.ndarray
    temperature_c: np.ndarray
    rh_pct: np.ndarray | None
    wind_m_s: np.ndarray | None


def _array(values) -> np.ndarray | None:
    if values is None:
        return None
    return np.array([np.nan if v is None else v for v in values], dtype=np.float64)


def survey_logs(survey: Survey) -> dict[str, Series]:
    """The survey's logs by role, read once per survey object (cached on it)."""
    cached = getattr(survey, "_logged_series", None)
    if cached is not None:
        return cached
    logs = {}
    if survey.pk:
        for log in ConditionLog.objects.filter(survey=survey):
            logs[log.role] = Series(
                role=log.role,
                name=log.original_name,
                times_s=_array(log.times_s),
                temperature_c=_array(log.temperature_c),
                rh_pct=_array(log.rh_pct),
                wind_m_s=_array(log.wind_m_s),
            )
    survey._logged_series = logs
    return logs


def _forget(survey: Survey) -> None:
    survey.__dict__.pop("_logged_series", None)


def thermogram_capture_s(thermogram: Thermogram) -> float | None:
    return thermogram.captured_at.timestamp() if thermogram.captured_at else None


def _rounded(value, digits: int = 2):
    return None if value is None else round(float(value), digits)


def thermogram_logged_conditions(thermogram: Thermogram) -> dict:
    """The logged air at the thermogram's capture time, interpolated, and what it means.

    Returns ``status`` (``logged``, ``outside_log``, ``no_capture_time`` or ``no_log``),
    ``label`` (what to show beside the values) and ``inside``/``outside`` each None or
    {``t_air_c``, ``rh_pct``, ``wind_m_s``}.
    """
    logs = survey_logs(thermogram.survey)
    result = {"status": "no_log", "label": "", "inside": None, "outside": None, "at": None}
    if not logs:
        return result
    at_s = thermogram_capture_s(thermogram)
    if at_s is None:
        result |= {"status": "no_capture_time", "label": "no capture time to look up the log"}
        return result
    result["at"] = thermogram.captured_at
    for role, series in logs.items():
        values = timeseries.conditions_at(series, at_s)
        if values is not None:
            result[role] = {key: _rounded(value) for key, value in values.items()}
    if result["inside"] is None and result["outside"] is None:
        result |= {"status": "outside_log", "label": NO_LOGGED_CONDITIONS}
    else:
        result |= {"status": "logged", "label": LOGGER_LABEL}
    return result


@dataclass(frozen=True)
class Air:
    """The air a thermogram's figures use, and where each value came from."""

    indoor_c: float | None
    indoor_rh_pct: float | None
    outdoor_c: float | None
    ambient_c: float | None
    indoor_logged: bool
    outdoor_logged: bool


def thermogram_air(thermogram: Thermogram) -> Air:
    """Indoor air and RH, outdoor air and the air around equipment for one thermogram.

    Logged values at its capture time win over the survey's recorded ones. The indoor pair
    is taken from one source, so a logged temperature is never paired with a typed RH; for
    electrical and mechanical surveys the inside logger is the air around the equipment.
    """
    cached = getattr(thermogram, "_air", None)
    if cached is not None:
        return cached
    survey = thermogram.survey
    conditions = getattr(survey, "conditions", None) if survey.pk else None

    def typed(name: str):
        return getattr(conditions, name, None) if conditions is not None else None

    logged = thermogram_logged_conditions(thermogram)
    inside, outside = logged["inside"] or {}, logged["outside"] or {}
    indoor_c, indoor_rh = typed("indoor_air_c"), typed("indoor_rh_pct")
    indoor_logged = inside.get("t_air_c") is not None and (
        inside.get("rh_pct") is not None or indoor_rh is None
    )
    if indoor_logged:
        indoor_c, indoor_rh = inside["t_air_c"], inside.get("rh_pct")
    outdoor_logged = outside.get("t_air_c") is not None
    outdoor_c = outside["t_air_c"] if outdoor_logged else typed("outdoor_air_c")
    ambient_c = typed("ambient_air_c")
    if not survey.is_building and inside.get("t_air_c") is not None:
        ambient_c = inside["t_air_c"]
    air = Air(indoor_c, indoor_rh, outdoor_c, ambient_c, indoor_logged, outdoor_logged)
    thermogram._air = air
    return air


# --- the survey's window: for the conditions check ---------------------------------------------


def _capture_span(survey: Survey) -> tuple[float, float] | None:
    times = [
        t.timestamp()
        for t in survey.thermograms.exclude(captured_at=None).values_list("captured_at", flat=True)
    ]
    return (min(times), max(times)) if times else None


def survey_logged_window(survey: Survey, *, difference_k: float = 10.0) -> dict | None:
    """What the logs say about the hours before and during the survey, or None without logs.

    ``difference``: the smallest inside − outside difference from WINDOW_HOURS before the
    first thermogram to the last (timeseries.held_difference, exact for the linear logs);
    ``held_h``/``held_whole_log``: how long before the first thermogram the difference had
    stayed at or above ``difference_k``; ``outdoor_min``/``outdoor_max``: the outdoor log's
    extremes over the WINDOW_HOURS before the first thermogram. Each value is None when the
    logs do not cover enough of its window (``coverage`` says how much they do).
    """
    logs = survey_logs(survey)
    if not logs:
        return None
    span = _capture_span(survey)
    result: dict = {"logs": sorted(logs), "span": span, "reason": ""}
    if span is None:
        result["reason"] = "No thermogram has a capture time to place it in the log."
        return result
    first, last = span
    inside, outside = logs.get("inside"), logs.get("outside")
    if inside is not None and outside is not None:
        hours = min(WINDOW_HOURS + (last - first) / 3600.0, 336.0)
        window = timeseries.held_difference(
            inside.times_s,
            inside.temperature_c,
            outside.times_s,
            outside.temperature_c,
            last,
            hours=hours,
        )
        held, whole = timeseries.hours_held(
            inside.times_s,
            inside.temperature_c,
            outside.times_s,
            outside.temperature_c,
            first,
            threshold_k=difference_k,
        )
        result |= {"difference": window, "held_h": held, "held_whole_log": whole}
    if outside is not None:
        low, high = timeseries.outdoor_extremes(
            outside.times_s, outside.temperature_c, first, hours=WINDOW_HOURS
        )
        result |= {"outdoor_min": low, "outdoor_max": high}
    return result


def local_text(survey: Survey, moment: dt.datetime | None) -> str:
    """A moment as the survey's local wall-clock time, e.g. 17 Jan 2026 22:05."""
    if moment is None:
        return ""
    local = moment.astimezone(survey_time_zone(survey))
    return f"{local.day} {local:%b %Y %H:%M}"


def survey_log_summary(survey: Survey) -> list[dict]:
    """One row per stored log for the survey page and the report (times in the survey's
    zone)."""
    rows = []
    for log in ConditionLog.objects.filter(survey=survey).order_by("role"):
        rows.append(
            {
                "log": log,
                "role": log.get_role_display(),
                "name": log.original_name,
                "rows": log.row_count,
                "started": local_text(survey, log.started_at),
                "ended": local_text(survey, log.ended_at),
                "has_rh": log.rh_pct is not None,
                "has_wind": log.wind_m_s is not None,
                "time_zone": (log.read_settings or {}).get("time_zone", ""),
            }
        )
    return rows


def survey_logger_chart(
    survey: Survey, *, unit: str = "C", width: int = 640, height: int = 240
) -> str | None:
    """The logs as an SVG chart with each thermogram's capture time marked; None without
    logs."""
    from survey.charts import logger_svg

    logs = survey_logs(survey)
    if not logs:
        return None
    series = [
        (
            f"{'inside' if role == 'inside' else 'outside'} ({logs[role].name})",
            logs[role].times_s.tolist(),
            logs[role].temperature_c.tolist(),
            role,
        )
        for role in ("inside", "outside")
        if role in logs
    ]
    captures = [
        (captured.timestamp(), str(sequence))
        for sequence, captured in survey.thermograms.exclude(captured_at=None)
        .order_by("sequence")
        .values_list("sequence", "captured_at")
    ]
    return logger_svg(
        series,
        captures,
        zone=survey_time_zone(survey),
        unit=unit,
        width=width,
        height=height,
        title=f"Logged air temperature ({survey_time_zone_name(survey)} time); "
        "dashed: thermograms by number",
    )
