"""The organization's letterhead and level times, members' qualification records and
signatures (the issue page's warning: tests/reports/views/test_issue_qualification.py)."""

import datetime
import io

import pytest
from django.core.files.uploadedfile import SimpleUploadedFile
from django.urls import reverse
from PIL import Image

from survey.models import LEVEL_TIME_DEFAULTS, AuditEvent
from survey.services.letterhead import PICTURE_MAX_BYTES, STORED_MAX_SIDE_PX

LETTERHEAD = {
    "name": "Coldspot Thermal Surveys",
    "address": "4 Invented Lane\nSampletown",
    "phone": "+00 123 4567",
    "email": "office@coldspot.invalid",
    "website": "coldspot.invalid",
    "reinspection_interval_months": "12",
    "level_1_time": "Isolate and repair within 24 hours.",
    "level_2_time": "",
    "level_3_time": "Within three months.",
    "level_4_time": "At the next inspection.",
}


def picture(fmt="PNG", size=(200, 80), name="logo.png") -> SimpleUploadedFile:
    buffer = io.BytesIO()
    Image.new("RGB", size, (11, 79, 117)).save(buffer, fmt)
    return SimpleUploadedFile(name, buffer.getvalue(), content_type=f"image/{fmt.lower()}")


def test_it_saves_the_letterhead_and_a_logo_stored_again_as_png(owner_client, org):
    response = owner_client.post(
        reverse("survey:organization_letterhead"),
        LETTERHEAD | {"logo": picture("JPEG", (2400, 900), "logo.jpg")},
    )
    assert response.status_code == 302
    org.refresh_from_db()
    assert org.name == "Coldspot Thermal Surveys"
    assert org.contact_line == "+00 123 4567 · office@coldspot.invalid · coldspot.invalid"
    assert org.level_1_time == "Isolate and repair within 24 hours."
    # An emptied box goes back to the default wording.
    assert org.level_2_time == LEVEL_TIME_DEFAULTS[2]
    with org.logo.open("rb") as handle:
        stored = Image.open(io.BytesIO(handle.read()))
    assert stored.format == "PNG"
    assert max(stored.size) == STORED_MAX_SIDE_PX
    assert AuditEvent.objects.filter(action="organization_letterhead").exists()
    page = owner_client.get(reverse("survey:organization")).content.decode()
    assert "A logo is on file" in page


@pytest.mark.parametrize(
    ("upload", "message"),
    [
        (SimpleUploadedFile("logo.png", b"not a picture at all"), "could not be read"),
        (picture("GIF", name="logo.gif"), "must be a PNG or JPEG"),
        (SimpleUploadedFile("logo.png", b"\x89PNG" + b"0" * PICTURE_MAX_BYTES), "the limit is"),
        (SimpleUploadedFile("logo.png", b""), "empty"),
    ],
)
def test_it_refuses_a_bad_logo_with_a_message_and_saves_nothing(owner_client, org, upload, message):
    response = owner_client.post(
        reverse("survey:organization_letterhead"), LETTERHEAD | {"logo": upload}
    )
    assert response.status_code == 200
    assert message in response.content.decode()
    org.refresh_from_db()
    assert org.name != "Coldspot Thermal Surveys" and not org.logo


def test_it_refuses_a_picture_of_too_many_pixels(owner_client, org):
    # A 1-bit PNG of 5000 × 4000 pixels is small as a file but 20 megapixels decoded.
    buffer = io.BytesIO()
    Image.new("1", (5000, 4000)).save(buffer, "PNG")
    upload = SimpleUploadedFile("huge.png", buffer.getvalue())
    response = owner_client.post(
        reverse("survey:organization_letterhead"), LETTERHEAD | {"logo": upload}
    )
    assert "5000 × 4000 pixels" in response.content.decode()
    org.refresh_from_db()
    assert not org.logo


def test_only_admins_change_the_letterhead(thermographer_client, org):
    response = thermographer_client.post(reverse("survey:organization_letterhead"), LETTERHEAD)
    assert response.status_code == 403
    org.refresh_from_db()
    assert org.name != "Coldspot Thermal Surveys"


def test_it_changes_only_the_outsiders_own_organization(outsider_client, outsider, org):
    outsider_client.post(reverse("survey:organization_letterhead"), LETTERHEAD)
    org.refresh_from_db()
    assert org.name != "Coldspot Thermal Surveys"


def test_it_records_a_qualification_and_a_signature(owner_client, thermographer):
    response = owner_client.post(
        reverse("survey:member_edit", args=[thermographer.pk]),
        {
            "action": "qualification",
            "qualification_scheme": "Invented Thermography Board",
            "qualification_level": "2",
            "certificate_number": "ITB-2231",
            "qualification_expires": "2027-03-31",
            "signature": picture(size=(300, 90), name="signature.png"),
        },
    )
    assert response.status_code == 302
    thermographer.refresh_from_db()
    assert thermographer.qualification_text == (
        "Invented Thermography Board, level 2, certificate ITB-2231"
    )
    assert thermographer.qualification_expires == datetime.date(2027, 3, 31)
    assert thermographer.signature
    page = owner_client.get(reverse("survey:member_edit", args=[thermographer.pk]))
    assert "A signature picture is on file" in page.content.decode()


def test_it_refuses_a_bad_expiry_date_and_keeps_the_record(owner_client, thermographer):
    response = owner_client.post(
        reverse("survey:member_edit", args=[thermographer.pk]),
        {"action": "qualification", "qualification_scheme": "X", "qualification_expires": "31/3"},
    )
    assert response.status_code == 200
    assert "Enter the date as year-month-day" in response.content.decode()
    thermographer.refresh_from_db()
    assert thermographer.qualification_scheme == ""


def test_it_answers_404_to_an_outsider_editing_a_qualification(outsider_client, thermographer):
    response = outsider_client.post(
        reverse("survey:member_edit", args=[thermographer.pk]),
        {"action": "qualification", "qualification_scheme": "X"},
    )
    assert response.status_code == 404
    thermographer.refresh_from_db()
    assert thermographer.qualification_scheme == ""


def test_a_new_logo_replaces_the_old_file_and_remove_drops_it(
    owner_client, org, django_capture_on_commit_callbacks
):
    url = reverse("survey:organization_letterhead")
    with django_capture_on_commit_callbacks(execute=True):
        owner_client.post(url, LETTERHEAD | {"logo": picture(size=(200, 80))})
    org.refresh_from_db()
    first = org.logo.name
    storage = org.logo.storage
    with django_capture_on_commit_callbacks(execute=True):
        owner_client.post(url, LETTERHEAD | {"logo": picture(size=(300, 90))})
    org.refresh_from_db()
    assert org.logo.name != first and storage.exists(org.logo.name)
    assert not storage.exists(first)
    second = org.logo.name
    with django_capture_on_commit_callbacks(execute=True):
        owner_client.post(url, LETTERHEAD | {"remove_logo": "on"})
    org.refresh_from_db()
    assert not org.logo and not storage.exists(second)
