"""The survey domain: who surveys what, the thermograms, their marks and the findings.

Temperatures are stored in °C whatever the user displays. Every row a user can reach
belongs to exactly one Organization; access.py is the one place that scopes queries.
"""

import string

from django.conf import settings
from django.core.validators import MaxValueValidator, MinValueValidator
from django.db import models
from django.db.models import Q


class Organization(models.Model):
    name = models.CharField(max_length=200)
    slug = models.SlugField(max_length=80, unique=True)
    created_at = models.DateTimeField(auto_now_add=True)

    class Meta:
        ordering = ["name"]

    def __str__(self) -> str:
        return self.name


class Member(models.Model):
    class Role(models.TextChoices):
        VIEWER = "viewer", "Viewer (read only)"
        THERMOGRAPHER = "thermographer", "Thermographer"
        REVIEWER = "reviewer", "Reviewer"
        ADMIN = "admin", "Admin"

    class TemperatureUnit(models.TextChoices):
        CELSIUS = "C", "°C"
        FAHRENHEIT = "F", "°F"

    user = models.OneToOneField(
        settings.AUTH_USER_MODEL, on_delete=models.CASCADE, related_name="membership"
    )
    organization = models.ForeignKey(Organization, on_delete=models.CASCADE, related_name="members")
    role = models.CharField(max_length=20, choices=Role.choices, default=Role.THERMOGRAPHER)
    qualification = models.CharField(
        max_length=200, blank=True, help_text="As stated on reports, e.g. a certification level."
    )
    temperature_unit = models.CharField(
        max_length=1, choices=TemperatureUnit.choices, default=TemperatureUnit.CELSIUS
    )

    class Meta:
        ordering = ["user__username"]

    def __str__(self) -> str:
        return self.display_name

    @property
    def display_name(self) -> str:
        return self.user.get_full_name() or self.user.username

    @property
    def can_edit(self) -> bool:
        """Everyone but a viewer, who sees the organization's work and changes nothing."""
        return self.role in {self.Role.THERMOGRAPHER, self.Role.REVIEWER, self.Role.ADMIN}

    @property
    def can_review(self) -> bool:
        return self.role in {self.Role.REVIEWER, self.Role.ADMIN}

    @property
    def is_admin(self) -> bool:
        return self.role == self.Role.ADMIN


class Client(models.Model):
    organization = models.ForeignKey(Organization, on_delete=models.CASCADE, related_name="clients")
    name = models.CharField(max_length=200)
    contact_name = models.CharField(max_length=200, blank=True)
    email = models.EmailField(blank=True)
    address = models.TextField(blank=True)

    class Meta:
        ordering = ["name"]

    def __str__(self) -> str:
        return self.name


class Site(models.Model):
    organization = models.ForeignKey(Organization, on_delete=models.CASCADE, related_name="sites")
    client = models.ForeignKey(Client, on_delete=models.PROTECT, related_name="sites")
    name = models.CharField(max_length=200)
    address = models.TextField(blank=True)

    class Meta:
        ordering = ["name"]

    def __str__(self) -> str:
        return self.name


class Asset(models.Model):
    class Kind(models.TextChoices):
        PANEL = "panel", "Electrical panel"
        SWITCHGEAR = "switchgear", "Switchgear"
        BREAKER = "breaker", "Breaker"
        MOTOR = "motor", "Motor"
        STEAM_LINE = "steam_line", "Steam line"
        WALL_ZONE = "wall_zone", "Wall zone"
        ROOF_SECTION = "roof_section", "Roof section"
        OTHER = "other", "Other"

    organization = models.ForeignKey(Organization, on_delete=models.CASCADE, related_name="assets")
    site = models.ForeignKey(Site, on_delete=models.PROTECT, related_name="assets")
    name = models.CharField(max_length=200)
    kind = models.CharField(max_length=20, choices=Kind.choices, default=Kind.OTHER)
    tag = models.CharField(max_length=100, blank=True, help_text="The plant's equipment id.")
    location = models.CharField(max_length=200, blank=True)
    notes = models.TextField(blank=True)

    class Meta:
        ordering = ["site__name", "name"]

    def __str__(self) -> str:
        return f"{self.name} ({self.tag})" if self.tag else self.name


