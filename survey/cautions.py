"""The trade's usual cautions, shown wherever findings are ranked and in every report.

The wording is ours. Which cautions apply depends on the survey kind; the general ones
apply to every kind.
"""

GENERAL = [
    "Thermography shows patterns of surface temperature, not their causes. Each finding is "
    "an indication to be investigated, not a diagnosis.",
    "Severity levels and recommendations are a guide for planning. They defer to local codes "
    "and to licensed practitioners (electricians, engineers, building professionals), who "
    "decide on the repair.",
]

NO_HOT_SPOT = (
    "The absence of a hot spot does not prove that equipment is in good condition: a fault "
    "can be hidden behind a cover, be out of the camera's view, or show only under a higher "
    "load than at the time of the survey."
)

BY_KIND = {
    "envelope": [
        "Missing insulation, air leakage and moisture seen in a thermogram need confirmation by "
        "other means (for example a moisture meter, an air-tightness test or an opening-up) "
        "before repair work is specified.",
        "Readings depend on the weather during and before the survey; see the survey "
        "conditions check.",
    ],
    "roof": [
        "Wet insulation seen in a thermogram must be confirmed by cores or a moisture meter "
        "before repair work is specified.",
        "Work on roofs needs fall protection and a safe means of access; never walk a roof "
        "alone or in the dark without a plan for it.",
        "Wet areas are estimated from the image; an oblique view makes the true area larger.",
    ],
    "electrical": [
        "Energized electrical equipment is opened and examined only by qualified persons, "
        "after a risk assessment, wearing the protective equipment the local electrical-safety "
        "rules require for the arc-flash hazard. Prefer viewing windows; never touch equipment "
        "while imaging.",
        "A temperature rise depends on the load at the time of the survey; a rise measured at "
        "low load can understate the problem.",
        NO_HOT_SPOT,
    ],
    "mechanical": [
        "Rotating and pressurised equipment is approached only by trained persons following "
        "the site's isolation and guarding rules.",
        "Readings are meaningful only with the equipment at steady running conditions.",
        NO_HOT_SPOT,
    ],
}

HEAT_LOSS = (
    "Heat-loss and cost figures are indicative estimates from a single thermal image and "
    "textbook convection correlations; they are not a measured energy balance."
)


# Heat-loss estimates are offered where surfaces lose heat: walls, roofs, pipes and vessels.
HEAT_LOSS_KINDS = {"envelope", "roof", "mechanical"}


def cautions_for(kind: str, *, heat_loss: bool | None = None) -> list[str]:
    """The cautions for a survey kind: the kind's own first, then the general ones.

    `heat_loss` adds the note on heat-loss estimates; by default it is added for the kinds
    where the app offers them.
    """
    cautions = list(BY_KIND.get(kind, [])) + list(GENERAL)
    if heat_loss or (heat_loss is None and kind in HEAT_LOSS_KINDS):
        cautions.append(HEAT_LOSS)
    return cautions


def cautions_for_kinds(kinds) -> list[str]:
    """Cautions for a page that ranks findings of several survey kinds, without repeats."""
    seen: list[str] = []
    for kind in kinds:
        for caution in cautions_for(kind):
            if caution not in seen:
                seen.append(caution)
    return seen or list(GENERAL)
