"""Reading the CSV files of temperature and humidity data loggers.

Loggers export text tables in many dialects: comma, semicolon or tab between cells, a
decimal point or a decimal comma, times with a UTC offset or in local wall-clock time.
:func:`read_logger_csv` takes the columns the user chose, reads every row, and returns
the series in UTC, sorted; if any row is bad it returns nothing and raises
:class:`LoggerFileError` listing each bad row (line, column, what is wrong), so a half-read
file is never saved.

Local times are turned into UTC with the IANA time-zone database (:mod:`zoneinfo`)
[IANA-TZ]. Around a daylight-saving change two things can happen [PEP495]:

- in spring a wall-clock hour is skipped: a time inside it does not exist and is reported
  as an error on its row (a logger that keeps standard time all year should be read with a
  fixed offset such as ``+01:00`` instead of a named zone);
- in autumn a wall-clock hour repeats: a time inside it is ambiguous. ``ambiguous="infer"``
  (the default) reads the rows in logging order (a file written newest first is read
  backwards) and takes, for each such time, the first of its two instants after the
  previous row's, so the series keeps moving forward through the repeated hour (a file
  that starts inside it takes the first instant for its first row); ``"earlier"`` and
  ``"later"`` always take the first or second instant; ``"error"`` reports every
  ambiguous row.
"""

from __future__ import annotations

import csv
import datetime as dt
import io
import math
import re
import zoneinfo
from dataclasses import dataclass

import numpy as np

MAX_ROWS = 500_000
MAX_ERRORS = 50
TEMPERATURE_RANGE_C = (-80.0, 80.0)
WIND_MAX_M_S = 75.0
TEMPERATURE_UNITS = ("C", "F", "K")
WIND_UNITS = {"m/s": 1.0, "km/h": 1 / 3.6, "mph": 0.44704, "kn": 1852 / 3600}
AMBIGUOUS = ("infer", "earlier", "later", "error")

_OFFSET = re.compile(r"^(?:UTC|GMT)?\s*([+-−])(\d{1,2})(?::?(\d{2}))?$", re.IGNORECASE)
_SPACES = str.maketrans("", "", " \u00a0\u2009\u202f")


@dataclass(frozen=True)
class RowError:
    """One problem of a logger file: where (line and column) and what."""

    row: int | None  # line of the file, 1-based, header included; None for the whole file
    column: str | None
    message: str

    def __str__(self) -> str:
        where = []
        if self.row is not None:
            where.append(f"line {self.row}")
        if self.column is not None:
            where.append(f"column {self.column!r}")
        return f"{', '.join(where)}: {self.message}" if where else self.message


class LoggerFileError(ValueError):
    """A logger file that cannot be read; ``errors`` lists every problem found."""

    def __init__(self, errors: list[RowError]):
        self.errors = list(errors)
        shown = "; ".join(str(error) for error in self.errors[:3])
        more = len(self.errors) - 3
        super().__init__(shown + (f"; and {more} more" if more > 0 else ""))


@dataclass(frozen=True)
class LoggerSeries:
    """A logger's readings in UTC, oldest first.

    ``times_s`` are POSIX seconds (UTC); ``rh_pct`` and ``wind_m_s`` are None when no
    column was chosen (wind is NaN on rows where its cell was blank); ``rows`` are the
    file lines the readings came from.
    """

    times_s: np.ndarray
    temperature_c: np.ndarray
    rh_pct: np.ndarray | None
    wind_m_s: np.ndarray | None
    rows: np.ndarray
    delimiter: str
    decimal: str
    time_zone: str | None

    def __len__(self) -> int:
        return len(self.times_s)

    @property
    def times_utc(self) -> list[dt.datetime]:
        """The times as aware UTC datetimes."""
        return [dt.datetime.fromtimestamp(t, dt.UTC) for t in self.times_s.tolist()]


