"""The survey domain: who surveys what, the thermograms, their marks and the findings.

Temperatures are stored in °C whatever the user displays. Every row a user can reach
belongs to exactly one Organization; access.py is the one place that scopes queries.
"""

import string

from django.conf import settings
from django.core.validators import MaxValueValidator, MinValueValidator
from django.db import models
from django.db.models import Q


class LiveManager(models.Manager):
    """Rows not deleted (recoverably): what every list, page and related set shows.

    The first manager of a model is its default one, which Django also uses for reverse
    relations (``survey.thermograms``), so a deleted row vanishes everywhere at once. The
    base manager (forward relations such as ``mark.thermogram``) still reaches it, and
    ``all_objects`` lists deleted rows for the restore page and the purge.
    """

    def get_queryset(self):
        return super().get_queryset().filter(deleted_at__isnull=True)


class AllRowsManager(models.Manager):
    """Every row, deleted ones included (restore pages, purges)."""


# What each severity level asks of the client in time: common practice, no source; each
# organization words its own on its settings page.
LEVEL_TIME_DEFAULTS = {
    1: "Make safe or repair now, within 24 hours.",
    2: "Repair within two weeks.",
    3: "Plan the repair for the next maintenance window, within three months.",
    4: "No repair needed yet; look again at the next inspection.",
}


class Organization(models.Model):
    name = models.CharField(max_length=200)
    slug = models.SlugField(max_length=80, unique=True)
    allow_self_review = models.BooleanField(
        default=False,
        help_text="Let the thermographer of a survey also issue its report (one-person "
        "firms); such reports say they were not independently reviewed.",
    )
    # Letterhead: printed on a report's cover and in every page's footer.
    address = models.TextField(blank=True)
    phone = models.CharField(max_length=50, blank=True)
    email = models.EmailField(blank=True)
    website = models.CharField(max_length=200, blank=True)
    logo = models.FileField(upload_to="letterheads/%Y/%m/", max_length=300, blank=True)
    # Re-inspection of equipment without an interval of its own (NFPA 70B asks for infrared
    # inspection of electrical equipment at least every 12 months).
    reinspection_interval_months = models.PositiveSmallIntegerField(
        default=12, validators=[MinValueValidator(1), MaxValueValidator(120)]
    )
    # What each severity level means in time, in the report's plain-language summary.
    level_1_time = models.CharField(max_length=200, blank=True, default=LEVEL_TIME_DEFAULTS[1])
    level_2_time = models.CharField(max_length=200, blank=True, default=LEVEL_TIME_DEFAULTS[2])
    level_3_time = models.CharField(max_length=200, blank=True, default=LEVEL_TIME_DEFAULTS[3])
    level_4_time = models.CharField(max_length=200, blank=True, default=LEVEL_TIME_DEFAULTS[4])
    created_at = models.DateTimeField(auto_now_add=True)

    class Meta:
        ordering = ["name"]

    def __str__(self) -> str:
        return self.name

    def level_time(self, level: int) -> str:
        return getattr(self, f"level_{level}_time", "") or LEVEL_TIME_DEFAULTS.get(level, "")

    @property
    def contact_line(self) -> str:
        return " · ".join(v for v in (self.phone, self.email, self.website) if v)


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
    # The thermography qualification as a record: printed for the thermographer and the
    # reviewer, and an expired one warns when a report is issued.
    qualification_scheme = models.CharField(max_length=120, blank=True)
    qualification_level = models.CharField(max_length=60, blank=True)
    certificate_number = models.CharField(max_length=100, blank=True)
    qualification_expires = models.DateField(null=True, blank=True)
    signature = models.FileField(upload_to="signatures/%Y/%m/", max_length=300, blank=True)

    class SpeedUnit(models.TextChoices):
        METRES_PER_SECOND = "m_s", "m/s"
        MILES_PER_HOUR = "mph", "mph"

    class LengthUnit(models.TextChoices):
        METRES = "m", "m"
        FEET = "ft", "ft"

    temperature_unit = models.CharField(
        max_length=1, choices=TemperatureUnit.choices, default=TemperatureUnit.CELSIUS
    )
    speed_unit = models.CharField(
        max_length=4, choices=SpeedUnit.choices, default=SpeedUnit.METRES_PER_SECOND
    )
    length_unit = models.CharField(
        max_length=2, choices=LengthUnit.choices, default=LengthUnit.METRES
    )

    class Meta:
        ordering = ["user__username"]

    def __str__(self) -> str:
        return self.display_name

    @property
    def display_name(self) -> str:
        return self.user.get_full_name() or self.user.username

    @property
    def qualification_text(self) -> str:
        """The qualification as printed: the record's scheme, level and certificate, or the
        free text of members recorded before the record existed."""
        parts = [self.qualification_scheme]
        if self.qualification_level:
            parts.append(f"level {self.qualification_level}")
        if self.certificate_number:
            parts.append(f"certificate {self.certificate_number}")
        text = ", ".join(part for part in parts if part)
        return text or self.qualification

    def qualification_expired_on(self, day) -> bool:
        return self.qualification_expires is not None and self.qualification_expires < day

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
    deleted_at = models.DateTimeField(null=True, blank=True)

    objects = LiveManager()
    all_objects = AllRowsManager()

    class Meta:
        ordering = ["name"]

    def __str__(self) -> str:
        return self.name


