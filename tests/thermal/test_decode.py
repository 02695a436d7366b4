"""Decoding thermogram files: round trips, units, limits and refusals."""

import io
import struct
import zlib

import numpy as np
import pytest
import tifffile
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from PIL import Image

from survey.thermal.decode import (
    MAX_ASPECT_RATIO,
    MAX_PIXELS,
    ThermogramFormatError,
    declared_size,
    detect_format,
    read_temperatures,
    size_comparison,
)
from survey.thermal.palettes import PALETTES, render
from tests.hypothesis_profiles import examples


def field(height=48, width=64, low=-5.0, high=85.0, seed=0):
    """A smooth invented field with noise, float32 °C."""
    rng = np.random.default_rng(seed)
    y, x = np.mgrid[0:height, 0:width]
    values = low + (high - low) * (0.6 * x / width + 0.3 * y / height) + rng.normal(0, 0.5, x.shape)
    return values.astype(np.float32)


def tiff_bytes(array, **options):
    buffer = io.BytesIO()
    tifffile.imwrite(buffer, array, **options)
    return buffer.getvalue()


def png_bytes(array):
    buffer = io.BytesIO()
    Image.fromarray(array).save(buffer, format="PNG")
    return buffer.getvalue()


def npy_bytes(array, allow_pickle=False):
    buffer = io.BytesIO()
    np.save(buffer, array, allow_pickle=allow_pickle)
    return buffer.getvalue()


def png_chunk(kind: bytes, body: bytes) -> bytes:
    crc = zlib.crc32(kind + body) & 0xFFFFFFFF
    return struct.pack(">I", len(body)) + kind + body + struct.pack(">I", crc)


# --- round trips ---------------------------------------------------------------------------


def test_read_temperatures_float_tiff_round_trip_is_exact():
    """A 32-bit float TIFF in °C comes back bit for bit, NaN pixels included."""
    expected = field()
    expected[3, 4] = np.nan
    result = read_temperatures(tiff_bytes(expected), "wall.tif")
    assert result.dtype == np.float32
    np.testing.assert_array_equal(result, expected)


@pytest.mark.parametrize(
    "unit, convert",
    [
        # Kelvin and Fahrenheit definitions (SI Brochure; °F = °C·9/5 + 32), exact.
        ("K", lambda c: c + 273.15),
        ("F", lambda c: c * 9 / 5 + 32),
    ],
)
def test_read_temperatures_float_tiff_converts_units(unit, convert):
    """A float TIFF stored in K or °F is converted to °C."""
    celsius = field().astype(np.float64)
    stored = convert(celsius).astype(np.float32)
    result = read_temperatures(tiff_bytes(stored), "roof.tif", unit=unit)
    # float32 storage of values near 300 keeps about 3e-5 K.
    np.testing.assert_allclose(result, celsius, atol=1e-4)


def test_read_temperatures_centikelvin_tiff_within_quantisation_step():
    """A 16-bit TIFF in centikelvin reads back within half a count (0.005 K)."""
    celsius = field().astype(np.float64)
    counts = np.rint((celsius + 273.15) / 0.01).astype(np.uint16)
    result = read_temperatures(tiff_bytes(counts), "panel.tif", unit="K", scale=0.01)
    np.testing.assert_allclose(result, celsius, atol=0.005 + 1e-4)


def test_read_temperatures_16bit_png_with_scale_and_offset():
    """A 16-bit grey PNG with scale 0.05 and offset −40 °C reads to the quantisation step."""
    celsius = field().astype(np.float64)
    counts = np.rint((celsius + 40.0) / 0.05).astype(np.uint16)
    result = read_temperatures(png_bytes(counts), "motor.png", scale=0.05, offset=-40.0)
    np.testing.assert_allclose(result, celsius, atol=0.025 + 1e-4)


