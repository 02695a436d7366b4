"""Severity suggestions, findings and heat-loss estimates (survey.services.findings)."""

import datetime
import math

import psychrolib
import pytest
from django.core.exceptions import ValidationError

from survey.models import AuditEvent, Conditions, CriteriaTable, Finding, Survey
from survey.services.criteria_tables import criteria_table_copy_defaults, criteria_table_update
from survey.services.findings import (
    finding_create,
    finding_set_status,
    finding_suggest,
    finding_update,
    heat_loss_estimate_create,
)
from survey.services.marks import mark_add
from survey.thermal import surface_heat_flux
from survey.thermal.electrical import DEFAULT_CRITERIA
from tests.factories import make_thermogram
from tests.survey.findings_data import block_field, equipment_survey, hot_and_reference

psychrolib.SetUnitSystem(psychrolib.SI)


@pytest.fixture
def full_load_survey(org, site, thermographer):
    return equipment_survey(org, site, thermographer, ambient_air_c=24.0, load_pct=100.0)


# Bands of the NETA MTS thermographic table as recalled in docs/references.md § Electrical
# [memory], with the interval ends documented in survey.thermal.electrical: (−∞, 1) none, [1, 3] 4,
# (3, 15] 3, (15, ∞) 1 for like components.
@pytest.mark.parametrize(
    ("rise", "level"),
    [(0.9, None), (1.0, 4), (3.0, 4), (3.1, 3), (15.0, 3), (15.1, 1)],
)
def test_it_suggests_levels_at_the_similar_table_boundaries(full_load_survey, rise, level):
    """A rise over a like component at full load lands in the band of the table."""
    _, hot, _ = hot_and_reference(full_load_survey, 20.0, 20.0 + rise)
    suggestion = finding_suggest(survey=full_load_survey, basis="similar", marks=[hot])
    assert suggestion["level"] == level
    assert suggestion["values"]["corrected_rise_c"] == pytest.approx(rise, abs=1e-3)
    assert suggestion["table_key"] == "electrical-similar"


# Over ambient, NETA MTS as recalled [memory]: [1, 10] 4, (10, 20] 3, (20, 40] 2, (40, ∞) 1.
@pytest.mark.parametrize(
    ("rise", "level"),
    [(0.5, None), (10.0, 4), (10.1, 3), (20.0, 3), (20.1, 2), (40.0, 2), (40.1, 1)],
)
def test_it_suggests_levels_at_the_ambient_table_boundaries(full_load_survey, rise, level):
    """A rise over the recorded ambient air (24 °C) lands in the band of the table."""
    _, hot, _ = hot_and_reference(full_load_survey, 20.0, 24.0 + rise)
    suggestion = finding_suggest(survey=full_load_survey, basis="ambient", marks=[hot])
    assert suggestion["level"] == level


def test_it_flags_low_load_and_corrects_the_rise(org, site, thermographer):
    """At 30 % load a 5 K rise becomes 5·(100/30)² K at full load, flagged low-load."""
    survey = equipment_survey(org, site, thermographer, ambient_air_c=24.0, load_pct=30.0)
    _, hot, _ = hot_and_reference(survey, 20.0, 25.0)
    suggestion = finding_suggest(survey=survey, basis="similar", marks=[hot])
    # I²R correction ΔT·(I_full/I)² (docs/references.md § Electrical and mechanical ranking,
    # practice): 5·(100/30)² = 55.56 K, shown and stored at 0.1 K: 55.6 K.
    assert suggestion["values"]["corrected_rise_c"] == 55.6
    assert "low_load" in suggestion["flags"]
    assert suggestion["level"] == 1  # above 15 K over a like component [memory, NETA MTS]


def test_it_does_not_flag_a_load_of_forty_percent_or_more(org, site, thermographer):
    """65 % load corrects the rise without the low-load flag."""
    survey = equipment_survey(org, site, thermographer, ambient_air_c=24.0, load_pct=65.0)
    _, hot, _ = hot_and_reference(survey, 20.0, 25.0)
    suggestion = finding_suggest(survey=survey, basis="similar", marks=[hot])
    # 5·(100/65)² = 11.83 K, computed by hand; stored at 0.1 K.
    assert suggestion["values"]["corrected_rise_c"] == 11.8
    assert "low_load" not in suggestion["flags"]


