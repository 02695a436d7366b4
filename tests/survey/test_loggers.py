"""Conditions from data loggers: import through the form, the air at each thermogram's
capture time, the conditions check over the hours before, the chart.

Expected instants are worked by hand from the daylight-saving rule and the offsets given
(docs/references.md § Data loggers and time series); interpolated values by hand from the
readings; dew points by psychrolib (ASHRAE, independent of the app's psychrometrics).
"""

import datetime as dt
import io
import re

import numpy as np
import psychrolib
import pytest
import tifffile
from django.core.files.uploadedfile import SimpleUploadedFile
from django.urls import reverse

from survey.conditions import conditions_check
from survey.models import ConditionLog, Member, Thermogram
from survey.services.loggers import condition_log_import, thermogram_logged_conditions
from survey.services.marks import mark_add
from survey.services.readings import mark_readings
from tests.factories import make_thermogram

psychrolib.SetUnitSystem(psychrolib.SI)
UTC = dt.UTC


def utc(*args) -> dt.datetime:
    return dt.datetime(*args, tzinfo=UTC)


def start_import(client, survey, text: str, *, role="inside", name="inside.csv", skip_rows=0):
    """Step 1 of the form: the file and its role; returns the step-2 form's response."""
    upload = SimpleUploadedFile(name, text.encode("utf-8"), content_type="text/csv")
    response = client.post(
        reverse("survey:logger_import", args=[survey.pk]),
        {"role": role, "file": upload, "skip_rows": skip_rows},
    )
    assert response.status_code == 200
    assert response.context["step"] == 2, response.context["form"].errors
    return response


def finish_import(client, survey, step_two, **choices):
    form = step_two.context["form"]
    data = {
        "payload": form["payload"].value(),
        "skip_rows": form["skip_rows"].value(),
        "role": form["role"].value(),
        "temperature_unit": "C",
        "wind_unit": "m/s",
        "delimiter": "",
        "decimal": "",
        "time_format": "",
        "time_zone": "UTC",
        "humidity_column": "",
        "wind_column": "",
    }
    data.update(choices)
    return client.post(reverse("survey:logger_import", args=[survey.pk]), data)


# Europe/Berlin, 25 October 2026: clocks go back from 03:00 CEST to 02:00 CET, so 02:00 and
# 02:30 occur twice: at 00:00 and 00:30 UTC, then at 01:00 and 01:30 UTC. 01:30 is missing
# from the file (a logger that skipped a reading).
AUTUMN_LOG = """Logger 4711 inside
Datum/Zeit;Temperatur °C;rF %
25.10.2026 00:00;20,5;48,0
25.10.2026 00:30;20,4;48,5
25.10.2026 01:00;20,3;49,0
25.10.2026 02:00;20,1;50,0
25.10.2026 02:30;20,0;50,5
25.10.2026 02:00;19,9;51,0
25.10.2026 02:30;19,8;51,5
25.10.2026 03:00;19,7;52,0
"""
AUTUMN_UTC = [
    utc(2026, 10, 24, 22, 0),  # 00:00 CEST = UTC+2
    utc(2026, 10, 24, 22, 30),
    utc(2026, 10, 24, 23, 0),
    utc(2026, 10, 25, 0, 0),  # first 02:00, still CEST
    utc(2026, 10, 25, 0, 30),
    utc(2026, 10, 25, 1, 0),  # second 02:00, now CET = UTC+1
    utc(2026, 10, 25, 1, 30),
    utc(2026, 10, 25, 2, 0),  # 03:00 CET
]


