"""Management commands: demo data, command-line import."""

import io

import numpy as np
import pytest
from django.core.management import call_command

from survey.models import Finding, Mark, Organization, Survey, Thermogram


def test_it_loads_the_demo_data_twice_without_duplicates(db):
    """Running demo_data again adds nothing; the thermograms are decoded and marked."""
    call_command("demo_data", stdout=io.StringIO())
    counts = (Survey.objects.count(), Thermogram.objects.count(), Mark.objects.count())
    call_command("demo_data", stdout=io.StringIO())
    assert (Survey.objects.count(), Thermogram.objects.count(), Mark.objects.count()) == counts
    assert Organization.objects.get().name == "Lumen Brook Thermal Services"
    assert set(Thermogram.objects.values_list("status", flat=True)) == {"ready"}
    assert counts[1] >= 5 and counts[2] >= 10
    assert Finding.objects.filter(survey__kind="electrical").exists()
    lugs = Thermogram.objects.get(original_name="MDP-1-incomer-lugs.npy")
    # The demo field puts phase B's lug far above phases A and C (invented, see demo_data).
    assert lugs.max_c > 55


def test_it_imports_a_folder_with_a_manifest(envelope_survey, tmp_path):
    """Files of a folder are imported; the manifest sets emissivity; a bad file is reported."""
    np.save(tmp_path / "one.npy", np.full((3, 3), 19.5, dtype=np.float32))
    (tmp_path / "two.csv").write_text("20;21\n22;23\n")
    (tmp_path / "bad.txt").write_bytes(b"\x00\x01")
    manifest = tmp_path / "manifest.csv"
    manifest.write_text(
        "file,emissivity,reflected_c,distance_m,asset,note\none.npy,0.9,18,2.5,,Gable end\n"
    )
    out = io.StringIO()
    call_command(
        "import_thermograms", envelope_survey.pk, str(tmp_path), manifest=str(manifest), stdout=out
    )
    assert "2 stored, 1 rejected." in out.getvalue()
    one = envelope_survey.thermograms.get(original_name="one.npy")
    assert (one.emissivity, one.reflected_c, one.distance_m, one.note) == (
        0.9,
        18.0,
        2.5,
        "Gable end",
    )


@pytest.mark.parametrize("survey_id", [999999])
def test_it_refuses_an_unknown_survey(db, survey_id, tmp_path):
    """An unknown survey id is a clear error."""
    from django.core.management.base import CommandError

    with pytest.raises(CommandError, match="No survey"):
        call_command("import_thermograms", survey_id, str(tmp_path))
