"""Hypothesis profiles for the fuzz harness: ``ci`` (default, a few dozen cases, reproducible) and ``long``.

Select with ``pytest --hypothesis-profile long tests/test_fuzz.py`` or ``HYPOTHESIS_PROFILE=long``;
``benchmarks/fuzz_long.py`` runs thousands of cases and prints counts per outcome.
"""

import os

from hypothesis import HealthCheck, settings

settings.register_profile("ci", max_examples=12, deadline=None, derandomize=True, database=None,
                          suppress_health_check=list(HealthCheck))
settings.register_profile("long", max_examples=1000, deadline=None, database=None,
                          suppress_health_check=list(HealthCheck))
settings.load_profile(os.environ.get("HYPOTHESIS_PROFILE", "ci"))