def test_it_imports_a_semicolon_file_with_decimal_commas_across_the_autumn_change(
    client, envelope_survey, thermographer
):
    """Columns chosen from the header; the repeated hour read in order; a missing reading is
    simply a longer interval."""
    client.force_login(thermographer.user)
    step_two = start_import(client, envelope_survey, AUTUMN_LOG, skip_rows=1)
    form = step_two.context["form"]
    assert [c for c, _ in form.fields["time_column"].choices] == [
        "Datum/Zeit",
        "Temperatur °C",
        "rF %",
    ]
    assert form.initial["humidity_column"] == "rF %"  # guessed from the header
    response = finish_import(
        client,
        envelope_survey,
        step_two,
        time_column="Datum/Zeit",
        temperature_column="Temperatur °C",
        humidity_column="rF %",
        time_format="%d.%m.%Y %H:%M",
        time_zone="Europe/Berlin",
    )
    assert response.status_code == 302, response.context and response.context["row_errors"]
    log = ConditionLog.objects.get(survey=envelope_survey, role="inside")
    assert [dt.datetime.fromtimestamp(t, UTC) for t in log.times_s] == AUTUMN_UTC
    assert log.temperature_c == [20.5, 20.4, 20.3, 20.1, 20.0, 19.9, 19.8, 19.7]
    assert log.rh_pct[:2] == [48.0, 48.5] and log.read_settings["decimal"] == ","
    page = client.get(reverse("survey:survey", args=[envelope_survey.pk])).content.decode()
    assert "inside.csv" in page and "8</td>" in page


def test_it_reads_times_in_a_fixed_offset_chosen_in_the_form(
    client, envelope_survey, thermographer
):
    """+05:30: 2026-02-01 10:00 local is 04:30 UTC (ISO 8601 offsets, by hand)."""
    client.force_login(thermographer.user)
    text = "time,temp,rh\n2026-02-01 10:00,5.0,80\n2026-02-01 10:15,5.5,78\n"
    step_two = start_import(client, envelope_survey, text, role="outside", name="out.csv")
    response = finish_import(
        client,
        envelope_survey,
        step_two,
        time_column="time",
        temperature_column="temp",
        time_zone="+05:30",
    )
    assert response.status_code == 302
    log = ConditionLog.objects.get(survey=envelope_survey, role="outside")
    assert dt.datetime.fromtimestamp(log.times_s[0], UTC) == utc(2026, 2, 1, 4, 30)
    assert log.rh_pct is None  # no humidity column chosen


def test_it_lists_every_bad_row_and_keeps_the_old_log(client, envelope_survey, thermographer):
    client.force_login(thermographer.user)
    good = "time;temp\n2026-01-17 22:00;20,0\n2026-01-17 22:10;20,5\n"
    finish_import(
        client,
        envelope_survey,
        start_import(client, envelope_survey, good),
        time_column="time",
        temperature_column="temp",
    )
    bad = (
        "time;temp\n"
        "2026-01-17 22:00;20,0\n"
        "2026-01-17 22:10;warm\n"  # line 3: not a number
        ";20,4\n"  # line 4: no time
        "2026-01-17 22:30;95,0\n"  # line 5: above 80 °C
    )
    response = finish_import(
        client,
        envelope_survey,
        start_import(client, envelope_survey, bad),
        time_column="time",
        temperature_column="temp",
    )
    assert response.status_code == 200
    errors = response.context["row_errors"]
    assert [(e.row, e.column) for e in errors] == [(3, "temp"), (4, "time"), (5, "temp")]
    page = response.content.decode()
    assert "Nothing was saved" in page and "logger-row-errors" in page
    log = ConditionLog.objects.get(survey=envelope_survey)
    assert log.temperature_c == [20.0, 20.5]  # the earlier import stands


def test_it_says_so_when_the_file_is_not_a_table(client, envelope_survey, thermographer):
    client.force_login(thermographer.user)
    upload = SimpleUploadedFile("photo.csv", b"\x89PNG\r\n\x1a\n\x00\x00\x00")
    response = client.post(
        reverse("survey:logger_import", args=[envelope_survey.pk]),
        {"role": "inside", "file": upload},
    )
    assert response.status_code == 200 and response.context["step"] == 1
    assert "not a text (CSV) file" in response.content.decode()
    assert ConditionLog.objects.count() == 0