def test_it_says_when_the_load_was_not_recorded(org, site, thermographer):
    """Without a recorded load the rise is left as measured and flagged."""
    survey = equipment_survey(org, site, thermographer, ambient_air_c=24.0)
    _, hot, _ = hot_and_reference(survey, 20.0, 25.0)
    suggestion = finding_suggest(survey=survey, basis="similar", marks=[hot])
    assert suggestion["values"]["corrected_rise_c"] == pytest.approx(5.0, abs=1e-3)
    assert "load_not_recorded" in suggestion["flags"]


def test_it_asks_for_ambient_air_before_judging_over_ambient(org, site, thermographer):
    """No ambient temperature recorded: a clear message, no suggestion."""
    survey = equipment_survey(org, site, thermographer, load_pct=100.0)
    _, hot, _ = hot_and_reference(survey, 20.0, 30.0)
    with pytest.raises(ValidationError, match="ambient air"):
        finding_suggest(survey=survey, basis="ambient", marks=[hot])


def test_it_asks_for_a_reference_for_a_like_component(full_load_survey, thermographer):
    """A rise over a like component needs a reference mark."""
    thermogram = make_thermogram(
        full_load_survey, block_field(20, 30), created_by=thermographer.user
    )
    alone = mark_add(
        thermogram=thermogram, kind="rectangle", points=[[10, 10], [20, 20]], user=None
    )
    with pytest.raises(ValidationError, match="reference"):
        finding_suggest(survey=full_load_survey, basis="similar", marks=[alone])


def test_it_refuses_marks_of_another_survey(full_load_survey, org, site, thermographer):
    """Marks must belong to the survey the finding is for."""
    other = equipment_survey(org, site, thermographer, ambient_air_c=24.0, load_pct=100.0)
    _, hot, _ = hot_and_reference(other, 20.0, 30.0)
    with pytest.raises(ValidationError, match="this survey"):
        finding_suggest(survey=full_load_survey, basis="similar", marks=[hot])


def test_it_records_the_suggested_level_table_and_row(full_load_survey):
    """A finding keeps the level, the table and the row it was judged by."""
    _, hot, _ = hot_and_reference(full_load_survey, 20.0, 30.0)
    suggestion = finding_suggest(survey=full_load_survey, basis="similar", marks=[hot])
    finding = finding_create(
        survey=full_load_survey,
        user=full_load_survey.thermographer.user,
        category="connection",
        suggestion=suggestion,
        marks=[hot],
    )
    # 10 K over a like component: (3, 15] band, level 3 [memory, NETA MTS].
    assert finding.level == finding.suggested_level == 3
    assert finding.criteria_table.key == "electrical-similar"
    assert finding.criteria_row == "over 3 to 15 °C"
    assert finding.corrected_rise_c == pytest.approx(10.0, abs=1e-3)
    assert list(finding.marks.all()) == [hot]
    assert finding.recommendation == DEFAULT_CRITERIA["similar"]["rows"][1]["action"]


def test_it_requires_a_reason_to_override_and_keeps_it(full_load_survey):
    """Another level than suggested needs a reason; the reason is stored."""
    _, hot, _ = hot_and_reference(full_load_survey, 20.0, 30.0)
    suggestion = finding_suggest(survey=full_load_survey, basis="similar", marks=[hot])
    user = full_load_survey.thermographer.user
    with pytest.raises(ValidationError) as error:
        finding_create(
            survey=full_load_survey,
            user=user,
            category="connection",
            suggestion=suggestion,
            marks=[hot],
            level=1,
        )
    assert "override_reason" in error.value.message_dict
    assert not Finding.objects.exists()
    finding = finding_create(
        survey=full_load_survey,
        user=user,
        category="connection",
        suggestion=suggestion,
        marks=[hot],
        level=1,
        override_reason="Feeds the fire pumps; no outage possible later.",
    )
    finding.refresh_from_db()
    assert finding.level == 1 and finding.suggested_level == 3
    assert finding.is_overridden
    assert finding.override_reason == "Feeds the fire pumps; no outage possible later."