class Survey(models.Model):
    class Kind(models.TextChoices):
        ENVELOPE = "envelope", "Building envelope"
        ROOF = "roof", "Roof"
        ELECTRICAL = "electrical", "Electrical"
        MECHANICAL = "mechanical", "Mechanical"

    class Status(models.TextChoices):
        ACTIVE = "active", "Active"
        DELETED = "deleted", "Deleted (recoverable)"

    organization = models.ForeignKey(Organization, on_delete=models.CASCADE, related_name="surveys")
    site = models.ForeignKey(Site, on_delete=models.PROTECT, related_name="surveys")
    kind = models.CharField(max_length=20, choices=Kind.choices)
    title = models.CharField(max_length=200, blank=True)
    date = models.DateField()
    crew = models.CharField(max_length=300, blank=True)
    thermographer = models.ForeignKey(
        Member, on_delete=models.SET_NULL, null=True, blank=True, related_name="+"
    )
    reviewer = models.ForeignKey(
        Member, on_delete=models.SET_NULL, null=True, blank=True, related_name="+"
    )
    instrument = models.CharField(
        max_length=200, blank=True, help_text="Camera make, model and serial."
    )
    ifov_mrad = models.FloatField(
        null=True,
        blank=True,
        validators=[MinValueValidator(0.01), MaxValueValidator(100)],
        help_text="Instantaneous field of view of one pixel.",
    )
    camera_accuracy_c = models.FloatField(
        default=2.0, validators=[MinValueValidator(0), MaxValueValidator(50)]
    )
    camera_accuracy_pct = models.FloatField(
        default=2.0, validators=[MinValueValidator(0), MaxValueValidator(50)]
    )
    scope_examined = models.TextField(blank=True, help_text="What was examined.")
    scope_not_examined = models.TextField(blank=True, help_text="What was not examined, and why.")
    notes = models.TextField(blank=True)
    status = models.CharField(max_length=10, choices=Status.choices, default=Status.ACTIVE)
    deleted_at = models.DateTimeField(null=True, blank=True)
    created_by = models.ForeignKey(
        settings.AUTH_USER_MODEL, on_delete=models.SET_NULL, null=True, blank=True, related_name="+"
    )
    created_at = models.DateTimeField(auto_now_add=True)
    updated_at = models.DateTimeField(auto_now=True)

    class Meta:
        ordering = ["-date", "-id"]

    def __str__(self) -> str:
        return self.title or f"{self.get_kind_display()} survey, {self.site} ({self.date})"

    @property
    def is_building(self) -> bool:
        return self.kind in {self.Kind.ENVELOPE, self.Kind.ROOF}


