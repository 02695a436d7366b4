"""How a mark is named where people read it: "L2 lug, 118 A of 160 A".

A mark may carry a phase or component name and the load current measured on it when the
thermogram was taken; with the asset's rating in amperes the caption says how loaded that
part was. Used by the readings (workspace table, results JSON), findings and reports.
"""


def _amperes(value: float) -> str:
    return f"{round(float(value), 1):g} A"


def load_caption(
    name: str = "",
    load_current_a: float | None = None,
    rating: float | None = None,
    rating_unit: str = "",
) -> str:
    """The caption of a mark: its name, then its load current "of" the rating when in A.

    Examples
    --------
    >>> load_caption("L2 lug", 118.0, 160.0, "A")
    'L2 lug, 118 A of 160 A'
    >>> load_caption("", 42.25, 75.0, "kW")
    '42.2 A'
    >>> load_caption("Bearing, drive end")
    'Bearing, drive end'
    """
    parts = [name.strip()] if name and name.strip() else []
    if load_current_a is not None:
        text = _amperes(load_current_a)
        if rating is not None and rating_unit == "A":
            text += f" of {_amperes(rating)}"
        parts.append(text)
    return ", ".join(parts)


def mark_caption(mark) -> str:
    """load_caption of a Mark, with the rating of its thermogram's asset."""
    asset = mark.thermogram.asset if mark.thermogram.asset_id else None
    return load_caption(
        mark.name,
        mark.load_current_a,
        asset.rating if asset is not None else None,
        asset.rating_unit if asset is not None else "",
    )
