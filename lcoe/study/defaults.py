"""Default run settings, kept apart so the command line can show them without importing the
scientific stack (``lcoe --help`` and ``lcoe new`` start in a fraction of a second)."""

#: Monte Carlo trials of ``lcoe run`` when the case has ``[uncertain]`` tables.
DEFAULT_SAMPLES = 2000
#: Seed of the one random generator of a run.
DEFAULT_SEED = 20261201
#: Sobol base samples N of ``lcoe run`` (rounded up to a power of two).
DEFAULT_SOBOL_BASE = 1024
