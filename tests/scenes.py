"""Synthetic thermograms with known anomalies: the ground truth of the proposal detectors.

Every scene is invented. Its *true* surface temperatures come from a simple physical
picture of the surveyed thing, and the ground truth is computed from them with independent
tools (psychrolib for the mould-limit temperature, scipy.ndimage for regions); the camera
then adds what cameras add: optics blur, vignetting, noise, emissivity differences and
reflections of warm objects. The detectors only ever see the camera's array.

- envelope: an inside wall at temperature factor fRsi 0.86–0.95 for random indoor and
  outdoor conditions, with cold corners (a 3-D corner where two walls meet the ceiling)
  and missing insulation panels; truth: each connected region whose true surface RH
  reaches 80 % (the true temperature at or below the mould-limit temperature);
- roof: a night roof field (sky-cooled, slow gradients and texture) with wet areas of
  three sizes, 1.2–3 K warmer with soft edges, plus small hot vents and repair patches;
  truth: each wet area's outline;
- electrical: a panel's back plate with one or two breakers of three phases (bodies warm
  from load, cables leading off), sometimes a lone warm contactor, and hot terminals
  (lugs) on some phases; truth: each lug's true hottest pixel.

The artefacts are kept below the detectors' default thresholds by construction (noise
0.05–0.12 K, vignetting up to 0.35 K, reflections up to 1.8 K on panels and 0.5 K on
roofs): the benchmark measures detection and geometry under realistic disturbances, not
the impossible task of telling a strong reflection from a real fault on one image.

    scenes("roof", seed=1802, count=30)  → list of Scene
    evaluate(scenes, proposals)          → precision, recall, matches per kind
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import psychrolib
from scipy import ndimage

psychrolib.SetUnitSystem(psychrolib.SI)

WIDTH, HEIGHT = 640, 480
KINDS = ("envelope", "roof", "electrical")
MIN_TRUTH_PX = 100
"""Truth regions smaller than this are 'don't care': neither found nor missed."""
POINT_TOLERANCE_PX = 3.0
MIN_IOU = 0.5


@dataclass
class Scene:
    kind: str
    seed: tuple
    temperatures_c: np.ndarray  # what the camera reports, float32 °C
    true_c: np.ndarray  # surface temperatures without the camera's artefacts
    regions: list[np.ndarray] = field(default_factory=list)  # truth masks (envelope, roof)
    ignore: list[np.ndarray] = field(default_factory=list)  # 'don't care' masks
    points: list[tuple[int, int]] = field(default_factory=list)  # truth maxima (x, y)
    conditions: dict = field(default_factory=dict)
    pixel_size_m: float = 0.01
    phases: list[dict] = field(default_factory=list)  # electrical: mask, group, faulty


def scenes(kind: str, *, seed: int, count: int, width=WIDTH, height=HEIGHT) -> list[Scene]:
    """`count` scenes of one kind; the same seed gives the same scenes."""
    build = {"envelope": envelope_scene, "roof": roof_scene, "electrical": electrical_scene}
    return [build[kind]((seed, KINDS.index(kind), i), width, height) for i in range(count)]


# --------------------------------------------------------------------------------------
# Camera


def camera(
    true_c: np.ndarray,
    rng: np.random.Generator,
    *,
    emissivity_ratio: np.ndarray | None = None,
    reflected_c: float = 20.0,
    reflections: np.ndarray | None = None,
    noise_c: tuple[float, float] = (0.05, 0.12),
    vignetting_c: tuple[float, float] = (0.1, 0.35),
) -> np.ndarray:
    """Apparent temperatures a camera set to one emissivity would report.

    Where the surface's emissivity differs from the camera's setting by the factor
    `emissivity_ratio`, the reading moves towards the reflected temperature by
    (1 − ratio): the radiometric equation linearised about the surface temperature.
    """
    apparent = true_c.astype(np.float64).copy()
    if emissivity_ratio is not None:
        apparent += (1.0 - emissivity_ratio) * (reflected_c - true_c)
    if reflections is not None:
        apparent += reflections
    apparent = ndimage.gaussian_filter(apparent, 0.6)  # optics
    height, width = true_c.shape
    y, x = np.mgrid[0:height, 0:width]
    r = np.hypot((x - width / 2) / (width / 2), (y - height / 2) / (height / 2)) / math.sqrt(2)
    apparent -= rng.uniform(*vignetting_c) * r**4
    apparent += rng.normal(0.0, rng.uniform(*noise_c), size=apparent.shape)
    return apparent.astype(np.float32)


