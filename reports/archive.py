"""A survey as one zip archive, and back: nothing is lost in a move to another installation.

The archive holds the originals and photos unchanged, the issued PDFs byte for byte, and
`manifest.json` with every setting, mark, finding, condition and heat-loss estimate, plus
the survey's computed results (readings of every mark) as they were at export. Derived
data (°C arrays, previews) is not shipped: the importing installation rebuilds it from the
originals and their recorded decode settings, and gets the same numbers.

Every file in the archive is checked against the sha256 in the manifest before anything is
written; an import is one transaction and leaves no file behind when it fails.
"""

import contextlib
import hashlib
import io
import json
import struct
import zipfile
import zlib
from pathlib import PurePosixPath
from typing import Any

import numpy as np
from django.conf import settings
from django.contrib.auth.models import AbstractBaseUser
from django.core.exceptions import ValidationError
from django.core.files.base import File
from django.core.files.storage import default_storage
from django.core.serializers.json import DjangoJSONEncoder
from django.db import models, transaction
from django.utils import timezone

from reports.models import Report, ReportVersion
from reports.results import survey_results
from survey.inputs import holds_nul
from survey.models import (
    Asset,
    Client,
    ConditionLog,
    Conditions,
    CriteriaTable,
    Finding,
    HeatLossEstimate,
    Instrument,
    Mark,
    Member,
    MoistureCheck,
    Organization,
    Site,
    Survey,
    Thermogram,
)
from survey.services.audit import audit_record
from survey.services.marks import mark_points_check
from survey.thermal.decode import ThermogramFormatError, check_image_size, size_comparison
from survey.thermal.marks import MAX_PROFILE_SAMPLES, profile_extremes

FORMAT = "heatmark-survey-archive"
FORMAT_VERSION = 1
MANIFEST = "manifest.json"
MAX_MANIFEST_BYTES = 50 * 1024 * 1024

# Fields not carried over: row ids, links to other rows (carried by reference instead),
# bookkeeping of this installation, and derived files rebuilt on import.
SKIPPED = {
    "id",
    "organization",
    "survey",
    "site",
    "client",
    "thermographer",
    "reviewer",
    "created_by",
    "created_at",
    "updated_at",
    "status",
    "deleted_at",
    "thermogram",
    "asset",
    "reference_mark",
    "previous",
    "criteria_table",
    "finding",
    "mark",
    "original",
    "photo",
    "array",
    "array_sha256",
    "camera",
    "preview",
    "thumbnail",
    "error",
    "processed_at",
    "heartbeat_at",
    "roof_plan",
}
# Thermogram values computed from the original: rebuilt by processing, checked after.
DERIVED = {"width", "height", "min_c", "max_c"}


def _values(row: models.Model, skip: set[str] = frozenset()) -> dict[str, Any]:
    return {
        field.name: getattr(row, field.attname)
        for field in row._meta.concrete_fields
        if field.name not in SKIPPED | skip
    }


def _restore(model: type[models.Model], values: dict[str, Any]) -> dict[str, Any]:
    """Archive values back to Python values of `model`'s fields (unknown names refused)."""
    known = {f.name: f for f in model._meta.concrete_fields if f.name not in SKIPPED | DERIVED}
    unknown = sorted(set(values) - set(known))
    if unknown:
        raise ValidationError(f"The archive names unknown {model.__name__} fields: {unknown}.")
    try:
        return {name: known[name].to_python(value) for name, value in values.items()}
    except ValidationError as error:
        raise ValidationError(f"A {model.__name__} value in the archive is invalid: {error}")


