"""Every route that takes an object id, asked by everyone who might ask.

The routes come from the URL configuration itself: a route added without an entry in
MATRIX below fails `test_it_has_an_entry_for_every_route_with_an_object_id`. Each entry
says how to build an object of the owning organization, which method to use, and the answer
each role of that organization gets. Anonymous visitors are sent to sign in (401 for the
JSON API); a member of another organization gets 404 with none of the object's data.
"""

import datetime
import hashlib
import io
import json
import secrets
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np
import pytest
from django.core.files.base import ContentFile
from django.test import Client as HttpClient
from django.urls import URLPattern, URLResolver, get_resolver, reverse
from django.utils import timezone
from PIL import Image

from reports.models import Report, ReportVersion, ShareLink
from survey.models import (
    Asset,
    AuditEvent,
    ConditionLog,
    Finding,
    Instrument,
    MarkTemplate,
    Proposal,
    RoundStop,
    Survey,
    Thermogram,
)
from survey.services.criteria_tables import criteria_table_copy_defaults
from survey.services.mark_templates import mark_template_create
from survey.services.marks import mark_add
from survey.services.processing import thermogram_process
from tests.factories import make_thermogram, synthetic_field

# Strings that exist only in the owning organization's rows; none may reach an outsider.
SECRET_TITLE = "Quillfeather attic survey"
SECRET_FILE = "IR_quillfeather_0001.npy"
SECRET_ASSET = "Quillfeather switchboard QF-9"
SECRET_REPORT = "R2026-QF9"
SECRET_LOCATION = "Behind the quillfeather panel"
SECRETS = [SECRET_TITLE, SECRET_FILE, SECRET_ASSET, SECRET_REPORT, SECRET_LOCATION, "Harbour Lane"]

# Routes that take no object id, or are public by design (reached with a share token).
NOT_OBJECT_ROUTES = {"reports:share", "reports:share_download", "reports:share_acknowledge"}

ROLES = ("viewer", "thermographer", "reviewer", "admin")
PDF_BYTES = b"%PDF-1.4\n% an invented stand-in for an issued report\n%%EOF\n"


def _png() -> bytes:
    buffer = io.BytesIO()
    Image.new("RGB", (8, 6), (200, 40, 40)).save(buffer, format="PNG")
    return buffer.getvalue()


