"""What a ward would consider: intervals the half-life allows, the patient's infusion time, the hold limit.

Each rule reads library or protocol data (with its source):

* :func:`interval_band` - ``regimen.min_interval_half_lives`` to
  ``regimen.max_interval_half_lives`` times the estimate's half-life
  (ln 2 x Vss / CL); candidates.py rule 2 offers only these intervals (and the
  current one) where one is on target. Not for extended-interval dosing or a
  continuous infusion.
* :func:`kept_infusion` - extended-interval doses keep the patient's infusion
  time (``extended.keep_infusion``); the rate limit still applies.
* :func:`hold_limit` - the level above which the next dose is held and down to
  which the hold lets it fall: ``regimen.hold_above_mg_l`` or the target's
  trough ceiling where lower; a continuous rate waits for its own Css
  (handover.py "Hold").
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from tdmtui.core.regimen.candidates import Candidate
    from tdmtui.core.library import Rules
    from tdmtui.core.models import PKParams
    from tdmtui.core.regimen.targets import Targets
    from tdmtui.core.regimen.types import RegimenInput


def interval_band(rules: Rules, params: PKParams, mode: str) -> tuple[float, float] | None:
    """(shortest, longest) interval, h, the estimate's half-life allows (candidates.py rule 2), or None."""
    if mode in ("extended", "continuous"):
        return None
    lo, hi = rules.get("regimen.min_interval_half_lives"), rules.get("regimen.max_interval_half_lives")
    if lo is None and hi is None:
        return None
    half = math.log(2.0) * (params.v1 + params.v2) / params.cl
    return (float(lo or 0.0) * half, float(hi) * half if hi else math.inf)


def kept_infusion(inp: RegimenInput, mode: str) -> float | None:
    """The patient's infusion time when extended-interval doses keep it (``extended.keep_infusion``), else None."""
    cur = inp.current
    if mode != "extended" or cur is None or not inp.rules.get("extended.keep_infusion", False):
        return None
    return cur.infusion_h if 0 < cur.infusion_h < cur.interval_h else None


def hold_limit(rules: Rules, targets: Targets, c: Candidate) -> float | None:
    """The level above which the next dose is held and to which a hold lets it fall, mg/L (module docstring)."""
    if c.infusion_h >= c.interval_h:  # a continuous rate starts when the level is at its own Css
        return c.trough
    limits = [float(x) for x in (rules.get("regimen.hold_above_mg_l"), targets.trough_ceiling) if x]
    return min(limits) if limits else None