def test_it_requires_a_reason_when_an_update_moves_the_level(full_load_survey):
    """finding_update applies the same rule as creation."""
    _, hot, _ = hot_and_reference(full_load_survey, 20.0, 30.0)
    user = full_load_survey.thermographer.user
    suggestion = finding_suggest(survey=full_load_survey, basis="similar", marks=[hot])
    finding = finding_create(
        survey=full_load_survey, user=user, category="connection", suggestion=suggestion
    )
    with pytest.raises(ValidationError):
        finding_update(finding=finding, user=user, level=2)
    finding.refresh_from_db()
    assert finding.level == 3
    finding_update(finding=finding, user=user, level=2, override_reason="Critical feeder.")
    finding.refresh_from_db()
    assert (finding.level, finding.override_reason) == (2, "Critical feeder.")


def test_it_refuses_a_category_of_another_survey_kind(full_load_survey):
    """An electrical finding cannot be a thermal bridge."""
    _, hot, _ = hot_and_reference(full_load_survey, 20.0, 30.0)
    suggestion = finding_suggest(survey=full_load_survey, basis="similar", marks=[hot])
    with pytest.raises(ValidationError) as error:
        finding_create(
            survey=full_load_survey,
            user=full_load_survey.thermographer.user,
            category="thermal_bridge",
            suggestion=suggestion,
        )
    assert "category" in error.value.message_dict


def test_it_asks_how_a_repair_was_confirmed_before_verified(full_load_survey):
    """Marking a finding verified by hand needs a note; the change is audited."""
    _, hot, _ = hot_and_reference(full_load_survey, 20.0, 30.0)
    user = full_load_survey.thermographer.user
    suggestion = finding_suggest(survey=full_load_survey, basis="similar", marks=[hot])
    finding = finding_create(
        survey=full_load_survey, user=user, category="connection", suggestion=suggestion
    )
    with pytest.raises(ValidationError):
        finding_set_status(finding=finding, user=user, status="verified")
    finding_set_status(finding=finding, user=user, status="repaired")
    finding.refresh_from_db()
    assert finding.status == "repaired"
    assert AuditEvent.objects.filter(action="finding_status", object_id=str(finding.pk)).exists()


def test_it_judges_by_the_organizations_own_table_once_copied(full_load_survey, owner):
    """An edited copy of the table decides the level and is recorded on the finding."""
    copies = criteria_table_copy_defaults(organization=full_load_survey.organization, user=None)
    assert {t.key for t in copies} >= {"electrical-similar", "electrical-ambient"}
    assert criteria_table_copy_defaults(organization=full_load_survey.organization) == copies
    table = CriteriaTable.objects.get(
        organization=full_load_survey.organization, key="electrical-similar"
    )
    stricter = [
        {"label": "1 to 5 °C", "lower": 1.0, "upper": 5.1, "level": 3, "action": "Plan repair."},
        {"label": "over 5 °C", "lower": 5.1, "upper": None, "level": 1, "action": "Repair now."},
    ]
    criteria_table_update(table=table, user=owner.user, rows=stricter)
    _, hot, _ = hot_and_reference(full_load_survey, 20.0, 30.0)
    suggestion = finding_suggest(survey=full_load_survey, basis="similar", marks=[hot])
    assert suggestion["level"] == 1
    assert suggestion["table_id"] == table.pk


def test_it_refuses_malformed_table_rows(full_load_survey, owner):
    """Rows of another shape or with overlapping bands are refused with a readable message."""
    (table, *_) = criteria_table_copy_defaults(organization=full_load_survey.organization)
    with pytest.raises(ValidationError, match="unknown keys: up_to_c"):
        criteria_table_update(
            table=table,
            user=owner.user,
            rows=[{"label": "x", "up_to_c": 3.0, "level": 4, "action": "Watch."}],
        )
    overlapping = [
        {"lower": 1.0, "upper": 5.0, "level": 4, "action": "Watch."},
        {"lower": 4.0, "upper": None, "level": 1, "action": "Repair now."},
    ]
    with pytest.raises(ValidationError, match="overlap"):
        criteria_table_update(table=table, user=owner.user, rows=overlapping)


# --- building envelope ---