def decode_text(data: bytes) -> str:
    """Text of a logger file: UTF-8 (with or without a byte-order mark), UTF-16 with its
    mark, or else Windows-1252, the usual export of older logger software.

    Examples
    --------
    >>> decode_text("Temp °C".encode("cp1252")), decode_text("\\ufeffTemp °C".encode("utf-8"))
    ('Temp °C', 'Temp °C')
    """
    if data.startswith((b"\xff\xfe", b"\xfe\xff")):
        return data.decode("utf-16")
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError:
        return data.decode("cp1252", errors="replace")


def guess_delimiter(line: str) -> str:
    """Tab, semicolon or comma: the first of them that the header line holds.

    Examples
    --------
    >>> guess_delimiter("time;temp;rh"), guess_delimiter("time,temp"), guess_delimiter("a\\tb")
    (';', ',', '\\t')
    """
    for candidate in ("\t", ";", ","):
        if candidate in line:
            return candidate
    return ","


def logger_columns(text: str, *, delimiter: str | None = None, skip_rows: int = 0) -> list[str]:
    """Names in the header row, to let the user choose the time and value columns.

    Examples
    --------
    >>> logger_columns("Date/time;Temp °C;RH %\\n17.01.2026 22:00;21,5;48\\n")
    ['Date/time', 'Temp °C', 'RH %']
    """
    lines = text.splitlines()[skip_rows:]
    header = next((line for line in lines if line.strip()), "")
    chosen = delimiter or guess_delimiter(header)
    return [cell.strip() for cell in next(csv.reader([header], delimiter=chosen), [])]


def parse_time_zone(name: str) -> dt.tzinfo:
    """An IANA zone ("Europe/Berlin") or a fixed offset ("+01:00", "UTC-5", "UTC").

    Examples
    --------
    >>> parse_time_zone("+05:30").utcoffset(None), str(parse_time_zone("Europe/Berlin"))
    (datetime.timedelta(seconds=19800), 'Europe/Berlin')
    """
    text = str(name).strip()
    if text.upper() in ("UTC", "Z", "GMT"):
        return dt.UTC
    match = _OFFSET.match(text)
    if match:
        sign = -1 if match.group(1) in "-−" else 1
        hours, minutes = int(match.group(2)), int(match.group(3) or 0)
        if hours > 14 or minutes >= 60:
            raise ValueError(f"time_zone: {text!r} is not a UTC offset between −14 and +14 h.")
        return dt.timezone(sign * dt.timedelta(hours=hours, minutes=minutes))
    try:
        return zoneinfo.ZoneInfo(text)
    except (zoneinfo.ZoneInfoNotFoundError, ValueError):
        raise ValueError(
            f"time_zone: {text!r} is neither a time zone name such as Europe/Berlin nor a "
            "UTC offset such as +01:00."
        ) from None