@dataclass
class World:
    """One organization's rows, built once per test; fresh ones made on demand."""

    survey: Survey
    thermogram: Thermogram
    mark_id: int
    finding: Finding
    asset: Asset
    criteria_table_id: int
    report: Report
    version: ReportVersion
    made: list = field(default_factory=list)

    def fresh_thermogram(self) -> int:
        return make_thermogram(self.survey, np.full((4, 4), 20.0)).pk

    def deleted_survey(self) -> int:
        return Survey.objects.create(
            organization=self.survey.organization,
            site=self.survey.site,
            kind=Survey.Kind.ROOF,
            date=datetime.date(2026, 2, 2),
            status=Survey.Status.DELETED,
            deleted_at=timezone.now(),
        ).pk

    def bare_survey(self) -> int:
        return Survey.objects.create(
            organization=self.survey.organization,
            site=self.survey.site,
            kind=Survey.Kind.ROOF,
            date=datetime.date(2026, 2, 3),
        ).pk

    def roof_survey(self) -> int:
        """A roof survey of this organization with a plan uploaded."""
        survey = Survey.objects.create(
            organization=self.survey.organization,
            site=self.survey.site,
            kind=Survey.Kind.ROOF,
            date=datetime.date(2026, 2, 4),
            roof_plan_name="quillfeather-plan.png",
            roof_plan_width=8,
            roof_plan_height=6,
        )
        survey.roof_plan.save("quillfeather-plan.png", ContentFile(_png()), save=True)
        return survey.pk

    def instrument(self) -> int:
        return Instrument.objects.create(
            organization=self.survey.organization,
            model_name="Quillfeather LW-640",
            detector_width_px=640,
            detector_height_px=480,
            lens_hfov_deg=24.0,
        ).pk

    def fresh_proposal(self) -> int:
        return Proposal.objects.create(
            thermogram=self.thermogram,
            category=Proposal.Category.HOT_SPOT,
            kind="point",
            points=[[40, 40]],
            reason="4.0 K above its surroundings",
            stats={"surroundings_rise_k": 4.0},
        ).pk

    def fresh_log(self) -> int:
        moment = timezone.now()
        ConditionLog.objects.filter(survey=self.survey).delete()  # one log per role
        return ConditionLog.objects.create(
            organization=self.survey.organization,
            survey=self.survey,
            role=ConditionLog.Role.OUTSIDE,
            original_name="outside.csv",
            original_sha256="0" * 64,
            times_s=[0.0, 600.0],
            temperature_c=[1.0, 2.0],
            started_at=moment,
            ended_at=moment,
        ).pk

    def fresh_template(self) -> int:
        name = f"Quillfeather breaker {MarkTemplate.objects.count() + 1}"
        return mark_template_create(thermogram=self.thermogram, name=name, user=None).pk

    def template(self) -> int:
        if not hasattr(self, "_template"):
            self._template = self.fresh_template()
        return self._template

    def fresh_report(self) -> int:
        """A report of another survey: issuing it leaves this world's thermogram open."""
        survey = Survey.objects.get(pk=self.bare_survey())
        return Report.objects.create(
            organization=survey.organization, survey=survey, number=f"R2026-F{survey.pk}"
        ).pk

    def share_link(self) -> int:
        link_id = self.live_link()
        self.made.append(link_id)
        return link_id

    def live_link(self) -> int:
        return ShareLink.objects.create(
            version=self.version,
            token=secrets.token_urlsafe(32),
            expires_at=timezone.now() + datetime.timedelta(days=30),
        ).pk

    def round_stop(self) -> int:
        asset = Asset.objects.create(
            organization=self.survey.organization, site=self.survey.site, name="Round stop"
        )
        return RoundStop.objects.create(survey=self.survey, asset=asset, position=1).pk

    def deleted_asset(self) -> int:
        return Asset.all_objects.create(
            organization=self.survey.organization,
            site=self.survey.site,
            name="Deleted by mistake",
            deleted_at=timezone.now(),
        ).pk


@pytest.fixture
def world(envelope_survey, owner) -> World:
    survey = envelope_survey
    survey.title = SECRET_TITLE
    survey.save()
    # The report is issued before the thermogram is uploaded: it does not show it, so the
    # thermogram stays open to marking (one it shows is locked; tests/survey/test_register).
    table = criteria_table_copy_defaults(organization=survey.organization, user=owner.user)[0]
    report = Report.objects.create(
        organization=survey.organization, survey=survey, number=SECRET_REPORT
    )
    version = ReportVersion(
        report=report,
        version=1,
        is_draft=False,
        status=ReportVersion.Status.ISSUED,
        sha256=hashlib.sha256(PDF_BYTES).hexdigest(),
        issued_at=timezone.now(),
    )
    version.pdf.save("quillfeather-v1.pdf", ContentFile(PDF_BYTES), save=False)
    version.save()
    asset = Asset.objects.create(
        organization=survey.organization, site=survey.site, name=SECRET_ASSET
    )
    thermogram = make_thermogram(survey, synthetic_field(), original_name=SECRET_FILE, asset=asset)
    thermogram.photo.save("IR_quillfeather_0001.png", ContentFile(_png()), save=False)
    thermogram.status = Thermogram.Status.QUEUED
    thermogram.save()
    assert thermogram_process(thermogram.pk) == Thermogram.Status.READY
    thermogram.refresh_from_db()
    mark = mark_add(thermogram=thermogram, kind="rectangle", points=[[10, 10], [30, 30]], user=None)
    finding = Finding.objects.create(
        organization=survey.organization,
        survey=survey,
        thermogram=thermogram,
        asset=asset,
        category="missing_insulation",
        location=SECRET_LOCATION,
        level=3,
    )
    finding.marks.set([mark])
    return World(survey, thermogram, mark.pk, finding, asset, table.pk, report, version)


@dataclass(frozen=True)
class Entry:
    method: str
    build: Callable[[World], dict]
    allowed: dict
    data: dict | None = None
    json_body: dict | None = None
    # For file downloads: the content type served (never text/html).
    media_type: str | None = None