def test_it_refuses_a_changed_payload(client, envelope_survey, thermographer):
    client.force_login(thermographer.user)
    step_two = start_import(client, envelope_survey, "time,temp\n2026-01-17 22:00,20\n")
    payload = step_two.context["form"]["payload"].value()
    response = finish_import(
        client,
        envelope_survey,
        step_two,
        payload=payload[:-3] + "AAA",
        time_column="time",
        temperature_column="temp",
    )
    assert response.status_code == 302 and ConditionLog.objects.count() == 0


def inside_and_outside(survey, user=None):
    """Inside 20.0 °C / 50 % at 22:00 UTC and 21.2 °C / 54 % at 22:10; outside 2.0 and 1.0 °C."""
    condition_log_import(
        survey=survey,
        role="inside",
        name="inside.csv",
        data=b"time,t,rh\n2026-01-14T22:00Z,20.0,50\n2026-01-14T22:10Z,21.2,54\n",
        user=user,
        time_column="time",
        temperature_column="t",
        humidity_column="rh",
        time_zone="UTC",
    )
    condition_log_import(
        survey=survey,
        role="outside",
        name="outside.csv",
        data=b"time,t\n2026-01-14T22:00Z,2.0\n2026-01-14T22:10Z,1.0\n",
        user=user,
        time_column="time",
        temperature_column="t",
        time_zone="UTC",
    )


def test_it_gives_each_thermogram_the_air_logged_at_its_capture_time(
    client, envelope_survey, thermographer
):
    """At 22:03, 30 % of the way between the readings: 20.0 + 0.3 × 1.2 = 20.36 °C,
    50 + 0.3 × 4 = 51.2 % and 2.0 − 0.3 = 1.7 °C outside (by hand)."""
    inside_and_outside(envelope_survey)
    inside = make_thermogram(envelope_survey, captured_at=utc(2026, 1, 14, 22, 3))
    later = make_thermogram(envelope_survey, captured_at=utc(2026, 1, 14, 23, 0))
    logged = thermogram_logged_conditions(inside)
    assert logged["status"] == "logged" and logged["label"] == "from the logger"
    assert logged["inside"]["t_air_c"] == pytest.approx(20.36, abs=1e-9)
    assert logged["inside"]["rh_pct"] == pytest.approx(51.2, abs=1e-9)
    assert logged["outside"]["t_air_c"] == pytest.approx(1.7, abs=1e-9)
    assert thermogram_logged_conditions(later)["label"] == "no logged conditions"
    # The mark's dew point uses the logged air, not the survey's recorded 20 °C / 50 %.
    mark = mark_add(thermogram=inside, kind="point", points=[[10, 10]], user=None)
    expected = psychrolib.GetTDewPointFromRelHum(20.36, 0.512)
    assert mark_readings(mark)["dew_point_c"] == pytest.approx(expected, abs=0.06)
    client.force_login(thermographer.user)
    meta = client.get(reverse("survey:api-thermogram", args=[inside.pk])).json()
    assert meta["logged_conditions"]["inside"]["t_air_c"] == pytest.approx(20.36)
    assert meta["survey"]["reference_air_c"] == pytest.approx(20.36)
    page = client.get(reverse("survey:survey", args=[envelope_survey.pk])).content.decode()
    assert "Air from the logger: inside 20.4 °C, 51 % RH; outside 1.7 °C" in page
    assert "No logged conditions" in page


def test_it_shows_logged_air_in_the_members_unit(client, envelope_survey, thermographer):
    inside_and_outside(envelope_survey)
    make_thermogram(envelope_survey, captured_at=utc(2026, 1, 14, 22, 3))
    thermographer.temperature_unit = Member.TemperatureUnit.FAHRENHEIT
    thermographer.save()
    client.force_login(thermographer.user)
    page = client.get(reverse("survey:survey", args=[envelope_survey.pk])).content.decode()
    # 20.36 °C × 9/5 + 32 = 68.648 °F.
    assert "inside 68.6 °F" in page
    chart = client.get(reverse("survey:logger_chart", args=[envelope_survey.pk]))
    assert chart["Content-Type"] == "image/svg+xml" and "°F" in chart.content.decode()