class Conditions(models.Model):
    """What the weather, the building and the load were doing during the survey."""

    class Sky(models.TextChoices):
        CLEAR = "clear", "Clear"
        PARTLY = "partly", "Partly cloudy"
        OVERCAST = "overcast", "Overcast"
        INDOORS = "indoors", "Indoors / not relevant"

    class Precipitation(models.TextChoices):
        NONE = "none", "None"
        DRIZZLE = "drizzle", "Drizzle or mist"
        RAIN = "rain", "Rain"
        SNOW = "snow", "Snow"

    survey = models.OneToOneField(
        Survey, on_delete=models.CASCADE, primary_key=True, related_name="conditions"
    )
    indoor_air_c = models.FloatField(
        null=True, blank=True, validators=[MinValueValidator(-50), MaxValueValidator(80)]
    )
    indoor_rh_pct = models.FloatField(
        null=True, blank=True, validators=[MinValueValidator(0), MaxValueValidator(100)]
    )
    outdoor_air_c = models.FloatField(
        null=True, blank=True, validators=[MinValueValidator(-60), MaxValueValidator(60)]
    )
    outdoor_rh_pct = models.FloatField(
        null=True, blank=True, validators=[MinValueValidator(0), MaxValueValidator(100)]
    )
    ambient_air_c = models.FloatField(
        null=True,
        blank=True,
        validators=[MinValueValidator(-60), MaxValueValidator(200)],
        help_text="Air around the equipment (electrical and mechanical surveys).",
    )
    wind_m_s = models.FloatField(
        null=True, blank=True, validators=[MinValueValidator(0), MaxValueValidator(80)]
    )
    sky = models.CharField(max_length=10, choices=Sky.choices, blank=True)
    precipitation = models.CharField(max_length=10, choices=Precipitation.choices, blank=True)
    surfaces_dry = models.BooleanField(null=True, blank=True)
    hours_since_sun = models.FloatField(
        null=True,
        blank=True,
        validators=[MinValueValidator(0), MaxValueValidator(1000)],
        help_text="Hours since direct sun last fell on the surveyed surfaces.",
    )
    delta_t_hours = models.FloatField(
        null=True,
        blank=True,
        validators=[MinValueValidator(0), MaxValueValidator(1000)],
        help_text="Hours the inside–outside difference had held before the survey.",
    )
    sunny_day_before = models.BooleanField(null=True, blank=True)
    load_pct = models.FloatField(
        null=True,
        blank=True,
        validators=[MinValueValidator(0), MaxValueValidator(150)],
        help_text="Electrical load as a percentage of rating at the time of the survey.",
    )
    equipment_steady = models.BooleanField(null=True, blank=True)
    covers_opened_by_qualified = models.BooleanField(null=True, blank=True)
    notes = models.TextField(blank=True)

    class Meta:
        verbose_name_plural = "conditions"
        constraints = [
            models.CheckConstraint(
                condition=Q(indoor_rh_pct__isnull=True)
                | Q(indoor_rh_pct__gte=0, indoor_rh_pct__lte=100),
                name="conditions_indoor_rh_range",
            ),
            models.CheckConstraint(
                condition=Q(load_pct__isnull=True) | Q(load_pct__gte=0, load_pct__lte=150),
                name="conditions_load_range",
            ),
        ]

    def __str__(self) -> str:
        return f"Conditions of {self.survey}"

    @property
    def inside_outside_difference_c(self) -> float | None:
        if self.indoor_air_c is None or self.outdoor_air_c is None:
            return None
        return self.indoor_air_c - self.outdoor_air_c


