"""Loading doses: a new start by the library's rule, a top-up when drug is on board.

* Vancomycin, new start: ``loading.mg_per_kg`` x actual body weight (2020
  consensus guideline: 20-35 mg/kg actual weight, from memory, high; obese
  patients 20-25 mg/kg, from memory), at most ``loading.max_mg`` (3,000 mg,
  confirmed-secondary; pk-sources.md 3.1). Continuous infusion uses
  ``continuous.loading_mg_per_kg``.
* Aminoglycoside, new start (traditional dosing): the dose that reaches the
  middle of the peak band at the end of one infusion, LD = Cmax ke V t' /
  (1 - e^(-ke t')) (pk-sources.md 2.4), computed as target / C_unit(t') with
  the shared model so it also holds for two compartments.
* Drug on board: a top-up from the concentration predicted from the real
  history, never a fixed mg/kg load: D = (C_target - C_hist(t0 + t')) /
  C_unit(t'), where C_target is the new regimen's steady-state peak (Css for a
  continuous infusion), offered only when it is at least
  ``loading.topup_min_rel`` above the maintenance dose (the same rule for
  an aminoglycoside new-start load).

Doses are rounded to the grid (``regimen.rounding_mg``) and never above the
cap: rounding goes down when the nearest step would cross it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING

from tdmtui.core.alerts import Alert
from tdmtui.core.models import DoseArrays, PKParams, concentration
from tdmtui.core.regimen.grid import infusion_time

if TYPE_CHECKING:
    from tdmtui.core.library import Rules
    from tdmtui.core.regimen.candidates import Candidate
    from tdmtui.core.regimen.targets import Targets
    from tdmtui.core.regimen.types import RegimenInput


@dataclass(frozen=True)
class Loading:
    """A proposed loading dose.

    Attributes:
        dose_mg: rounded dose, mg.
        exact_mg: before rounding and capping, mg.
        capped: the cap limited it.
        basis: how it was computed (for the note).
    """

    dose_mg: float
    exact_mg: float
    capped: bool
    basis: str


def round_capped(dose: float, step: float, cap: float) -> tuple[float, bool]:
    """Nearest grid step, never above ``cap``; (dose, capped)."""
    top = math.floor(cap / step + 1e-9) * step
    d = round(dose / step) * step
    return (top, True) if d > top else (max(d, step), False)


def _cap(rules: Rules) -> float:
    return float(rules.get("loading.max_mg", rules.value("regimen.max_single_dose_mg")))


def weight_based(rules: Rules, weight_kg: float, bmi: float, continuous: bool = False) -> Loading:
    """Vancomycin new-start load from mg/kg of actual body weight, capped."""
    key = "continuous.loading_mg_per_kg" if continuous else "loading.mg_per_kg"
    mgkg = float(rules.value(key))
    note = f"{mgkg:g} mg/kg x {weight_kg:g} kg actual body weight ({rules.citation(key)})"
    if not continuous and "loading.obese_mg_per_kg" in rules and bmi >= float(rules.value("loading.obese_bmi")):
        top = float(rules.value("loading.obese_mg_per_kg")[1])
        if mgkg > top:
            mgkg = top
            note = f"{mgkg:g} mg/kg x {weight_kg:g} kg (BMI {bmi:.1f}: {rules.citation('loading.obese_mg_per_kg')})"
    exact = mgkg * weight_kg
    dose, capped = round_capped(exact, float(rules.value("regimen.rounding_mg")), _cap(rules))
    if capped:
        note += f"; capped at {dose:g} mg ({rules.citation('loading.max_mg') if 'loading.max_mg' in rules else 'single-dose cap'})"
    return Loading(dose, exact, capped, note)


def unit_peak(params: PKParams, tinf: float) -> float:
    """Concentration at the end of one 1 mg infusion over ``tinf`` h, mg/L."""
    one = DoseArrays.from_lists([0.0], [tinf], [1.0])
    return float(concentration(params, one, max(tinf, 1e-9)))


def to_target(params: PKParams, rules: Rules, target: float, tinf: float,
              history: DoseArrays | None = None, t0: float = 0.0) -> Loading | None:
    """Dose reaching ``target`` mg/L at the end of an infusion starting at ``t0``.

    With a ``history`` the concentration already predicted at the end of the
    infusion is subtracted (a top-up). None when nothing needs adding.
    """
    on_board = 0.0
    if history is not None and len(history):
        on_board = float(concentration(params, history, t0 + tinf))
    need = target - on_board
    if need <= 0:
        return None
    exact = need / unit_peak(params, tinf)
    dose, capped = round_capped(exact, float(rules.value("regimen.rounding_mg")), _cap(rules))
    basis = (f"top-up from {on_board:.1f} mg/L predicted on board to {target:.1f} mg/L"
             if on_board > 0 else f"single infusion to {target:.1f} mg/L (Sawchuk-Zaske loading-dose equation, Bauer)")
    if capped:
        basis += f"; capped at {dose:g} mg"
    return Loading(dose, exact, capped, basis)


def proposed(inp: RegimenInput, targets: Targets, mode: str, chosen: Candidate, continuing: bool, held: bool,
             first: float, alerts: list[Alert]) -> tuple[float, Loading, float] | None:
    """The loading dose proposed with the chosen regimen: (time h, loading, infusion h) or None (module docstring).

    None when the standing order continues or is held, for an aminoglycoside new start outside
    peak-trough dosing, or when a top-up would add too little.
    """
    rules, params = inp.rules, inp.params
    assert params is not None
    if continuing or held:
        return None
    step = float(rules.value("regimen.rounding_mg"))
    new_start = len(inp.history) == 0
    aminoglycoside = rules.get("drug.family") == "aminoglycoside"
    if new_start and not aminoglycoside:
        ld = weight_based(rules, inp.tbw_kg, inp.bmi, continuous=mode == "continuous")
        t0 = inp.as_of
    else:
        if new_start and mode != "peak-trough":
            return None
        if new_start:
            goal = 0.5 * (targets.peak[0] + targets.peak[1]) if targets.peak else float(rules.value("loading.target_peak_mg_l"))
        else:
            goal = chosen.trough if mode == "continuous" else chosen.peak
        t0 = inp.as_of if new_start else first
        tinf = infusion_time(chosen.dose_mg, rules)
        ld = None
        for _ in range(3):  # infusion time depends on the dose
            ld = to_target(params, rules, goal, tinf, None if new_start else inp.history, t0)
            if ld is None or infusion_time(ld.dose_mg, rules) == tinf:
                break
            tinf = infusion_time(ld.dose_mg, rules)
        if ld is None:
            return None
    assert ld is not None  # both branches above give one or return
    if mode != "continuous" and not (new_start and not aminoglycoside):
        rel = float(rules.value("loading.topup_min_rel"))
        if ld.dose_mg < max(chosen.dose_mg * (1.0 + rel), chosen.dose_mg + step) - 1e-9:
            return None
    if ld.capped:
        alerts.append(Alert("loading-capped", "info", "", f"loading dose {ld.basis}"))
    return t0, ld, infusion_time(ld.dose_mg, rules)
