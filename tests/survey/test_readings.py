"""Readings of marks: corrected values, uncertainty, ΔT and humidity figures.

Expected values are computed independently: Planck's law integrated over 8–14 µm with scipy
(quad + brentq, tests/thermal/planck.py) for the radiometry, psychrolib (ASHRAE,
Hyland–Wexler) for moist air.
"""

import math

import numpy as np
import psychrolib
import pytest

from survey.models import Conditions, Mark
from survey.services.marks import mark_add, mark_delete
from survey.services.readings import mark_readings, thermogram_readings
from tests.factories import make_thermogram
from tests.thermal.planck import reference_object_c

psychrolib.SetUnitSystem(psychrolib.SI)


def uniform(survey, value_c, size=(30, 40), **fields):
    return make_thermogram(survey, np.full(size, value_c, dtype=np.float32), **fields)


def test_mark_readings_corrects_with_the_marks_own_emissivity(electrical_survey, thermographer):
    """ε 0.90 on the mark, reflected 25 °C on the thermogram: 80 °C apparent → Planck's answer."""
    thermogram = uniform(electrical_survey, 80.0, reflected_c=25.0)
    mark = mark_add(
        thermogram=thermogram,
        kind="rectangle",
        points=[[2, 2], [10, 8]],
        user=thermographer.user,
        emissivity=0.90,
    )
    readings = mark_readings(mark)
    # scipy; docs/references.md § Radiometry lists 84.999.
    expected = reference_object_c(80.0, 0.90, 25.0)
    assert readings["corrected"]["max"] == pytest.approx(expected, abs=0.02)
    assert readings["corrected"]["mean"] == pytest.approx(expected, abs=0.02)
    assert readings["apparent"]["count"] == 9 * 7
    assert readings["emissivity"] == 0.90 and readings["reflected_c"] == 25.0
    assert readings["error"] is None


def test_mark_readings_uses_the_thermograms_transmittance(electrical_survey, thermographer):
    """τ 0.95 with the air path at 20 °C (60 °C apparent, ε 0.95, reflected 20 °C)."""
    thermogram = uniform(
        electrical_survey, 60.0, reflected_c=20.0, transmittance=0.95, atmosphere_c=20.0
    )
    mark = mark_add(thermogram=thermogram, kind="point", points=[[5, 5]], user=thermographer.user)
    # scipy; docs/references.md § Radiometry lists 63.664.
    expected = reference_object_c(60.0, 0.95, 20.0, 0.95, 20.0)
    assert mark_readings(mark)["corrected"]["max"] == pytest.approx(expected, abs=0.02)


def test_mark_readings_uncertainty_combines_camera_emissivity_and_reflection(
    electrical_survey, thermographer
):
    """150 °C apparent, ε 0.95: ± from 2 % of reading (3 K), ε ± 0.02 and reflected ± 2 K."""
    thermogram = uniform(electrical_survey, 150.0, reflected_c=20.0)
    mark = mark_add(thermogram=thermogram, kind="point", points=[[5, 5]], user=thermographer.user)
    h = 1e-3
    d_eps = (reference_object_c(150, 0.95 + h, 20) - reference_object_c(150, 0.95 - h, 20)) / (
        2 * h
    )
    d_refl = (reference_object_c(150, 0.95, 21) - reference_object_c(150, 0.95, 19)) / 2
    d_app = (reference_object_c(151, 0.95, 20) - reference_object_c(149, 0.95, 20)) / 2
    camera_u = max(2.0, 0.02 * 150.0)  # the survey's "±2 °C or ±2 % of reading" (defaults)
    expected = math.sqrt((d_eps * 0.02) ** 2 + (d_refl * 2.0) ** 2 + (d_app * camera_u) ** 2)
    assert mark_readings(mark)["uncertainty_c"] == pytest.approx(expected, abs=0.1)


def test_mark_readings_delta_t_against_a_reference_mark(electrical_survey, thermographer):
    """ΔT = corrected max of the hot mark − corrected mean of the reference mark."""
    field = np.full((30, 40), 30.0, dtype=np.float32)
    field[10:15, 20:25] = 55.0
    thermogram = make_thermogram(electrical_survey, field)
    user = thermographer.user
    reference = mark_add(
        thermogram=thermogram, kind="rectangle", points=[[0, 0], [5, 5]], user=user
    )
    hot = mark_add(
        thermogram=thermogram,
        kind="rectangle",
        points=[[18, 8], [26, 16]],
        user=user,
        reference_kind=Mark.ReferenceKind.MARK,
        reference_mark=reference,
    )
    readings = mark_readings(hot)
    expected = reference_object_c(55.0, 0.95, 20.0) - reference_object_c(30.0, 0.95, 20.0)  # scipy
    assert readings["reference"] == "A"
    assert readings["delta_t_c"] == pytest.approx(expected, abs=0.03)
    assert readings["delta_t_quantitative"] is True


def test_mark_readings_delta_t_against_the_air(electrical_survey, envelope_survey, thermographer):
    """Against ambient_air_c (24 °C) for electrical work, indoor_air_c (20 °C) for buildings."""
    user = thermographer.user
    for survey, air_c in ((electrical_survey, 24.0), (envelope_survey, 20.0)):
        thermogram = uniform(survey, 40.0)
        mark = mark_add(
            thermogram=thermogram,
            kind="point",
            points=[[3, 3]],
            user=user,
            reference_kind=Mark.ReferenceKind.AMBIENT,
        )
        readings = mark_readings(mark)
        expected = reference_object_c(40.0, 0.95, 20.0) - air_c  # scipy
        assert readings["reference"] == "ambient"
        assert readings["delta_t_c"] == pytest.approx(expected, abs=0.02)


