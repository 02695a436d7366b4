"""Load an invented firm with surveys, thermograms, marks and findings (safe to run again).

Everything here is fiction: the firm, people, clients, sites and every thermogram. The
images are temperature fields generated with numpy from simple physical shapes (a steady
wall gradient, a cold slab edge, a warm wet patch, Gaussian hot spots), stored as real
files in open formats and run through the same upload pipeline as a user's files.
"""

import datetime
import io
import time

import numpy as np
from django.contrib.auth import get_user_model
from django.core.files.uploadedfile import SimpleUploadedFile
from django.core.management.base import BaseCommand
from django.db import transaction

from survey.models import (
    Asset,
    Client,
    Instrument,
    Member,
    Organization,
    Site,
    Survey,
    Thermogram,
)
from survey.services import ingest, instruments, letterhead, processing, surveys

PASSWORD = "demo-thermal-2026"
FICTION = "Fictional demonstration data: every name, place and image here is invented."
RNG_SEED = 20260114


def _noise(rng: np.random.Generator, shape, sigma: float = 0.06) -> np.ndarray:
    # A camera's temporal noise is a few hundredths of a kelvin (NETD 30–100 mK).
    return rng.normal(0.0, sigma, shape)


def _grid(width: int, height: int):
    y, x = np.mgrid[0:height, 0:width].astype(np.float64)
    return x, y


def wall_with_slab_bridge(rng) -> np.ndarray:
    """Inside of an external wall: a cold band where the floor slab meets it, colder still
    in the corner where two outside walls meet (two-dimensional heat flow)."""
    x, y = _grid(240, 180)
    field = 18.6 - 0.004 * y
    slab = 4.2 * np.exp(-((y - 150) ** 2) / (2 * 6.0**2))
    corner = 2.5 * np.exp(-(x**2) / (2 * 18.0**2)) * np.exp(-((y - 150) ** 2) / (2 * 30.0**2))
    return (field - slab - corner + _noise(rng, x.shape)).astype(np.float32)


def window_corner(rng) -> np.ndarray:
    """A window seen from inside: cool glass, a warmer frame and a cold reveal corner."""
    x, y = _grid(200, 160)
    field = np.full(x.shape, 18.8)
    frame = (x > 50) & (x < 190) & (y > 20) & (y < 130)
    glass = (x > 60) & (x < 180) & (y > 30) & (y < 120)
    field[frame] = 15.5
    field[glass] = 13.0 + 0.01 * (y[glass] - 30)
    corner = 6.0 * np.exp(-(((x - 52) ** 2) + (y - 128) ** 2) / (2 * 7.0**2))
    return (field - corner + _noise(rng, x.shape)).astype(np.float32)


def missing_insulation(rng) -> np.ndarray:
    """A wall with a soft-edged patch where the insulation batt is missing."""
    x, y = _grid(220, 160)
    field = 18.9 - 0.003 * x
    patch = ((np.abs(x - 120) < 35) & (np.abs(y - 70) < 28)).astype(np.float64)
    kernel = np.exp(-(np.linspace(-2, 2, 9) ** 2))
    kernel /= kernel.sum()
    for axis in (0, 1):
        patch = np.apply_along_axis(lambda row: np.convolve(row, kernel, mode="same"), axis, patch)
    return (field - 3.1 * patch + _noise(rng, x.shape)).astype(np.float32)


def wet_roof(rng) -> np.ndarray:
    """A flat roof at night after a sunny day: a wet area holds the day's heat longer."""
    x, y = _grid(256, 192)
    field = -1.5 + 0.004 * x
    blob = np.exp(-((((x - 150) / 40.0) ** 2 + ((y - 110) / 26.0) ** 2) ** 1.5))
    return (field + 2.4 * blob + _noise(rng, x.shape, 0.08)).astype(np.float32)


def wet_roof_west(rng) -> np.ndarray:
    """The west half of the same roof: a smaller wet area along a gutter line."""
    x, y = _grid(256, 192)
    field = -1.2 - 0.003 * y
    blob = np.exp(-((((x - 90) / 30.0) ** 2 + ((y - 70) / 20.0) ** 2) ** 1.5))
    return (field + 2.1 * blob + _noise(rng, x.shape, 0.08)).astype(np.float32)


def motor_body(rng) -> np.ndarray:
    """A drive motor running normally: a warm, even frame and a cooler fan cowl."""
    x, y = _grid(240, 180)
    field = np.full(x.shape, 23.0)
    frame = (np.abs(x - 110) < 70) & (np.abs(y - 95) < 45)
    field[frame] = 41.0 - 0.02 * np.abs(x[frame] - 110)
    cowl = (x >= 180) & (x < 215) & (np.abs(y - 95) < 40)
    field[cowl] = 31.0
    return (field + _noise(rng, x.shape, 0.05)).astype(np.float32)


