"""Figures of survey.thermal: decoding, rendering, psychrometrics, radiometry, marks."""

import io

import numpy as np

from tests.bench.inputs import SIZES, csv_bytes, marks_spec, temperature_field, tiff_bytes
from tests.bench.timing import Row, Timing, measure, measure_pair

# The upload pipeline's PNG settings for previews (survey.services.processing: Pillow's default
# level 6, optimize off, unless it names its own PNG_COMPRESS_LEVEL); the floor encodes at
# the same level, so only our own work differs between the two.
DEFAULT_PNG_LEVEL = 6
PALETTE = "black-red-yellow"


def png_level() -> int:
    try:
        from survey.services.processing import PNG_COMPRESS_LEVEL
    except ImportError:  # Django not set up, or the pipeline keeps Pillow's default
        return DEFAULT_PNG_LEVEL
    return int(PNG_COMPRESS_LEVEL)


def png_encode(rgb: np.ndarray, level: int = DEFAULT_PNG_LEVEL) -> bytes:
    from PIL import Image

    buffer = io.BytesIO()
    Image.fromarray(rgb, "RGB").save(buffer, format="PNG", compress_level=level, optimize=False)
    return buffer.getvalue()


def palette_ramp() -> np.ndarray:
    from survey import thermal

    return np.asarray(thermal.PALETTES[PALETTE], dtype=np.uint8)


def floor_decode_render(
    data: bytes, ramp: np.ndarray, low: float, high: float, level: int = DEFAULT_PNG_LEVEL
) -> bytes:
    """tifffile decode + one LUT lookup + PNG encode: the least any preview can cost."""
    import tifffile

    values = tifffile.imread(io.BytesIO(data))
    steps = len(ramp) - 1
    index = np.clip((values - low) * (steps / (high - low)), 0, steps).astype(np.uint8)
    return png_encode(np.take(ramp, index, axis=0), level)


def app_decode_render(data: bytes, level: int = DEFAULT_PNG_LEVEL) -> bytes:
    from survey import thermal

    temperatures = thermal.read_temperatures(data, "bench.tif")
    low, high = thermal.auto_span(temperatures)
    return png_encode(thermal.render(temperatures, PALETTE, low, high), level)


def decode_render_timings(size: str, repeat: int) -> tuple[Timing, Timing]:
    """(figure, floor) for decode + automatic span + render + PNG of a float TIFF."""
    width, height = SIZES[size]
    field = temperature_field(width, height)
    data = tiff_bytes(field)
    ramp = palette_ramp()
    low, high = float(np.percentile(field, 1)), float(np.percentile(field, 99))
    level = png_level()
    return measure_pair(
        lambda: app_decode_render(data, level),
        lambda: floor_decode_render(data, ramp, low, high, level),
        repeat=repeat,
    )


def decode_render_parts(size: str) -> dict[str, float]:
    """Milliseconds of each step of the figure, to say what bounds it."""
    from survey import thermal

    field = temperature_field(*SIZES[size])
    data = tiff_bytes(field)
    low, high = thermal.auto_span(field)
    rgb = thermal.render(field, PALETTE, low, high)
    steps = {
        "decode": lambda: thermal.read_temperatures(data, "bench.tif"),
        "span": lambda: thermal.auto_span(field),
        "render": lambda: thermal.render(field, PALETTE, low, high),
        "PNG": lambda: png_encode(rgb, png_level()),
    }
    return {name: measure(step, repeat=3).median * 1e3 for name, step in steps.items()}


def figure_decode_render(size: str, repeat: int, floors: dict) -> Row:
    figure, floor = decode_render_timings(size, repeat)
    floors[size] = floor.median
    parts = decode_render_parts(size)
    return Row(
        f"decode+span+render+PNG {size} float TIFF",
        figure.median * 1e3,
        "ms",
        floor.median * 1e3,
        max_ratio=1.5,
        minimum=figure.min * 1e3,
        note=", ".join(f"{name} {ms:.1f}" for name, ms in parts.items())
        + f" ms (PNG level {png_level()})",
        details={"floor_min_ms": floor.min * 1e3, "parts_ms": parts},
    )


def figure_csv(repeat: int = 5) -> list[Row]:
    """Decode a 640×480 text matrix with a decimal point and with a decimal comma."""
    from survey import thermal

    width, height = SIZES["640×480"]
    field = temperature_field(width, height)
    point, comma = csv_bytes(field, decimal="."), csv_bytes(field, decimal=",")
    rows = []
    for label, data in (("decimal point", point), ("decimal comma", comma)):
        figure, floor = measure_pair(
            lambda d=data: thermal.read_temperatures(d, "bench.csv"),
            lambda: np.loadtxt(io.BytesIO(point), delimiter=","),
            repeat=repeat,
        )
        rows.append(
            Row(
                f"CSV 640×480 {label}",
                figure.median * 1e3,
                "ms",
                floor.median * 1e3,
                max_ratio=1.2,
                minimum=figure.min * 1e3,
                details={"bytes": len(data)},
            )
        )
    return rows


def _exp_floor(field: np.ndarray) -> object:
    """One vectorised exponential over the array as it is stored (float32)."""
    return lambda: np.exp(field)


def _float64_log_exp_ms(field: np.ndarray, repeat: int) -> float:
    """One float64 log and one exp over the array: what the Sonntag formula needs at least."""
    wide = field.astype(np.float64) + 273.15
    return measure(lambda: np.exp(np.log(wide)), repeat=repeat).median * 1e3


def figure_surface_rh(repeat: int = 15) -> Row:
    from survey import thermal

    field = temperature_field(*SIZES["1280×1024"])
    figure, floor = measure_pair(
        lambda: thermal.surface_rh(20.0, 50.0, field), _exp_floor(field), repeat=repeat
    )
    wide_ms = _float64_log_exp_ms(field, repeat)
    return Row(
        "surface_rh map 1280×1024",
        figure.median * 1e3,
        "ms",
        floor.median * 1e3,
        max_ratio=4.0,
        max_value=30.0,
        minimum=figure.min * 1e3,
        note=f"Sonntag's float64 log + exp alone take {wide_ms:.1f} ms; float32 exp is SIMD",
        details={"float64_log_exp_ms": wide_ms},
    )


def figure_object_temperature(repeat: int = 15) -> Row:
    from survey import thermal

    field = temperature_field(*SIZES["1280×1024"])
    figure, floor = measure_pair(
        lambda: thermal.object_temperature(field, 0.95, 20.0, band="lwir"),
        _exp_floor(field),
        repeat=repeat,
    )
    return Row(
        "object_temperature lwir 1280×1024",
        figure.median * 1e3,
        "ms",
        floor.median * 1e3,
        max_value=80.0,
        minimum=figure.min * 1e3,
    )


def figure_marks(repeat: int = 7) -> Row:
    """Statistics of 100 marks of every kind (points, areas, lines) on one 1280×1024 array."""
    from survey import thermal

    width, height = SIZES["1280×1024"]
    field = temperature_field(width, height)
    marks = marks_spec(width, height, 100)

    def run() -> None:
        for kind, points in marks:
            thermal.mark_statistics(field, kind, points)

    figure = measure(run, repeat=repeat)
    return Row(
        "100 marks on 1280×1024",
        figure.median * 1e3,
        "ms",
        max_value=100.0,
        minimum=figure.min * 1e3,
    )