class Site(models.Model):
    organization = models.ForeignKey(Organization, on_delete=models.CASCADE, related_name="sites")
    client = models.ForeignKey(Client, on_delete=models.PROTECT, related_name="sites")
    name = models.CharField(max_length=200)
    address = models.TextField(blank=True)
    deleted_at = models.DateTimeField(null=True, blank=True)

    objects = LiveManager()
    all_objects = AllRowsManager()

    class Meta:
        ordering = ["name"]

    def __str__(self) -> str:
        return self.name


class Asset(models.Model):
    class Kind(models.TextChoices):
        PANEL = "panel", "Electrical panel"
        SWITCHGEAR = "switchgear", "Switchgear"
        BREAKER = "breaker", "Breaker"
        BUSWAY = "busway", "Busway"
        MOTOR_CONTROL_CENTRE = "mcc", "Motor control centre"
        DISCONNECT = "disconnect", "Disconnect switch"
        CABLE = "cable", "Cable or termination"
        TRANSFORMER = "transformer", "Transformer"
        MOTOR = "motor", "Motor"
        PUMP = "pump", "Pump"
        BEARING = "bearing", "Bearing or coupling"
        STEAM_LINE = "steam_line", "Steam line"
        STEAM_TRAP = "steam_trap", "Steam trap"
        WALL_ZONE = "wall_zone", "Wall zone"
        ROOF_SECTION = "roof_section", "Roof section"
        WINDOW = "window", "Window or door"
        OTHER = "other", "Other"

    class RatingUnit(models.TextChoices):
        AMPERES = "A", "A"
        KILOWATTS = "kW", "kW"

    class Criticality(models.TextChoices):
        HIGH = "high", "High"
        MEDIUM = "medium", "Medium"
        LOW = "low", "Low"

    organization = models.ForeignKey(Organization, on_delete=models.CASCADE, related_name="assets")
    site = models.ForeignKey(Site, on_delete=models.PROTECT, related_name="assets")
    name = models.CharField(max_length=200)
    kind = models.CharField(max_length=20, choices=Kind.choices, default=Kind.OTHER)
    tag = models.CharField(max_length=100, blank=True, help_text="The plant's equipment id.")
    location = models.CharField(max_length=200, blank=True)
    notes = models.TextField(blank=True)
    rating = models.FloatField(
        null=True,
        blank=True,
        validators=[MinValueValidator(0.001), MaxValueValidator(1_000_000)],
        help_text="Nameplate rating, in the unit beside it.",
    )
    rating_unit = models.CharField(max_length=2, choices=RatingUnit.choices, blank=True)
    criticality = models.CharField(
        max_length=10, choices=Criticality.choices, default=Criticality.MEDIUM
    )
    # NFPA 70B (2023) asks for infrared inspection of electrical equipment at least every
    # 12 months (from secondary sources); the interval is the organization's to change.
    inspection_interval_months = models.PositiveSmallIntegerField(
        default=12,
        validators=[MinValueValidator(1), MaxValueValidator(120)],
        help_text="Months between infrared inspections.",
    )
    round_order = models.PositiveIntegerField(
        default=0, help_text="Place on the inspection round: lower numbers come first."
    )
    retired_at = models.DateTimeField(
        null=True, blank=True, help_text="Out of service: kept for its history, not due."
    )
    deleted_at = models.DateTimeField(null=True, blank=True)

    objects = LiveManager()
    all_objects = AllRowsManager()

    class Meta:
        ordering = ["site__name", "round_order", "name"]
        constraints = [
            models.CheckConstraint(
                condition=Q(rating__isnull=True) | ~Q(rating_unit=""),
                name="asset_rating_has_unit",
            ),
        ]

    def __str__(self) -> str:
        return f"{self.name} ({self.tag})" if self.tag else self.name

    @property
    def is_retired(self) -> bool:
        return self.retired_at is not None

    @property
    def rating_text(self) -> str:
        return f"{self.rating:g} {self.rating_unit}" if self.rating is not None else ""


