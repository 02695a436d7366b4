"""Shared test data of the palette and drawing tests."""

import numpy as np


def ramp_field(height=64, width=256, low=10.0, high=40.0):
    """A field rising left to right across the whole span, float32 °C."""
    row = np.linspace(low, high, width, dtype=np.float64)
    return np.repeat(row[None, :], height, axis=0).astype(np.float32)


# --- palettes ------------------------------------------------------------------------------
