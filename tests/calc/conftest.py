"""Fixtures shared by the calc tests."""

import pytest

from calc import marking


@pytest.fixture(autouse=True)
def _fresh_marking_caches():
    """Empty calc.marking's memo caches before each test.

    ``marking_text`` and ``_voltage_groups`` are ``functools.cache``d: a test run after another
    that filled them would never call their helpers (``_limits``), so a test's result (and the
    tests mutmut traces to those helpers, tests/MUTATION.md) would depend on the tests run
    before it.
    """
    marking.marking_text.cache_clear()
    marking._voltage_groups.cache_clear()