def test_mark_readings_marks_low_emissivity_differentials_not_quantitative(
    electrical_survey, thermographer
):
    """Below ε 0.3 the ΔT is shown but flagged; the warning says not quantitative."""
    thermogram = uniform(electrical_survey, 40.0)
    mark = mark_add(
        thermogram=thermogram,
        kind="point",
        points=[[3, 3]],
        user=thermographer.user,
        emissivity=0.25,
        reference_kind=Mark.ReferenceKind.AMBIENT,
    )
    readings = mark_readings(mark)
    assert readings["delta_t_quantitative"] is False
    assert readings["emissivity_warning"] == "not_quantitative"
    assert readings["delta_t_c"] is not None


def test_mark_readings_turns_reflects_more_than_it_emits_into_a_message(
    electrical_survey, thermographer
):
    """ε 0.1 with reflected 60 °C on a 20 °C reading: no corrected value, an error message."""
    thermogram = uniform(electrical_survey, 20.0, reflected_c=60.0)
    mark = mark_add(
        thermogram=thermogram,
        kind="point",
        points=[[3, 3]],
        user=thermographer.user,
        emissivity=0.1,
    )
    readings = mark_readings(mark)
    assert readings["corrected"] == {"min": None, "max": None, "mean": None}
    assert "reflects more than it emits" in readings["error"]
    assert readings["uncertainty_c"] is None


def test_mark_readings_humidity_figures_match_psychrolib(envelope_survey, thermographer):
    """Room 20 °C 50 %, a 12 °C surface at ε 1: dew point, surface RH and both margins."""
    thermogram = uniform(envelope_survey, 12.0)
    mark = mark_add(
        thermogram=thermogram,
        kind="point",
        points=[[3, 3]],
        user=thermographer.user,
        emissivity=1.0,
    )
    readings = mark_readings(mark)
    dew_c = psychrolib.GetTDewPointFromRelHum(20.0, 0.5)
    vapour_pa = 0.5 * psychrolib.GetSatVapPres(20.0)
    # 83.4 % (docs/references.md § Psychrometrics)
    surface_rh = 100 * vapour_pa / psychrolib.GetSatVapPres(12.0)
    mould_c = psychrolib.GetTDewPointFromVapPres(20.0, vapour_pa / 0.8)  # surface RH = 80 %
    assert readings["dew_point_c"] == pytest.approx(dew_c, abs=0.03)
    assert readings["surface_rh_pct"] == pytest.approx(surface_rh, abs=0.15)
    assert readings["condensation_margin_k"] == pytest.approx(12.0 - dew_c, abs=0.03)
    assert readings["mould_margin_k"] == pytest.approx(12.0 - mould_c, abs=0.03)
    assert readings["mould_margin_k"] < 0 < readings["condensation_margin_k"]


def test_mark_readings_leaves_humidity_empty_without_indoor_rh(envelope_survey, thermographer):
    """No indoor RH recorded: no dew point, surface RH or margins."""
    Conditions.objects.filter(survey=envelope_survey).update(indoor_rh_pct=None)
    envelope_survey.refresh_from_db()
    thermogram = uniform(envelope_survey, 12.0)
    mark = mark_add(thermogram=thermogram, kind="point", points=[[3, 3]], user=thermographer.user)
    readings = mark_readings(mark)
    assert readings["dew_point_c"] is None and readings["mould_margin_k"] is None


def test_mark_readings_recomputes_from_given_temperatures(electrical_survey, thermographer):
    """Passing the array recomputes the statistics instead of reading the cached ones."""
    thermogram = uniform(electrical_survey, 30.0)
    mark = mark_add(thermogram=thermogram, kind="point", points=[[3, 3]], user=thermographer.user)
    hotter = np.full((30, 40), 50.0, dtype=np.float32)
    assert mark_readings(mark, temperatures=hotter)["apparent"]["max"] == pytest.approx(50.0)
    assert mark_readings(mark)["apparent"]["max"] == pytest.approx(30.0)


def test_thermogram_readings_lists_marks_in_label_order(electrical_survey, thermographer):
    """A, B, C in order, with the keys the findings and reports helpers read."""
    thermogram = uniform(electrical_survey, 30.0)
    user = thermographer.user
    marks = [
        mark_add(thermogram=thermogram, kind="point", points=[[i, i]], user=user) for i in range(3)
    ]
    mark_delete(mark=marks[0], user=user)
    mark_add(thermogram=thermogram, kind="line", points=[[0, 0], [10, 0]], user=user)
    readings = thermogram_readings(thermogram)
    assert [r["label"] for r in readings] == ["A", "B", "C"]
    keys = {
        "label", "kind", "emissivity", "reflected_c", "emissivity_warning", "apparent",
        "corrected", "uncertainty_c", "reference", "delta_t_c", "delta_t_quantitative",
        "dew_point_c", "surface_rh_pct", "condensation_margin_k", "mould_margin_k", "profile",
    }  # fmt: skip
    assert keys <= set(readings[0])
    assert set(readings[0]["apparent"]) == {
        "min", "max", "mean", "std", "count", "nan_count", "hottest", "coldest"
    }  # fmt: skip
    line = readings[0]
    assert line["kind"] == "line" and len(line["profile"]) == 11