def read_logger_csv(
    text: str | bytes,
    *,
    time_column: str | int,
    temperature_column: str | int,
    humidity_column: str | int | None = None,
    wind_column: str | int | None = None,
    delimiter: str | None = None,
    decimal: str | None = None,
    time_format: str | None = None,
    time_zone: str | None = None,
    ambiguous: str = "infer",
    temperature_unit: str = "C",
    wind_unit: str = "m/s",
    header: bool = True,
    skip_rows: int = 0,
) -> LoggerSeries:
    """Read a data logger's CSV export into a UTC series.

    Parameters
    ----------
    text : str or bytes
        The file (bytes are decoded by :func:`decode_text`).
    time_column, temperature_column, humidity_column, wind_column : str or int
        Columns chosen by the user: a header name (case and surrounding spaces ignored)
        or a 0-based index. Humidity and wind are optional.
    delimiter : {",", ";", "\\t"}, optional
        Between cells; guessed from the header line when left out.
    decimal : {".", ","}, optional
        Decimal mark; a decimal comma is assumed when any value cell holds a comma.
    time_format : str, optional
        A :func:`datetime.datetime.strptime` format such as ``"%d.%m.%Y %H:%M:%S"``; left
        out, times must be ISO 8601 (``2026-01-17T22:00:00+01:00``, ``2026-01-17 22:00``).
    time_zone : str, optional
        IANA zone name or fixed UTC offset of the logger's clock, for times written
        without an offset. Times that carry an offset keep it.
    ambiguous : {"infer", "earlier", "later", "error"}
        How a wall-clock time that occurs twice (autumn daylight-saving change) is read;
        see the module notes.
    temperature_unit : {"C", "F", "K"}
    wind_unit : {"m/s", "km/h", "mph", "kn"}
    header : bool
        The first row (after ``skip_rows``) names the columns.
    skip_rows : int
        Lines of preamble before the header (logger name, serial number…).

    Returns
    -------
    LoggerSeries

    Raises
    ------
    LoggerFileError
        With every bad row (up to 50): unreadable time or number, an empty required cell,
        a value out of range, a time that does not exist or is ambiguous in the time zone,
        a time given twice, a missing time zone.

    Examples
    --------
    >>> text = "Time;Temp;RH\\n2026-01-17 22:00;21,5;48\\n2026-01-17 22:10;21,4;49\\n"
    >>> s = read_logger_csv(text, time_column="time", temperature_column="Temp",
    ...                     humidity_column="RH", time_zone="Europe/Berlin")
    >>> s.times_utc[0].isoformat(), s.temperature_c.tolist(), s.decimal
    ('2026-01-17T21:00:00+00:00', [21.5, 21.4], ',')
    """
    if isinstance(text, bytes | bytearray):
        text = decode_text(bytes(text))
    if ambiguous not in AMBIGUOUS:
        raise ValueError(f"ambiguous must be one of {', '.join(AMBIGUOUS)}.")
    if temperature_unit not in TEMPERATURE_UNITS:
        raise ValueError(f"temperature_unit must be one of {', '.join(TEMPERATURE_UNITS)}.")
    if wind_unit not in WIND_UNITS:
        raise ValueError(f"wind_unit must be one of {', '.join(WIND_UNITS)}.")
    zone = parse_time_zone(time_zone) if time_zone else None
    lines = text.splitlines()
    if len(lines) <= skip_rows:
        raise LoggerFileError([RowError(None, None, "The file holds no rows.")])
    content = lines[skip_rows:]
    first = next((line for line in content if line.strip()), "")
    chosen_delimiter = delimiter or guess_delimiter(first)
    reader = csv.reader(io.StringIO("\n".join(content)), delimiter=chosen_delimiter)
    records = []
    names: list[str] = []
    for cells in reader:
        if not any(cell.strip() for cell in cells):
            continue
        line = skip_rows + reader.line_num
        if header and not names:
            names = [cell.strip() for cell in cells]
            continue
        records.append((line, cells))
        if len(records) > MAX_ROWS:
            raise LoggerFileError(
                [RowError(None, None, f"The file has more than {MAX_ROWS} rows; split it.")]
            )
    wanted = {
        "time": time_column,
        "temperature": temperature_column,
        "humidity": humidity_column,
        "wind": wind_column,
    }
    columns, errors = _resolve_columns(wanted, names, header)
    if errors:
        raise LoggerFileError(errors)
    if not records:
        raise LoggerFileError([RowError(None, None, "The file holds no data rows.")])
    value_columns = [columns[key] for key in ("temperature", "humidity", "wind") if key in columns]
    chosen_decimal = decimal or _guess_decimal(records, value_columns)
    if chosen_decimal not in (".", ","):
        raise ValueError("decimal must be '.' or ','.")
    label = {index: _column_label(index, names) for index in columns.values()}
    reading = _Reading(errors, label)
    wall_times, temperatures, humidities, winds, lines_kept = [], [], [], [], []
    for line, cells in records:
        reading.line = line
        needed = max(columns.values())
        if len(cells) <= needed:
            reading.error(
                None, f"the row has {len(cells)} cells; column {label[needed]!r} is missing"
            )
            continue
        moment = reading.time(cells[columns["time"]], columns["time"], time_format)
        temperature = reading.number(
            cells[columns["temperature"]], columns["temperature"], chosen_decimal, required=True
        )
        if temperature is not None:
            temperature = _to_celsius(temperature, temperature_unit)
            low, high = TEMPERATURE_RANGE_C
            if not low <= temperature <= high:
                reading.error(
                    columns["temperature"], f"{temperature:g} °C is outside {low:g}…{high:g} °C"
                )
        humidity = None
        if "humidity" in columns:
            humidity = reading.number(
                cells[columns["humidity"]], columns["humidity"], chosen_decimal, required=True
            )
            if humidity is not None and not 0.0 <= humidity <= 100.0:
                reading.error(columns["humidity"], f"{humidity:g} % is outside 0…100 %")
        wind = math.nan
        if "wind" in columns:
            value = reading.number(
                cells[columns["wind"]], columns["wind"], chosen_decimal, required=False
            )
            if value is not None:
                wind = value * WIND_UNITS[wind_unit]
                if not 0.0 <= wind <= WIND_MAX_M_S:
                    reading.error(
                        columns["wind"], f"{wind:g} m/s is outside 0…{WIND_MAX_M_S:g} m/s"
                    )
        if reading.row_failed:
            reading.row_failed = False
            continue
        wall_times.append(moment)
        temperatures.append(temperature)
        humidities.append(humidity)
        winds.append(wind)
        lines_kept.append(line)
    instants = _to_utc(wall_times, lines_kept, zone, time_zone, ambiguous, reading)
    if errors:
        raise LoggerFileError(_capped(errors))
    order = np.argsort(instants, kind="stable")
    times_s = np.asarray(instants, dtype=np.float64)[order]
    rows = np.asarray(lines_kept)[order]
    repeated = np.flatnonzero(np.diff(times_s) == 0)
    if len(repeated):
        time_label = label[columns["time"]]
        raise LoggerFileError(
            _capped(
                [
                    RowError(int(rows[i + 1]), time_label, f"the same time as line {int(rows[i])}")
                    for i in repeated
                ]
            )
        )
    return LoggerSeries(
        times_s=times_s,
        temperature_c=np.asarray(temperatures, dtype=np.float64)[order],
        rh_pct=np.asarray(humidities, dtype=np.float64)[order] if "humidity" in columns else None,
        wind_m_s=np.asarray(winds, dtype=np.float64)[order] if "wind" in columns else None,
        rows=rows,
        delimiter=chosen_delimiter,
        decimal=chosen_decimal,
        time_zone=str(time_zone) if time_zone else None,
    )


