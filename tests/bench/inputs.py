"""Invented inputs: temperature fields and the files a camera card would hold."""

import io

import numpy as np

SIZES = {"640×480": (640, 480), "1280×1024": (1280, 1024)}


def temperature_field(width: int, height: int, *, seed: int = 7) -> np.ndarray:
    """A wall-like float32 °C field: a gradient, two warm spots, a cold corner, sensor noise.

    The noise (0.05 K, a typical camera's) matters: a noiseless field compresses far better
    than a real thermogram and would flatter every PNG figure.
    """
    rng = np.random.default_rng(seed)
    y, x = np.mgrid[0:height, 0:width].astype(np.float32)
    field = 18.0 + 3.0 * x / width - 2.0 * y / height
    for cx, cy, amplitude, radius in ((0.7, 0.4, 12.0, 0.06), (0.25, 0.7, 6.0, 0.1)):
        r2 = (x - cx * width) ** 2 + (y - cy * height) ** 2
        field += amplitude * np.exp(-r2 / (2 * (radius * width) ** 2))
    field -= 4.0 * np.exp(-((x**2 + y**2) / (2 * (0.15 * width) ** 2)))
    field += rng.normal(0.0, 0.05, size=field.shape).astype(np.float32)
    return field.astype(np.float32)


def tiff_bytes(array: np.ndarray) -> bytes:
    import tifffile

    buffer = io.BytesIO()
    tifffile.imwrite(buffer, array.astype(np.float32))
    return buffer.getvalue()


def csv_bytes(array: np.ndarray, *, decimal: str = ".") -> bytes:
    """A temperature matrix as text: comma-separated with a decimal point, or
    semicolon-separated with a decimal comma (the usual European export)."""
    buffer = io.StringIO()
    delimiter = "," if decimal == "." else ";"
    np.savetxt(buffer, array, fmt="%.2f", delimiter=delimiter)
    text = buffer.getvalue()
    if decimal == ",":
        text = text.replace(".", ",")
    return text.encode("ascii")


def marks_spec(width: int, height: int, count: int = 100, *, seed: int = 11) -> list[tuple]:
    """`count` marks of every kind spread over the image, as (kind, points)."""
    rng = np.random.default_rng(seed)
    kinds = ["point", "rectangle", "ellipse", "polygon", "line"]
    marks = []
    for index in range(count):
        kind = kinds[index % len(kinds)]
        cx = float(rng.uniform(0.15, 0.85) * width)
        cy = float(rng.uniform(0.15, 0.85) * height)
        size = float(rng.uniform(20, 120))
        if kind == "point":
            points = [[round(cx), round(cy)]]
        elif kind in ("rectangle", "ellipse"):
            points = [[cx - size, cy - size * 0.6], [cx + size, cy + size * 0.6]]
        elif kind == "polygon":
            angles = np.linspace(0, 2 * np.pi, 7)[:-1]
            radii = size * np.where(np.arange(6) % 2 == 0, 1.0, 0.5)  # concave star
            points = [
                [cx + r * np.cos(a), cy + r * np.sin(a)] for r, a in zip(radii, angles, strict=True)
            ]
        else:
            points = [[cx - size, cy - size / 3], [cx + size, cy + size / 3]]
        marks.append((kind, [[float(px), float(py)] for px, py in points]))
    return marks
