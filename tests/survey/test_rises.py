"""Rises over like components and the air, as the app judges them: method, 0.1 K, n.

Emissivity 1 on the invented fields, so a corrected temperature is the apparent one and a
test sets the readings it needs exactly (tests/survey/findings_data.py).
"""

from decimal import Decimal

import numpy as np
import pytest
from django.core.exceptions import ValidationError

from survey.models import Finding, Mark
from survey.services.findings import finding_create, finding_suggest
from survey.services.marks import mark_add, mark_update
from survey.services.readings import mark_readings
from tests.factories import make_thermogram
from tests.survey.findings_data import equipment_survey

# Bands of the NETA MTS thermographic survey table as recalled (docs/references.md
# § Electrical and mechanical ranking, memory), read at 0.1 K: like components
# [1.0, 3.0] → 4, [3.1, 15.0] → 3, ≥ 15.1 → 1; over the air [1.0, 10.0] → 4,
# [10.1, 20.0] → 3, [20.1, 40.0] → 2, ≥ 40.1 → 1; below 1.0 no finding.
SIMILAR_BANDS = [(Decimal("1.0"), None), (Decimal("3.0"), 4), (Decimal("15.0"), 3)]
AMBIENT_BANDS = [
    (Decimal("1.0"), None),
    (Decimal("10.0"), 4),
    (Decimal("20.0"), 3),
    (Decimal("40.0"), 2),
]


def expected_level(rise: Decimal, bands, top: int):
    """The band of an exact decimal rise, read from the table above by hand."""
    if rise < bands[0][0]:
        return None
    for limit, level in bands[1:]:
        if rise <= limit:
            return level
    return top


def lugs(survey, peaks_c, *, low_c=None, width=12):
    """Phase lugs side by side: each a block whose hottest pixel is its peak; with `low_c`
    the block ramps from low_c up to the peak (mean well below the peak)."""
    field = np.full((40, 20 + width * 2 * len(peaks_c)), 15.0, dtype=np.float32)
    boxes = []
    for index, peak in enumerate(peaks_c):
        left = 5 + index * width * 2
        block = np.full((10, width), peak, dtype=np.float32)
        if low_c is not None:
            block = np.tile(np.linspace(low_c, peak, width, dtype=np.float32), (10, 1))
        field[10:20, left : left + width] = block
        boxes.append([[left, 10], [left + width - 1, 19]])
    thermogram = make_thermogram(
        survey, field, emissivity=1.0, created_by=survey.thermographer.user
    )
    marks = [
        mark_add(thermogram=thermogram, kind="rectangle", points=box, user=None) for box in boxes
    ]
    return thermogram, marks


def compare(mark: Mark, reference: Mark, **fields) -> Mark:
    return mark_update(
        mark=mark,
        user=None,
        reference_kind=Mark.ReferenceKind.MARK,
        reference_mark=reference,
        **fields,
    )


@pytest.fixture
def full_load(org, site, thermographer):
    return equipment_survey(org, site, thermographer, ambient_air_c=24.0, load_pct=100.0)


def test_it_gives_identical_phases_no_rise_and_no_finding(full_load):
    """Three lugs peaking at 40.5 °C (means near 36.5 °C): 0.0 K hottest to hottest, no
    level, no finding; hottest to mean only when chosen, and labelled so."""
    _, (a, b, c) = lugs(full_load, [40.5, 40.5, 40.5], low_c=32.5)
    b = compare(b, a)
    readings = mark_readings(b)
    assert readings["delta_t_c"] == 0.0
    assert readings["delta_t_method"] == "hottest_to_hottest"
    assert readings["delta_t_text"] == "rise over mark A, hottest to hottest"
    assert readings["suggested_level"] is None
    suggestion = finding_suggest(survey=full_load, basis="similar", marks=[b])
    assert suggestion["values"]["rise_c"] == 0.0
    assert suggestion["level"] is None
    assert "Rise over mark A, hottest to hottest: 0.0 K measured." in suggestion["reasons"][0]
    with pytest.raises(ValidationError, match="no level was suggested"):
        finding_create(
            survey=full_load,
            user=full_load.thermographer.user,
            category="connection",
            suggestion=suggestion,
            marks=[b],
        )
    assert not Finding.objects.exists()
    # Hottest to mean, chosen: 40.5 − the mean of A's ramp (36.5 °C by construction).
    mean_a = mark_readings(a)["corrected"]["mean"]
    chosen = finding_suggest(
        survey=full_load, basis="similar", marks=[c], reference=a, rise_method="hottest_to_mean"
    )
    assert chosen["values"]["rise_c"] == pytest.approx(40.5 - mean_a, abs=0.05)
    assert chosen["values"]["rise_method"] == "hottest_to_mean"
    assert chosen["level"] == 3  # about 4 K: (3, 15] [memory, NETA MTS]
    assert "hottest to mean" in chosen["reasons"][0]


