"""hypothesis when it is installed (the ``test`` extra); otherwise stand-ins that skip the tests.

Modules mixing property-based tests with ordinary ones import ``given``, ``settings``,
``HealthCheck`` and ``st`` from here, so that without hypothesis only the ``@given`` tests
are skipped (a module-level ``pytest.importorskip`` would skip the ordinary tests too).
"""

from __future__ import annotations

import pytest

try:
    from hypothesis import HealthCheck, given, settings
    from hypothesis import strategies as st

    HAS_HYPOTHESIS = True
except ImportError:
    HAS_HYPOTHESIS = False
    _REASON = "hypothesis is not installed (pip install -e '.[test]')"

    class _Inert:
        """Stands for the strategies and health checks built at import time."""

        def __getattr__(self, name):
            return self

        def __call__(self, *args, **kwargs):
            return self

        def __or__(self, other):
            return self

        __ror__ = __or__

    st = HealthCheck = _Inert()

    def settings(*args, **kwargs):
        """A settings profile or decorator: hands the test back unchanged."""
        return lambda test: test

    def given(*args, **kwargs):
        """A test that hypothesis would have driven: skipped, without its drawn arguments."""

        def decorate(test):
            def skipped():
                pytest.skip(_REASON)

            skipped.__name__, skipped.__qualname__ = test.__name__, test.__qualname__
            skipped.__module__, skipped.__doc__ = test.__module__, test.__doc__
            return skipped

        return decorate

__all__ = ["HAS_HYPOTHESIS", "HealthCheck", "given", "settings", "st"]