def panel_three_phases(rng, peaks=((70, 34.0), (120, 61.0), (170, 33.5))) -> np.ndarray:
    """A distribution panel: three phase lugs under the same load, phase B's lug hot."""
    x, y = _grid(240, 180)
    field = 27.0 + 0.01 * y
    for centre_x, peak in peaks:
        cable = np.exp(-((x - centre_x) ** 2) / (2 * 5.0**2)) * (y > 60)
        field += (peak - 27.0) * 0.35 * cable * np.exp(-(y - 60) / 90.0)
        lug = np.exp(-(((x - centre_x) ** 2) + (y - 60) ** 2) / (2 * 6.0**2))
        field += (peak - 27.0) * lug
    return (field + _noise(rng, x.shape, 0.05)).astype(np.float32)


def _encoded(image, image_format: str, **options) -> bytes:
    """A Pillow picture as file bytes."""
    buffer = io.BytesIO()
    image.save(buffer, image_format, **options)
    return buffer.getvalue()


def roof_plan_png() -> bytes:
    """An invented roof plan: the roof outline, parapet, rooflights, plant and a north arrow."""
    from PIL import Image, ImageDraw

    from survey.thermal.drawing import font

    image = Image.new("RGB", (1200, 800), (246, 244, 238))
    draw = ImageDraw.Draw(image)
    draw.rectangle([60, 60, 1140, 740], outline=(60, 60, 60), width=6)
    draw.rectangle([80, 80, 1120, 720], outline=(140, 140, 140), width=2)
    for left in (300, 560, 820):
        draw.rectangle([left, 340, left + 80, 460], outline=(90, 90, 90), width=3)
    draw.rectangle([960, 120, 1080, 240], fill=(220, 220, 220), outline=(90, 90, 90), width=3)
    draw.text((968, 165), "plant", font=font(26), fill=(60, 60, 60))
    draw.line([(600, 80), (600, 720)], fill=(170, 170, 170), width=2)
    draw.polygon([(1110, 640), (1095, 690), (1125, 690)], fill=(60, 60, 60))
    draw.text((1100, 695), "N", font=font(28, bold=True), fill=(60, 60, 60))
    draw.text(
        (90, 750),
        "Roof over Block B, demonstration plan (invented)",
        font=font(26),
        fill=(60, 60, 60),
    )
    return _encoded(image, "PNG")


def demo_logo_png() -> bytes:
    """The invented firm's logo: a brook of three warm-to-cool waves beside its initials."""
    from PIL import Image, ImageDraw

    from survey.thermal.drawing import font

    image = Image.new("RGB", (560, 160), (255, 255, 255))
    draw = ImageDraw.Draw(image)
    for row, colour in enumerate(((196, 72, 24), (224, 150, 40), (11, 79, 117))):
        y = 40 + row * 36
        points = [(20 + x, y + 12 * np.sin(x / 18.0)) for x in range(0, 121, 4)]
        draw.line(points, fill=colour, width=10, joint="curve")
    draw.text((160, 80), "LUMEN BROOK", font=font(42, bold=True), fill=(11, 79, 117), anchor="lm")
    draw.text((162, 122), "thermal services", font=font(24), fill=(74, 83, 97), anchor="lm")
    return _encoded(image, "PNG")


def demo_signature_png(name: str) -> bytes:
    """An invented signature: a looped pen stroke and the initials, drawn."""
    from PIL import Image, ImageDraw

    from survey.thermal.drawing import font

    image = Image.new("RGB", (360, 110), (255, 255, 255))
    draw = ImageDraw.Draw(image)
    points = [(20 + t * 3.0, 60 - 22 * np.sin(t / 5.0) * np.exp(-t / 90.0)) for t in range(100)]
    draw.line(points, fill=(16, 32, 88), width=4, joint="curve")
    initials = "".join(part[0] for part in name.split()[:2])
    draw.text((330, 60), initials, font=font(30, bold=True), fill=(16, 32, 88), anchor="rm")
    return _encoded(image, "PNG")


def wall_photo(window: bool) -> bytes:
    """An invented visual photo: a painted wall, a skirting line, and a window when asked."""
    from PIL import Image, ImageDraw

    image = Image.new("RGB", (640, 480), (228, 222, 206))
    draw = ImageDraw.Draw(image)
    draw.rectangle([0, 420, 640, 480], fill=(190, 180, 160))
    if window:
        draw.rectangle([150, 60, 600, 390], fill=(250, 250, 250))
        draw.rectangle([185, 95, 565, 355], fill=(170, 200, 220))
    return _encoded(image, "JPEG", quality=85)


def as_npy(array: np.ndarray) -> bytes:
    buffer = io.BytesIO()
    np.save(buffer, array, allow_pickle=False)
    return buffer.getvalue()


def as_tiff(array: np.ndarray) -> bytes:
    import tifffile

    buffer = io.BytesIO()
    tifffile.imwrite(buffer, array.astype(np.float32))
    return buffer.getvalue()


def as_centikelvin_tiff(array: np.ndarray) -> bytes:
    import tifffile

    buffer = io.BytesIO()
    tifffile.imwrite(buffer, np.round((array + 273.15) * 100).astype(np.uint16))
    return buffer.getvalue()


def as_csv(array: np.ndarray) -> bytes:
    return "\n".join(";".join(f"{v:.2f}" for v in row) for row in array).encode() + b"\n"