def test_read_temperatures_npy_round_trip_is_exact():
    """A float .npy comes back exactly, also from a path and a file object."""
    expected = field()
    data = npy_bytes(expected)
    np.testing.assert_array_equal(read_temperatures(data, "a.npy"), expected)
    np.testing.assert_array_equal(read_temperatures(io.BytesIO(data), "a.npy"), expected)


def test_read_temperatures_reads_a_path(tmp_path):
    """A path on disk is read like bytes."""
    expected = field()
    path = tmp_path / "slab.tif"
    path.write_bytes(tiff_bytes(expected))
    np.testing.assert_array_equal(read_temperatures(path, "slab.tif"), expected)
    np.testing.assert_array_equal(read_temperatures(str(path)), expected)


def test_read_temperatures_single_sample_axis_is_dropped():
    """A TIFF of shape (1, H, W) is read as one plane."""
    expected = field()
    result = read_temperatures(tiff_bytes(expected[None]), "one.tif")
    np.testing.assert_array_equal(result, expected)


# --- text matrices -------------------------------------------------------------------------


@pytest.mark.parametrize(
    "text",
    [
        "20.5,21.0,22.25\n19.75,20.0,-3.5\n",
        "20.5;21.0;22.25\r\n19.75;20.0;-3.5\r\n",
        "20,5;21,0;22,25\n19,75;20;-3,5\n",
        "20.5\t21\t22.25\n19.75\t20\t-3.5\n",
        "20,5\t21\t22,25\n19,75\t20\t-3,5\n",
        "20.5 21.0 22.25\n19.75 20.0 -3.5\n",
        "col1;col2;col3\n20,5;21;22,25\n19,75;20;-3,5\n",
        "\ufeff20.5,21.0,22.25,\n19.75,20.0,-3.5,\n\n",
        "20.5;21.0;22.25\r19.75;20.0;-3.5\r",
    ],
    ids=[
        "comma",
        "semicolon",
        "decimal-comma",
        "tab",
        "tab-decimal-comma",
        "spaces",
        "header",
        "bom-trailing-delimiter",
        "cr-line-ends",
    ],
)
def test_read_temperatures_text_variants(text):
    """Separators, decimal comma, header rows and trailing delimiters all read the same."""
    result = read_temperatures(text.encode("utf-8"), "matrix.csv")
    np.testing.assert_array_equal(
        result, np.array([[20.5, 21.0, 22.25], [19.75, 20.0, -3.5]], dtype=np.float32)
    )


def test_read_temperatures_text_in_fahrenheit_and_kelvin():
    """°F and K matrices are converted (exact definitions of the scales)."""
    fahrenheit = read_temperatures(b"32;212\n-40;50\n", "f.csv", unit="F")
    np.testing.assert_allclose(fahrenheit, [[0.0, 100.0], [-40.0, 10.0]], atol=1e-5)
    kelvin = read_temperatures(b"273.15,300\n", "k.csv", unit="K")
    np.testing.assert_allclose(kelvin, [[0.0, 26.85]], atol=1e-4)


def test_read_temperatures_text_header_unit_must_match():
    """A header naming °F while °C is chosen is refused, naming both units."""
    with pytest.raises(ThermogramFormatError, match="°F.*°C"):
        read_temperatures("Temperature (°F);x\n70;71\n".encode(), "f.csv", unit="C")
    result = read_temperatures("Temperature (°F);x\n32;212\n".encode(), "f.csv", unit="F")
    np.testing.assert_allclose(result, [[0.0, 100.0]], atol=1e-5)


def test_read_temperatures_text_quoted_cells():
    """Quoted cells (some spreadsheets quote decimal-comma numbers) read as numbers."""
    result = read_temperatures(b'"20,5";"21"\n"22,25";"-1,5"\n', "quoted.csv")
    np.testing.assert_array_equal(result, np.array([[20.5, 21.0], [22.25, -1.5]], np.float32))