def _texture(rng, shape, sigma_px: float, amplitude: float) -> np.ndarray:
    field_ = ndimage.gaussian_filter(rng.normal(size=shape), sigma_px)
    return field_ * (amplitude / max(field_.std(), 1e-12))


def _blob(rng, shape, centre, radius, pieces=3) -> np.ndarray:
    """An irregular region: a union of a few overlapping ellipses around a centre."""
    height, width = shape
    y, x = np.mgrid[0:height, 0:width]
    mask = np.zeros(shape, dtype=bool)
    for index in range(pieces):
        offset = 0.0 if index == 0 else 0.6 * radius
        angle = rng.uniform(0, 2 * math.pi)
        cx = centre[0] + offset * math.cos(angle)
        cy = centre[1] + offset * math.sin(angle)
        rx = radius * rng.uniform(0.6, 1.0)
        ry = radius * rng.uniform(0.6, 1.0)
        mask |= ((x - cx) / rx) ** 2 + ((y - cy) / ry) ** 2 <= 1.0
    return mask


def _split_truth(mask: np.ndarray) -> tuple[list[np.ndarray], list[np.ndarray]]:
    """Connected regions of a truth mask (scipy), large ones as truth, small as ignore."""
    labels, count = ndimage.label(mask, structure=np.ones((3, 3)))
    regions, ignore = [], []
    for label in range(1, count + 1):
        region = labels == label
        (regions if region.sum() >= MIN_TRUTH_PX else ignore).append(region)
    return regions, ignore


def _free(taken: list[tuple], box: tuple, margin: int) -> bool:
    x0, y0, x1, y1 = box
    return all(
        x1 + margin < a0 or a1 + margin < x0 or y1 + margin < b0 or b1 + margin < y0
        for a0, b0, a1, b1 in taken
    )


# --------------------------------------------------------------------------------------
# Building envelope


def mould_limit_c(t_inside_c: float, rh_inside_pct: float, limit_pct: float = 80.0) -> float:
    """Surface temperature at which the room air reaches the limit RH, from psychrolib
    (ASHRAE Handbook Fundamentals saturation pressure; docs/references.md § Anomaly
    proposals)."""
    vapour = rh_inside_pct / 100.0 * psychrolib.GetSatVapPres(t_inside_c)
    return psychrolib.GetTDewPointFromVapPres(t_inside_c, vapour * 100.0 / limit_pct)