class SpanRule(models.TextChoices):
    """How a thermogram's colour span is chosen when no fixed span is set."""

    AUTO = "auto", "Automatic (1st to 99th percentile, widened to every mark's extremes)"
    MARKS = "marks", "Automatic, widened to every mark's extremes"


class Instrument(models.Model):
    """A thermal camera of the organization: what a survey's pixel geometry and accuracy
    are computed from (the lens's field of view across the detector's width)."""

    organization = models.ForeignKey(
        Organization, on_delete=models.CASCADE, related_name="instruments"
    )
    model_name = models.CharField(max_length=200, help_text="Make and model of the camera.")
    serial_number = models.CharField(max_length=100, blank=True)
    detector_width_px = models.PositiveIntegerField(
        validators=[MinValueValidator(8), MaxValueValidator(10000)],
        help_text="Pixels across the detector.",
    )
    detector_height_px = models.PositiveIntegerField(
        validators=[MinValueValidator(8), MaxValueValidator(10000)],
        help_text="Pixels down the detector.",
    )
    lens_hfov_deg = models.FloatField(
        validators=[MinValueValidator(1.0), MaxValueValidator(170.0)],
        help_text="Horizontal field of view of the lens, degrees.",
    )
    netd_mk = models.FloatField(
        null=True,
        blank=True,
        validators=[MinValueValidator(1), MaxValueValidator(1000)],
        help_text="Thermal sensitivity (NETD), mK.",
    )
    accuracy_c = models.FloatField(
        default=2.0, validators=[MinValueValidator(0), MaxValueValidator(50)]
    )
    accuracy_pct = models.FloatField(
        default=2.0, validators=[MinValueValidator(0), MaxValueValidator(50)]
    )
    calibration_date = models.DateField(null=True, blank=True)
    calibration_due = models.DateField(null=True, blank=True)
    certificate_reference = models.CharField(max_length=200, blank=True)
    created_at = models.DateTimeField(auto_now_add=True)
    updated_at = models.DateTimeField(auto_now=True)

    class Meta:
        ordering = ["model_name", "serial_number", "id"]
        constraints = [
            models.CheckConstraint(
                condition=Q(lens_hfov_deg__gt=0, lens_hfov_deg__lt=180),
                name="instrument_hfov_range",
            ),
        ]

    def __str__(self) -> str:
        serial = f", serial {self.serial_number}" if self.serial_number else ""
        size = f"{self.detector_width_px} × {self.detector_height_px}"
        return f"{self.model_name}{serial} ({size}, {self.lens_hfov_deg:g}°)"