def test_it_takes_the_marks_own_method_when_set(full_load):
    """A mark set to hottest to mean shows that method with its rise."""
    _, (a, b) = lugs(full_load, [40.5, 40.5], low_c=32.5)
    b = compare(b, a, rise_method=Mark.RiseMethod.HOTTEST_TO_MEAN)
    readings = mark_readings(b)
    assert readings["delta_t_method"] == "hottest_to_mean"
    assert readings["delta_t_text"] == "rise over mark A, hottest to mean"
    assert readings["delta_t_c"] > 3.0


ONE_DECIMAL_SIMILAR = [
    ("4.4", "1.4"),  # 3.0000000000000004 in floats
    ("1.4", "0.4"),  # 0.9999999999999999 in floats
    ("32.2", "29.2"),  # 3.0000000000000036 in floats
    ("3.5", "0.4"),
    ("1.3", "0.4"),
    ("18.1", "3.1"),
    ("18.2", "3.1"),
    ("40.5", "40.5"),
]


@pytest.mark.parametrize(("hot", "reference"), ONE_DECIMAL_SIMILAR)
def test_it_reads_every_similar_band_limit_at_the_printed_rise(full_load, hot, reference):
    """Differences of one-decimal readings land in the band of the number printed."""
    exact = Decimal(hot) - Decimal(reference)  # exact decimal subtraction
    level = expected_level(exact, SIMILAR_BANDS, 1)
    _, (a, b) = lugs(full_load, [float(reference), float(hot)])
    b = compare(b, a)
    readings = mark_readings(b)
    assert readings["delta_t_c"] == float(exact)
    assert readings["suggested_level"] == level
    suggestion = finding_suggest(survey=full_load, basis="similar", marks=[b])
    assert suggestion["values"]["rise_c"] == float(exact)
    assert suggestion["level"] == level
    assert f"{float(exact):.1f} K measured" in suggestion["reasons"][0]


ONE_DECIMAL_AMBIENT = ["24.9", "25.0", "34.0", "34.1", "44.0", "44.1", "64.0", "64.1"]


@pytest.mark.parametrize("hot", ONE_DECIMAL_AMBIENT)
def test_it_reads_every_ambient_band_limit_at_the_printed_rise(full_load, hot):
    """Over the recorded 24.0 °C air: the band of the one-decimal difference."""
    exact = Decimal(hot) - Decimal("24.0")
    level = expected_level(exact, AMBIENT_BANDS, 1)
    _, (spot,) = lugs(full_load, [float(hot)])
    spot = mark_update(mark=spot, user=None, reference_kind=Mark.ReferenceKind.AMBIENT)
    readings = mark_readings(spot)
    assert readings["delta_t_c"] == float(exact)
    assert readings["delta_t_method"] == "hottest_to_air"
    assert readings["suggested_level"] == level
    assert finding_suggest(survey=full_load, basis="ambient", marks=[spot])["level"] == level


def test_it_stores_and_prints_the_load_exponent(org, site, thermographer):
    """n = 1.5 at 65 % load: measured 5.0 K, full load 5·(100/65)^1.5 = 9.54 → 9.5 K
    (computed by hand, docs/references.md § Electrical and mechanical ranking); both at
    0.1 K, the measured one first."""
    survey = equipment_survey(org, site, thermographer, ambient_air_c=24.0, load_pct=65.0)
    _, (a, b) = lugs(survey, [25.0, 30.0])
    b = compare(b, a)
    suggestion = finding_suggest(survey=survey, basis="similar", marks=[b], load_exponent=1.5)
    finding = finding_create(
        survey=survey,
        user=thermographer.user,
        category="connection",
        suggestion=suggestion,
        marks=[b],
    )
    finding.refresh_from_db()
    assert (finding.rise_c, finding.corrected_rise_c, finding.load_exponent) == (5.0, 9.5, 1.5)
    assert finding.rise_method == "hottest_to_hottest"
    assert finding.reference_mark == a
    text = " ".join(suggestion["reasons"])
    assert "full load is 9.5 K beside the 5.0 K measured" in text and "n = 1.5" in text
    # The mark itself, without a finding, is corrected with n = 2: 5·(100/65)² = 11.8 K.
    readings = mark_readings(b)
    assert readings["full_load_delta_t_c"] == 11.8 and readings["load_exponent"] == 2.0


def test_it_names_a_mark_wherever_its_letter_is(full_load):
    """A mark called L1 reads "A (L1)" in the rise and in the finding's reasons."""
    _, (a, b) = lugs(full_load, [25.0, 30.0])
    a = mark_update(mark=a, user=None, name="L1")
    b = mark_update(mark=b, user=None, name="L2")
    b = compare(b, a)
    assert mark_readings(b)["delta_t_text"] == "rise over mark A (L1), hottest to hottest"
    suggestion = finding_suggest(survey=full_load, basis="similar", marks=[b])
    assert suggestion["reasons"][0].startswith("Hottest corrected temperature of mark B (L2)")