def _capped(errors: list[RowError]) -> list[RowError]:
    if len(errors) <= MAX_ERRORS:
        return errors
    more = len(errors) - MAX_ERRORS
    return [*errors[:MAX_ERRORS], RowError(None, None, f"and {more} more problems")]


def _resolve_columns(wanted: dict, names: list[str], header: bool) -> tuple[dict, list]:
    columns, errors = {}, []
    folded = [name.casefold() for name in names]
    for key, choice in wanted.items():
        if choice is None:
            continue
        if isinstance(choice, bool) or not isinstance(choice, int | str):
            errors.append(RowError(None, None, f"The {key} column must be a name or a number."))
        elif isinstance(choice, int):
            if choice < 0 or (header and choice >= len(names)):
                errors.append(
                    RowError(None, None, f"The file has no column number {choice} for {key}.")
                )
            else:
                columns[key] = choice
        elif not header:
            errors.append(
                RowError(None, None, f"Without a header row, choose the {key} column by number.")
            )
        elif choice.strip().casefold() in folded:
            columns[key] = folded.index(choice.strip().casefold())
        else:
            listed = ", ".join(repr(name) for name in names)
            errors.append(
                RowError(None, choice, f"no such column for {key}; the header has {listed}")
            )
    if len(set(columns.values())) < len(columns):
        errors.append(RowError(None, None, "Choose a different column for each quantity."))
    return columns, errors


def _column_label(index: int, names: list[str]) -> str:
    if index < len(names) and names[index]:
        return names[index]
    return f"#{index}"


def _guess_decimal(records, value_columns: list[int]) -> str:
    # A comma inside a value cell can only be a decimal comma: with comma-separated cells
    # such values are quoted, and the csv module has already unquoted them.
    for _, cells in records[:1000]:
        for index in value_columns:
            if index < len(cells) and "," in cells[index]:
                return ","
    return "."


def _to_celsius(value: float, unit: str) -> float:
    if unit == "F":
        return (value - 32.0) / 1.8
    if unit == "K":
        return value - 273.15
    return value