def _envelope(org, site, thermographer, surface_c, **conditions):
    survey = Survey.objects.create(
        organization=org,
        site=site,
        kind=Survey.Kind.ENVELOPE,
        date=datetime.date(2026, 1, 14),
        thermographer=thermographer,
    )
    values = {"indoor_air_c": 20.0, "indoor_rh_pct": 50.0, "outdoor_air_c": -5.0} | conditions
    Conditions.objects.create(survey=survey, **values)
    thermogram = make_thermogram(
        survey,
        block_field(19.0, surface_c),
        emissivity=1.0,
        created_by=thermographer.user,
    )
    mark = mark_add(thermogram=thermogram, kind="rectangle", points=[[10, 10], [20, 20]], user=None)
    return survey, mark


def _surface_rh_psychrolib(t_air, rh_pct, t_surface):
    vapour = rh_pct / 100 * psychrolib.GetSatVapPres(t_air)
    return 100 * vapour / psychrolib.GetSatVapPres(t_surface)


@pytest.mark.parametrize(
    ("surface_c", "flag", "level"),
    [(16.0, None, None), (12.0, "mould", 3), (8.0, "condensation", 2)],
)
def test_it_flags_mould_and_condensation_against_psychrolib(
    org, site, thermographer, surface_c, flag, level
):
    """Surface RH from room air 20 °C / 50 % at a cold spot: ≥ 80 % mould, ≥ 100 % condensation."""
    survey, mark = _envelope(org, site, thermographer, surface_c)
    suggestion = finding_suggest(survey=survey, basis="envelope", marks=[mark])
    expected = _surface_rh_psychrolib(20.0, 50.0, surface_c)  # psychrolib, ASHRAE formulas
    assert suggestion["values"]["surface_rh_pct"] == pytest.approx(expected, abs=0.3)
    assert suggestion["level"] == level
    if flag:
        assert flag in suggestion["flags"]
    else:
        assert not {"mould", "condensation"} & set(suggestion["flags"])


def test_it_gives_the_temperature_factor_margin_in_kelvin(org, site, thermographer):
    """At 12 °C with 20 °C / 50 % inside and −5 °C outside the margin is about −0.6 K."""
    survey, mark = _envelope(org, site, thermographer, 12.0)
    values = finding_suggest(survey=survey, basis="envelope", marks=[mark])["values"]
    # fRsi = (12 − (−5)) / 25 = 0.68 by hand; fRsi,min 0.705 [computed,
    # docs/references.md § Building envelope].
    assert values["temperature_factor"] == pytest.approx(0.68, abs=1e-3)
    assert values["critical_factor"] == pytest.approx(0.705, abs=2e-3)
    # θsi,min: dew point of the vapour pressure p_i / 0.8, with psychrolib.
    vapour = 0.5 * psychrolib.GetSatVapPres(20.0)
    t_min = psychrolib.GetTDewPointFromVapPres(20.0, vapour / 0.8)
    assert values["margin_k"] == pytest.approx(12.0 - t_min, abs=0.05)


def test_it_flags_a_surface_that_fails_only_at_design_conditions(org, site, thermographer):
    """15 °C passes at survey time but not at 21 °C / 55 % inside, −10 °C outside."""
    survey, mark = _envelope(org, site, thermographer, 15.0)
    recorded = finding_suggest(survey=survey, basis="envelope", marks=[mark])
    assert recorded["level"] is None
    design = finding_suggest(
        survey=survey,
        basis="envelope",
        marks=[mark],
        design_inside_c=21.0,
        design_inside_rh_pct=55.0,
        design_outside_c=-10.0,
    )
    values = design["values"]
    # fRsi = 20/25 = 0.8 by hand; design surface −10 + 0.8·31 = 14.8 °C.
    assert values["design_surface_c"] == pytest.approx(14.8, abs=0.01)
    expected_rh = _surface_rh_psychrolib(21.0, 55.0, 14.8)  # psychrolib
    assert values["design_surface_rh_pct"] == pytest.approx(expected_rh, abs=0.3)
    # fRsi,min 0.808 for 21 °C / 55 % with −10 °C [computed,
    # docs/references.md § Building envelope].
    assert values["design_critical_factor"] == pytest.approx(0.808, abs=2e-3)
    assert values["design_margin_k"] < 0
    assert design["level"] == 3
    assert "below_design_factor" in design["flags"]


