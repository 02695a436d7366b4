"""Logger CSV import: dialects, time zones, daylight-saving changes and row errors
(docs/references.md § Data loggers and time series).

Expected UTC times are worked by hand from the EU summer-time rule (Directive 2000/84/EC:
summer time from 01:00 UTC on the last Sunday of March to 01:00 UTC on the last Sunday of
October; in 2026 those are 29 March and 25 October), Central European Time being UTC+1 and
its summer time UTC+2.
"""

import datetime as dt
import math

import numpy as np
import pytest

from survey.thermal.logger import (
    LoggerFileError,
    decode_text,
    logger_columns,
    parse_time_zone,
    read_logger_csv,
)

UTC = dt.UTC


def utc(*args) -> float:
    return dt.datetime(*args, tzinfo=UTC).timestamp()


def read(text, **settings):
    defaults = {"time_column": "time", "temperature_column": "temp"}
    return read_logger_csv(text, **{**defaults, **settings})


def test_read_logger_csv_decimal_comma_semicolons_and_local_time():
    """A European export: semicolons, decimal commas, local winter time (UTC+1)."""
    text = (
        "Time;Temp;RH\n"
        "17.01.2026 22:00:00;21,5;48,2\n"
        "17.01.2026 22:10:00;-0,4;49\n"
        "17.01.2026 22:20:00;−1,25;50,0\n"
    )
    series = read(
        text,
        humidity_column="rh",
        time_format="%d.%m.%Y %H:%M:%S",
        time_zone="Europe/Berlin",
    )
    # 22:00 CET = 21:00 UTC (by hand).
    assert series.times_s.tolist() == [
        utc(2026, 1, 17, 21, 0),
        utc(2026, 1, 17, 21, 10),
        utc(2026, 1, 17, 21, 20),
    ]
    assert series.temperature_c.tolist() == [21.5, -0.4, -1.25]
    assert series.rh_pct.tolist() == [48.2, 49.0, 50.0]
    assert (series.delimiter, series.decimal) == (";", ",")
    assert series.rows.tolist() == [2, 3, 4]
    assert series.wind_m_s is None


def test_read_logger_csv_iso_offsets_tabs_and_sorting():
    """ISO 8601 times with their own offsets need no zone; rows come back sorted."""
    text = (
        "time\ttemp\n"
        "2026-02-01T10:00:00+05:30\t30.5\n"
        "2026-02-01T04:00:00Z\t30.0\n"
        "2026-01-31T23:45:00-05:00\t29.5\n"
    )
    series = read(text)
    # 10:00+05:30 = 04:30Z; 23:45−05:00 = 04:45Z the next day (by hand).
    assert series.times_s.tolist() == [
        utc(2026, 2, 1, 4, 0),
        utc(2026, 2, 1, 4, 30),
        utc(2026, 2, 1, 4, 45),
    ]
    assert series.temperature_c.tolist() == [30.0, 30.5, 29.5]
    assert series.rows.tolist() == [3, 2, 4]
    assert series.times_utc[0] == dt.datetime(2026, 2, 1, 4, 0, tzinfo=UTC)


def test_read_logger_csv_commas_with_quoted_decimal_commas():
    """Comma-separated cells holding quoted decimal commas are read as decimal commas."""
    text = 'time,temp,wind\n2026-03-01 12:00,"5,5","3,6"\n2026-03-01 12:30,"6,0",\n'
    series = read(text, wind_column="wind", wind_unit="km/h", time_zone="+00:00")
    assert series.decimal == ","
    assert series.temperature_c.tolist() == [5.5, 6.0]
    assert series.wind_m_s[0] == pytest.approx(1.0)  # 3.6 km/h = 1 m/s
    assert math.isnan(series.wind_m_s[1])  # a blank wind cell is no reading


def test_read_logger_csv_spring_forward_time_does_not_exist():
    """02:30 on 29 March 2026 is skipped in Europe/Berlin: reported on its line; read with
    a fixed +01:00 (a logger on standard time all year) it is 01:30 UTC."""
    text = "time;temp\n2026-03-29 01:30;4,0\n2026-03-29 02:30;4,1\n2026-03-29 03:30;4,2\n"
    with pytest.raises(LoggerFileError) as caught:
        read(text, time_zone="Europe/Berlin")
    [error] = caught.value.errors
    assert error.row == 3
    assert "does not exist in Europe/Berlin" in error.message
    series = read(text, time_zone="+01:00")
    assert series.times_s.tolist() == [
        utc(2026, 3, 29, 0, 30),
        utc(2026, 3, 29, 1, 30),
        utc(2026, 3, 29, 2, 30),
    ]


FALL_BACK = (
    "time;temp\n"
    "2026-10-25 01:30;8,0\n"
    "2026-10-25 02:00;7,9\n"
    "2026-10-25 02:30;7,8\n"
    "2026-10-25 02:00;7,7\n"
    "2026-10-25 02:30;7,6\n"
    "2026-10-25 03:00;7,5\n"
)
# Summer time ends at 01:00 UTC: 01:30 CEST = 23:30Z; the first 02:00 and 02:30 are CEST
# (00:00Z, 00:30Z), the second ones CET (01:00Z, 01:30Z); 03:00 CET = 02:00Z (by hand).
FALL_BACK_UTC = [
    utc(2026, 10, 24, 23, 30),
    utc(2026, 10, 25, 0, 0),
    utc(2026, 10, 25, 0, 30),
    utc(2026, 10, 25, 1, 0),
    utc(2026, 10, 25, 1, 30),
    utc(2026, 10, 25, 2, 0),
]