class _Reading:
    """Cell readers that record errors against the current line."""

    def __init__(self, errors: list, label: dict):
        self.errors = errors
        self.label = label
        self.line = 0
        self.row_failed = False

    def error(self, column: int | None, message: str) -> None:
        self.errors.append(
            RowError(self.line, None if column is None else self.label[column], message)
        )
        self.row_failed = True

    def number(self, cell: str, column: int, decimal: str, *, required: bool) -> float | None:
        text = cell.strip().translate(_SPACES).replace("−", "-")
        if not text:
            if required:
                self.error(column, "the cell is empty")
            return None
        if decimal == ",":
            if "." in text:
                self.error(
                    column, f"{cell.strip()!r}: a point in a number read with a decimal comma"
                )
                return None
            text = text.replace(",", ".")
        elif "," in text:
            self.error(column, f"{cell.strip()!r}: a comma in a number read with a decimal point")
            return None
        try:
            value = float(text)
        except ValueError:
            self.error(column, f"{cell.strip()!r} is not a number")
            return None
        if not math.isfinite(value):
            self.error(column, f"{cell.strip()!r} is not a finite number")
            return None
        return value

    def time(self, cell: str, column: int, time_format: str | None) -> dt.datetime | None:
        text = cell.strip()
        if not text:
            self.error(column, "the time is empty")
            return None
        try:
            if time_format:
                return dt.datetime.strptime(text, time_format)
            return dt.datetime.fromisoformat(text)
        except ValueError:
            wanted = (
                f"the format {time_format!r}"
                if time_format
                else "ISO 8601 (2026-01-17T22:00:00+01:00)"
            )
            self.error(column, f"{text!r} is not a time in {wanted}")
            return None


def _to_utc(wall_times, lines, zone, zone_name, ambiguous, reading: _Reading) -> list[float]:
    """POSIX seconds of each time; errors for naive times without a zone, times that do
    not exist and (with ambiguous="error") ambiguous ones."""
    instants: list[float | None] = [None] * len(wall_times)
    naive = [i for i, moment in enumerate(wall_times) if moment.tzinfo is None]
    for i, moment in enumerate(wall_times):
        if moment.tzinfo is not None:
            instants[i] = moment.timestamp()
    if naive and zone is None:
        reading.errors.append(
            RowError(
                lines[naive[0]],
                None,
                f"{len(naive)} times carry no UTC offset (the first: "
                f"{wall_times[naive[0]].isoformat(sep=' ')}); choose the logger's time zone",
            )
        )
        return [0.0] * len(wall_times)
    if not naive:
        return instants
    # Infer folds in logging order, oldest first, whichever way the file runs.
    forward = wall_times[naive[0]] <= wall_times[naive[-1]]
    sequence = naive if forward else naive[::-1]
    previous: float | None = None
    for i in sequence:
        moment = wall_times[i]
        reading.line = lines[i]
        first = moment.replace(tzinfo=zone, fold=0)
        second = moment.replace(tzinfo=zone, fold=1)
        earlier, later = first.timestamp(), second.timestamp()
        if earlier > later:  # a skipped (nonexistent) time swaps the folds' order
            reading.errors.append(
                RowError(
                    lines[i],
                    None,
                    f"{moment.isoformat(sep=' ')} does not exist in {zone_name} (the clocks went "
                    "forward); if the logger keeps standard time all year, choose a fixed UTC "
                    "offset such as +01:00",
                )
            )
            continue
        if earlier == later:
            chosen = earlier
        elif ambiguous == "error":
            reading.errors.append(
                RowError(
                    lines[i],
                    None,
                    f"{moment.isoformat(sep=' ')} occurs twice in {zone_name} "
                    "(the clocks went back)",
                )
            )
            continue
        elif ambiguous == "earlier":
            chosen = earlier
        elif ambiguous == "later":
            chosen = later
        elif previous is None or earlier > previous:
            chosen = earlier
        else:
            chosen = later
        instants[i] = chosen
        previous = chosen
    return [0.0 if instant is None else instant for instant in instants]
