"""Reliability suite: shared counters, carried on each test's report so the
totals are right also when the suite runs in several worker processes
(tests/conftest.py adds them up and prints them at the end of the run)."""

from __future__ import annotations

from collections import Counter

import pytest
from relhelpers import FUZZ_COUNTS

_REPORTED: Counter = Counter()


@pytest.hookimpl(hookwrapper=True)
def pytest_runtest_makereport(item, call):  # noqa: ANN001, ANN201
    outcome = yield
    if call.when != "teardown":
        return
    delta = FUZZ_COUNTS - _REPORTED
    if delta:
        outcome.get_result().user_properties.append(("fuzz_counts", dict(delta)))
        _REPORTED.update(delta)