def envelope_scene(seed: tuple, width: int = WIDTH, height: int = HEIGHT) -> Scene:
    rng = np.random.default_rng(seed)
    t_in = rng.uniform(19.0, 22.0)
    t_out = rng.uniform(-8.0, 3.0)
    rh = rng.uniform(40.0, 55.0)
    t_limit = mould_limit_c(t_in, rh)
    f_crit = (t_limit - t_out) / (t_in - t_out)
    f_wall = rng.uniform(max(0.86, f_crit + 0.08), 0.95)
    y, x = np.mgrid[0:height, 0:width].astype(np.float64)
    # A little cooler near the floor, a slow texture of plaster and studs.
    f = f_wall - 0.015 * (y / height) + _texture(rng, (height, width), 30, 0.004)
    taken: list[tuple] = []
    for _ in range(int(rng.integers(1, 4))):
        for _attempt in range(30):
            if rng.random() < 0.5:
                f_new, box = _cold_corner(rng, x, y, f_wall, f_crit)
            else:
                f_new, box = _missing_panel(rng, x, y, f_wall, f_crit)
            if _free(taken, box, 30):
                taken.append(box)
                f = f - f_new
                break
    true_c = t_out + f * (t_in - t_out)
    ratio = np.ones_like(true_c)
    for _ in range(int(rng.integers(0, 3))):  # glossy tiles or paint: lower emissivity
        w, h = rng.integers(40, 160), rng.integers(30, 120)
        x0, y0 = rng.integers(0, width - w), rng.integers(0, height - h)
        ratio[y0 : y0 + h, x0 : x0 + w] = rng.uniform(0.85, 0.95)
    reflections = np.zeros_like(true_c)
    for _ in range(int(rng.integers(0, 3))):  # a person or a lamp mirrored by the surface
        cx, cy, s = rng.uniform(0, width), rng.uniform(0, height), rng.uniform(15, 40)
        reflections += rng.uniform(0.3, 1.0) * np.exp(-((x - cx) ** 2 + (y - cy) ** 2) / (2 * s**2))
    apparent = camera(
        true_c, rng, emissivity_ratio=ratio, reflected_c=t_in, reflections=reflections
    )
    regions, ignore = _split_truth(true_c <= t_limit)
    return Scene(
        "envelope",
        seed,
        apparent,
        true_c,
        regions=regions,
        ignore=ignore,
        conditions={"t_inside_c": t_in, "t_outside_c": t_out, "rh_inside_pct": rh},
        pixel_size_m=rng.uniform(0.004, 0.012),
    )


def _cold_corner(rng, x, y, f_wall, f_crit):
    """Loss of temperature factor around a 3-D corner and along its two edges."""
    width, height = x.shape[1], x.shape[0]
    cx, cy = rng.uniform(0.08, 0.92) * width, rng.uniform(0.08, 0.5) * height
    gap = f_wall - f_crit
    depth = gap + rng.uniform(0.08, 0.2)
    length = rng.uniform(30.0, 60.0)
    corner = depth * np.exp(-np.hypot(x - cx, y - cy) / length)
    edge = gap * rng.uniform(0.3, 0.6)
    edge_length = rng.uniform(6.0, 14.0)
    edges = edge * np.maximum(
        np.exp(-np.abs(x - cx) / edge_length) * (y >= cy),
        np.exp(-np.abs(y - cy) / edge_length),
    )
    reach = length * math.log(depth / (0.3 * gap)) + 20
    box = (cx - reach, cy - reach, cx + reach, cy + reach)
    return np.maximum(corner, edges), box


def _missing_panel(rng, x, y, f_wall, f_crit):
    """A rectangle without insulation, its edges softened by lateral conduction."""
    width, height = x.shape[1], x.shape[0]
    w, h = rng.uniform(40, 140), rng.uniform(30, 110)
    x0, y0 = rng.uniform(10, width - w - 10), rng.uniform(10, height - h - 10)
    inside = ((x >= x0) & (x < x0 + w) & (y >= y0) & (y < y0 + h)).astype(np.float64)
    depth = f_wall - f_crit + rng.uniform(0.04, 0.15)
    return depth * ndimage.gaussian_filter(inside, rng.uniform(2.0, 5.0)), (x0, y0, x0 + w, y0 + h)


# --------------------------------------------------------------------------------------
# Roof at night

_WET_RADII = {"small": (9.0, 14.0), "medium": (22.0, 35.0), "large": (45.0, 70.0)}