def everyone(status: int) -> dict:
    return {role: status for role in ROLES}


def editors(status: int) -> dict:
    """Every role but the read-only viewer."""
    return {"viewer": 403, "thermographer": status, "reviewer": status, "admin": status}


def reviewers(status: int) -> dict:
    return {"viewer": 403, "thermographer": 403, "reviewer": status, "admin": status}


def admins(status: int) -> dict:
    return {"viewer": 403, "thermographer": 403, "reviewer": 403, "admin": status}


def survey(w):
    return {"pk": w.survey.pk}


def thermogram(w):
    return {"pk": w.thermogram.pk}


def finding(w):
    return {"pk": w.finding.pk}


def client(w):
    return {"pk": w.survey.site.client_id}


def site(w):
    return {"pk": w.survey.site_id}


def asset(w):
    return {"pk": w.asset.pk}


def survey_id(w):
    return {"survey_id": w.survey.pk}


def report_id(w):
    return {"report_id": w.report.pk}


def version_id(w):
    return {"version_id": w.version.pk}


MATRIX: dict[str, Entry] = {
    # pages (web-core)
    "survey:survey": Entry("get", survey, everyone(200)),
    "survey:survey_edit": Entry("get", survey, editors(200)),
    "survey:survey_upload": Entry("post", survey, editors(302)),
    "survey:survey_status": Entry("get", survey, everyone(200)),
    "survey:survey_delete": Entry("get", survey, reviewers(200)),
    "survey:survey_restore": Entry("post", lambda w: {"pk": w.deleted_survey()}, reviewers(302)),
    "survey:thermogram_settings": Entry("get", thermogram, editors(200)),
    "survey:thermogram_reprocess": Entry(
        "post", lambda w: {"pk": w.fresh_thermogram()}, editors(302), data={"source_unit": "C"}
    ),
    "survey:thermogram_original": Entry(
        "get", thermogram, everyone(200), media_type="application/octet-stream"
    ),
    "survey:thermogram_preview": Entry("get", thermogram, everyone(200), media_type="image/png"),
    "survey:thermogram_thumbnail": Entry("get", thermogram, everyone(200), media_type="image/png"),
    "survey:thermogram_photo": Entry("get", thermogram, everyone(200), media_type="image/png"),
    "survey:roof_plan": Entry("get", lambda w: {"pk": w.roof_survey()}, everyone(200)),
    "survey:roof_plan_image": Entry(
        "get", lambda w: {"pk": w.roof_survey()}, everyone(200), media_type="image/png"
    ),
    "survey:thermogram_plan_position": Entry("post", thermogram, editors(302)),
    "survey:moisture_check_create": Entry("post", finding, editors(302)),
    "survey:thermogram_marks_picture": Entry(
        "get", thermogram, everyone(200), media_type="image/png"
    ),
    "survey:thermogram_array": Entry(
        "get", thermogram, everyone(200), media_type="application/octet-stream"
    ),
    "survey:member_edit": Entry("get", lambda w: {"pk": w.survey.thermographer_id}, admins(200)),
    # workspace and JSON API (workspace)
    "survey:thermogram": Entry("get", thermogram, everyone(200)),
    "survey:api-thermogram": Entry("get", thermogram, everyone(200)),
    "survey:api-thermogram-temperatures": Entry("get", thermogram, everyone(200)),
    "survey:api-marks": Entry(
        "post", thermogram, editors(201), json_body={"kind": "point", "points": [[5, 5]]}
    ),
    "survey:api-thermogram-overlays": Entry("get", thermogram, everyone(200)),
    "survey:api-thermogram-alignment": Entry("get", thermogram, everyone(200)),
    "survey:api-thermogram-neighbours": Entry("get", thermogram, everyone(200)),
    "survey:api-mark": Entry(
        "patch", lambda w: {"pk": w.mark_id}, editors(200), json_body={"note": "Checked."}
    ),
    # findings, assets, criteria (judgement)
    "survey:finding_create": Entry("get", thermogram, editors(200)),
    "survey:finding": Entry("get", finding, everyone(200)),
    "survey:finding_edit": Entry("get", finding, editors(200)),
    "survey:finding_status": Entry("post", finding, editors(302), data={"status": "open"}),
    "survey:finding_verify": Entry("post", finding, editors(302)),
    "survey:finding_verify_override": Entry(
        "post", finding, editors(302), data={"reason": "Replaced, work order 9."}
    ),
    "survey:finding_rejudge": Entry("post", finding, editors(302)),
    "survey:instrument_edit": Entry("get", lambda w: {"pk": w.instrument()}, editors(200)),
    "survey:instrument_delete": Entry("get", lambda w: {"pk": w.instrument()}, editors(200)),
    "survey:survey_findings": Entry("get", survey, everyone(200)),
    "survey:heat_loss_create": Entry("get", survey, editors(200)),
    "survey:site_findings": Entry("get", lambda w: {"pk": w.survey.site_id}, everyone(200)),
    "survey:asset": Entry("get", lambda w: {"pk": w.asset.pk}, everyone(200)),
    "survey:asset_trend": Entry("get", lambda w: {"pk": w.asset.pk}, everyone(200)),
    "survey:criteria_edit": Entry("get", lambda w: {"pk": w.criteria_table_id}, admins(200)),
    "survey:criteria_review": Entry(
        "post", lambda w: {"pk": w.criteria_table_id}, reviewers(302), data={}
    ),
    # reports
    "reports:survey": Entry("get", survey_id, everyone(200)),
    "reports:create": Entry("post", lambda w: {"survey_id": w.bare_survey()}, editors(302)),
    "reports:findings_csv": Entry("get", survey_id, everyone(200)),
    "reports:results_json": Entry("get", survey_id, everyone(200)),
    "reports:draft": Entry("post", report_id, editors(302)),
    "reports:issue": Entry(
        "post",
        lambda w: {"report_id": w.fresh_report()},
        reviewers(302),
        data={"change_note": "Typo.", "confirm": "on"},
    ),
    "reports:progress": Entry("get", version_id, everyone(200)),
    "reports:download": Entry("get", version_id, everyone(200), media_type="application/pdf"),
    "reports:retry": Entry("post", version_id, editors(302)),
    "reports:share_create": Entry("post", version_id, reviewers(302), data={"days": "30"}),
    # proposals, logged conditions, mark templates (issue 18)
    "survey:api-thermogram-proposals": Entry("post", thermogram, editors(200)),
    "survey:api-proposal-accept": Entry("post", lambda w: {"pk": w.fresh_proposal()}, editors(201)),
    "survey:api-proposal-reject": Entry("post", lambda w: {"pk": w.fresh_proposal()}, editors(204)),
    "survey:survey_proposal_settings": Entry("get", survey, editors(200)),
    "survey:logger_import": Entry("get", survey, editors(200)),
    "survey:logger_chart": Entry("get", survey, everyone(200), media_type="image/svg+xml"),
    "survey:condition_log_delete": Entry("post", lambda w: {"pk": w.fresh_log()}, editors(302)),
    "survey:template_create": Entry("get", thermogram, editors(200)),
    "survey:template_apply": Entry("get", survey, editors(200)),
    "survey:mark_template": Entry("get", lambda w: {"pk": w.template()}, everyone(200)),
    "survey:mark_template_picture": Entry(
        "get", lambda w: {"pk": w.template()}, everyone(200), media_type="image/png"
    ),
    "survey:mark_template_delete": Entry(
        "post", lambda w: {"pk": w.fresh_template()}, editors(302)
    ),
    "survey:template_align": Entry(
        "get", lambda w: {"pk": w.template(), "thermogram_pk": w.thermogram.pk}, editors(200)
    ),
    "reports:share_revoke": Entry(
        "post", lambda w: {"link_id": w.share_link()}, reviewers(302), data={"confirm": "on"}
    ),
    "reports:share_email": Entry("get", lambda w: {"link_id": w.live_link()}, reviewers(200)),
    # clients, sites, asset register, rounds, deletes and restores (register, recovery)
    "survey:client": Entry("get", client, everyone(200)),
    "survey:client_edit": Entry("get", client, editors(200)),
    "survey:client_delete": Entry("get", client, editors(200)),
    "survey:site": Entry("get", site, everyone(200)),
    "survey:site_edit": Entry("get", site, editors(200)),
    "survey:site_delete": Entry("get", site, editors(200)),
    "survey:site_visit": Entry("get", site, editors(200)),
    "survey:asset_create": Entry(
        "post",
        site,
        editors(302),
        data={
            "name": "Panel P-2",
            "kind": "panel",
            "criticality": "medium",
            "inspection_interval_months": "12",
        },
    ),
    "survey:assets_export": Entry("get", site, everyone(200), media_type="text/csv"),
    "survey:assets_import": Entry("get", site, editors(200)),
    "survey:asset_edit": Entry("get", asset, editors(200)),
    "survey:asset_retire": Entry("post", asset, editors(302)),
    "survey:asset_delete": Entry("get", asset, editors(200)),
    "survey:survey_tie_assets": Entry("post", survey, editors(302)),
    "survey:survey_view_defaults": Entry(
        "post", survey, editors(302), data={"palette": "perceptual", "span_rule": "auto"}
    ),
    "survey:round_stop_skip": Entry(
        "post", lambda w: {"pk": w.round_stop()}, editors(302), data={"reason": "Locked."}
    ),
    "survey:thermogram_delete": Entry("get", thermogram, editors(200)),
    "survey:finding_delete": Entry("get", finding, editors(200)),
    "survey:item_restore": Entry(
        "post", lambda w: {"kind": "asset", "pk": w.deleted_asset()}, editors(302)
    ),
}