def test_it_asks_for_all_three_design_values(org, site, thermographer):
    """A half-filled design case is refused with a message."""
    survey, mark = _envelope(org, site, thermographer, 15.0)
    with pytest.raises(ValidationError, match="design"):
        finding_suggest(survey=survey, basis="envelope", marks=[mark], design_inside_c=21.0)


# --- roofs ---


def test_it_estimates_the_wet_area_with_the_oblique_caveat(org, site, thermographer):
    """Area = pixels × (distance × IFOV)², divided by cos θ for an oblique view."""
    survey = equipment_survey(org, site, thermographer, kind="roof", surfaces_dry=True)
    thermogram = make_thermogram(
        survey, block_field(5.0, 7.0), distance_m=20.0, created_by=thermographer.user
    )
    mark = mark_add(thermogram=thermogram, kind="rectangle", points=[[2, 2], [90, 70]], user=None)
    pixels = mark.stats["pixels"]
    square_on = finding_suggest(survey=survey, basis="roof", marks=[mark])
    # Pixel footprint = distance × IFOV (docs/references.md § Geometry and wet areas):
    # 20 m × 1.309 mrad = 26.18 mm.
    expected = pixels * (20.0 * 1.309e-3) ** 2
    assert square_on["values"]["wet_area_m2"] == pytest.approx(expected, rel=1e-3)
    assert "oblique_caveat" in square_on["flags"]
    assert square_on["level"] == 3  # 0.25–10 m²: the product's own default band, no source
    assert any("oblique" in reason for reason in square_on["reasons"])
    tilted = finding_suggest(survey=survey, basis="roof", marks=[mark], view_angle_deg=30.0)
    assert tilted["values"]["wet_area_m2"] == pytest.approx(
        expected / math.cos(math.radians(30.0)), rel=1e-3
    )


def test_it_needs_an_area_mark_and_a_distance_for_a_roof(org, site, thermographer):
    """A point has no area; a thermogram without distance cannot be scaled."""
    survey = equipment_survey(org, site, thermographer, kind="roof")
    thermogram = make_thermogram(survey, block_field(5.0, 7.0), created_by=thermographer.user)
    point = mark_add(thermogram=thermogram, kind="point", points=[[12, 12]], user=None)
    area = mark_add(thermogram=thermogram, kind="rectangle", points=[[8, 8], [22, 22]], user=None)
    with pytest.raises(ValidationError, match="rectangle"):
        finding_suggest(survey=survey, basis="roof", marks=[point])
    with pytest.raises(ValidationError, match="distance"):
        finding_suggest(survey=survey, basis="roof", marks=[area])


# --- heat loss ---


def test_it_estimates_heat_loss_energy_and_cost(envelope_survey, thermographer):
    """A 30 °C wall in 20 °C air: W/m² from the correlations, then W, kWh, cost by hand."""
    estimate = heat_loss_estimate_create(
        survey=envelope_survey,
        user=thermographer.user,
        label="Warm riser duct",
        side="outside",
        t_surface_c=30.0,
        t_air_c=20.0,
        emissivity=0.9,
        geometry="vertical",
        size_m=1.0,
        area_m2=10.0,
        hours_per_year=5000.0,
        price_per_kwh=0.12,
        efficiency_pct=90.0,
        currency="EUR",
    )
    results = estimate.results
    # 85.9 W/m² total for 1 m vertical wall, 30 °C in still 20 °C air, ε 0.9 (±3 %)
    # [computed, docs/references.md § Heat transfer].
    assert results["total_w_m2"] == pytest.approx(85.9, rel=0.03)
    q = results["total_w_m2"]
    # Hand calculation: W = q · A; kWh = W · h / 1000; bought = kWh / 0.9; cost = bought · 0.12
    # (q is shown rounded to 0.01 W/m², hence the relative tolerance).
    kwh = q * 10.0 * 5000.0 / 1000.0
    assert results["watts"] == pytest.approx(q * 10.0, rel=1e-3)
    assert results["kwh_per_year"] == pytest.approx(kwh, rel=1e-3)
    assert results["purchased_kwh_per_year"] == pytest.approx(kwh / 0.9, rel=1e-3)
    assert results["cost_per_year"] == pytest.approx(kwh / 0.9 * 0.12, rel=1e-3)
    assert estimate.inputs["hours_per_year"] == 5000.0
    assert estimate.inputs["efficiency_pct"] == 90.0


