"""Continuous-infusion vancomycin: a rate for a target Css.

At steady state Css = R / CL (R in mg/h), so AUC24 = Css x 24 (pk-sources.md
2.5, from memory: standard). The daily amount is put on the rounding grid
(``regimen.rounding_mg`` per day), at most ``regimen.max_daily_dose_mg``;
the figures come from the shared model with one 24 h infusion every 24 h
(:func:`tdmtui.core.models.steady_state`), so peak = trough = Css. The
candidate nearest the middle of the Css band is chosen (candidates.py rule).
A loading dose goes first (loading.py) and the infusion starts when it ends.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from tdmtui.core.models import PKParams, steady_state
from tdmtui.core.regimen.candidates import Candidate, judge

if TYPE_CHECKING:
    from tdmtui.core.library import Rules
    from tdmtui.core.regimen.targets import Targets

DAY_H = 24.0


def candidates(params: PKParams, targets: Targets, rules: Rules) -> list[Candidate]:
    """Daily amounts on the grid (24 h infusions), judged against the Css band."""
    step = float(rules.value("regimen.rounding_mg"))
    top = float(rules.value("regimen.max_daily_dose_mg"))
    daily = step * np.arange(1, int(np.floor(top / step + 1e-9)) + 1, dtype=float)
    unit = steady_state(params, 1.0, DAY_H, DAY_H)
    css = daily * unit.trough
    on, dist = judge(targets, css, css, daily * unit.auc24, daily)
    return [Candidate(float(d), DAY_H, DAY_H, float(c), float(c), float(d * unit.auc24), float(c), DAY_H,
                      bool(o), float(x)) for d, c, o, x in zip(daily, css, on, dist)]


def describe(c: Candidate) -> dict[str, float]:
    """Extra keys of a continuous regimen: rate and daily dose."""
    return {"rate_mg_per_h": c.dose_mg / DAY_H, "daily_dose_mg": c.dose_mg, "css_mg_per_l": c.trough}