def _routes(resolver: URLResolver, namespace: str = "", prefix: str = ""):
    """(name, route string, converters) of every named pattern, namespaces included."""
    for pattern in resolver.url_patterns:
        route = prefix + str(pattern.pattern)
        if isinstance(pattern, URLResolver):
            if pattern.namespace == "admin":
                continue
            inner = f"{namespace}{pattern.namespace}:" if pattern.namespace else namespace
            yield from _routes(pattern, inner, route)
        elif isinstance(pattern, URLPattern) and pattern.name:
            yield f"{namespace}{pattern.name}", route, dict(pattern.pattern.converters)


def object_routes() -> dict[str, str]:
    """Every named route whose URL carries an id (an int converter), by name."""
    found = {}
    for name, route, converters in _routes(get_resolver()):
        if name in NOT_OBJECT_ROUTES:
            continue
        if any(type(c).__name__ == "IntConverter" for c in converters.values()):
            found[name] = route
    return found


def test_it_has_an_entry_for_every_route_with_an_object_id():
    """A new route with an id and no matrix entry (or a stale entry) fails here."""
    routes = object_routes()
    assert routes, "no routes found in the URL configuration"
    missing = sorted(set(routes) - set(MATRIX))
    stale = sorted(set(MATRIX) - set(routes))
    assert missing == [], f"add these routes to MATRIX: {missing}"
    assert stale == [], f"these MATRIX entries name no route: {stale}"