class Thermogram(models.Model):
    class Status(models.TextChoices):
        QUEUED = "queued", "Queued"
        PROCESSING = "processing", "Processing"
        READY = "ready", "Ready"
        FAILED = "failed", "Could not be read"
        DAMAGED = "damaged", "Original damaged"

    organization = models.ForeignKey(
        Organization, on_delete=models.CASCADE, related_name="thermograms"
    )
    survey = models.ForeignKey(Survey, on_delete=models.CASCADE, related_name="thermograms")
    asset = models.ForeignKey(
        Asset, on_delete=models.SET_NULL, null=True, blank=True, related_name="thermograms"
    )
    sequence = models.PositiveIntegerField(default=0)
    title = models.CharField(max_length=200, blank=True)
    # The original, stored unchanged; its sha256 is checked whenever it is read back.
    original = models.FileField(upload_to="originals/%Y/%m/", max_length=300)
    original_name = models.CharField(max_length=255)
    original_sha256 = models.CharField(max_length=64)
    original_size = models.BigIntegerField(default=0)
    # How the original is decoded: unit, scale, offset, palette inversion settings.
    decode_settings = models.JSONField(default=dict, blank=True)
    file_format = models.CharField(max_length=40, blank=True)
    estimated = models.BooleanField(
        default=False, help_text="Temperatures estimated from a false-colour picture."
    )
    status = models.CharField(max_length=12, choices=Status.choices, default=Status.QUEUED)
    error = models.TextField(blank=True)
    # Derived data, always rebuildable from the original and decode_settings.
    array = models.FileField(upload_to="arrays/%Y/%m/", max_length=300, blank=True)
    preview = models.FileField(upload_to="previews/%Y/%m/", max_length=300, blank=True)
    thumbnail = models.FileField(upload_to="thumbnails/%Y/%m/", max_length=300, blank=True)
    width = models.PositiveIntegerField(null=True, blank=True)
    height = models.PositiveIntegerField(null=True, blank=True)
    min_c = models.FloatField(null=True, blank=True)
    max_c = models.FloatField(null=True, blank=True)
    # Capture settings.
    captured_at = models.DateTimeField(null=True, blank=True)
    emissivity = models.FloatField(
        default=0.95, validators=[MinValueValidator(0.01), MaxValueValidator(1.0)]
    )
    reflected_c = models.FloatField(
        default=20.0, validators=[MinValueValidator(-60), MaxValueValidator(500)]
    )
    transmittance = models.FloatField(
        default=1.0, validators=[MinValueValidator(0.01), MaxValueValidator(1.0)]
    )
    atmosphere_c = models.FloatField(
        null=True, blank=True, validators=[MinValueValidator(-60), MaxValueValidator(100)]
    )
    distance_m = models.FloatField(
        null=True, blank=True, validators=[MinValueValidator(0.01), MaxValueValidator(10000)]
    )
    palette = models.CharField(max_length=40, default="black-red-yellow")
    span_low_c = models.FloatField(null=True, blank=True)
    span_high_c = models.FloatField(null=True, blank=True)
    # The paired visual photo and its alignment to the thermogram (affine, 2×3).
    photo = models.FileField(upload_to="photos/%Y/%m/", max_length=300, blank=True)
    photo_sha256 = models.CharField(max_length=64, blank=True)
    photo_alignment = models.JSONField(null=True, blank=True)
    note = models.TextField(blank=True)
    created_by = models.ForeignKey(
        settings.AUTH_USER_MODEL, on_delete=models.SET_NULL, null=True, blank=True, related_name="+"
    )
    created_at = models.DateTimeField(auto_now_add=True)
    processed_at = models.DateTimeField(null=True, blank=True)
    # Set when a worker claims the job and while it works; a stale one means a stalled job.
    heartbeat_at = models.DateTimeField(null=True, blank=True)
    # The job could not be handed to the broker; the re-queue job sends it when it is back.
    waiting_for_broker = models.BooleanField(default=False)
    # How many times a worker has taken the job; one lost too often is failed, not retried.
    attempts = models.PositiveSmallIntegerField(default=0)

    class Meta:
        ordering = ["survey", "sequence", "id"]
        constraints = [
            # The same bytes once per survey, also when two uploads race each other.
            models.UniqueConstraint(
                fields=["survey", "original_sha256"], name="thermogram_content_once_per_survey"
            ),
            models.CheckConstraint(
                condition=Q(emissivity__gt=0, emissivity__lte=1), name="thermogram_emissivity_range"
            ),
            models.CheckConstraint(
                condition=Q(transmittance__gt=0, transmittance__lte=1),
                name="thermogram_transmittance_range",
            ),
        ]

    def __str__(self) -> str:
        return self.title or self.original_name

    @property
    def is_ready(self) -> bool:
        return self.status == self.Status.READY


def mark_label(index: int) -> str:
    """A, B, … Z, AA, AB, … for the index-th mark of a thermogram (0-based)."""
    letters = string.ascii_uppercase
    label = ""
    index += 1
    while index:
        index, rest = divmod(index - 1, 26)
        label = letters[rest] + label
    return label


