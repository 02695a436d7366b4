"""Timing helpers and the result row of one figure."""

import gc
import statistics
import time
from collections.abc import Callable
from dataclasses import asdict, dataclass, field


@dataclass
class Timing:
    """Wall-clock samples of one repeated measurement, in seconds."""

    samples: list[float]

    @property
    def median(self) -> float:
        return statistics.median(self.samples)

    @property
    def min(self) -> float:
        return min(self.samples)

    def percentile(self, q: float) -> float:
        return percentile(self.samples, q)


def percentile(values: list[float], q: float) -> float:
    """The q-th percentile (0–100) with linear interpolation, as numpy's default."""
    ordered = sorted(values)
    if not ordered:
        raise ValueError("no values")
    position = (len(ordered) - 1) * q / 100.0
    below = int(position)
    above = min(below + 1, len(ordered) - 1)
    return ordered[below] + (ordered[above] - ordered[below]) * (position - below)


def measure(fn: Callable[[], object], *, repeat: int = 5, warmup: int = 1) -> Timing:
    """Run fn warmup times untimed, then repeat times timed with time.perf_counter.

    The garbage collector runs between samples, not inside them, so a collection caused by
    an earlier sample is not billed to the next one.
    """
    for _ in range(warmup):
        fn()
    samples = []
    for _ in range(repeat):
        gc.collect()
        start = time.perf_counter()
        fn()
        samples.append(time.perf_counter() - start)
    return Timing(samples)


def measure_pair(
    figure: Callable[[], object], floor: Callable[[], object], *, repeat: int = 5, warmup: int = 1
) -> tuple[Timing, Timing]:
    """Time a figure and its floor alternately, so a slow spell of the machine (another
    process, a frequency change) hits both alike and the ratio stays meaningful."""
    for _ in range(warmup):
        floor()
        figure()
    figure_samples, floor_samples = [], []
    for _ in range(repeat):
        for fn, samples in ((floor, floor_samples), (figure, figure_samples)):
            gc.collect()
            start = time.perf_counter()
            fn()
            samples.append(time.perf_counter() - start)
    return Timing(figure_samples), Timing(floor_samples)


@dataclass
class Row:
    """One line of the table: a figure, its floor measured in the same run, and its target."""

    figure: str
    value: float | None
    unit: str
    floor: float | None = None
    max_ratio: float | None = None
    max_value: float | None = None
    target_text: str = ""
    note: str = ""
    minimum: float | None = None
    met_override: bool | None = None
    details: dict = field(default_factory=dict)

    @property
    def ratio(self) -> float | None:
        if self.value is None or not self.floor:
            return None
        return self.value / self.floor

    @property
    def target(self) -> str:
        if self.target_text:
            return self.target_text
        parts = []
        if self.max_ratio is not None:
            parts.append(f"≤ {self.max_ratio:g}× floor")
        if self.max_value is not None:
            parts.append(f"≤ {self.max_value:g} {self.unit}")
        return " and ".join(parts) or "–"

    @property
    def met(self) -> bool | None:
        """True / False against the target; None when not measured or there is no target."""
        if self.value is None:
            return None
        if self.met_override is not None:
            return self.met_override
        checks = []
        if self.max_ratio is not None and self.ratio is not None:
            checks.append(self.ratio <= self.max_ratio)
        if self.max_value is not None:
            checks.append(self.value <= self.max_value)
        return all(checks) if checks else None

    @property
    def verdict(self) -> str:
        if self.value is None:
            return "not run"
        return {True: "met", False: "MISSED", None: "–"}[self.met]

    def as_json(self) -> dict:
        data = asdict(self)
        data.pop("met_override")
        data.update(ratio=self.ratio, target=self.target, met=self.met, verdict=self.verdict)
        return data


def not_run(figure: str, unit: str, reason: str, **target) -> Row:
    """A row for a figure that could not be measured here, with the reason."""
    return Row(figure, None, unit, note=reason, **target)


def fmt(value: float | None) -> str:
    if value is None:
        return "–"
    if value >= 100:
        return f"{value:.0f}"
    if value >= 10:
        return f"{value:.1f}"
    return f"{value:.2f}"


def table(rows: list[Row]) -> str:
    """The rows as a fixed-width text table, notes in the last column."""
    header = ["figure", "median", "unit", "floor", "ratio", "target", "result", "bound by / note"]
    lines = [
        [
            row.figure,
            fmt(row.value),
            row.unit,
            fmt(row.floor),
            "–" if row.ratio is None else f"{row.ratio:.2f}×",
            row.target,
            row.verdict,
            row.note,
        ]
        for row in rows
    ]
    widths = [max(len(str(line[i])) for line in [header, *lines]) for i in range(len(header) - 1)]

    def join(cells: list[str]) -> str:
        padded = [str(cell).ljust(width) for cell, width in zip(cells, widths, strict=False)]
        return "  ".join([*padded, cells[-1]]).rstrip()

    rule = "  ".join("-" * width for width in widths) + "  " + "-" * 15
    return "\n".join([join(header), rule, *(join(line) for line in lines)])