def roof_scene(seed: tuple, width: int = WIDTH, height: int = HEIGHT) -> Scene:
    rng = np.random.default_rng(seed)
    y, x = np.mgrid[0:height, 0:width].astype(np.float64)
    t0 = rng.uniform(-6.0, 2.0)
    slope_x, slope_y = rng.uniform(-0.5, 0.5, size=2)
    true_c = t0 + slope_x * x / width + slope_y * y / height
    true_c += _texture(rng, (height, width), 25, 0.12)
    wet = np.zeros((height, width), dtype=bool)
    rise = np.zeros((height, width))
    taken: list[tuple] = []
    for _ in range(int(rng.integers(1, 4))):
        size = rng.choice(list(_WET_RADII))
        radius = rng.uniform(*_WET_RADII[size])
        for _attempt in range(30):
            cx = rng.uniform(radius * 1.6 + 5, width - radius * 1.6 - 5)
            cy = rng.uniform(radius * 1.6 + 5, height - radius * 1.6 - 5)
            box = (cx - 1.6 * radius, cy - 1.6 * radius, cx + 1.6 * radius, cy + 1.6 * radius)
            if _free(taken, box, 25):
                taken.append(box)
                blob = _blob(rng, (height, width), (cx, cy), radius)
                wet |= blob
                blur = rng.uniform(1.5, 3.0)
                rise += rng.uniform(1.2, 3.0) * ndimage.gaussian_filter(blob.astype(float), blur)
                break
    true_c += rise
    for _ in range(int(rng.integers(1, 5))):  # vents and drains: small and hot
        cx, cy, r = rng.uniform(10, width - 10), rng.uniform(10, height - 10), rng.uniform(1.5, 3.0)
        true_c += rng.uniform(4.0, 10.0) * (np.hypot(x - cx, y - cy) <= r)
    ratio = np.ones_like(true_c)
    for _ in range(int(rng.integers(0, 3))):  # repair patches of another membrane
        w, h = rng.integers(20, 80), rng.integers(20, 80)
        x0, y0 = rng.integers(0, width - w), rng.integers(0, height - h)
        ratio[y0 : y0 + h, x0 : x0 + w] = rng.uniform(0.99, 1.01)
    # A warm wall beside the roof mirrored at a grazing angle along one edge.
    edge = rng.integers(0, 4)
    distance = (x, width - 1 - x, y, height - 1 - y)[edge]
    reflections = rng.uniform(0.2, 0.5) * np.exp(-distance / rng.uniform(20.0, 50.0))
    sky_c = t0 - rng.uniform(20.0, 35.0)
    apparent = camera(
        true_c, rng, emissivity_ratio=ratio, reflected_c=sky_c, reflections=reflections
    )
    regions, ignore = _split_truth(wet)
    return Scene(
        "roof",
        seed,
        apparent,
        true_c,
        regions=regions,
        ignore=ignore,
        pixel_size_m=rng.uniform(0.02, 0.06),
    )


# --------------------------------------------------------------------------------------
# Electrical panel