class Mark(models.Model):
    class Kind(models.TextChoices):
        POINT = "point", "Point"
        RECTANGLE = "rectangle", "Rectangle"
        ELLIPSE = "ellipse", "Ellipse"
        POLYGON = "polygon", "Polygon"
        LINE = "line", "Line"

    class ReferenceKind(models.TextChoices):
        NONE = "none", "No reference"
        MARK = "mark", "Another mark"
        AMBIENT = "ambient", "Ambient air"

    thermogram = models.ForeignKey(Thermogram, on_delete=models.CASCADE, related_name="marks")
    label = models.CharField(max_length=8)
    kind = models.CharField(max_length=10, choices=Kind.choices)
    points = models.JSONField(help_text="Pixel coordinates [[x, y], …].")
    single_pixel = models.BooleanField(default=False)
    emissivity = models.FloatField(
        null=True, blank=True, validators=[MinValueValidator(0.01), MaxValueValidator(1.0)]
    )
    reflected_c = models.FloatField(
        null=True, blank=True, validators=[MinValueValidator(-60), MaxValueValidator(500)]
    )
    reference_kind = models.CharField(
        max_length=10, choices=ReferenceKind.choices, default=ReferenceKind.NONE
    )
    reference_mark = models.ForeignKey(
        "self", on_delete=models.SET_NULL, null=True, blank=True, related_name="+"
    )
    note = models.TextField(blank=True, max_length=4000)
    # Statistics of the apparent temperatures, cached when the mark is saved.
    stats = models.JSONField(default=dict, blank=True)
    # Counts the changes; a change made to an older version is refused (two people marking
    # the same thermogram never overwrite each other silently).
    version = models.PositiveIntegerField(default=1)
    created_at = models.DateTimeField(auto_now_add=True)
    updated_at = models.DateTimeField(auto_now=True)

    class Meta:
        ordering = ["thermogram", "id"]
        constraints = [
            models.UniqueConstraint(fields=["thermogram", "label"], name="mark_label_unique"),
            models.CheckConstraint(
                condition=Q(emissivity__isnull=True) | Q(emissivity__gt=0, emissivity__lte=1),
                name="mark_emissivity_range",
            ),
        ]

    def __str__(self) -> str:
        return f"{self.label} ({self.get_kind_display()})"

    @property
    def effective_emissivity(self) -> float:
        return self.emissivity if self.emissivity is not None else self.thermogram.emissivity

    @property
    def effective_reflected_c(self) -> float:
        return self.reflected_c if self.reflected_c is not None else self.thermogram.reflected_c


class CriteriaTable(models.Model):
    """A severity table held as data; organization null means the product's default."""

    organization = models.ForeignKey(
        Organization,
        on_delete=models.CASCADE,
        null=True,
        blank=True,
        related_name="criteria_tables",
    )
    key = models.CharField(max_length=60, help_text="e.g. electrical-similar, electrical-ambient.")
    name = models.CharField(max_length=200)
    source = models.TextField(blank=True)
    rows = models.JSONField(default=list)
    copied_from = models.ForeignKey(
        "self", on_delete=models.SET_NULL, null=True, blank=True, related_name="+"
    )
    updated_at = models.DateTimeField(auto_now=True)

    class Meta:
        ordering = ["key", "name"]
        constraints = [
            models.UniqueConstraint(
                fields=["organization", "key"], name="criteria_table_key_per_org"
            ),
        ]

    def __str__(self) -> str:
        return self.name


class Finding(models.Model):
    class Status(models.TextChoices):
        OPEN = "open", "Open"
        REPAIRED = "repaired", "Repaired"
        VERIFIED = "verified", "Verified"

    class Level(models.IntegerChoices):
        ACT_NOW = 1, "1 act now"
        ACT_SOON = 2, "2 act soon"
        PLAN_REPAIR = 3, "3 plan repair"
        WATCH = 4, "4 watch"

    organization = models.ForeignKey(
        Organization, on_delete=models.CASCADE, related_name="findings"
    )
    survey = models.ForeignKey(Survey, on_delete=models.CASCADE, related_name="findings")
    thermogram = models.ForeignKey(
        Thermogram, on_delete=models.CASCADE, null=True, blank=True, related_name="findings"
    )
    asset = models.ForeignKey(
        Asset, on_delete=models.SET_NULL, null=True, blank=True, related_name="findings"
    )
    marks = models.ManyToManyField(Mark, blank=True, related_name="findings")
    previous = models.ForeignKey(
        "self",
        on_delete=models.SET_NULL,
        null=True,
        blank=True,
        related_name="follow_ups",
        help_text="The finding of an earlier visit that this one re-measures.",
    )
    category = models.CharField(max_length=40)
    location = models.CharField(max_length=200, blank=True)
    description = models.TextField(blank=True)
    basis = models.CharField(
        max_length=20, blank=True, help_text="similar, ambient, envelope, roof…"
    )
    suggested_level = models.PositiveSmallIntegerField(choices=Level.choices, null=True, blank=True)
    suggestion = models.JSONField(
        default=dict, blank=True, help_text="Why the level was suggested."
    )
    level = models.PositiveSmallIntegerField(choices=Level.choices, null=True, blank=True)
    override_reason = models.TextField(blank=True)
    criteria_table = models.ForeignKey(
        CriteriaTable, on_delete=models.SET_NULL, null=True, blank=True, related_name="+"
    )
    criteria_row = models.CharField(max_length=200, blank=True)
    rise_c = models.FloatField(null=True, blank=True)
    corrected_rise_c = models.FloatField(null=True, blank=True)
    max_corrected_c = models.FloatField(null=True, blank=True)
    recommendation = models.TextField(blank=True)
    status = models.CharField(max_length=10, choices=Status.choices, default=Status.OPEN)
    status_changed_at = models.DateTimeField(null=True, blank=True)
    created_by = models.ForeignKey(
        settings.AUTH_USER_MODEL, on_delete=models.SET_NULL, null=True, blank=True, related_name="+"
    )
    created_at = models.DateTimeField(auto_now_add=True)
    updated_at = models.DateTimeField(auto_now=True)

    class Meta:
        ordering = ["level", "created_at"]
        constraints = [
            models.CheckConstraint(
                condition=Q(level__isnull=True) | Q(level__gte=1, level__lte=4),
                name="finding_level_range",
            ),
        ]

    def __str__(self) -> str:
        return f"{self.category} ({self.get_level_display() or 'no level'})"

    @property
    def is_overridden(self) -> bool:
        return self.level is not None and self.level != self.suggested_level


