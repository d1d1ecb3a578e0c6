"""Closed-form model timings: median time per call.

Run: /work/venv/bin/python bench/bench_models.py [--reps N]

Cases: concentration at 1,000 times over a 60-dose history (one- and
two-compartment), exact AUC over a window of that history, steady state, and
the hold-until search. Wall clock on whatever machine runs it; other work on
the machine inflates the numbers.
"""

from __future__ import annotations

import argparse
import os
import statistics
import sys
import time
from pathlib import Path
from typing import Callable

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

import numpy as np  # noqa: E402

from timing import median_seconds  # noqa: E402

from tdmtui.core import models  # noqa: E402
from tdmtui.core.models import DoseArrays, PKParams  # noqa: E402


def median_us(fn: Callable[[], object], reps: int) -> float:
    """Median wall-clock time of ``fn()`` in microseconds, after one warm-up call."""
    return median_seconds(fn, reps) * 1e6


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--reps", type=int, default=200, help="timed calls per case (default 200)")
    reps = parser.parse_args().reps

    one = PKParams.one_compartment(0.0827, 51.6)
    two = PKParams(4.5, 58.4, 6.5, 38.4)
    doses = DoseArrays.regimen(0.0, 1000.0, 12.0, 1.0, 60)
    t = np.linspace(-1.0, 60 * 12.0 + 48.0, 1000)

    cases = [
        ("concentration, 1-comp, 1000 times x 60 doses", lambda: models.concentration(one, doses, t)),
        ("concentration, 2-comp, 1000 times x 60 doses", lambda: models.concentration(two, doses, t)),
        ("auc [100.5, 700.25] h, 1-comp, 60 doses", lambda: models.auc(one, doses, 100.5, 700.25)),
        ("auc [100.5, 700.25] h, 2-comp, 60 doses", lambda: models.auc(two, doses, 100.5, 700.25)),
        ("steady_state, 1-comp", lambda: models.steady_state(one, 1000.0, 12.0, 1.0)),
        ("steady_state, 2-comp", lambda: models.steady_state(two, 1000.0, 12.0, 1.0)),
        ("time_to_fall to 10 mg/L, 1-comp, 60 doses", lambda: models.time_to_fall(one, doses, 300.0, 10.0)),
        ("time_to_fall to 10 mg/L, 2-comp, 60 doses", lambda: models.time_to_fall(two, doses, 300.0, 10.0)),
    ]
    load = os.getloadavg()[0] if hasattr(os, "getloadavg") else float("nan")
    print(f"closed-form models: median of {reps} calls (load average {load:.2f})")
    width = max(len(name) for name, _ in cases)
    print(f"{'case':<{width}}  {'median':>12}")
    for name, fn in cases:
        us = median_us(fn, reps)
        shown = f"{us / 1000:.2f} ms" if us >= 1000 else f"{us:.1f} us"
        print(f"{name:<{width}}  {shown:>12}")


if __name__ == "__main__":
    main()
