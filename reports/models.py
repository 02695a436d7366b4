"""Client reports: a Report per survey, numbered versions, issued files and share links."""

from django.conf import settings
from django.db import models
from django.db.models import Q
from django.utils import timezone

from survey.models import Organization, Survey


class Report(models.Model):
    organization = models.ForeignKey(Organization, on_delete=models.CASCADE, related_name="reports")
    survey = models.ForeignKey(Survey, on_delete=models.PROTECT, related_name="reports")
    number = models.CharField(max_length=40, help_text="The firm's report number.")
    created_at = models.DateTimeField(auto_now_add=True)

    class Meta:
        ordering = ["-created_at"]
        constraints = [
            models.UniqueConstraint(
                fields=["organization", "number"], name="report_number_per_org"
            ),
        ]

    def __str__(self) -> str:
        return self.number


class ReportVersion(models.Model):
    class Status(models.TextChoices):
        QUEUED = "queued", "Queued"
        RENDERING = "rendering", "Rendering"
        READY = "ready", "Draft ready"
        ISSUED = "issued", "Issued"
        FAILED = "failed", "Failed"

    report = models.ForeignKey(Report, on_delete=models.CASCADE, related_name="versions")
    version = models.PositiveIntegerField()
    is_draft = models.BooleanField(default=True)
    status = models.CharField(max_length=10, choices=Status.choices, default=Status.QUEUED)
    stage = models.CharField(max_length=100, blank=True)
    progress_pct = models.PositiveSmallIntegerField(default=0)
    pdf = models.FileField(upload_to="reports/%Y/%m/", max_length=300, blank=True)
    sha256 = models.CharField(max_length=64, blank=True)
    # Digest of the survey data the version was rendered from (printed inside the PDF).
    content_sha256 = models.CharField(max_length=64, blank=True)
    page_count = models.PositiveIntegerField(null=True, blank=True)
    change_note = models.TextField(blank=True)
    error = models.TextField(blank=True)
    # The units the PDF shows, those of the member who asked for it (stored values stay °C).
    temperature_unit = models.CharField(max_length=1, default="C")
    speed_unit = models.CharField(max_length=4, default="m_s")
    length_unit = models.CharField(max_length=2, default="m")
    # False when the survey's own thermographer issued it (an organization setting allows
    # that for one-person firms); the report then says it was not independently reviewed.
    independently_reviewed = models.BooleanField(default=True)
    # When the issuer confirmed that findings judged on criteria tables the firm had not
    # reviewed may be issued (the report then says who accepted them and when).
    unreviewed_criteria_accepted_at = models.DateTimeField(null=True, blank=True)
    requested_by = models.ForeignKey(
        settings.AUTH_USER_MODEL, on_delete=models.SET_NULL, null=True, blank=True, related_name="+"
    )
    issued_by = models.ForeignKey(
        settings.AUTH_USER_MODEL, on_delete=models.SET_NULL, null=True, blank=True, related_name="+"
    )
    issued_at = models.DateTimeField(null=True, blank=True)
    created_at = models.DateTimeField(auto_now_add=True)
    finished_at = models.DateTimeField(null=True, blank=True)
    # Set when a worker claims the render and while it works; a stale one can be reclaimed.
    heartbeat_at = models.DateTimeField(null=True, blank=True)
    # The render could not be handed to the broker; the re-queue job sends it when it is back.
    waiting_for_broker = models.BooleanField(default=False)
    # How many times a worker has taken the render; one lost too often is failed, not retried.
    attempts = models.PositiveSmallIntegerField(default=0)
    # What the render had to leave out (a thermogram or photo it could not draw) and why.
    notes = models.TextField(blank=True)

    class Meta:
        ordering = ["report", "-version", "-id"]
        constraints = [
            # Only final versions carry a version number that must be unique; drafts may repeat.
            models.UniqueConstraint(
                fields=["report", "version"],
                condition=Q(is_draft=False),
                name="report_final_version_unique",
            ),
        ]

    def __str__(self) -> str:
        kind = "draft" if self.is_draft else "version"
        return f"{self.report.number} {kind} {self.version}"

    @property
    def is_issued(self) -> bool:
        return self.status == self.Status.ISSUED


class ShareLink(models.Model):
    version = models.ForeignKey(ReportVersion, on_delete=models.CASCADE, related_name="share_links")
    token = models.CharField(max_length=64, unique=True)
    expires_at = models.DateTimeField()
    revoked_at = models.DateTimeField(null=True, blank=True)
    last_sent_to = models.EmailField(blank=True)
    last_sent_at = models.DateTimeField(null=True, blank=True)
    created_by = models.ForeignKey(
        settings.AUTH_USER_MODEL, on_delete=models.SET_NULL, null=True, blank=True, related_name="+"
    )
    created_at = models.DateTimeField(auto_now_add=True)

    class Meta:
        ordering = ["-created_at"]

    def __str__(self) -> str:
        return f"Share link for {self.version}"

    @property
    def is_active(self) -> bool:
        return self.revoked_at is None and self.expires_at > timezone.now()


class DownloadLog(models.Model):
    version = models.ForeignKey(ReportVersion, on_delete=models.CASCADE, related_name="downloads")
    share_link = models.ForeignKey(
        ShareLink, on_delete=models.SET_NULL, null=True, blank=True, related_name="downloads"
    )
    user = models.ForeignKey(
        settings.AUTH_USER_MODEL, on_delete=models.SET_NULL, null=True, blank=True, related_name="+"
    )
    ip_address = models.GenericIPAddressField(null=True, blank=True)
    user_agent = models.CharField(max_length=300, blank=True)
    at = models.DateTimeField(auto_now_add=True)

    class Meta:
        ordering = ["-at"]

    def __str__(self) -> str:
        return f"Download of {self.version} at {self.at:%Y-%m-%d %H:%M}"
