"""Hypothesis profiles: "ci" (the default) is deterministic, "fuzz" (`make fuzz`) is heavy.

"ci" derandomizes and keeps no example database, so a run is the same on every machine and
a failure reproduces from the log alone. "fuzz" draws at random and `examples(n)` gives
property tests FUZZ_FACTOR times their usual number of cases.
"""

import os

from hypothesis import HealthCheck, settings

FUZZ_FACTOR = 25

settings.register_profile("ci", derandomize=True, database=None, deadline=None, print_blob=True)
settings.register_profile(
    "fuzz",
    max_examples=100 * FUZZ_FACTOR,
    database=None,
    deadline=None,
    suppress_health_check=[HealthCheck.too_slow],
)
PROFILE = os.environ.get("HYPOTHESIS_PROFILE", "ci")
settings.load_profile(PROFILE)


def examples(count: int) -> int:
    """The number of cases for a property test that asks for `count` in CI."""
    return count * FUZZ_FACTOR if PROFILE == "fuzz" else count