def _request(http: HttpClient, entry: Entry, url: str):
    send = getattr(http, entry.method)
    if entry.json_body is not None:
        return send(url, data=json.dumps(entry.json_body), content_type="application/json")
    if entry.method == "get":
        return send(url)
    return send(url, data=entry.data or {})


def _signed_in(member) -> HttpClient:
    http = HttpClient()
    http.force_login(member.user)
    return http


def _check_headers(response, entry: Entry, where: str) -> None:
    assert response.has_header("Content-Security-Policy"), where
    content_type = response.get("Content-Type", "")
    if entry.media_type and response.status_code == 200:
        assert content_type.split(";")[0] == entry.media_type, where
        assert response.get("Content-Disposition", "").startswith(("attachment", "inline")), where
        assert response.get("X-Content-Type-Options") == "nosniff", where


def test_it_answers_each_route_as_the_matrix_says(
    world, owner, reviewer, thermographer, viewer, outsider
):
    """Anonymous -> sign in (401 for /api/), outsider -> bare 404, each role -> its answer."""
    members = {"admin": owner, "reviewer": reviewer, "thermographer": thermographer}
    members["viewer"] = viewer
    clients = {role: _signed_in(member) for role, member in members.items()}
    outsider_http = _signed_in(outsider)
    anonymous = HttpClient()
    login_url = reverse("login")
    checked = 0
    for name, entry in sorted(MATRIX.items()):
        url = reverse(name, kwargs=entry.build(world))
        response = _request(anonymous, entry, url)
        where = f"anonymous {entry.method.upper()} {name}"
        if url.startswith("/api/"):
            assert response.status_code == 401, where
            assert response["Content-Type"] == "application/json", where
        else:
            assert response.status_code == 302, where
            assert response["Location"].startswith(login_url + "?next="), where
        response = _request(outsider_http, entry, reverse(name, kwargs=entry.build(world)))
        where = f"outsider {entry.method.upper()} {name}"
        assert response.status_code == 404, where
        body = response.content.decode(errors="replace")
        leaked = [secret for secret in SECRETS if secret in body]
        assert leaked == [], where
        _check_headers(response, entry, where)
        for role in ROLES:
            url = reverse(name, kwargs=entry.build(world))
            response = _request(clients[role], entry, url)
            where = f"{role} {entry.method.upper()} {name}"
            assert response.status_code == entry.allowed[role], (where, response.content[:300])
            _check_headers(response, entry, where)
            if response.status_code == 302:
                assert not response["Location"].startswith(login_url), where
            checked += 1
    assert checked == len(MATRIX) * len(ROLES)
    # Each role's download of the original and of the PDF is in the audit log; no one else's.
    audit = AuditEvent.objects.filter(organization=world.survey.organization)
    assert audit.filter(action="download", object_id=str(world.thermogram.pk)).count() == 4
    assert audit.filter(action="report.download", object_id=str(world.version.pk)).count() == 4
    # Links offered to anonymous, outsider, viewer and thermographer stay live; reviewers
    # revoked theirs.
    revoked = [ShareLink.objects.get(pk=pk).revoked_at is not None for pk in world.made]
    assert revoked == [False, False, False, False, True, True]