def test_read_temperatures_round_trips_a_written_csv():
    """A matrix written with numpy.savetxt reads back within the printed precision."""
    expected = field(20, 30)
    buffer = io.StringIO()
    np.savetxt(buffer, expected, fmt="%.3f", delimiter=";")
    result = read_temperatures(buffer.getvalue().encode(), "grid.csv")
    np.testing.assert_allclose(result, expected, atol=0.0005 + 1e-5)


@pytest.mark.parametrize(
    "text, message",
    [
        ("20;21;22\n20;21\n", r"row 2: 2 values where the first row has 3"),
        ("20;21\n20;warm\n", r"row 2, column 2: 'warm' is not a number"),
        ("20;21\n\n20;nan\n", r"row 3, column 2: 'nan' is not a finite"),
        ("20,21\n20,inf\n", r"row 2, column 2: 'inf' is not a finite"),
        ("20;;21\n20;21;22\n", r"row 1, column 2: the cell is empty"),
        ("\n  \n", r"holds no numbers"),
        ("20;1e300\n", r"beyond any surface"),
        ("a;b;c\n", r"header but no rows"),
    ],
)
def test_read_temperatures_text_errors_name_row_and_column(text, message):
    """Ragged rows, words, non-finite values and empty files are refused with the place."""
    with pytest.raises(ThermogramFormatError, match=message):
        read_temperatures(text.encode(), "bad.csv")


# --- refusals ------------------------------------------------------------------------------


def test_read_temperatures_refuses_integer_image_without_scale():
    """An integer TIFF without a scale is an error that explains what to give."""
    counts = np.arange(12, dtype=np.uint16).reshape(3, 4)
    with pytest.raises(ThermogramFormatError, match="scale and offset"):
        read_temperatures(tiff_bytes(counts), "raw.tif")
    with pytest.raises(ThermogramFormatError, match="scale and offset"):
        read_temperatures(png_bytes(counts), "raw.png")


def test_read_temperatures_refuses_colour_picture_without_palette():
    """An RGB PNG read as temperatures asks for palette decoding."""
    rgb = render(field(), "black-red-yellow", -5, 85)
    with pytest.raises(ThermogramFormatError, match="palette decoding"):
        read_temperatures(png_bytes(rgb), "photo.png", scale=1.0)


def test_read_temperatures_refuses_a_grey_jpeg():
    """A grey JPEG cannot hold temperatures exactly and is refused."""
    buffer = io.BytesIO()
    Image.fromarray(np.zeros((8, 8), np.uint8)).save(buffer, format="JPEG")
    with pytest.raises(ThermogramFormatError, match="JPEG"):
        read_temperatures(buffer.getvalue(), "grey.jpg", scale=1.0)


def test_read_temperatures_refuses_unknown_content_whatever_the_name():
    """Binary content that is no accepted format is refused, even named .tif."""
    with pytest.raises(ThermogramFormatError, match="Accepted"):
        read_temperatures(b"\x00\x01\x02GIF89a" + bytes(200), "wall.tif")
    with pytest.raises(ThermogramFormatError, match="Accepted"):
        read_temperatures(b"GIF89a\x01\x00\x01\x00\x00\xff\x00" + bytes(50), "wall.gif")


def test_read_temperatures_content_wins_over_the_name():
    """A TIFF named .csv is read as TIFF (magic bytes decide)."""
    expected = field()
    np.testing.assert_array_equal(read_temperatures(tiff_bytes(expected), "x.csv"), expected)


def test_read_temperatures_refuses_empty_file():
    """An empty upload says it is empty."""
    with pytest.raises(ThermogramFormatError, match="empty"):
        read_temperatures(b"", "nothing.csv")


