"""Invented cases for bench_scale.py: a long vancomycin course, and many short Bayesian ones.

Every patient and number here is made up for the benchmark (no real person or
record); the regimens are ordinary ones so that no stop warning cuts the work short.
"""

from __future__ import annotations

import datetime as dt
import random
from typing import Any

T0 = dt.datetime(2026, 2, 1, 8, 0)


def _at(hours: float) -> str:
    return (T0 + dt.timedelta(hours=hours)).strftime("%Y-%m-%dT%H:%M")


def _patient(age: int, sex: str, weight: float, height: float, scr: float) -> dict[str, Any]:
    return {"age": f"{age} yr", "sex": sex, "weight": f"{weight:g} kg", "height": f"{height:g} cm",
            "scr": f"{scr:g} mg/dL", "renal_replacement": "none", "conditions": [], "comedications": []}


def long_course(n_doses: int, n_levels: int = 20, tau: float = 12.0) -> dict[str, Any]:
    """Vancomycin 1000 mg over 1 h every ``tau`` h, ``n_doses`` doses; ``n_levels`` troughs spread over the
    course (the last one 30 min before the last dose), method bayesian, as of just after the last dose."""
    doses = [{"start": _at(i * tau), "amount": "1000 mg", "duration": "1 h"} for i in range(n_doses)]
    step = max(1, (n_doses - 2) // max(1, n_levels))
    at = sorted({max(2, n_doses - 1 - k * step) for k in range(n_levels)})
    levels = [{"time": _at(i * tau - 0.5), "conc": f"{14 + (i % 5)} mg/L"} for i in at]
    return {"format": "tdmtui.case/1", "label": f"invented long course, {n_doses} doses", "drug": "vancomycin",
            "as_of": _at((n_doses - 1) * tau + 2.0), "patient": _patient(61, "male", 82, 178, 1.0),
            "doses": doses, "levels": levels, "method": "bayesian",
            "schedule": {"dose": "1000 mg", "interval": f"{tau:g} h", "duration": "1 h"}}


def short_bayesian(seed: int) -> dict[str, Any]:
    """A short invented vancomycin course (4-12 doses) with one to three levels, method bayesian."""
    rng = random.Random(seed)
    tau = rng.choice((8.0, 12.0, 12.0, 24.0))
    dose = rng.choice((750, 1000, 1250, 1500)) if tau < 24 else rng.choice((1500, 2000))
    tinf = 1.0 if dose <= 1000 else 1.5
    n = rng.randint(4, 12)
    doses = [{"start": _at(i * tau), "amount": f"{dose} mg", "duration": f"{tinf:g} h"} for i in range(n)]
    levels = [{"time": _at((n - 1) * tau - 0.5), "conc": f"{rng.uniform(7, 25):.1f} mg/L"}]
    if rng.random() < 0.5:
        levels.insert(0, {"time": _at((n - 2) * tau + tinf + 1.0), "conc": f"{rng.uniform(20, 45):.1f} mg/L"})
    if rng.random() < 0.3 and n > 4:
        levels.insert(0, {"time": _at((n - 4) * tau - 0.5), "conc": f"{rng.uniform(6, 20):.1f} mg/L"})
    sex = rng.choice(("female", "male"))
    patient = _patient(rng.randint(25, 85), sex, rng.randint(55, 110), rng.randint(155, 190),
                       round(rng.uniform(0.6, 1.8), 2))
    return {"format": "tdmtui.case/1", "label": f"invented batch case {seed}", "drug": "vancomycin",
            "as_of": _at((n - 1) * tau + 0.25), "patient": patient, "doses": doses, "levels": levels,
            "method": "bayesian", "schedule": {"dose": f"{dose} mg", "interval": f"{tau:g} h", "duration": f"{tinf:g} h"}}