def test_it_takes_the_capture_time_from_the_files_tag_or_the_entered_time(
    client, envelope_survey, thermographer, django_capture_on_commit_callbacks
):
    """A TIFF tagged 22:05:31 in Europe/Berlin (CET, UTC+1) was taken at 21:05:31 UTC; an
    untagged .npy takes the time typed in the upload form (22:30 → 21:30 UTC)."""
    envelope_survey.time_zone = "Europe/Berlin"
    envelope_survey.save()
    tagged = io.BytesIO()
    tifffile.imwrite(
        tagged, np.full((8, 8), 20.0, np.float32), datetime=dt.datetime(2026, 1, 14, 22, 5, 31)
    )
    untagged = io.BytesIO()
    np.save(untagged, np.full((8, 8), 21.0, np.float32))
    client.force_login(thermographer.user)
    with django_capture_on_commit_callbacks(execute=True):
        response = client.post(
            reverse("survey:survey_upload", args=[envelope_survey.pk]),
            {
                "files": [
                    SimpleUploadedFile("IR_0001.tif", tagged.getvalue()),
                    SimpleUploadedFile("IR_0002.npy", untagged.getvalue()),
                ],
                "source_unit": "C",
                "captured_at": "2026-01-14T22:30",
            },
        )
    assert response.status_code == 302
    times = dict(Thermogram.objects.values_list("original_name", "captured_at"))
    assert times == {
        "IR_0001.tif": utc(2026, 1, 14, 21, 5, 31),
        "IR_0002.npy": utc(2026, 1, 14, 21, 30),
    }


LOG_START = utc(2026, 1, 12, 0, 0)


def hourly(values, start=LOG_START) -> bytes:
    rows = [
        f"{(start + dt.timedelta(hours=h)).isoformat()},{value}" for h, value in enumerate(values)
    ]
    return ("time,t\n" + "\n".join(rows) + "\n").encode()


def test_it_checks_the_held_difference_from_the_logs(envelope_survey):
    """Inside 20 °C for 48 h; outside 5 °C but 12 °C at hour 30 (hand-made series).

    Thermograms at hours 40 and 41: over [16 h, 41 h] the smallest difference is
    20 − 12 = 8 K, at hour 30; it last fell below 10 K where the outside log crosses 10 °C
    between hours 30 and 31, at 30 + 2/7 h, so it had held 40 − 30.2857 = 9.71 h; the
    outdoor extremes over [16 h, 40 h] are 5 and 12 °C (all by hand)."""
    outside = [5.0] * 48
    outside[30] = 12.0
    for role, values in (("inside", [20.0] * 48), ("outside", outside)):
        condition_log_import(
            survey=envelope_survey,
            role=role,
            name=f"{role}.csv",
            data=hourly(values),
            user=None,
            time_column="time",
            temperature_column="t",
            time_zone="UTC",
        )
    for hour in (40, 41):
        make_thermogram(envelope_survey, captured_at=utc(2026, 1, 12) + dt.timedelta(hours=hour))
    checks = {check["key"]: check for check in conditions_check(envelope_survey)}
    difference = checks["inside_outside_difference"]
    assert difference["value"] == pytest.approx(8.0) and difference["status"] == "not_met"
    assert "from the logger" in difference["value_text"]
    held = checks["difference_held"]
    assert held["value"] == pytest.approx(40 - (30 + 2 / 7), abs=1e-6)
    assert held["status"] == "not_met" and held["value_text"].startswith("9.7 h")
    outdoor = checks["outdoor_range"]
    assert outdoor["status"] == "met" and outdoor["value_text"].startswith("5.0 to 12.0 °C")
    # The typed difference (20 − (−5) = 25 K) no longer decides.
    assert envelope_survey.conditions.inside_outside_difference_c == 25.0


