"""The practical grid candidate regimens are drawn from: doses and infusion times a ward can give.

Each candidate is a practical order: a dose on the rounding grid
(``regimen.rounding_mg``), an interval from the interval set
(``regimen.intervals_h``), and an infusion time no faster than the rate
limit (``regimen.max_rate_mg_per_h``), no shorter than
``regimen.min_infusion_h``, rounded up to ``regimen.infusion_step_h``. Doses
above ``regimen.max_single_dose_mg`` or daily totals above
``regimen.max_daily_dose_mg`` are never generated.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    from tdmtui.core.library import Rules


def infusion_time(dose: float, rules: Rules, keep_h: float | None = None) -> float:
    """Infusion time, h: the rate limit and the minimum time, rounded up to the step.

    ``max(min_infusion_h, dose / max_rate)`` rounded up to ``infusion_step_h``
    (rate 0 = no limit). Vancomycin: no faster than 1 g/h (pk-sources.md 3.1).
    ``keep_h`` (the patient's own infusion time) replaces the minimum time; the rate limit still holds.
    """
    t = float(rules.value("regimen.min_infusion_h")) if keep_h is None else float(keep_h)
    rate = float(rules.value("regimen.max_rate_mg_per_h"))
    if rate > 0:
        t = max(t, dose / rate)
    step = float(rules.value("regimen.infusion_step_h"))
    if step > 0:
        t = math.ceil(t / step - 1e-9) * step
    return t


def dose_grid(rules: Rules, interval: float) -> np.ndarray:
    """Doses on the rounding grid under the single and daily caps, mg."""
    step = float(rules.value("regimen.rounding_mg"))
    top = float(rules.value("regimen.max_single_dose_mg"))
    top = min(top, float(rules.value("regimen.max_daily_dose_mg")) * interval / 24.0)
    n = int(math.floor(top / step + 1e-9))
    return step * np.arange(1, n + 1, dtype=float)