def test_read_temperatures_refuses_truncated_tiff():
    """A TIFF cut in half is refused as damaged, not read as zeros."""
    data = tiff_bytes(field(240, 320))
    with pytest.raises(ThermogramFormatError, match="damaged or truncated"):
        read_temperatures(data[: len(data) // 2], "cut.tif")
    compressed = tiff_bytes(field(240, 320), compression="zlib")
    with pytest.raises(ThermogramFormatError, match="damaged or truncated"):
        read_temperatures(compressed[: len(compressed) // 2], "cut.tif")


@pytest.mark.parametrize("pillow_lenient", [False, True])
def test_read_temperatures_refuses_truncated_png(pillow_lenient, monkeypatch):
    """A PNG cut short is refused as damaged, even where another library (WeasyPrint does,
    on import) told Pillow to accept truncated pictures."""
    from PIL import ImageFile

    monkeypatch.setattr(ImageFile, "LOAD_TRUNCATED_IMAGES", pillow_lenient)
    data = png_bytes(np.arange(64 * 64, dtype=np.uint16).reshape(64, 64))
    with pytest.raises(ThermogramFormatError, match="PNG"):
        read_temperatures(data[: len(data) // 2], "cut.png", scale=0.01)
    assert ImageFile.LOAD_TRUNCATED_IMAGES is pillow_lenient


@pytest.mark.parametrize("side", [5000, 60000])
def test_read_temperatures_refuses_png_bomb_from_its_header(side):
    """A PNG whose header declares a huge image is refused before decoding, naming the limit."""
    header = struct.pack(">IIBBBBB", side, side, 16, 0, 0, 0, 0)
    data = (
        b"\x89PNG\r\n\x1a\n"
        + png_chunk(b"IHDR", header)
        + png_chunk(b"IDAT", zlib.compress(bytes(1000)))
        + png_chunk(b"IEND", b"")
    )
    with pytest.raises(ThermogramFormatError, match="20 megapixels"):
        read_temperatures(data, "bomb.png", scale=0.01)


def test_read_temperatures_refuses_tiff_over_the_pixel_limit():
    """The pixel limit comes from the TIFF header; a lower limit can be passed."""
    data = tiff_bytes(field(100, 100))
    with pytest.raises(ThermogramFormatError, match="100×100 pixels.*0.005 megapixels"):
        read_temperatures(data, "big.tif", max_pixels=5000)
    assert MAX_PIXELS == 20_000_000


def test_read_temperatures_refuses_100_mb_csv_by_its_size(tmp_path):
    """A 100 MB CSV on disk is refused from its size alone (a sparse file, never read)."""
    path = tmp_path / "huge.csv"
    with path.open("wb") as handle:
        handle.write(b"20.5;21.5\n" * 1000)
        handle.truncate(100 * 1024 * 1024)
    with pytest.raises(ThermogramFormatError, match="100.0 MB; a text matrix .* at most 50.0 MB"):
        read_temperatures(path, "huge.csv")
    with path.open("rb") as handle, pytest.raises(ThermogramFormatError, match="larger than"):
        read_temperatures(handle, "huge.csv")


def test_read_temperatures_refuses_big_text_by_the_text_limit():
    """Text over the text limit is refused before parsing."""
    with pytest.raises(ThermogramFormatError, match="0.002 MB; .* at most 0.001 MB"):
        read_temperatures(b"20.5;21.5\n" * 200, "big.csv", max_text_bytes=1000)


def test_read_temperatures_refuses_oversized_file_object():
    """A file object is read no further than the limit."""

    class Endless(io.RawIOBase):
        def readable(self):
            return True

        def readinto(self, buffer):
            buffer[:] = b"1" * len(buffer)
            return len(buffer)

    with pytest.raises(ThermogramFormatError, match="larger than"):
        read_temperatures(
            io.BufferedReader(Endless()), "stream.csv", max_bytes=10_000, max_text_bytes=10_000
        )


def test_read_temperatures_refuses_pickled_npy():
    """An object .npy (which would need pickle) is refused without unpickling it."""
    data = npy_bytes(np.array([[{"a": 1}]], dtype=object), allow_pickle=True)
    with pytest.raises(ThermogramFormatError, match="must hold numbers"):
        read_temperatures(data, "evil.npy")


@pytest.mark.parametrize(
    "array, message",
    [
        (np.zeros((2, 3, 4), np.float32), "one 2-D plane"),
        (np.array([[np.inf, 1.0]], np.float32), "infinite"),
        (np.full((2, 2), np.nan, np.float32), "no valid temperature"),
        (np.full((2, 2), -300.0, np.float32), "below absolute zero"),
        (np.full((2, 2), 1e30, np.float32), "beyond any surface"),
        (np.zeros((0, 4), np.float32), "empty image"),
        (np.array([["a"]]), "must hold numbers"),
    ],
)
def test_read_temperatures_refuses_bad_npy(array, message):
    """Stacks, infinities, all-NaN, impossible and empty arrays are refused."""
    with pytest.raises(ThermogramFormatError, match=message):
        read_temperatures(npy_bytes(array), "bad.npy")


def test_read_temperatures_refuses_colour_tiff():
    """An RGB TIFF is a picture, not a temperature plane."""
    with pytest.raises(ThermogramFormatError, match="channels"):
        read_temperatures(tiff_bytes(np.zeros((8, 8, 3), np.float32), photometric="rgb"), "rgb.tif")


@pytest.mark.parametrize(
    "options, message",
    [
        ({"unit": "R"}, "Unknown unit"),
        ({"scale": 0}, "scale must be"),
        ({"offset": float("nan")}, "offset must be"),
        ({"scale": "0,01"}, "scale must be a finite number, not '0,01'"),
    ],
)
def test_read_temperatures_refuses_bad_settings(options, message):
    """Bad unit, scale or offset settings are refused with the setting's name."""
    with pytest.raises(ThermogramFormatError, match=message):
        read_temperatures(b"1;2\n", "a.csv", **options)


# --- false-colour pictures -----------------------------------------------------------------


@pytest.mark.parametrize("palette", sorted(PALETTES))
def test_read_temperatures_palette_png_within_half_a_step(palette):
    """A lossless false-colour PNG decodes within half a palette step of the field."""
    truth = field()
    low, high = -5.0, 85.0
    data = png_bytes(render(truth, palette, low, high))
    result = read_temperatures(
        data, "ir.png", palette_image=True, palette=palette, low_c=low, high_c=high
    )
    half_step = (high - low) / (len(PALETTES[palette]) - 1) / 2
    inside = (truth >= low) & (truth <= high)
    assert np.abs(result - truth)[inside].max() <= half_step + 1e-4


def test_read_temperatures_palette_from_scale_bar_box():
    """A picture with its own scale bar decodes from the bar's colours; the bar is NaN."""
    truth = field(60, 80, 10.0, 40.0)
    picture = render(truth, "black-red-yellow", 10.0, 40.0)
    bar = render(
        np.linspace(40.0, 10.0, 60)[:, None].repeat(6, axis=1), "black-red-yellow", 10.0, 40.0
    )
    canvas = np.full((60, 96, 3), 255, np.uint8)
    canvas[:, :80] = picture
    canvas[:, 88:94] = bar
    result = read_temperatures(
        png_bytes(canvas),
        "ir.png",
        palette_image=True,
        scale_bar_box=(88, 0, 94, 60),
        low_c=10.0,
        high_c=40.0,
    )
    assert np.isnan(result[:, 88:94]).all()
    # The bar has 60 rows: its step is 30/59 K, so the error stays within about one step.
    error = np.abs(result[:, :80] - truth)
    inside = (truth >= 10) & (truth <= 40)
    assert np.nanmax(error[inside]) <= 30 / 59 + 1e-3
    assert np.isfinite(result[:, :80][inside]).mean() > 0.99


@pytest.mark.parametrize(
    "options, message",
    [
        ({"palette": "black-red-yellow"}, "scale range"),
        ({"palette": "black-red-yellow", "low_c": 30.0, "high_c": 20.0}, "not valid"),
        ({"palette": "black-red-yellow", "low_c": "cold", "high_c": 20.0}, "bottom of the"),
        ({"low_c": 20.0, "high_c": 30.0}, "palette"),
        ({"palette": "rainbowish", "low_c": 20.0, "high_c": 30.0}, "Unknown palette"),
        ({"scale_bar_box": (0, 0, 200, 5), "low_c": 20.0, "high_c": 30.0}, "does not lie"),
    ],
)
def test_read_temperatures_palette_settings_are_checked(options, message):
    """Missing range or palette, or a box outside the picture, are explained."""
    data = png_bytes(render(field(), "black-red-yellow", -5, 85))
    with pytest.raises(ThermogramFormatError, match=message):
        read_temperatures(data, "ir.png", palette_image=True, **options)


def test_read_temperatures_palette_needs_a_picture():
    """Palette decoding of a CSV is refused."""
    with pytest.raises(ThermogramFormatError, match="not a false-colour picture"):
        read_temperatures(
            b"1;2\n", "a.csv", palette_image=True, palette="perceptual", low_c=0.0, high_c=1.0
        )


# --- fuzzing -------------------------------------------------------------------------------

PREFIXES = [b"", b"II*\x00", b"MM\x00*", b"\x89PNG\r\n\x1a\n", b"\xff\xd8\xff", b"\x93NUMPY"]


@settings(max_examples=examples(150), deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(prefix=st.sampled_from(PREFIXES), body=st.binary(max_size=400))
def test_read_temperatures_fuzz_raises_only_format_errors(prefix, body):
    """Any bytes either decode to a 2-D float32 array or raise ThermogramFormatError."""
    try:
        result = read_temperatures(prefix + body, "fuzz.bin", scale=0.01)
    except ThermogramFormatError as error:
        assert str(error)
    else:
        assert result.dtype == np.float32 and result.ndim == 2


@settings(max_examples=examples(60), deadline=None)
@given(data=st.data())
def test_read_temperatures_fuzz_mutated_valid_files(data):
    """Valid TIFF/PNG/.npy files with a few bytes changed never escape as other errors."""
    kind = data.draw(st.sampled_from(["tiff", "png", "npy"]))
    array = field(6, 7)
    if kind == "tiff":
        original = tiff_bytes(array)
    elif kind == "png":
        original = png_bytes(np.rint((array + 40) * 100).astype(np.uint16))
    else:
        original = npy_bytes(array)
    mutated = bytearray(original)
    for _ in range(data.draw(st.integers(1, 4))):
        position = data.draw(st.integers(0, len(mutated) - 1))
        mutated[position] = data.draw(st.integers(0, 255))
    cut = data.draw(st.integers(1, len(mutated)))
    try:
        result = read_temperatures(bytes(mutated[:cut]), "mutated", scale=0.01)
    except ThermogramFormatError:
        return
    assert result.dtype == np.float32 and result.ndim == 2


@settings(max_examples=examples(60), deadline=None)
@given(
    rows=st.lists(
        st.lists(st.floats(-50, 500, allow_nan=False, width=32), min_size=3, max_size=3),
        min_size=1,
        max_size=6,
    ),
    separator=st.sampled_from([",", ";", "\t"]),
)
def test_read_temperatures_fuzz_text_round_trip(rows, separator):
    """Any matrix of finite numbers written as text reads back equal."""
    text = "\n".join(separator.join(repr(float(v)) for v in row) for row in rows)
    result = read_temperatures(text.encode(), "fuzz.csv")
    np.testing.assert_array_equal(result, np.array(rows, dtype=np.float32))


def test_detect_format_names_each_format():
    """Magic bytes decide the format name."""
    assert detect_format(tiff_bytes(field(4, 4))) == "tiff"
    assert detect_format(png_bytes(np.zeros((2, 2), np.uint16))) == "png"
    assert detect_format(npy_bytes(field(2, 2))) == "npy"
    assert detect_format("température;20,5\n".encode("cp1252")) == "text"


# --- ambiguous text and names that do not match the content ----------------------------------


@pytest.mark.parametrize(
    "text",
    [
        "20,5\n21,3\n",  # the case
        "20,5\r\n21,35\r\n-3,5\r\n",
        "Temperature\n20,5\n21,3\n",  # behind a header
        "20,5,\n21,3,\n",  # with a trailing delimiter
        "20,21\n22,23\n",  # two columns of whole numbers read the same way
    ],
)
def test_read_temperatures_refuses_a_decimal_comma_that_could_be_two_columns(text):
    """Rows like 20,5 are refused, naming the fix, instead of read as two columns."""
    # Source: the decode module's documented rule (the reading is ambiguous by construction).
    with pytest.raises(ThermogramFormatError, match="semicolons between values.*decimal point"):
        read_temperatures(text.encode(), "column.csv")


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        # Unambiguous comma texts still read: a decimal point, a third column, 3 digits.
        ("20.5,21.3\n", [[20.5, 21.3]]),
        ("20,5,7\n21,3,8\n", [[20.0, 5.0, 7.0], [21.0, 3.0, 8.0]]),
        ("300,301\n", [[300.0, 301.0]]),
        ("20,5\n21.5,3\n", [[20.0, 5.0], [21.5, 3.0]]),
        ("20,5;21,3\n", [[20.5, 21.3]]),  # semicolons: the decimal comma is clear
    ],
)
def test_read_temperatures_reads_comma_texts_that_are_not_ambiguous(text, expected):
    """Only rows that read both ways are refused."""
    # Source: the decode module's documented rule; values by hand.
    result = read_temperatures(text.encode(), "matrix.csv")
    np.testing.assert_allclose(result, expected, atol=1e-5)


@pytest.mark.parametrize("name", ["wall.tif", "wall.TIFF", "wall.png", "wall.npy", "wall.jpg"])
def test_read_temperatures_says_a_text_file_with_an_image_name_is_not_that_image(name):
    """A fake .tif holding text says it is not a TIFF, not "a header but no rows"."""
    # Source: TIFF signatures II*\0 / MM\0* (TIFF 6.0 §2, from memory) and the PNG, .npy
    # and JPEG signatures in detect_format.
    with pytest.raises(ThermogramFormatError, match=r"is not a .*signature") as caught:
        read_temperatures(b"a;b;c\n", name)
    assert "header but no rows" not in str(caught.value)


def test_read_temperatures_says_unknown_bytes_named_tif_are_not_a_tiff():
    """Unknown binary content named .tif says it is not a TIFF, and lists what we accept."""
    # Source: TIFF signatures (TIFF 6.0 §2, from memory); GIF89a is no TIFF.
    with pytest.raises(ThermogramFormatError, match="wall.tif is not a TIFF.*Accepted"):
        read_temperatures(b"GIF89a\x01\x00\x01\x00\x00\xff\x00" + bytes(50), "wall.tif")


# --- shapes: a thermogram may be at most MAX_ASPECT_RATIO times as wide as tall ------------


def _npy_of(array) -> bytes:
    buffer = io.BytesIO()
    np.save(buffer, np.asarray(array, dtype=np.float32))
    return buffer.getvalue()


def _csv_of(height: int, width: int) -> bytes:
    return ("\n".join(";".join(["20.5"] * width) for _ in range(height)) + "\n").encode()


@pytest.mark.parametrize(
    "name, data, shape_text",
    [
        ("strip.csv", _csv_of(2, 2000), "2000×2"),
        ("strip.csv", _csv_of(2000, 2), "2×2000"),
        ("strip.npy", _npy_of(np.zeros((2, 4000))), "4000×2"),
        ("strip.tif", tiff_bytes(np.zeros((4000, 2), np.float32)), "2×4000"),
    ],
)
def test_read_temperatures_refuses_a_shape_beyond_the_aspect_limit(name, data, shape_text):
    """A 12 kB CSV of 2 × 2000 values is refused by its shape, saying the limit."""
    with pytest.raises(ThermogramFormatError) as caught:
        read_temperatures(data, name)
    message = str(caught.value)
    assert shape_text in message and f"at most {MAX_ASPECT_RATIO:g} times" in message


def test_read_temperatures_accepts_a_shape_at_the_aspect_limit():
    """Exactly MAX_ASPECT_RATIO : 1 is accepted, both ways round."""
    width = int(MAX_ASPECT_RATIO) * 3
    assert read_temperatures(_npy_of(np.zeros((3, width))), "wide.npy").shape == (3, width)
    assert read_temperatures(_csv_of(width, 3), "tall.csv").shape == (width, 3)


@pytest.mark.parametrize(
    "name, data, size",
    [
        ("a.csv", _csv_of(4, 7), (7, 4)),
        ("a.csv", b"t in C\n" + _csv_of(4, 7), (7, 4)),
        ("a.npy", _npy_of(np.zeros((5, 9))), (9, 5)),
        ("a.tif", tiff_bytes(np.zeros((6, 11), np.float32)), (11, 6)),
        ("a.png", png_bytes(np.zeros((8, 13), np.uint16)), (13, 8)),
    ],
)
def test_declared_size_reads_the_size_without_decoding(name, data, size):
    """Width and height from the header (or the rows and cells of a text)."""
    assert declared_size(data, name) == size


def test_declared_size_refuses_what_the_decoder_would_refuse():
    """An oversized header or an extreme shape is refused before the file is stored."""
    bomb = png_bytes(np.zeros((2, 2), np.uint16))
    bomb = bomb[:16] + struct.pack(">II", 30000, 30000) + bomb[24:]
    with pytest.raises(ThermogramFormatError, match="megapixels"):
        declared_size(bomb, "bomb.png")
    with pytest.raises(ThermogramFormatError, match="times as wide"):
        declared_size(_csv_of(2, 2000), "strip.csv")
    assert declared_size(b"\x00\x01", "x.bin") is None  # the decoder says why later


def test_read_temperatures_says_a_damaged_npy_header_without_internals():
    """A header holding a call, not a literal, once answered "<ast.Call object at 0x…>"."""
    header = b"{'descr': '<f4', 'fortran_order': False, 'shape': (2, 2), 'x': f(), }"
    header += b" " * (63 - len(header) % 64) + b"\n"
    data = b"\x93NUMPY\x01\x00" + len(header).to_bytes(2, "little") + header + bytes(16)
    with pytest.raises(ThermogramFormatError) as caught:
        read_temperatures(data, "hostile.npy")
    message = str(caught.value)
    assert message == "hostile.npy has a damaged .npy header."
    assert "0x" not in message and "ast" not in message


def test_read_temperatures_says_an_unreadable_picture_without_internals():
    """Pillow names its BytesIO object in its own message; ours does not."""
    with pytest.raises(ThermogramFormatError) as caught:
        read_temperatures(b"\x89PNG\r\n\x1a\n" + b"\x00" * 40, "broken.png")
    assert " at 0x" not in str(caught.value) and "broken.png" in str(caught.value)


@pytest.mark.parametrize(
    "size, limit, expected",
    [
        (1_258_292, 1_048_576, ("1.2 MB", "1.0 MB")),
        (1_048_577, 1_048_576, ("1,048,577 bytes", "1,048,576 bytes")),
        (209_715_200 + 50_000, 209_715_200, ("200.048 MB", "200.000 MB")),
    ],
)
def test_size_comparison_prints_both_in_the_same_unit(size, limit, expected):
    """Never "209.7 MB; the limit is 210 MB": one unit (MB of 1 048 576 bytes), one rounding,
    and more digits when one decimal would print a larger file as large as the limit."""
    assert size_comparison(size, limit) == expected
