"""The numbers a concentration plot needs, taken from an engine Outcome.

Built in the worker thread (numpy only), so the widget just draws.
Curves: the fitted model over the real doses up to "now" (as_of), and the
same model with the proposed regimen added after it; the 90 % band where
the engine gives one; measured levels; the target concentration band where
the case or library gives one in mg/L (trough, peak or Css).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

#: Hours of history shown before "now" at most, and of plan after it at least.
HISTORY_H = 72.0
PLAN_MIN_H = 24.0
SAMPLES = 480


@dataclass
class PlotData:
    """Times in hours since the epoch, concentrations in mg/L."""

    x0: float
    x1: float
    now: float
    t: np.ndarray
    fit: np.ndarray
    plan: np.ndarray | None
    band: tuple[np.ndarray, np.ndarray, np.ndarray] | None
    levels: list[tuple[float, float, str]] = field(default_factory=list)  # (t, conc, "used"|"aside"|"blq")
    target: tuple[float, float, str] | None = None
    fmt: Any = None  # clock.format
    targets: list[tuple[float, float, str]] = field(default_factory=list)  # every band (``target`` is the first)

    def bands(self) -> list[tuple[float, float, str]]:
        """Every target band drawn: ``targets``, else the single ``target``."""
        return self.targets or ([self.target] if self.target else [])

    def y_max(self) -> float:
        """Top of the y axis, mg/L: the highest value plus 10 %."""
        values = [float(np.nanmax(self.fit))] if self.fit.size else [1.0]
        if self.plan is not None and self.plan.size:
            values.append(float(np.nanmax(self.plan)))
        values += [c for _, c, _ in self.levels]
        values += [hi for _, hi, _ in self.bands()]
        return max(values + [1.0]) * 1.1


def _target_bands(case: Any, rules: Any, continuous: bool) -> list[tuple[float, float, str]]:
    """The concentration targets in mg/L: the case's own, else the library's (trough and peak, or Css when
    the regimen is a continuous infusion). An AUC-only target gives none (it is not a concentration)."""
    t = case.target
    names = ("css",) if continuous else ("trough", "peak")
    own = [(band[0], band[1], name) for name in ("trough", "peak", "css") if (band := getattr(t, name, None))]
    if own:
        return own
    out: list[tuple[float, float, str]] = []
    if rules is not None:
        for name in names:
            value = rules.get(f"targets.{name}")
            if isinstance(value, list) and len(value) == 2:
                out.append((float(value[0]), float(value[1]), name))
    return out


def build_plot_data(outcome: Any) -> PlotData | None:
    """PlotData for an Outcome with a fitted estimate, else None."""
    if outcome is None or outcome.params is None:
        return None
    from tdmtui.core import models

    case = outcome.case
    now = case.as_of
    starts = [d.start for d in case.doses] + [lv.time for lv in case.levels]
    if not starts:
        return None
    x0 = max(min(starts), now - HISTORY_H)
    plan = outcome.plan
    x1 = now + PLAN_MIN_H
    if plan is not None and len(plan):
        x1 = max(x1, float(np.max(plan.start + plan.duration)) + 2.0)
    x1 = max(x1, max(starts) + 2.0)
    t = np.linspace(x0, x1, SAMPLES)
    fit = np.asarray(models.concentration(outcome.params, outcome.history, t), dtype=float)
    fit = np.where(t <= now, fit, np.nan)
    plan_c = None
    if plan is not None and len(plan):
        both = outcome.history.concat(plan)
        plan_c = np.asarray(models.concentration(outcome.params, both, t), dtype=float)
        plan_c = np.where(t >= now, plan_c, np.nan)
    else:
        cont = np.asarray(models.concentration(outcome.params, outcome.history, t), dtype=float)
        plan_c = np.where(t >= now, cont, np.nan)
    band = None
    window = outcome.band_over(x0, x1)
    if window is not None:
        band = tuple(np.asarray(a, dtype=float) for a in window)
    levels = []
    for lv in case.levels:
        kind = "aside" if not lv.use else ("blq" if lv.below_loq else "used")
        levels.append((lv.time, lv.conc, kind))
    continuous = (outcome.result.get("regimen") or {}).get("mode") == "continuous"
    targets = _target_bands(case, outcome.rules, continuous)
    return PlotData(x0, x1, now, t, fit, plan_c, band, levels, targets[0] if targets else None, case.clock.format,
                    targets=targets)