def validate_time_zone(value: str) -> None:
    """An IANA zone name ("Europe/Berlin") or a fixed UTC offset ("+01:00")."""
    from django.core.exceptions import ValidationError

    from survey.thermal.logger import parse_time_zone

    if not value:
        return
    try:
        parse_time_zone(value)
    except ValueError:
        raise ValidationError(
            f"{value!r} is not a time zone: give a name such as Europe/Berlin or "
            "America/Chicago, or a UTC offset such as +01:00."
        ) from None


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
    start_time = models.TimeField(
        null=True, blank=True, help_text="Local time the survey began (roofs: at night)."
    )
    end_time = models.TimeField(null=True, blank=True, help_text="Local time the survey ended.")
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
    # The organization's camera record; the free text and ifov_mrad above are kept for
    # surveys recorded before instruments existed, and used only when this is empty.
    camera = models.ForeignKey(
        Instrument, on_delete=models.SET_NULL, null=True, blank=True, related_name="surveys"
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
    deviations = models.TextField(
        blank=True, help_text="Where the work departed from the firm's procedure, and why."
    )
    notes = models.TextField(blank=True)
    building_description = models.TextField(
        blank=True,
        max_length=4000,
        help_text="The building and its construction (walls, roof, insulation, age).",
    )
    roof_membrane = models.CharField(
        max_length=200, blank=True, help_text="Roof membrane, e.g. bitumen felt, EPDM, PVC."
    )
    roof_insulation = models.CharField(
        max_length=200, blank=True, help_text="Roof insulation, e.g. mineral wool, PIR boards."
    )
    # The roof plan as uploaded: a new upload stores a new file, the old one is never
    # rewritten. Thermograms are placed on it in percent of its width and height.
    roof_plan = models.FileField(upload_to="plans/%Y/%m/", max_length=300, blank=True)
    roof_plan_name = models.CharField(max_length=255, blank=True)
    roof_plan_sha256 = models.CharField(max_length=64, blank=True)
    roof_plan_width = models.PositiveIntegerField(null=True, blank=True)
    roof_plan_height = models.PositiveIntegerField(null=True, blank=True)
    time_zone = models.CharField(
        max_length=64,
        blank=True,
        validators=[validate_time_zone],
        help_text="Of the site's clocks (camera and loggers), e.g. Europe/Berlin; "
        "blank: the server's.",
    )
    # Defaults of the survey: emissivity and reflected temperature offered for each upload,
    # and how new (or, on request, all) thermograms are shown.
    default_emissivity = models.FloatField(
        null=True, blank=True, validators=[MinValueValidator(0.01), MaxValueValidator(1.0)]
    )
    default_reflected_c = models.FloatField(
        null=True, blank=True, validators=[MinValueValidator(-60), MaxValueValidator(500)]
    )
    default_palette = models.CharField(max_length=40, blank=True)
    default_span_rule = models.CharField(
        max_length=10, choices=SpanRule.choices, default=SpanRule.AUTO
    )
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

    class PressureMethod(models.TextChoices):
        BLOWER_DOOR = "blower_door", "Blower door"
        BUILDING_FANS = "fans", "Building's own ventilation"
        NONE = "none", "Not induced (natural conditions)"

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
    roof_surface_c = models.FloatField(
        null=True,
        blank=True,
        validators=[MinValueValidator(-60), MaxValueValidator(80)],
        help_text="Coldest dry roof membrane temperature (roof surveys).",
    )
    design_indoor_c = models.FloatField(
        null=True, blank=True, validators=[MinValueValidator(-10), MaxValueValidator(40)]
    )
    design_indoor_rh_pct = models.FloatField(
        null=True, blank=True, validators=[MinValueValidator(1), MaxValueValidator(100)]
    )
    design_outdoor_c = models.FloatField(
        null=True, blank=True, validators=[MinValueValidator(-60), MaxValueValidator(30)]
    )
    rain_24h_mm = models.FloatField(
        null=True,
        blank=True,
        validators=[MinValueValidator(0), MaxValueValidator(500)],
        help_text="Rain in the 24 hours before the survey (roof surveys).",
    )
    pressure_difference_pa = models.FloatField(
        null=True,
        blank=True,
        validators=[MinValueValidator(-200), MaxValueValidator(200)],
        help_text="Inside–outside pressure difference when measured (positive: inside higher).",
    )
    pressure_method = models.CharField(max_length=12, choices=PressureMethod.choices, blank=True)
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

    class EmissivityMethod(models.TextChoices):
        TAPE = "tape", "Tape or paint of known emissivity beside the spot"
        REFERENCE = "reference", "Reference emitter"
        CONTACT = "contact", "Contact thermometer on the surface"
        TABLE = "table", "Published table for the material"
        SURVEY = "survey", "The survey's setting for the material"

    class ReflectedMethod(models.TextChoices):
        REFLECTOR = "reflector", "Reflector method (crumpled foil)"
        DIRECT = "direct", "Direct method (camera at emissivity 1 towards the surroundings)"
        AIR = "air", "Taken as the air temperature"
        ESTIMATE = "estimate", "Estimated from the surroundings"

    class LoadMethod(models.TextChoices):
        CLAMP = "clamp", "Clamp meter at the time of the thermogram"
        METER = "meter", "Installed panel meter"
        SCADA = "scada", "Building or plant control system"
        ESTIMATE = "estimate", "Estimated by the operator"

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
    # sha256 of the °C array file's content: the temperatures' ETag changes when it does.
    array_sha256 = models.CharField(max_length=64, blank=True)
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
    emissivity_method = models.CharField(
        max_length=12, choices=EmissivityMethod.choices, blank=True
    )
    reflected_method = models.CharField(max_length=12, choices=ReflectedMethod.choices, blank=True)
    # Electrical load at the time of the thermogram, per phase, and how it was measured.
    load_l1_a = models.FloatField(
        null=True, blank=True, validators=[MinValueValidator(0), MaxValueValidator(100000)]
    )
    load_l2_a = models.FloatField(
        null=True, blank=True, validators=[MinValueValidator(0), MaxValueValidator(100000)]
    )
    load_l3_a = models.FloatField(
        null=True, blank=True, validators=[MinValueValidator(0), MaxValueValidator(100000)]
    )
    load_method = models.CharField(max_length=12, choices=LoadMethod.choices, blank=True)
    palette = models.CharField(max_length=40, default="black-red-yellow")
    span_low_c = models.FloatField(null=True, blank=True)
    span_high_c = models.FloatField(null=True, blank=True)
    span_rule = models.CharField(max_length=10, choices=SpanRule.choices, default=SpanRule.AUTO)
    # The paired visual photo and its alignment to the thermogram (affine, 2×3).
    photo = models.FileField(upload_to="photos/%Y/%m/", max_length=300, blank=True)
    photo_sha256 = models.CharField(max_length=64, blank=True)
    photo_alignment = models.JSONField(null=True, blank=True)
    note = models.TextField(blank=True)
    plan_x_pct = models.FloatField(
        null=True,
        blank=True,
        validators=[MinValueValidator(0), MaxValueValidator(100)],
        help_text="Position on the roof plan, percent of its width from the left.",
    )
    plan_y_pct = models.FloatField(
        null=True,
        blank=True,
        validators=[MinValueValidator(0), MaxValueValidator(100)],
        help_text="Position on the roof plan, percent of its height from the top.",
    )
    created_by = models.ForeignKey(
        settings.AUTH_USER_MODEL, on_delete=models.SET_NULL, null=True, blank=True, related_name="+"
    )
    created_at = models.DateTimeField(auto_now_add=True)
    processed_at = models.DateTimeField(null=True, blank=True)
    # Set when a worker claims the job and while it works; a stale one means a stalled job.
    heartbeat_at = models.DateTimeField(null=True, blank=True)
    deleted_at = models.DateTimeField(null=True, blank=True)
    # The job could not be handed to the broker; the re-queue job sends it when it is back.
    waiting_for_broker = models.BooleanField(default=False)
    # How many times a worker has taken the job; one lost too often is failed, not retried.
    attempts = models.PositiveSmallIntegerField(default=0)

    objects = LiveManager()
    all_objects = AllRowsManager()

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

    class RiseMethod(models.TextChoices):
        HOTTEST_TO_HOTTEST = "hottest_to_hottest", "hottest to hottest"
        HOTTEST_TO_MEAN = "hottest_to_mean", "hottest to mean"

    thermogram = models.ForeignKey(Thermogram, on_delete=models.CASCADE, related_name="marks")
    label = models.CharField(max_length=8)
    name = models.CharField(
        max_length=20,
        blank=True,
        help_text="Optional short name shown with the letter: L1, N, lug 3.",
    )
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
    # How the rise over a reference mark is taken: like components hottest to hottest
    # unless the inspector chooses otherwise.
    rise_method = models.CharField(
        max_length=20, choices=RiseMethod.choices, default=RiseMethod.HOTTEST_TO_HOTTEST
    )
    note = models.TextField(blank=True, max_length=4000)
    load_current_a = models.FloatField(
        null=True,
        blank=True,
        validators=[MinValueValidator(0), MaxValueValidator(1_000_000)],
        help_text="Load current measured on this phase or component at the time, in A.",
    )
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
        return f"{self.title} ({self.get_kind_display()})"

    @property
    def title(self) -> str:
        """The letter with the short name when there is one: 'A (L1)'."""
        return f"{self.label} ({self.name})" if self.name else self.label

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
    # Internal notes of whoever set the table up; never printed for a client (see basis).
    source = models.TextField(blank=True)
    # The firm's provenance, printed in reports: the standard and clause the bands rest on,
    # and who of the firm reviewed the table and when (cleared when the rows change).
    basis = models.CharField(max_length=300, blank=True)
    reviewed_by = models.ForeignKey(
        "Member", on_delete=models.SET_NULL, null=True, blank=True, related_name="+"
    )
    reviewed_at = models.DateTimeField(null=True, blank=True)
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

    @property
    def is_reviewed(self) -> bool:
        """Reviewed by a member of the firm that owns it (a product default never is)."""
        return self.organization_id is not None and self.reviewed_at is not None


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
    reference_mark = models.ForeignKey(
        Mark,
        on_delete=models.SET_NULL,
        null=True,
        blank=True,
        related_name="reference_of_findings",
        help_text="The like component a rise was taken over.",
    )
    rise_method = models.CharField(max_length=20, choices=Mark.RiseMethod.choices, blank=True)
    load_exponent = models.FloatField(
        null=True,
        blank=True,
        validators=[MinValueValidator(1.0), MaxValueValidator(3.0)],
        help_text="Exponent n of the load correction ΔT·(100/load)^n.",
    )
    rise_c = models.FloatField(null=True, blank=True)
    corrected_rise_c = models.FloatField(null=True, blank=True)
    max_corrected_c = models.FloatField(null=True, blank=True)
    recommendation = models.TextField(blank=True)
    # The readings the finding was judged on, by mark label; compared with the marks now.
    readings_snapshot = models.JSONField(default=dict, blank=True)
    status = models.CharField(max_length=10, choices=Status.choices, default=Status.OPEN)
    status_changed_at = models.DateTimeField(null=True, blank=True)
    # How "verified" was earned: a later measurement that passed the check, or an override.
    verification = models.JSONField(default=dict, blank=True)
    verification_reason = models.TextField(
        blank=True, help_text="Why the finding was verified without a later measurement."
    )
    created_by = models.ForeignKey(
        settings.AUTH_USER_MODEL, on_delete=models.SET_NULL, null=True, blank=True, related_name="+"
    )
    created_at = models.DateTimeField(auto_now_add=True)
    updated_at = models.DateTimeField(auto_now=True)
    deleted_at = models.DateTimeField(null=True, blank=True)

    objects = LiveManager()
    all_objects = AllRowsManager()

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


class MoistureCheck(models.Model):
    """A core cut or moisture-meter reading that confirms (or not) a roof finding."""

    class Method(models.TextChoices):
        CORE = "core", "Core sample"
        METER = "meter", "Moisture meter"

    class Result(models.TextChoices):
        WET = "wet", "Wet"
        DRY = "dry", "Dry"

    finding = models.ForeignKey(Finding, on_delete=models.CASCADE, related_name="moisture_checks")
    method = models.CharField(max_length=10, choices=Method.choices)
    checked_on = models.DateField()
    result = models.CharField(max_length=10, choices=Result.choices)
    reading = models.CharField(
        max_length=100,
        blank=True,
        help_text="The meter's reading with its scale, or what the core showed, e.g. 38 % WME.",
    )
    note = models.TextField(blank=True, max_length=2000)
    created_by = models.ForeignKey(
        settings.AUTH_USER_MODEL, on_delete=models.SET_NULL, null=True, blank=True, related_name="+"
    )
    created_at = models.DateTimeField(auto_now_add=True)

    class Meta:
        ordering = ["checked_on", "id"]

    def __str__(self) -> str:
        return f"{self.get_method_display()} {self.checked_on}: {self.get_result_display()}"


class Acknowledgement(models.Model):
    """A client's answer to a finding, given on the report's share page without an account."""

    finding = models.ForeignKey(Finding, on_delete=models.CASCADE, related_name="acknowledgements")
    repair_scheduled_for = models.DateField(null=True, blank=True)
    note = models.TextField(blank=True, max_length=2000)
    name = models.CharField(max_length=200, blank=True, help_text="Who answered, as they typed it.")
    share_link_id = models.PositiveBigIntegerField(
        null=True, blank=True, help_text="The share link it came through (reports app)."
    )
    created_at = models.DateTimeField(auto_now_add=True)

    class Meta:
        ordering = ["-created_at", "-id"]

    def __str__(self) -> str:
        return f"Acknowledgement of {self.finding}"


class RoundStop(models.Model):
    """An asset due on a survey made as a round of a site, in the round's order."""

    survey = models.ForeignKey(Survey, on_delete=models.CASCADE, related_name="round_stops")
    asset = models.ForeignKey(Asset, on_delete=models.CASCADE, related_name="round_stops")
    position = models.PositiveIntegerField(default=0)
    due_on = models.DateField(null=True, blank=True, help_text="When the asset fell due.")
    skip_reason = models.CharField(max_length=300, blank=True)

    class Meta:
        ordering = ["survey", "position", "id"]
        constraints = [
            models.UniqueConstraint(fields=["survey", "asset"], name="round_stop_once"),
        ]

    def __str__(self) -> str:
        return f"{self.asset} on {self.survey}"


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
        # The audit page lists one organization's events, newest first.
        indexes = [models.Index(fields=["organization", "-at", "-id"], name="audit_org_time_idx")]

    def __str__(self) -> str:
        return f"{self.action} {self.object_type} {self.object_id}"


# --- beyond the desk: proposals, logged conditions, mark templates (issue 18) -------------


class Proposal(models.Model):
    """A mark the software suggests; the inspector accepts it (it becomes a mark) or not.

    Rejected proposals stay, so that the same place is not proposed again.
    """

    class Category(models.TextChoices):
        ENVELOPE = "envelope", "Mould or condensation risk"
        HOT_SPOT = "hot_spot", "Hot spot"
        REFERENCE = "reference", "Reference"
        ROOF = "roof", "Possibly wet roof insulation"

    class Status(models.TextChoices):
        PROPOSED = "proposed", "Proposed"
        ACCEPTED = "accepted", "Accepted"
        REJECTED = "rejected", "Rejected"

    thermogram = models.ForeignKey(Thermogram, on_delete=models.CASCADE, related_name="proposals")
    rank = models.PositiveIntegerField(default=0)
    category = models.CharField(max_length=12, choices=Category.choices)
    kind = models.CharField(max_length=10, choices=Mark.Kind.choices)
    points = models.JSONField(help_text="Pixel coordinates [[x, y], …].")
    reason = models.CharField(max_length=300)
    score = models.FloatField(default=0.0)
    stats = models.JSONField(default=dict, blank=True)
    reference = models.ForeignKey(
        "self",
        on_delete=models.SET_NULL,
        null=True,
        blank=True,
        related_name="referenced_by",
        help_text="The proposed reference mark of a hot spot.",
    )
    status = models.CharField(max_length=10, choices=Status.choices, default=Status.PROPOSED)
    mark = models.ForeignKey(
        Mark, on_delete=models.SET_NULL, null=True, blank=True, related_name="proposals"
    )
    decided_by = models.ForeignKey(
        settings.AUTH_USER_MODEL, on_delete=models.SET_NULL, null=True, blank=True, related_name="+"
    )
    decided_at = models.DateTimeField(null=True, blank=True)
    created_at = models.DateTimeField(auto_now_add=True)

    class Meta:
        ordering = ["thermogram", "rank", "id"]
        indexes = [models.Index(fields=["thermogram", "status"], name="proposal_thermogram_status")]

    def __str__(self) -> str:
        return f"{self.get_category_display()}: {self.reason}"


class ProposalSettings(models.Model):
    """Thresholds of the proposal detectors for one survey kind of an organization, or for one
    survey; a blank field keeps the value of the level above (survey → organization →
    product default)."""

    class Shape(models.TextChoices):
        ELLIPSE = "ellipse", "An ellipse around the hot area"
        POINT = "point", "A point at the hottest pixel"

    organization = models.ForeignKey(
        Organization, on_delete=models.CASCADE, related_name="proposal_settings"
    )
    survey = models.OneToOneField(
        Survey,
        on_delete=models.CASCADE,
        null=True,
        blank=True,
        related_name="proposal_settings",
    )
    survey_kind = models.CharField(max_length=20, choices=Survey.Kind.choices, blank=True)
    enabled = models.BooleanField(
        null=True, blank=True, help_text="Propose marks when a thermogram is processed."
    )
    min_area_px = models.PositiveIntegerField(
        null=True, blank=True, validators=[MinValueValidator(1), MaxValueValidator(1_000_000)]
    )
    min_area_m2 = models.FloatField(
        null=True, blank=True, validators=[MinValueValidator(0), MaxValueValidator(10_000)]
    )
    min_rise_c = models.FloatField(
        null=True, blank=True, validators=[MinValueValidator(0.1), MaxValueValidator(200)]
    )
    limit_rh_pct = models.FloatField(
        null=True, blank=True, validators=[MinValueValidator(50), MaxValueValidator(100)]
    )
    f_rsi_min = models.FloatField(
        null=True, blank=True, validators=[MinValueValidator(0.01), MaxValueValidator(0.99)]
    )
    hot_spot_shape = models.CharField(max_length=10, choices=Shape.choices, blank=True)
    updated_at = models.DateTimeField(auto_now=True)

    class Meta:
        constraints = [
            models.UniqueConstraint(
                fields=["organization", "survey_kind"],
                condition=Q(survey__isnull=True),
                name="proposal_settings_kind_per_org",
            ),
        ]

    def __str__(self) -> str:
        return f"Proposal settings of {self.survey or self.get_survey_kind_display()}"


class ConditionLog(models.Model):
    """A data logger's series imported into a survey: air temperature, RH and wind over time.

    Times are POSIX seconds (UTC); the arrays hold null where a reading was blank.
    """

    class Role(models.TextChoices):
        INSIDE = "inside", "Inside (or the air around the equipment)"
        OUTSIDE = "outside", "Outside"

    organization = models.ForeignKey(
        Organization, on_delete=models.CASCADE, related_name="condition_logs"
    )
    survey = models.ForeignKey(Survey, on_delete=models.CASCADE, related_name="condition_logs")
    role = models.CharField(max_length=10, choices=Role.choices)
    original_name = models.CharField(max_length=255)
    original_sha256 = models.CharField(max_length=64)
    read_settings = models.JSONField(default=dict, blank=True)
    times_s = models.JSONField(default=list)
    temperature_c = models.JSONField(default=list)
    rh_pct = models.JSONField(null=True, blank=True)
    wind_m_s = models.JSONField(null=True, blank=True)
    row_count = models.PositiveIntegerField(default=0)
    started_at = models.DateTimeField()
    ended_at = models.DateTimeField()
    created_by = models.ForeignKey(
        settings.AUTH_USER_MODEL, on_delete=models.SET_NULL, null=True, blank=True, related_name="+"
    )
    created_at = models.DateTimeField(auto_now_add=True)

    class Meta:
        ordering = ["survey", "role"]
        constraints = [
            models.UniqueConstraint(
                fields=["survey", "role"], name="condition_log_role_per_survey"
            ),
        ]

    def __str__(self) -> str:
        return f"{self.get_role_display()} log {self.original_name}"


class MarkTemplate(models.Model):
    """The marks of one thermogram, kept under a name to place on like equipment."""

    organization = models.ForeignKey(
        Organization, on_delete=models.CASCADE, related_name="mark_templates"
    )
    name = models.CharField(max_length=200)
    source_thermogram = models.ForeignKey(
        Thermogram, on_delete=models.SET_NULL, null=True, blank=True, related_name="+"
    )
    source_title = models.CharField(max_length=255, blank=True)
    width = models.PositiveIntegerField()
    height = models.PositiveIntegerField()
    marks = models.JSONField(default=list)
    # The source's °C array, kept so automatic alignment works after the source is gone.
    reference_array = models.FileField(upload_to="templates/%Y/%m/", max_length=300)
    created_by = models.ForeignKey(
        settings.AUTH_USER_MODEL, on_delete=models.SET_NULL, null=True, blank=True, related_name="+"
    )
    created_at = models.DateTimeField(auto_now_add=True)

    class Meta:
        ordering = ["name"]
        constraints = [
            models.UniqueConstraint(fields=["organization", "name"], name="mark_template_name"),
        ]

    def __str__(self) -> str:
        return self.name


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