def test_it_sends_anonymous_visitors_of_every_page_to_sign_in(client):
    """Routes without an id too: every page but sign-in and share links asks to sign in."""
    public = {"login", "reports:share", "reports:share_download", "healthz"}
    for name, _route, converters in _routes(get_resolver()):
        if converters or name in public:
            continue
        url = reverse(name)
        response = client.get(url)
        if name == "logout":
            assert response.status_code == 405, name  # sign-out is POST only
            continue
        assert response.status_code == 302, name
        assert response["Location"].startswith(reverse("login")), name


def test_it_never_serves_an_uploaded_file_as_html(owner_client, envelope_survey):
    """An original or photo whose name says .html or .svg still goes out as a download."""
    page = b"<html><body><script>alert(1)</script></body></html>"
    thermogram = make_thermogram(envelope_survey, original_name="page.html")
    thermogram.original.save("page.html", ContentFile(page), save=False)
    thermogram.photo.save("drawing.svg", ContentFile(b"<svg onload='alert(1)'/>"), save=False)
    thermogram.save()
    for name in ("survey:thermogram_original", "survey:thermogram_photo"):
        response = owner_client.get(reverse(name, args=[thermogram.pk]))
        assert response.status_code == 200, name
        assert response["Content-Type"] == "application/octet-stream", name
        assert response["X-Content-Type-Options"] == "nosniff", name
    original = owner_client.get(reverse("survey:thermogram_original", args=[thermogram.pk]))
    assert original["Content-Disposition"].startswith("attachment"), original["Content-Disposition"]


def test_it_answers_the_health_check_to_anyone_and_shows_no_data(world, outsider):
    """/healthz needs no sign-in and says only which dependency answered, and how fast."""
    for http in (HttpClient(), _signed_in(outsider), _signed_in(world.survey.thermographer)):
        response = http.get(reverse("healthz"))
        assert response.status_code == 200
        assert response["Content-Type"] == "application/json"
        assert "no-cache" in response["Cache-Control"]
        assert "sessionid" not in response.cookies and "csrftoken" not in response.cookies
        body = response.json()
        assert set(body) == {"status", "checks"} and body["status"] == "ok"
        assert set(body["checks"]) == {"database", "broker", "storage"}
        for result in body["checks"].values():
            assert set(result) == {"ok", "ms"} and result["ok"] is True and result["ms"] >= 0
        text = response.content.decode()
        assert [secret for secret in SECRETS if secret in text] == []


