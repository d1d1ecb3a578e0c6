"""Reliability suite: shared counters, printed at the end of the run."""

from __future__ import annotations

from relhelpers import FUZZ_COUNTS


def pytest_terminal_summary(terminalreporter) -> None:  # noqa: ANN001
    if not FUZZ_COUNTS:
        return
    terminalreporter.section("reliability: fuzz counts")
    for key in sorted(FUZZ_COUNTS):
        terminalreporter.write_line(f"{key:<48} {FUZZ_COUNTS[key]:>8}")