def electrical_scene(seed: tuple, width: int = WIDTH, height: int = HEIGHT) -> Scene:
    rng = np.random.default_rng(seed)
    y, x = np.mgrid[0:height, 0:width].astype(np.float64)
    ambient = rng.uniform(22.0, 32.0)
    plate = ambient + 1.0 + rng.uniform(0.0, 1.5) * (1.0 - y / height)
    true_c = plate + _texture(rng, (height, width), 20, 0.1)
    phases: list[dict] = []
    groups = int(rng.integers(1, 3))
    for group in range(groups):
        w = int(rng.integers(14, 29))
        h = int(rng.integers(90, 171))
        gap = int(rng.integers(10, 25))
        span = 3 * w + 2 * gap
        left = (
            int(rng.integers(20, width - span - 20))
            if groups == 1
            else (int(rng.integers(20, width // 2 - span)) + group * (width // 2))
        )
        top = int(rng.integers(60, height - h - 60))
        load = rng.uniform(4.0, 12.0)
        for index in range(3):
            x0 = left + index * (w + gap)
            body = (x >= x0) & (x < x0 + w) & (y >= top) & (y < top + h)
            cable_x0 = x0 + w // 4
            cable = (x >= cable_x0) & (x < cable_x0 + w // 2) & (y < top)
            phase_rise = load + rng.uniform(-0.4, 0.4)
            # Warmer towards the terminals at the top, where current enters.
            true_c = np.where(body, plate + phase_rise + 0.5 * (1 - (y - top) / h), true_c)
            true_c = np.where(cable, plate + phase_rise - 1.0, true_c)
            phases.append(
                {"mask": body | cable, "group": group, "faulty": False, "box": (x0, top, w, h)}
            )
    if rng.random() < 0.5:  # a lone contactor: warm, no fault
        for _attempt in range(30):
            x0, y0 = int(rng.integers(10, width - 60)), int(rng.integers(10, height - 60))
            lone = (x >= x0) & (x < x0 + 40) & (y >= y0) & (y < y0 + 40)
            if not any(
                (lone & ndimage.binary_dilation(p["mask"], iterations=15)).any() for p in phases
            ):
                true_c = np.where(lone, plate + rng.uniform(3.0, 8.0), true_c)
                break
    faults = rng.choice([0, 1, 2], p=[0.2, 0.6, 0.2])
    truth_points = []
    for phase in rng.choice(len(phases), size=faults, replace=False):
        x0, top, w, h = phases[phase]["box"]
        cx = x0 + w / 2 + rng.uniform(-2, 2)
        cy = top + rng.uniform(5, 12) if rng.random() < 0.5 else top + h - rng.uniform(5, 12)
        amplitude, sigma = rng.uniform(6.0, 30.0), rng.uniform(1.5, 3.5)
        r2 = (x - cx) ** 2 + (y - cy) ** 2
        lug = amplitude * np.exp(-r2 / (2 * sigma**2))
        spread = 0.15 * amplitude * np.exp(-r2 / (2 * 12.0**2)) * phases[phase]["mask"]
        true_c = true_c + lug + spread
        near = r2 <= (2 * sigma) ** 2
        index = np.argmax(np.where(near, true_c, -np.inf))
        row, col = divmod(int(index), width)
        truth_points.append((col, row))
        phases[phase]["faulty"] = True
    ratio = np.ones_like(true_c)
    for _ in range(int(rng.integers(0, 4))):  # bare metal: low emissivity, reads cooler
        phase = phases[int(rng.integers(0, len(phases)))]
        if phase["faulty"]:
            continue
        x0, top, w, h = phase["box"]
        y0 = top + int(rng.integers(20, max(21, h - 30)))
        ratio[y0 : y0 + 12, x0 + 2 : x0 + w - 2] = rng.uniform(0.2, 0.5)
    reflections = np.zeros_like(true_c)
    for _ in range(int(rng.integers(0, 3))):  # a lamp or a face mirrored by metal
        cx, cy, s = rng.uniform(0, width), rng.uniform(0, height), rng.uniform(3.0, 6.0)
        reflections += rng.uniform(0.8, 1.8) * np.exp(-((x - cx) ** 2 + (y - cy) ** 2) / (2 * s**2))
    apparent = camera(
        true_c, rng, emissivity_ratio=ratio, reflected_c=ambient, reflections=reflections
    )
    return Scene(
        "electrical",
        seed,
        apparent,
        true_c,
        points=truth_points,
        phases=phases,
        pixel_size_m=rng.uniform(0.001, 0.003),
    )


# --------------------------------------------------------------------------------------
# Running the detectors and scoring them


def propose_for(scene: Scene, **settings) -> list:
    """The app's call for this scene's survey kind, at default settings unless overridden."""
    from survey.thermal import proposals

    if scene.kind == "envelope":
        return proposals.propose_envelope(
            scene.temperatures_c, pixel_size_m=scene.pixel_size_m, **scene.conditions, **settings
        )
    if scene.kind == "roof":
        return proposals.propose_roof(
            scene.temperatures_c, pixel_size_m=scene.pixel_size_m, **settings
        )
    return proposals.propose_hot_spots(scene.temperatures_c, **settings)


@dataclass
class Score:
    true_positives: int = 0
    false_positives: int = 0
    false_negatives: int = 0
    ious: list[float] = field(default_factory=list)
    references: int = 0
    good_references: int = 0

    @property
    def precision(self) -> float:
        found = self.true_positives + self.false_positives
        return self.true_positives / found if found else 1.0

    @property
    def recall(self) -> float:
        wanted = self.true_positives + self.false_negatives
        return self.true_positives / wanted if wanted else 1.0

    def add(self, other: Score) -> None:
        self.true_positives += other.true_positives
        self.false_positives += other.false_positives
        self.false_negatives += other.false_negatives
        self.ious += other.ious
        self.references += other.references
        self.good_references += other.good_references


def _mask(shape, proposal) -> np.ndarray:
    """The proposal's pixels as the app's marks cover them."""
    from survey.thermal.marks import mark_mask

    return mark_mask(shape, proposal.kind, proposal.points)


def score(scene: Scene, proposals: list) -> Score:
    """One-to-one matching of proposals with the truth, best overlap first.

    Regions: a match needs IoU ≥ 0.5 (intersection over union of the pixel masks, plain
    numpy). Hot spots: the proposal's hottest pixel within 3 px of the true maximum and
    the true maximum inside the proposed mark. A proposal that matches nothing but lies
    mostly (over half its pixels) on a 'don't care' region counts neither way.
    """
    shape = scene.temperatures_c.shape
    result = Score()
    if scene.kind == "electrical":
        spots = [p for p in proposals if p.category == "hot_spot"]
        pairs = []
        for i, proposal in enumerate(spots):
            mask = _mask(shape, proposal)
            hx, hy = proposal.stats["hottest"]
            for j, (tx, ty) in enumerate(scene.points):
                distance = math.hypot(hx - tx, hy - ty)
                if distance <= POINT_TOLERANCE_PX and mask[ty, tx]:
                    pairs.append((-distance, i, j))
        matched = _greedy(pairs)
        result.true_positives = len(matched)
        result.false_positives = len(spots) - len(matched)
        result.false_negatives = len(scene.points) - len(matched)
        for proposal in proposals:
            if proposal.category != "reference":
                continue
            result.references += 1
            x_ref, y_ref = proposal.points[0]
            on = [p for p in scene.phases if p["mask"][int(y_ref), int(x_ref)]]
            if on and not on[0]["faulty"]:
                result.good_references += 1
        return result
    masks = [_mask(shape, p) for p in proposals]
    pairs = []
    for i, mask in enumerate(masks):
        for j, truth in enumerate(scene.regions):
            union = np.count_nonzero(mask | truth)
            overlap = np.count_nonzero(mask & truth) / union if union else 0.0
            if overlap >= MIN_IOU:
                pairs.append((overlap, i, j))
    matched = _greedy(pairs)
    result.ious = [overlap for overlap, _, _ in matched.values()]
    unmatched = [i for i in range(len(masks)) if i not in matched]
    for i in unmatched:
        on_ignored = sum(np.count_nonzero(masks[i] & region) for region in scene.ignore)
        if on_ignored * 2 <= np.count_nonzero(masks[i]):
            result.false_positives += 1
    result.true_positives = len(matched)
    result.false_negatives = len(scene.regions) - len(matched)
    return result


def _greedy(pairs: list[tuple]) -> dict:
    """Best-first one-to-one matching of (quality, proposal, truth) triples."""
    used_truth, matched = set(), {}
    for quality, i, j in sorted(pairs, reverse=True):
        if i not in matched and j not in used_truth:
            matched[i] = (quality, i, j)
            used_truth.add(j)
    return matched


def evaluate(scene_list: list[Scene], **settings) -> Score:
    """Run the detector of each scene's kind and add up the scores."""
    total = Score()
    for scene in scene_list:
        total.add(score(scene, propose_for(scene, **settings)))
    return total
