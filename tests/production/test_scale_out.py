"""Scale-out: two workers on separate disks and one web process share the database, the
broker and the bucket; each thermogram and each report is processed exactly once.

"Exactly once" is read from the bucket's own versioning: a second processing of a
thermogram would add a version to its derived files, a second render of a report would
leave a second PDF or a delete marker. "Both workers" from each worker's own log.
"""

import datetime
import re

import numpy as np
import pytest

from reports.models import Report, ReportVersion
from survey.models import Survey, Thermogram
from tests.conftest import PASSWORD
from tests.objectstore import bucket_versions, local_files, make_bucket, s3_environment
from tests.processes import Browser, production_stack, wait_until
from tests.production.test_object_storage import TEST_REDIS_DB, npy_bytes, usable_password
from tests.workers import fresh_broker

THERMOGRAMS = 100
REPORTS = 5


def _succeeded(log: str, task: str) -> list[str]:
    """Return values of the `task` runs this worker finished."""
    return re.findall(rf"{re.escape(task)}\[[0-9a-f-]+\] succeeded in [0-9.]+s: ([^\"\n]+)", log)


@pytest.mark.services
@pytest.mark.slow
def test_it_processes_each_thermogram_and_report_once_on_two_workers(
    redis_url,
    postgres_url,
    transactional_db,
    s3_endpoint,
    collected_static,
    tmp_path,
    owner,
    envelope_survey,
):
    """100 uploads and 5 report renders on 2 workers: all done, once each, by both."""
    bucket = make_bucket(s3_endpoint, versioned=True)
    broker = fresh_broker(redis_url, TEST_REDIS_DB)
    usable_password(owner)
    # The batch goes to one survey; five small surveys of one thermogram each get a report
    # (one report per survey), so the renders are many and short.
    surveys = [
        Survey.objects.create(
            organization=envelope_survey.organization,
            site=envelope_survey.site,
            kind=Survey.Kind.ENVELOPE,
            date=datetime.date(2026, 1, 15 + day),
        )
        for day in range(REPORTS)
    ]
    # Small distinct synthetic images: the work measured is the coordination, not decoding.
    rng = np.random.default_rng(16)
    files = [
        ("files", (f"IR_{i:04d}.npy", npy_bytes(15 + rng.random((24, 32)) * 10), "x/npy"))
        for i in range(1, THERMOGRAMS + 1)
    ]
    with production_stack(
        tmp_path,
        postgres_url=postgres_url,
        broker=broker,
        static_root=collected_static,
        storage=s3_environment(s3_endpoint, bucket),
        workers=2,
    ) as stack:
        browser = Browser(stack.web.url)
        browser.sign_in(owner.user.username, PASSWORD)
        batch = files[: THERMOGRAMS - REPORTS]
        upload = browser.post(
            f"/surveys/{envelope_survey.pk}/upload/", {"source_unit": "C"}, files=batch
        )
        assert upload.status_code == 302
        for survey, file in zip(surveys, files[THERMOGRAMS - REPORTS :], strict=True):
            upload = browser.post(
                f"/surveys/{survey.pk}/upload/", {"source_unit": "C"}, files=[file]
            )
            assert upload.status_code == 302
            assert browser.post(f"/reports/survey/{survey.pk}/create/").status_code == 302
        reports = Report.objects.filter(survey__in=surveys)
        assert reports.count() == REPORTS
        thermograms = Thermogram.objects.filter(survey__in=[envelope_survey, *surveys])
        wait_until(
            lambda: thermograms.filter(status="ready").count() == THERMOGRAMS,
            timeout=240,
            message=stack.logs(),
        )
        for report in reports:
            assert browser.post(f"/reports/{report.pk}/draft/").status_code == 302
        versions = ReportVersion.objects.filter(report__in=reports)
        wait_until(
            lambda: versions.filter(status=ReportVersion.Status.READY).count() == REPORTS,
            timeout=240,
            message=stack.logs(),
        )
        assert versions.count() == REPORTS
        logs = [path.read_text(errors="replace") for path in stack.worker_logs]
        assert [local_files(folder) for folder in [stack.web_media, *stack.worker_media]] == [
            [],
            [],
            [],
        ]

    processed = [_succeeded(log, "survey.tasks.process_thermogram") for log in logs]
    rendered = [_succeeded(log, "reports.tasks.render_report") for log in logs]
    assert sum(len(runs) for runs in processed) == THERMOGRAMS, stack.logs()
    assert all(run == "'ready'" for runs in processed for run in runs)
    assert sum(len(runs) for runs in rendered) == REPORTS
    assert all(run == "True" for runs in rendered for run in runs)
    assert all(processed), "one worker took no thermogram"
    counts, deleted = bucket_versions(s3_endpoint, bucket)
    derived = {key: n for key, n in counts.items() if key.startswith("derived/")}
    pdfs = {key: n for key, n in counts.items() if key.startswith("reports/")}
    assert len(derived) == 3 * THERMOGRAMS and set(derived.values()) == {1}
    assert len(pdfs) == REPORTS and set(pdfs.values()) == {1}
    assert deleted == []
    assert sorted(versions.values_list("pdf", flat=True)) == sorted(pdfs)