def test_it_lets_only_admins_see_the_audit_log(
    client, owner, reviewer, thermographer, outsider, envelope_survey
):
    """The audit log is the admin's; it lists only the admin's own organization."""
    from survey.services.audit import audit_record

    audit_record(
        organization=envelope_survey.organization,
        actor=thermographer.user,
        action="update",
        obj=envelope_survey,
        detail={"fields": ["title"]},
    )
    audit_record(
        organization=outsider.organization,
        actor=outsider.user,
        action="report.download",
        obj=outsider,
    )
    url = reverse("survey:audit_log")
    for member, status in ((thermographer, 403), (reviewer, 403), (outsider, 200), (owner, 200)):
        client.force_login(member.user)
        response = client.get(url)
        assert response.status_code == status, member
    body = client.get(url).content.decode()  # still the owner
    assert "Theo Thermographer" in body and "update" in body
    assert "report.download" not in body
    client.force_login(outsider.user)
    assert "Theo Thermographer" not in client.get(url).content.decode()


def _viewer_writes(w: World) -> list[tuple[str, str, dict, dict | None, dict | None]]:
    """(method, route, kwargs, form data, JSON body) of every write a member could send."""
    link = w.share_link()
    return [
        ("post", "survey:clients", {}, {"name": "Viewer's client"}, None),
        ("post", "survey:sites", {}, {"client": w.survey.site.client_id, "name": "S"}, None),
        ("post", "survey:survey_create", {}, {"site": w.survey.site_id, "kind": "roof"}, None),
        ("post", "survey:survey_edit", survey(w), {"title": "Changed"}, None),
        ("post", "survey:survey_upload", survey(w), {}, None),
        ("post", "survey:survey_delete", survey(w), {"confirm": "on"}, None),
        ("post", "survey:survey_restore", {"pk": w.deleted_survey()}, {}, None),
        ("post", "survey:thermogram_settings", thermogram(w), {"emissivity": "0.5"}, None),
        ("post", "survey:thermogram_reprocess", thermogram(w), {"source_unit": "C"}, None),
        ("patch", "survey:api-thermogram", thermogram(w), None, {"palette": "perceptual"}),
        ("post", "survey:api-marks", thermogram(w), None, {"kind": "point", "points": [[5, 5]]}),
        ("patch", "survey:api-mark", {"pk": w.mark_id}, None, {"note": "Viewer was here."}),
        ("delete", "survey:api-mark", {"pk": w.mark_id}, None, None),
        (
            "put",
            "survey:api-thermogram-alignment",
            thermogram(w),
            None,
            {"pairs": [[[0, 0], [0, 0]], [[5, 0], [5, 0]]]},
        ),
        ("delete", "survey:api-thermogram-alignment", thermogram(w), None, None),
        ("post", "survey:finding_create", thermogram(w), {"category": "other"}, None),
        ("post", "survey:finding_edit", finding(w), {"location": "Changed"}, None),
        ("post", "survey:finding_status", finding(w), {"status": "repaired"}, None),
        ("post", "survey:finding_verify", finding(w), {}, None),
        ("post", "survey:heat_loss_create", survey(w), {"label": "x"}, None),
        ("post", "survey:criteria_copy", {}, {}, None),
        ("post", "survey:criteria_edit", {"pk": w.criteria_table_id}, {"rows": "[]"}, None),
        ("post", "survey:criteria_review", {"pk": w.criteria_table_id}, {}, None),
        ("post", "survey:member_edit", {"pk": w.survey.thermographer_id}, {"role": "admin"}, None),
        ("post", "reports:create", {"survey_id": w.bare_survey()}, {}, None),
        ("post", "reports:draft", report_id(w), {}, None),
        ("post", "reports:issue", report_id(w), {"change_note": "x"}, None),
        ("post", "reports:retry", version_id(w), {}, None),
        ("post", "reports:share_create", version_id(w), {"days": "30"}, None),
        ("post", "reports:share_revoke", {"link_id": link}, {"confirm": "on"}, None),
        (
            "post",
            "reports:share_email",
            {"link_id": link},
            {"to": "client@example.org", "message": "Hello"},
            None,
        ),
        ("post", "survey:client_edit", client(w), {"name": "Renamed"}, None),
        ("post", "survey:client_delete", client(w), {"confirm": "on"}, None),
        ("post", "survey:site_edit", site(w), {"name": "Renamed"}, None),
        ("post", "survey:site_delete", site(w), {"confirm": "on"}, None),
        ("post", "survey:site_visit", site(w), {"kind": "roof"}, None),
        ("post", "survey:asset_create", site(w), {"name": "Viewer's asset"}, None),
        ("post", "survey:assets_import", site(w), {}, None),
        ("post", "survey:asset_edit", asset(w), {"name": "Renamed"}, None),
        ("post", "survey:asset_retire", asset(w), {}, None),
        ("post", "survey:asset_delete", asset(w), {"confirm": "on"}, None),
        ("post", "survey:survey_tie_assets", survey(w), {}, None),
        ("post", "survey:survey_view_defaults", survey(w), {"palette": "perceptual"}, None),
        ("post", "survey:round_stop_skip", {"pk": w.round_stop()}, {"reason": "No"}, None),
        ("post", "survey:thermogram_delete", thermogram(w), {"confirm": "on"}, None),
        ("post", "survey:finding_delete", finding(w), {"confirm": "on"}, None),
        ("post", "survey:item_restore", {"kind": "asset", "pk": w.deleted_asset()}, {}, None),
        ("post", "survey:organization", {}, {"allow_self_review": "on"}, None),
    ]