def _sha256(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


def _member_ref(member: Member | None) -> dict | None:
    if member is None:
        return None
    return {"username": member.user.username, "name": member.display_name}


def _read(file_field) -> bytes:
    with file_field.storage.open(file_field.name, "rb") as handle:
        return handle.read()


def _archive_name(folder: str, index: int, name: str) -> str:
    return f"{folder}/{index:04d}-{PurePosixPath(name).name or 'file'}"


# --- export ---------------------------------------------------------------------------------


def survey_export(*, survey: Survey, user: AbstractBaseUser | None) -> bytes:
    """The survey as zip bytes: manifest.json, originals/, photos/, reports/."""
    buffer = io.BytesIO()
    files: dict[str, bytes] = {}
    thermograms = list(survey.thermograms.select_related("asset").order_by("sequence", "id"))
    assets = {t.asset_id: t.asset for t in thermograms if t.asset_id}
    for finding in survey.findings.select_related("asset"):
        if finding.asset_id:
            assets[finding.asset_id] = finding.asset
    manifest_thermograms = []
    for index, thermogram in enumerate(thermograms, 1):
        original = _read(thermogram.original)
        if _sha256(original) != thermogram.original_sha256:
            raise ValidationError(
                f"The stored original of {thermogram} no longer matches its sha256; "
                "run verify_media and upload it again before exporting."
            )
        entry = _values(thermogram, DERIVED)
        entry["key"] = thermogram.pk
        entry["asset"] = thermogram.asset_id
        entry["derived"] = {name: getattr(thermogram, name) for name in sorted(DERIVED)}
        entry["original_file"] = _archive_name("originals", index, thermogram.original_name)
        files[entry["original_file"]] = original
        if thermogram.photo:
            photo = _read(thermogram.photo)
            entry["photo_file"] = _archive_name("photos", index, thermogram.photo.name)
            entry["photo_sha256"] = _sha256(photo)
            files[entry["photo_file"]] = photo
        entry["marks"] = [
            _values(mark)
            | {"reference": mark.reference_mark.label if mark.reference_mark else None}
            for mark in thermogram.marks.select_related("reference_mark").order_by("id")
        ]
        manifest_thermograms.append(entry)
    findings = []
    for finding in survey.findings.prefetch_related("marks").select_related(
        "criteria_table", "thermogram", "reference_mark"
    ):
        entry = _values(finding)
        entry["key"] = finding.pk
        entry["thermogram"] = finding.thermogram_id
        entry["asset"] = finding.asset_id
        entry["marks"] = sorted(mark.label for mark in finding.marks.all())
        entry["reference_mark"] = finding.reference_mark.label if finding.reference_mark else None
        entry["moisture_checks"] = [_values(c) for c in finding.moisture_checks.order_by("id")]
        table = finding.criteria_table
        entry["criteria_table"] = (
            {"key": table.key, "name": table.name, "source": table.source, "rows": table.rows}
            if table
            else None
        )
        findings.append(entry)
    reports = []
    for report in survey.reports.order_by("id"):
        versions = []
        issued = report.versions.filter(status=ReportVersion.Status.ISSUED).order_by("version")
        for version in issued:
            pdf = _read(version.pdf)
            if _sha256(pdf) != version.sha256:
                raise ValidationError(
                    f"The issued PDF {report.number} v{version.version} no longer matches its "
                    "sha256; it cannot be exported as the document the client holds."
                )
            name = f"reports/{report.number}-v{version.version}.pdf"
            files[name] = pdf
            versions.append(
                _values(version, {"report", "requested_by", "issued_by", "pdf", "stage"})
                | {"pdf_file": name, "issued_by": _user_name(version.issued_by)}
            )
        reports.append({"number": report.number, "versions": versions})
    survey_entry = _values(survey)
    if survey.roof_plan:
        plan = _read(survey.roof_plan)
        if survey.roof_plan_sha256 and _sha256(plan) != survey.roof_plan_sha256:
            raise ValidationError(
                "The stored roof plan no longer matches its sha256; upload it again before "
                "exporting."
            )
        survey_entry["roof_plan_file"] = _archive_name("plans", 1, survey.roof_plan.name)
        files[survey_entry["roof_plan_file"]] = plan
    conditions = getattr(survey, "conditions", None)
    manifest = {
        "format": FORMAT,
        "format_version": FORMAT_VERSION,
        "exported_at": timezone.now(),
        "exported_from": survey.organization.name,
        "client": _values(survey.site.client),
        "site": _values(survey.site),
        "survey": survey_entry
        | {
            "thermographer": _member_ref(survey.thermographer),
            "reviewer": _member_ref(survey.reviewer),
            "camera": _values(survey.camera) if survey.camera_id else None,
        },
        "conditions": _values(conditions) if conditions else None,
        "condition_logs": [_values(log) for log in survey.condition_logs.order_by("role")],
        "assets": [_values(asset) | {"key": key} for key, asset in sorted(assets.items())],
        "thermograms": manifest_thermograms,
        "findings": findings,
        "heat_loss_estimates": [
            _values(estimate)
            | {
                "finding": estimate.finding_id,
                "mark": [estimate.mark.thermogram_id, estimate.mark.label]
                if estimate.mark
                else None,
            }
            for estimate in survey.heat_loss_estimates.select_related("mark").order_by("id")
        ],
        "reports": reports,
        "results": survey_results(survey),
        "files": {name: _sha256(data) for name, data in sorted(files.items())},
    }
    with zipfile.ZipFile(buffer, "w", zipfile.ZIP_DEFLATED) as archive:
        archive.writestr(MANIFEST, json.dumps(manifest, cls=DjangoJSONEncoder, indent=1))
        for name, data in sorted(files.items()):
            archive.writestr(name, data)
    audit_record(
        organization=survey.organization,
        actor=user,
        action="export",
        obj=survey,
        detail={"files": len(files), "thermograms": len(thermograms)},
    )
    return buffer.getvalue()


def _label(mark: Mark | None) -> str | None:
    return mark.label if mark is not None else None


def _user_name(user) -> str | None:
    if user is None:
        return None
    return user.get_full_name() or user.username


# --- import ---------------------------------------------------------------------------------


CHUNK_BYTES = 1024 * 1024
# What a damaged zip raises while it is read: none of it is the user's to see.
ZIP_ERRORS = (
    zipfile.BadZipFile,
    zlib.error,
    EOFError,
    NotImplementedError,  # an unknown compression method
    RuntimeError,  # an encrypted entry
    OSError,
    ValueError,
    struct.error,
)


@contextlib.contextmanager
def _opened(source):
    """The zip of `source` (bytes, a path or a binary file), open for the block."""
    try:
        archive = zipfile.ZipFile(
            io.BytesIO(source) if isinstance(source, bytes | bytearray) else source
        )
    except ZIP_ERRORS:
        raise ValidationError("This is not a survey archive (not a zip file).") from None
    with archive:
        yield archive


def _read_manifest(archive: zipfile.ZipFile) -> dict:
    members = {info.filename: info for info in archive.infolist()}
    info = members.get(MANIFEST)
    if info is None:
        raise ValidationError("The archive has no manifest.json.")
    if info.file_size > MAX_MANIFEST_BYTES:
        raise ValidationError("The archive's manifest is implausibly large.")
    try:
        with archive.open(info) as handle:
            raw = handle.read(MAX_MANIFEST_BYTES + 1)
    except ZIP_ERRORS:
        raise ValidationError("The archive is damaged: its manifest.json cannot be read.") from None
    try:
        manifest = json.loads(raw)
    except (ValueError, UnicodeDecodeError):
        raise ValidationError("The archive's manifest.json is not valid JSON.") from None
    if not isinstance(manifest, dict) or manifest.get("format") != FORMAT:
        raise ValidationError("The archive's manifest is not a survey archive manifest.")
    if manifest.get("format_version") != FORMAT_VERSION:
        raise ValidationError(
            f"Archive format version {manifest.get('format_version')!r} is not supported "
            f"(this installation reads version {FORMAT_VERSION})."
        )
    if holds_nul(manifest):
        raise ValidationError("The archive's manifest holds NUL characters; it is not ours.")
    return manifest


def _check_files(archive: zipfile.ZipFile, manifest: dict) -> dict[str, str]:
    """Every file the manifest lists, checked against its sha256 a chunk at a time (never
    held whole in memory), within the per-file and the total limit; name -> sha256."""
    listed = manifest.get("files") or {}
    if not isinstance(listed, dict) or not all(
        isinstance(name, str) and isinstance(digest, str) for name, digest in listed.items()
    ):
        raise ValidationError("The archive's manifest lists its files wrongly.")
    members = {info.filename: info for info in archive.infolist()}
    total = 0
    for name in listed:
        info = members.get(name)
        if info is None:
            raise ValidationError(f"The archive lacks {name}, which its manifest lists.")
        if info.file_size > settings.THERMOGRAM_MAX_UPLOAD_BYTES:
            size, most = size_comparison(info.file_size, settings.THERMOGRAM_MAX_UPLOAD_BYTES)
            raise ValidationError(f"{name} is {size}; a file may be at most {most}.")
        total += info.file_size
    if total > settings.ARCHIVE_MAX_BYTES:
        size, most = size_comparison(total, settings.ARCHIVE_MAX_BYTES)
        raise ValidationError(
            f"The archive's files total {size}; an archive may hold at most {most}."
        )
    for name, digest in listed.items():
        if _streamed_sha256(archive, members[name]) != digest:
            raise ValidationError(f"{name} is damaged: it does not match its sha256.")
    return dict(listed)


def _streamed_sha256(archive: zipfile.ZipFile, info: zipfile.ZipInfo) -> str:
    digest, read = hashlib.sha256(), 0
    try:
        with archive.open(info) as handle:
            while chunk := handle.read(CHUNK_BYTES):
                read += len(chunk)
                if read > info.file_size:  # more than the entry declares: a lying header
                    raise zipfile.BadZipFile
                digest.update(chunk)
    except ZIP_ERRORS:
        raise ValidationError(f"The archive is damaged: {info.filename} cannot be read.") from None
    return digest.hexdigest()


def _find_or_create(model, lookup: dict, values: dict) -> models.Model:
    row = model.objects.filter(**lookup).first()
    if row is None:
        row = model(**lookup, **values)
        row.full_clean()
        row.save()
    return row


def _member_of(organization: Organization, ref: dict | None) -> Member | None:
    if not ref:
        return None
    return Member.objects.filter(
        organization=organization, user__username=ref.get("username")
    ).first()


def _criteria_table(organization: Organization, ref: dict | None) -> CriteriaTable | None:
    if not ref:
        return None
    return (
        CriteriaTable.objects.filter(organization=organization, key=ref["key"]).first()
        or CriteriaTable.objects.filter(organization__isnull=True, key=ref["key"]).first()
    )


class _Importer:
    def __init__(self, organization, user, manifest, archive, digests):
        self.organization = organization
        self.user = user
        self.manifest = manifest
        self.archive = archive
        self.digests = digests
        self.saved_paths: list[str] = []
        self.assets: dict[Any, Asset] = {}
        self.thermograms: dict[Any, Thermogram] = {}
        self.marks: dict[tuple[Any, str], Mark] = {}
        self.findings: dict[Any, Finding] = {}

    def digest(self, name: str | None) -> str:
        """The checked sha256 of a file the manifest refers to."""
        if name not in self.digests:
            raise ValidationError(f"The manifest refers to {name!r}, which the archive lacks.")
        return self.digests[name]

    def store(self, field, stored_name: str, archive_name: str) -> None:
        """Copy an archive entry into storage as it is read (never whole in memory)."""
        self.digest(archive_name)
        try:
            with self.archive.open(archive_name) as handle:
                field.save(PurePosixPath(stored_name).name, File(handle), save=False)
        except ZIP_ERRORS:
            raise ValidationError(
                f"The archive is damaged: {archive_name} cannot be read."
            ) from None
        self.saved_paths.append(field.name)

    def run(self) -> Survey:
        m = self.manifest
        client_values = _restore(Client, m["client"])
        client = _find_or_create(
            Client,
            {"organization": self.organization, "name": client_values.pop("name")},
            client_values,
        )
        site_values = _restore(Site, m["site"])
        site = _find_or_create(
            Site,
            {"organization": self.organization, "client": client, "name": site_values.pop("name")},
            site_values,
        )
        for entry in m.get("assets", []):
            entry = dict(entry)
            key = entry.pop("key")
            values = _restore(Asset, entry)
            lookup = {"organization": self.organization, "site": site, "name": values.pop("name")}
            lookup["tag"] = values.pop("tag", "")
            self.assets[key] = _find_or_create(Asset, lookup, values)
        survey_entry = dict(m["survey"])
        thermographer = _member_of(self.organization, survey_entry.pop("thermographer", None))
        reviewer = _member_of(self.organization, survey_entry.pop("reviewer", None))
        camera = self.camera(survey_entry.pop("camera", None))
        plan_file = survey_entry.pop("roof_plan_file", None)
        survey = Survey(
            organization=self.organization,
            site=site,
            thermographer=thermographer,
            reviewer=reviewer,
            camera=camera,
            created_by=self.user,
            **_restore(Survey, survey_entry),
        )
        if plan_file:
            if self.digest(plan_file) != survey.roof_plan_sha256:
                raise ValidationError("The roof plan in the archive is damaged.")
            self.store(survey.roof_plan, survey.roof_plan_name or plan_file, plan_file)
        survey.full_clean()
        survey.save()
        conditions = Conditions(survey=survey, **_restore(Conditions, m.get("conditions") or {}))
        conditions.full_clean()
        conditions.save()
        for entry in m.get("condition_logs", []):
            log = ConditionLog(
                organization=self.organization,
                survey=survey,
                created_by=self.user,
                **_restore(ConditionLog, entry),
            )
            log.full_clean()
            log.save()
        for entry in m.get("thermograms", []):
            self.thermogram(survey, dict(entry))
        for entry in m.get("findings", []):
            self.finding(survey, dict(entry))
        for entry in m.get("heat_loss_estimates", []):
            self.heat_loss(survey, dict(entry))
        for entry in m.get("reports", []):
            self.report(survey, entry)
        return survey

    def camera(self, entry: dict | None) -> Instrument | None:
        """The archive's camera: the organization's record of the same model and serial."""
        if not entry:
            return None
        values = _restore(Instrument, dict(entry))
        lookup = {
            "organization": self.organization,
            "model_name": values.pop("model_name"),
            "serial_number": values.pop("serial_number", ""),
        }
        return _find_or_create(Instrument, lookup, values)

    def thermogram(self, survey: Survey, entry: dict) -> None:
        key = entry.pop("key")
        asset = self.assets.get(entry.pop("asset"))
        marks = entry.pop("marks", [])
        width, height = _declared_size(entry.pop("derived", None), entry.get("original_name"))
        original_file = entry.pop("original_file")
        photo_name = entry.pop("photo_file", None)
        values = _restore(Thermogram, entry)
        if self.digest(original_file) != values.get("original_sha256"):
            raise ValidationError(f"The original of {values.get('original_name')} is damaged.")
        thermogram = Thermogram(
            organization=self.organization,
            survey=survey,
            asset=asset,
            status=Thermogram.Status.QUEUED,
            created_by=self.user,
            **values,
        )
        self.store(thermogram.original, values["original_name"], original_file)
        if photo_name:
            self.store(thermogram.photo, photo_name, photo_name)
        thermogram.full_clean()
        thermogram.save()
        self.thermograms[key] = thermogram
        references = []
        for mark_entry in marks:
            mark_entry = dict(mark_entry)
            reference = mark_entry.pop("reference", None)
            mark = Mark(thermogram=thermogram, **_restore(Mark, mark_entry))
            try:
                mark.points = mark_points_check(
                    kind=mark.kind, points=mark.points, width=width, height=height
                )
            except ValidationError as error:
                raise ValidationError(
                    f"Mark {mark.label} of {thermogram.original_name}: {' '.join(error.messages)}"
                ) from None
            mark.stats = _bounded_stats(mark.stats)
            mark.full_clean(exclude=["reference_mark"])
            mark.save()
            self.marks[(key, mark.label)] = mark
            references.append((mark, reference))
        for mark, reference in references:
            if reference:
                mark.reference_mark = self.marks[(key, reference)]
                mark.save(update_fields=["reference_mark"])

    def finding(self, survey: Survey, entry: dict) -> None:
        key = entry.pop("key")
        thermogram_key = entry.pop("thermogram")
        labels = entry.pop("marks", [])
        reference = entry.pop("reference_mark", None)
        asset = self.assets.get(entry.pop("asset"))
        table = _criteria_table(self.organization, entry.pop("criteria_table", None))
        checks = entry.pop("moisture_checks", [])
        finding = Finding(
            organization=self.organization,
            survey=survey,
            thermogram=self.thermograms.get(thermogram_key),
            asset=asset,
            criteria_table=table,
            reference_mark=self.marks.get((thermogram_key, reference)) if reference else None,
            created_by=self.user,
            **_restore(Finding, entry),
        )
        finding.full_clean()
        finding.save()
        finding.marks.set([self.marks[(thermogram_key, label)] for label in labels])
        for check_entry in checks:
            check = MoistureCheck(
                finding=finding, created_by=self.user, **_restore(MoistureCheck, check_entry)
            )
            check.full_clean()
            check.save()
        self.findings[key] = finding

    def heat_loss(self, survey: Survey, entry: dict) -> None:
        finding_key = entry.pop("finding")
        mark_ref = entry.pop("mark")
        estimate = HeatLossEstimate(
            organization=self.organization,
            survey=survey,
            finding=self.findings.get(finding_key),
            mark=self.marks.get(tuple(mark_ref)) if mark_ref else None,
            **_restore(HeatLossEstimate, entry),
        )
        estimate.full_clean()
        estimate.save()

    def report(self, survey: Survey, entry: dict) -> None:
        number = entry["number"]
        if Report.objects.filter(organization=self.organization, number=number).exists():
            raise ValidationError(
                f"Report {number} already exists in {self.organization}; the archive's "
                "issued report must keep its number, so it cannot be imported here."
            )
        report = Report(organization=self.organization, survey=survey, number=number)
        report.full_clean()
        report.save()
        known = {f.name for f in ReportVersion._meta.concrete_fields}
        for version_entry in entry.get("versions", []):
            version_entry = dict(version_entry)
            pdf_file = version_entry.pop("pdf_file")
            version_entry.pop("issued_by", None)
            unknown = sorted(set(version_entry) - known)
            if unknown:
                raise ValidationError(f"The archive names unknown report fields: {unknown}.")
            values = {
                name: ReportVersion._meta.get_field(name).to_python(value)
                for name, value in version_entry.items()
            }
            if values.get("is_draft") is not False:
                raise ValidationError(
                    f"Report {number} version {values.get('version')} claims to be a draft; "
                    "an archive carries issued versions only."
                )
            if self.digest(pdf_file) != values.get("sha256"):
                raise ValidationError(f"The issued PDF of {number} is damaged.")
            version = ReportVersion(
                report=report, status=ReportVersion.Status.ISSUED, requested_by=self.user, **values
            )
            self.store(version.pdf, f"{number}-v{values.get('version')}.pdf", pdf_file)
            version.full_clean()
            version.save()


def survey_import(*, data, organization: Organization, user: AbstractBaseUser | None) -> Survey:
    """Create the archive's survey in `organization`; its thermograms are queued for processing.

    `data` is the archive: bytes, a path or a binary file. Clients, sites and assets are
    matched by name (and tag) or created. Members are matched by username; a thermographer
    or reviewer unknown here is left empty. Raises ValidationError with the reason, writing
    nothing, when the archive is damaged, too large or does not fit. Files are checked and
    copied a chunk at a time, never held whole in memory.
    """
    from survey.services.ingest import thermogram_enqueue

    with _opened(data) as archive:
        manifest = _read_manifest(archive)
        digests = _check_files(archive, manifest)
        importer = _Importer(organization, user, manifest, archive, digests)
        try:
            with transaction.atomic():
                survey = importer.run()
                audit_record(
                    organization=organization,
                    actor=user,
                    action="import",
                    obj=survey,
                    detail={
                        "from": str(manifest.get("exported_from", ""))[:200],
                        "exported_at": str(manifest.get("exported_at", "")),
                        "files": len(digests),
                    },
                )
                for thermogram in importer.thermograms.values():
                    thermogram_enqueue(thermogram.pk)
        except (KeyError, TypeError, AttributeError, IndexError):
            _delete(importer.saved_paths)
            raise ValidationError(
                "The archive's manifest is incomplete or malformed: it was not written by "
                "this application, or was changed since."
            ) from None
        except BaseException:
            _delete(importer.saved_paths)
            raise
    return survey


def _declared_size(derived, name) -> tuple[int, int]:
    """The width and height the archive gives a thermogram, within the upload limits."""
    derived = derived if isinstance(derived, dict) else {}
    width, height = derived.get("width"), derived.get("height")
    if not all(isinstance(v, int) and not isinstance(v, bool) and v > 0 for v in (width, height)):
        raise ValidationError(f"The archive gives {name} no image size.")
    try:
        check_image_size(str(name), width, height, settings.THERMOGRAM_MAX_PIXELS)
    except ThermogramFormatError as error:
        raise ValidationError(str(error)) from None
    return width, height


def _bounded_stats(stats) -> dict:
    """A mark's cached statistics from an archive, its line profile capped as ours are."""
    if not isinstance(stats, dict):
        return {}
    profile = stats.get("profile")
    if isinstance(profile, list) and len(profile) > MAX_PROFILE_SAMPLES:
        try:
            distances = np.array([float(point[0]) for point in profile])
            values = np.array([np.nan if p[1] is None else float(p[1]) for p in profile])
        except (TypeError, ValueError, IndexError):
            raise ValidationError("A mark's profile in the archive is malformed.") from None
        distances, values = profile_extremes(distances, values)
        stats = stats | {
            "profile": [
                [float(d), None if np.isnan(v) else float(v)]
                for d, v in zip(distances, values, strict=True)
            ]
        }
    return stats


def _delete(paths: list[str]) -> None:
    for path in paths:
        default_storage.delete(path)
