"""Two people marking the same thermogram: a stale write is refused with 409 instead of
silently overwriting, and a change racing a deletion answers 404, not 500."""

import threading
import time

import pytest
from django.db import connection, transaction
from django.test import Client
from django.urls import reverse

from survey.models import Mark, Thermogram
from survey.services.marks import mark_add
from tests.factories import make_thermogram


@pytest.fixture
def mark(envelope_survey):
    thermogram = make_thermogram(envelope_survey)
    return mark_add(thermogram=thermogram, kind="point", points=[[20, 20]], user=None)


def _patch(client, mark_pk: int, body: dict):
    return client.patch(
        reverse("survey:api-mark", args=[mark_pk]), body, content_type="application/json"
    )


def test_it_refuses_a_change_made_to_a_version_someone_else_changed(
    thermographer_client, reviewer, mark
):
    """Both read version 1; the first write wins, the second is told (409) and not applied."""
    other = Client()
    other.force_login(reviewer.user)
    read = thermographer_client.get(reverse("survey:api-mark", args=[mark.pk])).json()
    assert read["version"] == 1
    first = _patch(other, mark.pk, {"note": "Seen by Rita", "version": 1})
    assert first.status_code == 200 and first.json()["version"] == 2
    second = _patch(thermographer_client, mark.pk, {"note": "Theo's note", "version": 1})
    assert second.status_code == 409
    assert "changed by someone else" in second.json()["error"]
    mark.refresh_from_db()
    assert (mark.note, mark.version) == ("Seen by Rita", 2)
    # Without a version the write goes through (scripts that do not track versions).
    assert _patch(thermographer_client, mark.pk, {"note": "Theo's note"}).json()["version"] == 3


def test_it_answers_404_to_a_change_of_a_deleted_mark(thermographer_client, mark):
    Mark.objects.filter(pk=mark.pk).delete()
    response = _patch(thermographer_client, mark.pk, {"note": "too late"})
    assert response.status_code == 404


@pytest.mark.services
def test_it_answers_404_when_a_delete_wins_the_race_against_a_change(
    postgres_url, transactional_db, thermographer, mark
):
    """The change has found the mark and waits for the thermogram's lock while the deletion
    holds it; once the deletion commits, the change answers 404 (it once answered 500)."""
    client = Client()
    client.force_login(thermographer.user)
    client.raise_request_exception = False
    answers = []
    with transaction.atomic():
        Thermogram.objects.select_for_update().get(pk=mark.thermogram_id)
        thread = threading.Thread(
            target=lambda: (
                answers.append(_patch(client, mark.pk, {"note": "x"})),
                connection.close(),
            )
        )
        thread.start()
        deadline = time.monotonic() + 20
        while not _someone_waits_for_a_lock():
            assert time.monotonic() < deadline, "the change never reached the lock"
            time.sleep(0.05)
        Mark.objects.filter(pk=mark.pk).delete()
    thread.join(timeout=30)
    assert [answer.status_code for answer in answers] == [404]


def _someone_waits_for_a_lock() -> bool:
    """A session of this database waits for a lock (pg_locks is live; pg_stat_activity would
    be a snapshot taken once per transaction)."""
    with connection.cursor() as cursor:
        cursor.execute("SELECT count(*) FROM pg_locks WHERE NOT granted")
        return cursor.fetchone()[0] > 0