def test_it_counts_only_the_excess_over_a_sound_surface(envelope_survey, thermographer):
    """With the sound surface at the same temperature the excess loss is nil."""
    estimate = heat_loss_estimate_create(
        survey=envelope_survey,
        user=thermographer.user,
        label="Same as sound wall",
        side="outside",
        t_surface_c=12.0,
        t_reference_c=12.0,
        t_air_c=-5.0,
        emissivity=0.93,
        geometry="vertical",
        size_m=2.5,
        area_m2=4.0,
        hours_per_year=4000.0,
        price_per_kwh=0.3,
    )
    assert estimate.results["watts"] == pytest.approx(0.0, abs=1e-6)
    assert estimate.results["cost_per_year"] == pytest.approx(0.0, abs=1e-6)


def test_it_refuses_an_efficiency_of_zero(envelope_survey, thermographer):
    """A heat source of 0 % efficiency is refused, nothing saved."""
    with pytest.raises(ValidationError):
        heat_loss_estimate_create(
            survey=envelope_survey,
            user=thermographer.user,
            label="x",
            side="outside",
            t_surface_c=12.0,
            t_air_c=-5.0,
            emissivity=0.93,
            geometry="vertical",
            size_m=2.5,
            area_m2=4.0,
            hours_per_year=4000.0,
            efficiency_pct=0.0,
        )
    assert not envelope_survey.heat_loss_estimates.exists()


def _estimate(survey, user, **values):
    arguments = {
        "label": "Cold patch",
        "side": "inside",
        "t_surface_c": 12.0,
        "t_air_c": 20.0,
        "emissivity": 0.93,
        "geometry": "vertical",
        "size_m": 2.5,
        "area_m2": 2.0,
        "hours_per_year": 4000.0,
        "price_per_kwh": 0.3,
    } | values
    return heat_loss_estimate_create(survey=survey, user=user, **arguments)


def test_it_counts_heat_leaving_the_building_positive(envelope_survey, thermographer):
    """An inside cold patch (12 °C in 20 °C room air) loses heat outwards: positive watts and
    cost. The sign is a definition: leaving = −(flux from the surface to the room air)."""
    inside = _estimate(envelope_survey, thermographer.user)
    flux = surface_heat_flux(12.0, 20.0, 0.93, "vertical", 2.5)
    assert float(flux["total_w_m2"]) < 0  # the room warms the surface
    assert inside.results["total_w_m2"] == pytest.approx(-float(flux["total_w_m2"]), abs=0.01)
    assert inside.results["watts"] > 0 and inside.results["cost_per_year"] > 0
    assert inside.results["sign"] == "heat leaving the building is positive"
    # The same patch beside a sound wall at 17 °C: only the excess (defect colder) counts.
    excess = _estimate(envelope_survey, thermographer.user, t_reference_c=17.0)
    assert 0 < excess.results["total_w_m2"] < inside.results["total_w_m2"]


@pytest.mark.parametrize(
    ("values", "words"),
    [
        ({"t_surface_c": 25.0}, "gives heat to the room"),
        ({"side": "outside", "t_surface_c": -8.0, "t_air_c": -5.0}, "takes heat from it"),
        ({"t_reference_c": 10.0}, "loses less heat than the sound surface"),
    ],
)
def test_it_refuses_an_estimate_that_is_not_a_loss(envelope_survey, thermographer, values, words):
    """Heat entering the building is no heat loss: refused with the reason, nothing saved."""
    with pytest.raises(ValidationError, match=words):
        _estimate(envelope_survey, thermographer.user, **values)
    assert not envelope_survey.heat_loss_estimates.exists()


def test_it_refuses_a_heat_loss_estimate_on_electrical_equipment(full_load_survey, thermographer):
    """An electrical survey takes no estimate, with a message saying where they apply."""
    _, hot, _ = hot_and_reference(full_load_survey, 20.0, 30.0)
    with pytest.raises(ValidationError, match="envelope and roof surfaces"):
        _estimate(full_load_survey, thermographer.user, side="outside", mark=hot)
    assert not full_load_survey.heat_loss_estimates.exists()