class HeatLossEstimate(models.Model):
    """An indicative heat loss for a marked surface, with every input kept beside the result."""

    organization = models.ForeignKey(
        Organization, on_delete=models.CASCADE, related_name="heat_loss_estimates"
    )
    survey = models.ForeignKey(Survey, on_delete=models.CASCADE, related_name="heat_loss_estimates")
    finding = models.ForeignKey(
        Finding, on_delete=models.CASCADE, null=True, blank=True, related_name="heat_loss_estimates"
    )
    mark = models.ForeignKey(
        Mark, on_delete=models.SET_NULL, null=True, blank=True, related_name="heat_loss_estimates"
    )
    label = models.CharField(max_length=200)
    inputs = models.JSONField(default=dict)
    results = models.JSONField(default=dict)
    created_at = models.DateTimeField(auto_now_add=True)

    class Meta:
        ordering = ["survey", "id"]

    def __str__(self) -> str:
        return self.label


class AuditEvent(models.Model):
    """Who created, changed, issued, shared or downloaded what."""

    organization = models.ForeignKey(
        Organization, on_delete=models.CASCADE, null=True, related_name="audit_events"
    )
    actor = models.ForeignKey(
        settings.AUTH_USER_MODEL, on_delete=models.SET_NULL, null=True, blank=True, related_name="+"
    )
    action = models.CharField(max_length=40)
    object_type = models.CharField(max_length=40)
    object_id = models.CharField(max_length=40, blank=True)
    detail = models.JSONField(default=dict, blank=True)
    at = models.DateTimeField(auto_now_add=True)

    class Meta:
        ordering = ["-at", "-id"]

    def __str__(self) -> str:
        return f"{self.action} {self.object_type} {self.object_id}"


class SignInThrottle(models.Model):
    """Failed sign-ins counted per client address and per username, in one indexed table.

    An address has a token bucket (each failure takes a token, tokens come back with time;
    an empty bucket refuses that address). A username counts its failures from any address
    and asks for a short, growing wait between attempts instead of locking the account.
    Rows idle for long are pruned (survey.jobs.prune_signin_throttle).
    """

    class Scope(models.TextChoices):
        ADDRESS = "address", "Client address"
        USERNAME = "username", "Username"

    scope = models.CharField(max_length=10, choices=Scope.choices)
    key = models.CharField(max_length=150)
    tokens = models.FloatField(default=0.0)
    failures = models.PositiveIntegerField(default=0)
    last_failure_at = models.DateTimeField(null=True, blank=True)
    updated_at = models.DateTimeField()

    class Meta:
        constraints = [
            models.UniqueConstraint(fields=["scope", "key"], name="signin_throttle_key"),
        ]
        indexes = [models.Index(fields=["updated_at"], name="signin_throttle_updated")]

    def __str__(self) -> str:
        return f"{self.scope} {self.key}"
