"""Figures of the proposal detectors: precision, recall and time per 640×480 thermogram.

Scored on the synthetic scenes of tests/scenes.py at the evaluation seed; the defaults were
chosen on the tuning seed (survey.thermal.proposals.TUNING_SEED) with `sweep`:

    .venv/bin/python -m tests.bench.figures_proposals --sweep
"""

import argparse
import gc
import statistics
import time

from tests.bench.timing import Row, percentile

EVALUATION_SEED = 1802
SCENES_PER_KIND = 40
TARGET_SHARE = 0.9
TARGET_MS = 50.0
LABELS = {"envelope": "envelope", "roof": "roof (night)", "electrical": "hot spots"}


def run_kind(kind: str, seed: int, count: int, scene_list=None, **settings) -> tuple:
    """(Score, per-image seconds) of one detector on `count` scenes of one kind."""
    from tests import scenes

    if scene_list is None:
        scene_list = scenes.scenes(kind, seed=seed, count=count)
    scenes.propose_for(scene_list[0], **settings)  # imports and caches out of the timing
    total = scenes.Score()
    seconds = []
    for scene in scene_list:
        gc.collect()
        start = time.perf_counter()
        proposals = scenes.propose_for(scene, **settings)
        seconds.append(time.perf_counter() - start)
        total.add(scenes.score(scene, proposals))
    return total, seconds


def figure_kind(kind: str, seed: int = EVALUATION_SEED, count: int = SCENES_PER_KIND) -> list[Row]:
    score, seconds = run_kind(kind, seed, count)
    label = LABELS[kind]
    counts = (
        f"{score.true_positives} found, {score.false_positives} false, "
        f"{score.false_negatives} missed; {count} scenes, seed {seed}"
    )
    details = {
        "true_positives": score.true_positives,
        "false_positives": score.false_positives,
        "false_negatives": score.false_negatives,
        "scenes": count,
        "seed": seed,
    }
    rows = []
    for name, value in (("precision", score.precision), ("recall", score.recall)):
        rows.append(
            Row(
                f"proposals {label}: {name}",
                value,
                "share",
                target_text=f"≥ {TARGET_SHARE:g}",
                met_override=value >= TARGET_SHARE,
                note=counts,
                details=details,
            )
        )
    if score.ious:
        rows[-1].note += f"; mean IoU {statistics.mean(score.ious):.2f}"
    if kind == "electrical":
        good = score.good_references / score.references if score.references else None
        rows.append(
            Row(
                "proposals reference marks on a sound like component",
                good,
                "share",
                note=f"{score.good_references} of {score.references}",
            )
        )
    milliseconds = [s * 1e3 for s in seconds]
    rows.append(
        Row(
            f"proposals {label} 640×480",
            statistics.median(milliseconds),
            "ms",
            max_value=TARGET_MS,
            minimum=min(milliseconds),
            note=f"p90 {percentile(milliseconds, 90):.1f} ms over {count} images",
        )
    )
    return rows


def figures(runner) -> None:
    """Register the rows of the `proposals` group with the bench runner."""
    for kind in ("envelope", "roof", "electrical"):
        runner.run("proposals", f"proposals {LABELS[kind]}", "share", lambda k=kind: figure_kind(k))


SWEEPS = {
    "envelope": ("min_area_px", (10, 20, 40, 80, 160)),
    "roof": ("min_rise_c", (0.5, 0.6, 0.7, 0.8, 0.9, 1.0, 1.1, 1.2, 1.4)),
    "electrical": ("min_rise_c", (1.5, 2.0, 2.5, 3.0, 4.0, 5.0)),
}
ROOF_AREAS = (60, 120, 200)


def sweep(seed: int, count: int) -> None:
    """Print precision and recall over a grid of settings on the tuning scenes."""
    from tests import scenes

    for kind, (name, values) in SWEEPS.items():
        scene_list = scenes.scenes(kind, seed=seed, count=count)
        extra = [{"min_area_px": area} for area in ROOF_AREAS] if kind == "roof" else [{}]
        for more in extra:
            for value in values:
                score, seconds = run_kind(kind, seed, count, scene_list, **{name: value}, **more)
                settings = ", ".join(f"{k}={v}" for k, v in {name: value, **more}.items())
                print(
                    f"{kind:10} {settings:32} precision {score.precision:.3f} "
                    f"recall {score.recall:.3f} ({score.true_positives}/"
                    f"{score.false_positives}/{score.false_negatives}) "
                    f"{statistics.median(seconds) * 1e3:.1f} ms"
                )


def main() -> None:
    from survey.thermal.proposals import TUNING_SEED

    parser = argparse.ArgumentParser(prog="python -m tests.bench.figures_proposals")
    parser.add_argument("--sweep", action="store_true", help="grid of settings, tuning seed")
    parser.add_argument("--seed", type=int, default=None)
    parser.add_argument("--count", type=int, default=SCENES_PER_KIND)
    args = parser.parse_args()
    if args.sweep:
        sweep(TUNING_SEED if args.seed is None else args.seed, args.count)
        return
    from tests.bench.timing import table

    rows = []
    for kind in ("envelope", "roof", "electrical"):
        rows += figure_kind(kind, EVALUATION_SEED if args.seed is None else args.seed, args.count)
    print(table(rows))


if __name__ == "__main__":
    main()