def test_read_logger_csv_fall_back_infers_the_repeated_hour():
    """Through the repeated hour the series keeps moving forward, every 30 minutes."""
    series = read(FALL_BACK, time_zone="Europe/Berlin")
    assert series.times_s.tolist() == FALL_BACK_UTC
    assert series.temperature_c.tolist() == [8.0, 7.9, 7.8, 7.7, 7.6, 7.5]


def test_read_logger_csv_fall_back_newest_first():
    """A file written newest first gives the same instants."""
    header, *rows = FALL_BACK.strip().split("\n")
    series = read("\n".join([header, *reversed(rows)]), time_zone="Europe/Berlin")
    assert series.times_s.tolist() == FALL_BACK_UTC
    assert series.temperature_c.tolist() == [8.0, 7.9, 7.8, 7.7, 7.6, 7.5]


def test_read_logger_csv_fall_back_fixed_choices():
    """'earlier' reads both 02:00 as the same instant (reported); 'error' reports the four
    ambiguous rows."""
    with pytest.raises(LoggerFileError) as caught:
        read(FALL_BACK, time_zone="Europe/Berlin", ambiguous="earlier")
    assert [(e.row, e.message) for e in caught.value.errors] == [
        (5, "the same time as line 3"),
        (6, "the same time as line 4"),
    ]
    with pytest.raises(LoggerFileError) as caught:
        read(FALL_BACK, time_zone="Europe/Berlin", ambiguous="error")
    assert [e.row for e in caught.value.errors] == [3, 4, 5, 6]
    assert "occurs twice" in caught.value.errors[0].message


def test_read_logger_csv_reports_every_bad_row_and_returns_nothing():
    """Each bad row is listed with its line and column; nothing is returned."""
    text = (
        "time;temp;rh\n"
        "2026-01-17 22:00;21,5;48\n"
        "2026-01-17 22:10;;48\n"
        "2026-01-17 22:20;warm;48\n"
        "2026-01-17 22:30;21,0;105\n"
        "yesterday;21,0;48\n"
        "2026-01-17 22:50;21,0\n"
        "\n"
        "2026-01-17 23:00;21.0;40\n"
    )
    with pytest.raises(LoggerFileError) as caught:
        read(text, humidity_column="rh", time_zone="Europe/Berlin")
    found = [(e.row, e.column, e.message) for e in caught.value.errors]
    assert found == [
        (3, "temp", "the cell is empty"),
        (4, "temp", "'warm' is not a number"),
        (5, "rh", "105 % is outside 0…100 %"),
        (6, "time", "'yesterday' is not a time in ISO 8601 (2026-01-17T22:00:00+01:00)"),
        (7, None, "the row has 2 cells; column 'rh' is missing"),
        (9, "temp", "'21.0': a point in a number read with a decimal comma"),
    ]
    assert "line 3, column 'temp': the cell is empty" in str(caught.value)


def test_read_logger_csv_file_level_errors():
    """A missing zone, an unknown column and a repeated time are reported plainly."""
    naive = "time;temp\n2026-01-17 22:00;1\n2026-01-17 22:10;2\n"
    with pytest.raises(LoggerFileError, match="2 times carry no UTC offset"):
        read(naive)
    with pytest.raises(
        LoggerFileError, match="no such column for temperature; the header has 'time', 'temp'"
    ):
        read(naive, temperature_column="Temperature", time_zone="UTC")
    twice = "time,temp\n2026-01-17T22:00Z,1\n2026-01-17T23:00+01:00,2\n"
    with pytest.raises(LoggerFileError, match="line 3, column 'time': the same time as line 2"):
        read(twice)
    with pytest.raises(LoggerFileError, match="no data rows"):
        read("time;temp\n\n")
    with pytest.raises(ValueError, match="time_zone"):
        read(naive, time_zone="Mars/Olympus")


def test_read_logger_csv_units_columns_by_number_and_preamble():
    """°F and K are converted; columns chosen by number; preamble lines skipped."""
    text = "Logger 12 serial 0042\nexported 2026-01-18\nA\tB\tC\n2026-01-17T22:00Z\t68\t293.15\n"
    fahrenheit = read_logger_csv(
        text, time_column=0, temperature_column=1, skip_rows=2, temperature_unit="F"
    )
    assert fahrenheit.temperature_c[0] == pytest.approx(20.0)  # (68 − 32)/1.8
    kelvin = read_logger_csv(
        text, time_column="a", temperature_column=2, skip_rows=2, temperature_unit="K"
    )
    assert kelvin.temperature_c[0] == pytest.approx(20.0)
    no_header = read_logger_csv(
        "2026-01-17T22:00Z;5\n", time_column=0, temperature_column=1, header=False
    )
    assert no_header.temperature_c.tolist() == [5.0]


def test_decode_text_and_columns():
    """Windows-1252 exports keep their degree signs; the header is offered as names."""
    data = "Datum;Temperatur °C;rF %\n".encode("cp1252")
    assert logger_columns(decode_text(data)) == ["Datum", "Temperatur °C", "rF %"]
    assert decode_text("a;b\n".encode("utf-16")) == "a;b\n"  # with its byte-order mark
    assert parse_time_zone("UTC-05:00").utcoffset(None) == dt.timedelta(hours=-5)
    series = read_logger_csv(
        "Datum;Temperatur °C\n2026-01-17T22:00Z;5,5\n".encode("cp1252"),
        time_column="datum",
        temperature_column="temperatur °c",
    )
    assert series.temperature_c.tolist() == [5.5]
    assert np.isfinite(series.times_s).all()