def test_it_charts_the_logs_with_each_thermogram_marked(client, envelope_survey, thermographer):
    inside_and_outside(envelope_survey)
    make_thermogram(envelope_survey, captured_at=utc(2026, 1, 14, 22, 3))
    make_thermogram(envelope_survey, captured_at=utc(2026, 1, 14, 22, 8))
    make_thermogram(envelope_survey)  # no capture time: not on the chart
    client.force_login(thermographer.user)
    svg = client.get(reverse("survey:logger_chart", args=[envelope_survey.pk])).content.decode()
    assert svg.startswith("<svg") and svg.count('stroke-dasharray="3 3"') == 3  # 2 + legend
    assert svg.count("<polyline") == 2
    assert re.search(r"inside \(inside\.csv\)", svg) and "thermograms" in svg


def test_it_keeps_logger_pages_from_outsiders_and_viewers(
    client, envelope_survey, viewer, outsider
):
    inside_and_outside(envelope_survey)
    log = ConditionLog.objects.first()
    client.force_login(outsider.user)
    for url in (
        reverse("survey:logger_import", args=[envelope_survey.pk]),
        reverse("survey:logger_chart", args=[envelope_survey.pk]),
    ):
        assert client.get(url).status_code == 404
    assert client.post(reverse("survey:condition_log_delete", args=[log.pk])).status_code == 404
    client.force_login(viewer.user)
    assert client.get(reverse("survey:logger_import", args=[envelope_survey.pk])).status_code == 403
    assert client.post(reverse("survey:condition_log_delete", args=[log.pk])).status_code == 403
    assert client.get(reverse("survey:logger_chart", args=[envelope_survey.pk])).status_code == 200
    assert ConditionLog.objects.count() == 2


def test_it_keeps_a_corrected_capture_time_in_the_surveys_zone(
    client, envelope_survey, thermographer
):
    """Typed 22:30:15 in Europe/Berlin (CET, UTC+1) is 21:30:15 UTC, and the form shows it
    back as typed; saving the other settings keeps the seconds."""
    envelope_survey.time_zone = "Europe/Berlin"
    envelope_survey.save()
    thermogram = make_thermogram(envelope_survey)
    client.force_login(thermographer.user)
    url = reverse("survey:thermogram_settings", args=[thermogram.pk])
    values = {"emissivity": "0.95", "reflected_c": "20", "palette": "black-red-yellow"}
    response = client.post(url, values | {"captured_at": "2026-01-14T22:30:15"})
    assert response.status_code == 302
    thermogram.refresh_from_db()
    assert thermogram.captured_at == utc(2026, 1, 14, 21, 30, 15)
    shown = client.get(url).context["form"]["captured_at"].value()
    assert shown == dt.datetime(2026, 1, 14, 22, 30, 15)
    assert 'value="2026-01-14T22:30:15"' in client.get(url).content.decode()


def test_it_takes_the_air_around_equipment_from_the_inside_logger(electrical_survey, thermographer):
    """Electrical surveys: the inside logger is the air around the equipment, so a mark's
    rise over the ambient uses it (41.0 − 26.0 = 15.0 K, by hand) and the check says so."""
    condition_log_import(
        survey=electrical_survey,
        role="inside",
        name="switch-room.csv",
        data=b"time,t\n2026-03-02T10:00Z,25.0\n2026-03-02T10:20Z,27.0\n",
        user=None,
        time_column="time",
        temperature_column="t",
        time_zone="UTC",
    )
    field = np.full((20, 20), 41.0, dtype=np.float32)
    thermogram = make_thermogram(
        electrical_survey, field, emissivity=1.0, captured_at=utc(2026, 3, 2, 10, 10)
    )
    mark = mark_add(
        thermogram=thermogram, kind="point", points=[[5, 5]], user=None, reference_kind="ambient"
    )
    assert mark_readings(mark)["delta_t_c"] == pytest.approx(15.0, abs=0.05)
    checks = {check["key"]: check for check in conditions_check(electrical_survey)}
    assert checks["ambient_recorded"]["status"] == "met"
    assert "inside logger" in checks["ambient_recorded"]["value_text"]
