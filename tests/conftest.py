"""Suite-wide settings: the Hypothesis profiles.

``ci`` (loaded unless ``HYPOTHESIS_PROFILE`` names another) makes every property test deterministic:
its examples come from a hash of the test (``derandomize=True``, which also leaves the example database
out), there is no per-example deadline and no too-slow health check (the machines are shared, so timing
must not decide a result), and a failure prints the blob that replays it (``@reproduce_failure``).
The same test run twice, here or in CI, tries the same examples.

``long`` (``HYPOTHESIS_PROFILE=long python -m pytest ...``, or ``--hypothesis-profile=long``) explores:
fresh random examples on every run, ten times as many (also for tests that set their own
``max_examples``), no deadline. Use it to hunt rare failures; pin what it finds with ``@example``.
"""

from __future__ import annotations

import os

import pytest
from hypothesis import HealthCheck, settings

LONG_FACTOR = 10

settings.register_profile(
    "ci", derandomize=True, deadline=None, print_blob=True, suppress_health_check=[HealthCheck.too_slow]
)
settings.register_profile(
    "long", max_examples=100 * LONG_FACTOR, derandomize=False, deadline=None, print_blob=True,
    suppress_health_check=[HealthCheck.too_slow],
)
settings.load_profile(os.environ.get("HYPOTHESIS_PROFILE", "ci"))


def pytest_collection_modifyitems(config: pytest.Config, items: list[pytest.Item]) -> None:
    """Under ``long``, multiply the ``max_examples`` a test set for itself by LONG_FACTOR.

    A test's own ``@settings(max_examples=...)`` overrides every profile, so the profile alone cannot
    raise it. Hypothesis keeps a test's settings on the test function and reads them when the test
    runs; replacing them there (with the test's settings as the parent) is the only way in.
    """
    profile = settings.default
    if profile is not settings.get_profile("long"):
        return
    seen: set[int] = set()
    for item in items:
        test = getattr(item, "obj", None)
        if getattr(test, "hypothesis", None) is None or id(test) in seen:
            continue  # not a property test, or one already scaled (parametrized tests share the function)
        seen.add(id(test))
        own = getattr(test, "_hypothesis_internal_use_settings", None)
        if not isinstance(own, settings):
            raise pytest.UsageError(
                f"HYPOTHESIS_PROFILE=long cannot scale the examples of {item.nodeid}: this version of Hypothesis "
                "keeps a test's settings elsewhere. Update tests/conftest.py."
            )
        if own is not profile and own.max_examples != profile.max_examples:  # the test set its own count
            test._hypothesis_internal_use_settings = settings(own, max_examples=own.max_examples * LONG_FACTOR)