class Command(BaseCommand):
    help = "Create (or complete) the invented demo firm with surveys, thermograms and marks."

    def handle(self, *args, **options):
        started = time.monotonic()
        rng = np.random.default_rng(RNG_SEED)
        org, members = self._firm()
        admin = members["demo"]
        alder, kestrel = self._clients(org, admin)
        camera = self._camera(org, admin)
        envelope = self._survey(
            org,
            admin,
            site=alder,
            kind=Survey.Kind.ENVELOPE,
            date=datetime.date(2026, 1, 14),
            title="Winter envelope survey, Block B",
            thermographer=members["tess"],
            reviewer=members["rowan"],
            instrument="Invented LWIR camera, 320×240, serial DEMO-0001, calibrated 2025-06-02",
            ifov_mrad=1.36,
            scope_examined="Inside faces of the north and east external walls, flats B1–B4.",
            scope_not_examined="Roof void (no safe access); flat B5 (no entry).",
            conditions={
                "indoor_air_c": 20.5,
                "indoor_rh_pct": 52.0,
                "outdoor_air_c": -4.0,
                "outdoor_rh_pct": 85.0,
                "wind_m_s": 2.5,
                "sky": "overcast",
                "precipitation": "none",
                "surfaces_dry": True,
                "hours_since_sun": 16.0,
                "delta_t_hours": 48.0,
            },
        )
        roof = self._survey(
            org,
            admin,
            site=alder,
            kind=Survey.Kind.ROOF,
            date=datetime.date(2026, 4, 22),
            title="Flat roof moisture survey",
            thermographer=members["tess"],
            camera=camera,
            start_time=datetime.time(21, 30),
            scope_examined="Flat roof over Block B, from the adjoining tower (about 30 m away).",
            conditions={
                "outdoor_air_c": 6.0,
                "outdoor_rh_pct": 70.0,
                "wind_m_s": 3.0,
                "sky": "clear",
                "precipitation": "none",
                "surfaces_dry": True,
                "sunny_day_before": True,
            },
        )
        electrical = self._survey(
            org,
            admin,
            site=kestrel,
            kind=Survey.Kind.ELECTRICAL,
            date=datetime.date(2026, 3, 2),
            title="Main distribution panel survey",
            thermographer=members["tess"],
            reviewer=members["rowan"],
            instrument="Invented LWIR camera, 320×240, serial DEMO-0001, calibrated 2025-06-02",
            ifov_mrad=1.36,
            scope_examined="Main distribution panel MDP-1, covers removed by the site electrician.",
            scope_not_examined="Transformer room (locked).",
            conditions={
                "ambient_air_c": 24.0,
                "load_pct": 62.0,
                "equipment_steady": True,
                "covers_opened_by_qualified": True,
            },
        )
        panel = self._asset(
            kestrel,
            admin,
            "Main distribution panel",
            Asset.Kind.PANEL,
            "MDP-1",
            rating=400.0,
            rating_unit="A",
            criticality="high",
            round_order=1,
            location="Switch room, ground floor",
        )
        self._asset(
            kestrel,
            admin,
            "Supply transformer",
            Asset.Kind.TRANSFORMER,
            "TX-1",
            rating=630.0,
            rating_unit="kW",
            criticality="high",
            round_order=2,
            location="Transformer room (locked)",
        )
        self._asset(
            kestrel,
            admin,
            "Mixer drive motor",
            Asset.Kind.MOTOR,
            "M-14",
            rating=45.0,
            rating_unit="kW",
            round_order=3,
            location="Mixing hall, line 2",
        )
        wall_zone = self._asset(alder, admin, "North wall, flat B2", Asset.Kind.WALL_ZONE, "")
        roof_section = self._asset(alder, admin, "Roof section B", Asset.Kind.ROOF_SECTION, "")

        slab = self._thermogram(
            envelope,
            admin,
            "B2-north-wall-slab.tif",
            as_tiff(wall_with_slab_bridge(rng)),
            photo=SimpleUploadedFile("B2-north-wall-slab-photo.jpg", wall_photo(False)),
            emissivity=0.93,
            reflected_c=20.0,
            distance_m=3.0,
            asset=wall_zone,
            title="North wall at the floor slab, flat B2",
        )
        window = self._thermogram(
            envelope,
            admin,
            "B3-window-corner.csv",
            as_csv(window_corner(rng)),
            photo=SimpleUploadedFile("B3-window-corner-photo.jpg", wall_photo(True)),
            emissivity=0.90,
            reflected_c=20.0,
            distance_m=2.0,
            title="Bedroom window, bottom-left reveal, flat B3",
        )
        patch = self._thermogram(
            envelope,
            admin,
            "B4-east-wall.npy",
            as_npy(missing_insulation(rng)),
            emissivity=0.93,
            reflected_c=20.0,
            distance_m=4.0,
            title="East wall, living room, flat B4",
        )
        wet = self._thermogram(
            roof,
            admin,
            "roof-B-east.tif",
            as_centikelvin_tiff(wet_roof(rng)),
            unit="K",
            scale=0.01,
            emissivity=0.94,
            reflected_c=-20.0,
            distance_m=30.0,
            asset=roof_section,
            title="Roof section B, east half",
        )
        lugs = self._thermogram(
            electrical,
            admin,
            "MDP-1-incomer-lugs.npy",
            as_npy(panel_three_phases(rng)),
            emissivity=0.95,
            reflected_c=24.0,
            distance_m=1.0,
            asset=panel,
            title="MDP-1 incoming supply lugs, phases A–C",
        )

        self._marks(
            slab,
            admin,
            [
                ("rectangle", [[60, 40], [180, 100]], {"note": "Clear wall, reference"}),
                ("line", [[120, 60], [120, 175]], {"note": "Profile down to the slab edge"}),
                ("point", [[4, 150]], {"note": "Coldest corner at the slab"}),
            ],
        )
        self._marks(
            window,
            admin,
            [
                ("ellipse", [[42, 118], [62, 138]], {"note": "Reveal corner"}),
                ("rectangle", [[5, 20], [40, 140]], {"note": "Wall beside the window"}),
            ],
        )
        self._marks(
            patch,
            admin,
            [
                ("polygon", [[85, 42], [155, 42], [155, 98], [85, 98]], {"note": "Cold patch"}),
                ("rectangle", [[10, 10], [60, 150]], {"note": "Sound wall"}),
            ],
        )
        self._marks(wet, admin, [("ellipse", [[110, 84], [190, 136]], {"note": "Warm area"})])
        self._marks(
            lugs,
            admin,
            [
                ("ellipse", [[62, 52], [78, 68]], {"note": "Phase A lug", "load_current_a": 246}),
                ("ellipse", [[112, 52], [128, 68]], {"note": "Phase B lug", "load_current_a": 251}),
                ("ellipse", [[162, 52], [178, 68]], {"note": "Phase C lug", "load_current_a": 240}),
            ],
        )
        self._findings(envelope, electrical, slab, window, lugs, admin)
        self._logs_proposals_template(envelope, [slab, window, patch, wet, lugs], lugs, admin)
        self._envelope_extras(envelope, slab, patch, admin)
        self._roof_extras(roof, wet, roof_section, admin, rng)
        self._electrical_visits(org, admin, members, electrical, panel, rng)
        self._report_particulars(org, members, camera, envelope, electrical, [slab, window, patch])
        self._thermogram_particulars([slab, window, patch], wet, lugs)

        elapsed = time.monotonic() - started
        self.stdout.write(
            self.style.SUCCESS(
                f"Demo data ready in {elapsed:.1f} s: sign in as demo / {PASSWORD} (admin); "
                f"also tess and fern (thermographers; fern works in °F) and rowan (reviewer), "
                "same password."
            )
        )

    # --- report particulars: letterhead, qualifications, instruments, methods -----------

    def _report_particulars(self, org, members, camera, envelope, electrical, walls) -> None:
        """The invented firm's letterhead and logo, its people's qualification records (and
        the reviewer's signature), a second camera that matches the panel images, and the
        deviations of the electrical survey (issue 14)."""
        if not org.address:
            letterhead.organization_update_letterhead(
                organization=org,
                user=members["demo"].user,
                name=org.name,
                address="7 Fictional Yard\nBrookside BS0 0XX (invented)",
                phone="+00 555 0142",
                email="office@lumen-brook.invalid",
                website="lumen-brook.invalid",
                logo=demo_logo_png(),
            )
        records = {
            "demo": ("2", "DEMO-T2-0031", datetime.date(2027, 9, 30), False),
            "tess": ("1", "DEMO-T1-0458", datetime.date(2028, 2, 29), False),
            "rowan": ("3", "DEMO-T3-0007", datetime.date(2027, 5, 31), True),
        }
        for username, (level, number, expires, signs) in records.items():
            member = members[username]
            if member.qualification_scheme:
                continue
            letterhead.member_update_qualification(
                member=member,
                actor=members["demo"].user,
                qualification_scheme="Invented Thermography Certification Board",
                qualification_level=level,
                certificate_number=number,
                qualification_expires=expires,
                signature=demo_signature_png(member.display_name) if signs else None,
            )
        compact = Instrument.objects.filter(organization=org, serial_number="DEMO-0002").first()
        if compact is None:
            compact = instruments.instrument_create(
                organization=org,
                user=members["demo"].user,
                model_name="Invented compact LWIR camera",
                serial_number="DEMO-0002",
                detector_width_px=240,
                detector_height_px=180,
                lens_hfov_deg=24.0,
                netd_mk=45.0,
                accuracy_c=2.0,
                accuracy_pct=2.0,
                calibration_date=datetime.date(2025, 11, 12),
                calibration_due=datetime.date(2026, 11, 12),
                certificate_reference="CAL-DEMO-0002 (invented)",
            )
        if electrical.camera_id is None:
            electrical.camera = compact
            electrical.deviations = (
                "The covers of outgoing section 3 stayed closed: the site electrician could "
                "not isolate the neighbouring feeder. Section 3 was imaged through its "
                "ventilation grille only."
            )
            electrical.save(update_fields=["camera", "deviations"])
        if envelope.camera_id is None:
            # The wall images were exported at several sizes: the report says so as a
            # deviation instead of printing the camera's 320 × 240 beside them.
            envelope.camera = camera
            envelope.save(update_fields=["camera"])

    def _thermogram_particulars(self, walls, wet, lugs) -> None:
        """How each demo thermogram's emissivity and reflected temperature were determined,
        and the panel's load per phase."""
        for thermogram in walls:
            if not thermogram.emissivity_method:
                thermogram.emissivity_method = Thermogram.EmissivityMethod.TABLE
                thermogram.reflected_method = Thermogram.ReflectedMethod.REFLECTOR
                thermogram.save(update_fields=["emissivity_method", "reflected_method"])
        if not wet.emissivity_method:
            wet.emissivity_method = Thermogram.EmissivityMethod.TABLE
            wet.reflected_method = Thermogram.ReflectedMethod.ESTIMATE
            wet.save(update_fields=["emissivity_method", "reflected_method"])
        if lugs.load_l1_a is None:
            lugs.emissivity_method = Thermogram.EmissivityMethod.TAPE
            lugs.reflected_method = Thermogram.ReflectedMethod.REFLECTOR
            lugs.load_l1_a, lugs.load_l2_a, lugs.load_l3_a = 246.0, 251.0, 240.0
            lugs.load_method = Thermogram.LoadMethod.CLAMP
            lugs.save(
                update_fields=[
                    "emissivity_method",
                    "reflected_method",
                    "load_l1_a",
                    "load_l2_a",
                    "load_l3_a",
                    "load_method",
                ]
            )

    # --- building blocks ----------------------------------------------------------------

    def _firm(self) -> tuple[Organization, dict[str, Member]]:
        org, _ = Organization.objects.get_or_create(
            slug="lumen-brook", defaults={"name": "Lumen Brook Thermal Services"}
        )
        people = {
            "demo": ("Dana", "Demo", Member.Role.ADMIN, "Level 2 thermographer (invented)"),
            "tess": (
                "Tess",
                "Varga",
                Member.Role.THERMOGRAPHER,
                "Level 1 thermographer (invented)",
            ),
            "rowan": ("Rowan", "Achebe", Member.Role.REVIEWER, "Level 3 thermographer (invented)"),
            "fern": (
                "Fern",
                "Okafor",
                Member.Role.THERMOGRAPHER,
                "Level 2 thermographer (invented); works in °F",
            ),
        }
        members = {}
        User = get_user_model()
        for username, (first, last, role, qualification) in people.items():
            user, created = User.objects.get_or_create(
                username=username, defaults={"first_name": first, "last_name": last}
            )
            if created:
                user.set_password(PASSWORD)
                user.save()
            member, _ = Member.objects.get_or_create(
                user=user,
                defaults={
                    "organization": org,
                    "role": role,
                    "qualification": qualification,
                    # One colleague reads °F, so one survey's report is in °F.
                    "temperature_unit": "F" if username == "fern" else "C",
                },
            )
            members[username] = member
        return org, members

    def _clients(self, org: Organization, admin: Member) -> tuple[Site, Site]:
        sites = []
        for client_name, site_name, address in (
            ("Alder Court Housing Trust", "Alder Court, Block B", "1–12 Alder Court (invented)"),
            ("Kestrel Mill Foods", "Kestrel Mill Foods plant", "Unit 4, Millrace Road (invented)"),
        ):
            client = Client.objects.filter(organization=org, name=client_name).first()
            if client is None:
                client = surveys.client_create(
                    organization=org, user=admin.user, name=client_name, address=FICTION
                )
            site = Site.objects.filter(organization=org, client=client, name=site_name).first()
            if site is None:
                site = surveys.site_create(
                    client=client, user=admin.user, name=site_name, address=address
                )
            sites.append(site)
        return sites[0], sites[1]

    def _survey(self, org, admin, *, site, kind, date, title, conditions, **fields) -> Survey:
        survey = Survey.objects.filter(organization=org, site=site, title=title).first()
        if survey is not None:
            return survey
        return surveys.survey_create(
            organization=org,
            user=admin.user,
            site=site,
            kind=kind,
            date=date,
            title=title,
            notes=FICTION,
            conditions=conditions,
            **fields,
        )

    def _camera(self, org: Organization, admin: Member) -> Instrument:
        camera = Instrument.objects.filter(organization=org, serial_number="DEMO-0001").first()
        if camera is not None:
            return camera
        return instruments.instrument_create(
            organization=org,
            user=admin.user,
            model_name="Invented LWIR camera",
            serial_number="DEMO-0001",
            detector_width_px=320,
            detector_height_px=240,
            lens_hfov_deg=25.0,
            netd_mk=50.0,
            calibration_date=datetime.date(2025, 6, 2),
            calibration_due=datetime.date(2026, 6, 2),
            certificate_reference="CAL-DEMO-0001 (invented)",
        )

    def _asset(self, site: Site, admin: Member, name: str, kind: str, tag: str, **fields) -> Asset:
        asset = Asset.objects.filter(site=site, name=name).first()
        if asset is not None:
            return asset
        return surveys.asset_create(
            site=site, user=admin.user, name=name, kind=kind, tag=tag, notes=FICTION, **fields
        )

    def _thermogram(self, survey, admin, name, data, *, title, **options) -> Thermogram:
        thermogram = survey.thermograms.filter(original_name=name).first()
        if thermogram is None:
            with transaction.atomic():
                thermogram = ingest.thermogram_ingest(
                    survey=survey,
                    uploaded_file=SimpleUploadedFile(name, data),
                    user=admin.user,
                    **options,
                )
                thermogram.title = title
                thermogram.note = FICTION
                thermogram.save(update_fields=["title", "note"])
        # Process here too, so marks can be measured even when a worker would do it later.
        processing.thermogram_process(thermogram.pk)
        thermogram.refresh_from_db()
        if not thermogram.is_ready:
            raise RuntimeError(
                f"Demo thermogram {name} ended {thermogram.status}: {thermogram.error}"
            )
        return thermogram

    def _logs_proposals_template(self, envelope, thermograms, lugs, admin) -> None:
        """Invented logger files of the envelope survey, capture times, proposed marks and
        a mark template (issue 18)."""
        from survey.models import ConditionLog, MarkTemplate
        from survey.services.loggers import condition_log_import
        from survey.services.mark_templates import mark_template_create
        from survey.services.proposals import thermogram_propose

        if not envelope.time_zone:
            envelope.time_zone = "Europe/London"
            envelope.save(update_fields=["time_zone"])
        start = datetime.datetime(2026, 1, 12, 18, 0, tzinfo=datetime.UTC)
        for minutes, thermogram in zip((0, 12, 25), thermograms[:3], strict=True):
            if thermogram.captured_at is None:
                thermogram.captured_at = start + datetime.timedelta(hours=48, minutes=minutes)
                thermogram.save(update_fields=["captured_at"])
        if not ConditionLog.objects.filter(survey=envelope).exists():
            hours = np.arange(0, 50, 0.25)
            outside = -4.0 + 2.5 * np.cos((hours - 15.0) / 24.0 * 2 * np.pi)
            inside = 20.5 + 0.3 * np.sin(hours / 24.0 * 2 * np.pi)
            for role, values, rh in (("inside", inside, 52.0), ("outside", outside, 85.0)):
                rows = ["Time;Air °C;RH %"] + [
                    f"{(start + datetime.timedelta(hours=float(h))):%d.%m.%Y %H:%M};"
                    + f"{v:.1f};{rh:.0f}".replace(".", ",")
                    for h, v in zip(hours, values, strict=True)
                ]
                condition_log_import(
                    survey=envelope,
                    role=role,
                    name=f"demo-{role}-logger.csv",
                    data="\n".join(rows).encode(),
                    user=admin.user,
                    time_column="Time",
                    temperature_column="Air °C",
                    humidity_column="RH %",
                    time_format="%d.%m.%Y %H:%M",
                    time_zone="UTC",
                )
        for thermogram in thermograms:
            if not thermogram.proposals.exists():
                thermogram_propose(thermogram=thermogram, user=admin.user)
        if not MarkTemplate.objects.filter(organization=envelope.organization).exists():
            mark_template_create(thermogram=lugs, name="Three-phase incomer lugs", user=admin.user)

    def _marks(self, thermogram: Thermogram, admin: Member, marks: list) -> None:
        if thermogram.marks.exists():
            return
        from survey.services.marks import mark_add

        for kind, points, options in marks:
            mark_add(thermogram=thermogram, kind=kind, points=points, user=admin.user, **options)

    def _findings(self, envelope, electrical, slab, window, lugs, admin) -> None:
        """Findings through the judgement service, when it is installed."""
        try:
            from survey.services.findings import finding_create, finding_suggest
        except ImportError:
            return
        if not electrical.findings.exists():
            phase_a, phase_b = lugs.marks.order_by("label")[:2]
            suggestion = finding_suggest(
                survey=electrical, basis="similar", marks=[phase_b], reference=phase_a
            )
            finding_create(
                survey=electrical,
                user=admin.user,
                category="connection",
                suggestion=suggestion,
                marks=[phase_b],
                thermogram=lugs,
                asset=lugs.asset,
                location="MDP-1, incoming supply, phase B lug",
                description="Phase B lug much warmer than phases A and C under the same load.",
                recommendation=(
                    "Have a licensed electrician de-energize, inspect, clean and re-torque the "
                    "phase B connection to the maker's value, then re-survey under load."
                ),
            )
        if not envelope.findings.exists():
            for thermogram, label, category, location, text in (
                (
                    slab,
                    "C",
                    "thermal_bridge",
                    "Flat B2, north wall at the floor slab",
                    "Cold band along the slab edge, coldest in the external corner.",
                ),
                (
                    window,
                    "A",
                    "condensation_risk",
                    "Flat B3, bedroom window reveal",
                    "Bottom-left reveal corner near the dew point of the room air.",
                ),
            ):
                marks = list(thermogram.marks.filter(label=label))
                suggestion = finding_suggest(survey=envelope, basis="envelope", marks=marks)
                finding_create(
                    survey=envelope,
                    user=admin.user,
                    category=category,
                    suggestion=suggestion,
                    marks=marks,
                    thermogram=thermogram,
                    location=location,
                    description=text,
                    recommendation="Confirm with a surface thermometer and hygrometer; refer "
                    "to a building professional for the repair detail.",
                )

    # --- issue 14: everything the client report can show -------------------------------

    def _envelope_extras(self, envelope, slab, patch, admin) -> None:
        """Construction, time, pressure difference, a mould-risk finding and a heat-loss
        estimate with its yearly energy and cost."""
        from survey.services.findings import (
            finding_create,
            finding_suggest,
            heat_loss_estimate_create,
        )

        if not envelope.building_description:
            surveys.survey_update(
                survey=envelope,
                user=admin.user,
                start_time=datetime.time(17, 50),
                end_time=datetime.time(19, 40),
                building_description=(
                    "Four-storey block of flats (invented), about 1975: cavity brick walls "
                    "with blown fibre fill, concrete floor slabs carried through to the outer "
                    "leaf, double-glazed PVC windows from about 2005."
                ),
                conditions={"pressure_difference_pa": -50.0, "pressure_method": "blower_door"},
            )
        location = "Flat B2, external corner at the floor slab"
        if not envelope.findings.filter(location=location).exists():
            marks = list(slab.marks.filter(label="C"))
            finding_create(
                survey=envelope,
                user=admin.user,
                category="condensation_risk",
                suggestion=finding_suggest(survey=envelope, basis="envelope", marks=marks),
                marks=marks,
                thermogram=slab,
                location=location,
                description="The corner's surface humidity is in the range where mould grows.",
                recommendation="Improve ventilation of the room now; have a building "
                "professional detail insulation of the slab edge.",
            )
        if not envelope.heat_loss_estimates.exists():
            cold, sound = patch.marks.order_by("label")[:2]
            from survey.services.readings import thermogram_readings

            sound_c = next(
                r["corrected"]["mean"] for r in thermogram_readings(patch) if r["label"] == "B"
            )
            heat_loss_estimate_create(
                survey=envelope,
                user=admin.user,
                label="East wall, flat B4: missing insulation",
                side="inside",
                t_surface_c=None,
                t_air_c=20.5,
                emissivity=None,
                geometry="vertical",
                size_m=2.5,
                area_m2=1.6,
                hours_per_year=5000,
                price_per_kwh=0.28,
                currency="EUR",
                t_reference_c=sound_c,
                mark=cold,
            )

    def _roof_extras(self, roof, wet, roof_section, admin, rng) -> None:
        """Survey time, membrane and insulation, no rain, a plan with both thermograms
        placed, two wet areas and a core confirmation."""
        from survey.services import roof as roof_services
        from survey.services.findings import finding_create, finding_suggest

        if not roof.roof_membrane:
            surveys.survey_update(
                survey=roof,
                user=admin.user,
                end_time=datetime.time(23, 10),
                roof_membrane="Two-layer bitumen felt, mineral-surfaced cap sheet",
                roof_insulation="Mineral wool boards, 120 mm, on a steel deck",
                building_description="Flat roof over the four-storey Block B (invented).",
                # A dry spring night: the membrane's coldest dry part stays above the
                # outdoor frost point (about −3.5 °C at 6 °C and 50 %).
                conditions={
                    "rain_24h_mm": 0.0,
                    "hours_since_sun": 1.5,
                    "outdoor_rh_pct": 50.0,
                    "roof_surface_c": -0.8,
                },
            )
        west = self._thermogram(
            roof,
            admin,
            "roof-B-west.tif",
            as_centikelvin_tiff(wet_roof_west(rng)),
            unit="K",
            scale=0.01,
            emissivity=0.94,
            reflected_c=-20.0,
            distance_m=30.0,
            asset=roof_section,
            title="Roof section B, west half",
        )
        self._marks(west, admin, [("ellipse", [[60, 50], [120, 90]], {"note": "Warm area"})])
        if not roof.roof_plan:
            roof_services.roof_plan_upload(
                survey=roof,
                uploaded_file=SimpleUploadedFile("roof-B-plan.png", roof_plan_png()),
                user=admin.user,
            )
        for thermogram, (x_pct, y_pct) in ((wet, (72.0, 38.0)), (west, (27.0, 60.0))):
            if thermogram.plan_x_pct is None:
                roof_services.thermogram_place_on_plan(
                    thermogram=thermogram, x_pct=x_pct, y_pct=y_pct, user=admin.user
                )
        for thermogram, location in (
            (wet, "Roof B, east half, between the second and third rooflights"),
            (west, "Roof B, west half, along the gutter line"),
        ):
            if roof.findings.filter(location=location).exists():
                continue
            marks = list(thermogram.marks.all())
            finding = finding_create(
                survey=roof,
                user=admin.user,
                category="wet_insulation",
                suggestion=finding_suggest(survey=roof, basis="roof", marks=marks),
                marks=marks,
                thermogram=thermogram,
                asset=roof_section,
                location=location,
                description="Area holding the day's heat longer than the dry roof around it.",
                recommendation="Have a roofer open the membrane at the marked area, dry or "
                "replace the wet insulation and repair the leak that wetted it.",
            )
            if thermogram == wet:
                roof_services.moisture_check_add(
                    finding=finding,
                    user=admin.user,
                    method="core",
                    checked_on=datetime.date(2026, 4, 24),
                    result="wet",
                    reading="insulation saturated through its thickness",
                    note="Core cut by the roofer and made good the same day (invented).",
                )
            else:
                roof_services.moisture_check_add(
                    finding=finding,
                    user=admin.user,
                    method="meter",
                    checked_on=datetime.date(2026, 4, 24),
                    result="wet",
                    reading="84 on the meter's relative scale; dry roof reads 20",
                )

    def _electrical_visits(self, org, admin, members, electrical, panel, rng) -> None:
        """Three visits to MDP-1: the hot phase B lug found, repaired and verified on the
        second, a routine third in °F; a motor inspected with no finding on the first."""
        motor = Asset.objects.filter(site=panel.site, tag="M-14").first()
        motor_view = self._thermogram(
            electrical,
            admin,
            "M-14-motor.npy",
            as_npy(motor_body(rng)),
            emissivity=0.95,
            reflected_c=24.0,
            distance_m=2.0,
            asset=motor,
            title="Mixer drive motor M-14, drive end side",
        )
        self._marks(
            motor_view,
            admin,
            [("rectangle", [[50, 60], [170, 130]], {"note": "Motor frame, even temperature"})],
        )
        if "Loads per phase" not in electrical.notes:
            surveys.survey_update(
                survey=electrical,
                user=admin.user,
                end_time=datetime.time(11, 20),
                start_time=electrical.start_time or datetime.time(9, 30),
                notes=f"{FICTION}\nLoads per phase at the incomer, by clamp meter: "
                "A 246 A, B 251 A, C 240 A.",
            )
        visits = []
        for date, title, thermographer, peaks, currents in (
            (
                datetime.date(2026, 3, 23),
                "Main distribution panel, after the repair",
                members["tess"],
                ((70, 34.4), (120, 34.0), (170, 33.6)),
                (238, 244, 236),
            ),
            (
                datetime.date(2026, 9, 14),
                "Main distribution panel, routine survey",
                members["fern"],
                ((70, 34.3), (120, 33.9), (170, 33.8)),
                (252, 255, 249),
            ),
        ):
            survey = self._survey(
                org,
                admin,
                site=panel.site,
                kind=Survey.Kind.ELECTRICAL,
                date=date,
                title=title,
                thermographer=thermographer,
                reviewer=members["rowan"],
                camera=self._camera(org, admin),
                start_time=datetime.time(10, 0),
                end_time=datetime.time(10, 45),
                scope_examined="Main distribution panel MDP-1, covers removed by the site "
                "electrician.",
                conditions={
                    "ambient_air_c": 24.0,
                    "load_pct": 61.0,
                    "equipment_steady": True,
                    "covers_opened_by_qualified": True,
                },
            )
            view = self._thermogram(
                survey,
                admin,
                f"MDP-1-incomer-lugs-{date:%Y%m%d}.npy",
                as_npy(panel_three_phases(rng, peaks)),
                emissivity=0.95,
                reflected_c=24.0,
                distance_m=1.0,
                asset=panel,
                title="MDP-1 incoming supply lugs, phases A–C",
            )
            if not view.marks.exists():
                from survey.services.marks import mark_add

                phase_a = mark_add(
                    thermogram=view,
                    kind="ellipse",
                    points=[[62, 52], [78, 68]],
                    user=admin.user,
                    note="Phase A lug",
                    load_current_a=currents[0],
                )
                for centre, phase, current in ((120, "B", currents[1]), (170, "C", currents[2])):
                    mark_add(
                        thermogram=view,
                        kind="ellipse",
                        points=[[centre - 8, 52], [centre + 8, 68]],
                        user=admin.user,
                        note=f"Phase {phase} lug",
                        load_current_a=current,
                        reference_kind="mark",
                        reference_mark=phase_a,
                    )
            if not visits:
                self._repair_and_verify(electrical, admin)
            visits.append(survey)

    def _repair_and_verify(self, electrical, admin) -> None:
        """The phase B lug repaired and verified by the visit after the repair (before the
        routine visit exists, so the evidence names the right visit)."""
        from survey.services.assets import finding_verify
        from survey.services.findings import finding_set_status

        finding = electrical.findings.filter(category="connection").first()
        if finding is not None and finding.status == finding.Status.OPEN:
            finding_set_status(
                finding=finding,
                user=admin.user,
                status="repaired",
                note="Lug cleaned and re-torqued by the site electrician on 2026-03-20.",
            )
            finding.refresh_from_db()
        if finding is not None and finding.status == finding.Status.REPAIRED:
            finding_verify(finding=finding, user=admin.user)