def _state(w: World) -> dict:
    from survey.models import (
        Acknowledgement,
        Client,
        CriteriaTable,
        HeatLossEstimate,
        Mark,
        Member,
        Site,
    )

    w.survey.refresh_from_db()
    mark = Mark.objects.filter(pk=w.mark_id).first()
    return {
        "rows": [
            model.objects.count()
            for model in (
                Client,
                Site,
                Survey,
                Thermogram,
                Mark,
                Finding,
                HeatLossEstimate,
                CriteriaTable,
                Report,
                ReportVersion,
                Asset,
                RoundStop,
                Acknowledgement,
            )
        ],
        "assets": sorted(Asset.all_objects.values_list("name", "retired_at", "deleted_at")),
        "round": sorted(RoundStop.objects.values_list("skip_reason", flat=True)),
        "self_review": sorted(
            Survey.objects.values_list("organization__allow_self_review", flat=True)
        ),
        "view": (w.survey.default_palette, w.survey.default_span_rule),
        "survey": (w.survey.title, w.survey.status),
        "mark_note": mark.note if mark else None,
        "finding": Finding.objects.values_list("status", "location").get(pk=w.finding.pk),
        "thermogram": Thermogram.objects.values_list(
            "emissivity", "palette", "status", "photo_alignment"
        ).get(pk=w.thermogram.pk),
        "roles": sorted(Member.objects.values_list("role", flat=True)),
        "live_links": ShareLink.objects.filter(revoked_at__isnull=True).count(),
    }


def test_it_lets_a_viewer_see_everything_and_change_nothing(world, viewer):
    """Every write a viewer sends answers 403 and leaves every row as it was."""
    http = _signed_in(viewer)
    writes = _viewer_writes(world)
    before = _state(world)
    for method, name, kwargs, data, body in writes:
        url = reverse(name, kwargs=kwargs)
        send = getattr(http, method)
        if body is not None:
            response = send(url, data=json.dumps(body), content_type="application/json")
        else:
            response = send(url, data=data or {})
        assert response.status_code == 403, (method, name, response.content[:200])
    assert _state(world) == before
    # What the matrix lets everyone read, the viewer reads too.
    assert http.get(reverse("survey:survey", kwargs=survey(world))).status_code == 200
    assert http.get(reverse("survey:home")).status_code == 200
