"""The working a reviewer can check by hand, for the chart note and the app.

:func:`working_lines` writes the textbook steps for the method used, each
with the numbers put into it, so another clinician can redo them with a
calculator:

- levels around one dose (two-level, Sawchuk-Zaske, least squares): ke from
  the log-linear decline between two levels, ke = ln(C1/C2) / (t2 - t1); the
  peak back-extrapolated to the end of the infusion along that decline; Vd by
  the one-interval infusion equation (Sawchuk RJ, Zaske DE 1976, pk-sources.md
  2.4); CL = ke x Vd;
- a model estimate (Bayesian, population): CL and V as the model gives them,
  Vss = V1 + V2 for two compartments, ke = CL / V;
- every method: AUC24 = daily dose / CL (linear kinetics at steady state,
  pk-sources.md 2.3), the dose that meets the target, and the proposed
  regimen's steady-state peak and trough by the infusion equations.

When the hand figure differs from the estimate (doses before the levels add
to both, which the engine superposes), both are given and the estimate is
the one used. The same lines appear in the note and in the app's working
view. Each figure is rounded by :mod:`tdmtui.core.text.notefmt`.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any

import numpy as np

from tdmtui.core.text import notefmt as f
from tdmtui.core.models import DoseArrays, PKParams, concentration

if TYPE_CHECKING:
    from tdmtui.core.compute import Outcome

#: Methods whose estimate rests on levels around a dose (one compartment).
LEVEL_METHODS = ("two-level", "sawchuk-zaske", "least-squares")


def _n(x: float, digits: int = 3) -> str:
    """A number for an equation: ``digits`` significant figures, no exponent."""
    if x == 0:
        return "0"
    mag = int(math.floor(math.log10(abs(x))))
    return f"{x:.{max(0, digits - 1 - mag)}f}"


def _h(x: float) -> str:
    """Hours for an equation: up to 2 decimals, trailing zeros dropped."""
    return f"{x:.2f}".rstrip("0").rstrip(".")


def _used_levels(outcome: Outcome) -> list[Any]:
    est = outcome.result.get("estimate") or {}
    names = set(est.get("levels_used") or [])
    return sorted((lv for lv in outcome.case.levels if f"levels[{lv.index}]" in names), key=lambda lv: lv.time)


def _remaining(params: PKParams, doses: list[Any], t: float) -> float:
    """The model's concentration at ``t`` from the doses that started before it."""
    before = [d for d in doses if d.start < t]
    if not before:
        return 0.0
    hist = DoseArrays.from_lists([d.start for d in before], [d.duration for d in before], [d.amount for d in before])
    return float(concentration(params, hist, np.array([t]))[0])


def _levels_working(outcome: Outcome) -> list[str]:
    """ke, peak and Vd from two levels after one dose, the textbook way."""
    levels = _used_levels(outcome)
    est = outcome.result["estimate"]
    if len(levels) < 2:
        return []
    a, b = levels[-2], levels[-1]
    doses = [d for d in outcome.case.doses if d.start <= outcome.case.as_of]
    dose = next((d for d in reversed(doses) if d.start <= a.time), None)
    if dose is None or a.time < dose.end or any(a.time < d.start < b.time for d in doses):
        where = ("the first level is drawn before its dose's infusion ends" if dose is not None and a.time < dose.end
                 else "no dose comes before the first level" if dose is None else "a dose falls between the levels")
        return [f"ke {f.ke(est['ke_per_h'])} /h with every dose superposed ({where})"]  # no log ratio by hand
    dt = b.time - a.time
    ke = math.log(a.conc / b.conc) / dt
    out = [f"ke = ln(C1/C2) / (t2 - t1) = ln({f.conc(a.conc)}/{f.conc(b.conc)}) / {_h(dt)} h = {f.ke(ke)} /h"]
    tinf, amount = dose.duration, dose.amount
    after = a.time - dose.end
    cmax = a.conc * math.exp(ke * after)
    params = outcome.params if outcome.params is not None else PKParams.one_compartment(ke, est["vd_l"])
    c0 = _remaining(params, doses, dose.start)
    out.append(f"Cmax (end of infusion) = C1 e^(ke t) = {f.conc(a.conc)} x e^({f.ke(ke)} x {_h(after)} h) = "
               f"{f.conc(cmax)} mg/L")
    out.append(f"C0 (before the dose, left from the earlier doses by the estimate) = {f.conc(c0)} mg/L" if c0 > 0
               else "C0 (before the first dose) = 0 mg/L")
    if tinf <= 0:
        vd = amount / (cmax - c0)
        out.append(f"Vd = dose / (Cmax - C0) = {f.mg(amount)} / ({f.conc(cmax)} - {f.conc(c0)}) = {f.litres(vd)} L")
    else:
        decay = math.exp(-ke * tinf)
        vd = (amount / tinf) * (1.0 - decay) / (ke * (cmax - c0 * decay))
        out.append(f"Vd = (D/T)(1 - e^(-ke T)) / (ke (Cmax - C0 e^(-ke T))), e^(-ke T) = {_n(decay, 4)}: "
                   f"{f.mg(amount / tinf)} x {_n(1 - decay, 4)} / ({f.ke(ke)} x ({f.conc(cmax)} - {f.conc(c0)} x "
                   f"{_n(decay, 4)})) = {f.litres(vd)} L")
    out.append(f"CL = ke x Vd = {f.ke(ke)} x {f.litres(vd)} = {f.clearance(ke * vd)} L/h")
    if abs(ke / est["ke_per_h"] - 1) > 0.01 or abs(vd / est["vd_l"] - 1) > 0.02:
        out.append(f"Estimate used (every dose superposed): ke {f.ke(est['ke_per_h'])} /h, Vd "
                   f"{f.litres(est['vd_l'])} L, CL {f.clearance(est['cl_l_per_h'])} L/h (earlier doses add to "
                   "both levels)")
    return out


def _model_working(outcome: Outcome) -> list[str]:
    """CL and V as the model gives them; ke from them."""
    est = outcome.result["estimate"]
    two = est.get("two_compartment") or {}
    out = []
    if two.get("v1_l") is not None and two.get("v2_l") is not None:
        out.append(f"From the model: CL {f.clearance(est['cl_l_per_h'])} L/h, V1 {f.litres(two['v1_l'])} L, "
                   f"V2 {f.litres(two['v2_l'])} L; Vss = V1 + V2 = {f.litres(est['vd_l'])} L")
        out.append(f"ke = CL/Vss = {f.clearance(est['cl_l_per_h'])}/{f.litres(est['vd_l'])} = {f.ke(est['ke_per_h'])} /h")
    else:
        out.append(f"From the model: CL {f.clearance(est['cl_l_per_h'])} L/h, Vd {f.litres(est['vd_l'])} L; "
                   f"ke = CL/Vd = {f.clearance(est['cl_l_per_h'])}/{f.litres(est['vd_l'])} = {f.ke(est['ke_per_h'])} /h")
    return out


def _exposure(outcome: Outcome, reg: dict[str, Any] | None) -> list[str]:
    """AUC24 of the current regimen, the dose for the target, and (peak and trough targets) the regimen's levels."""
    res = outcome.result
    est, cur, tg = res["estimate"], res.get("current_regimen"), res.get("target") or {}
    cl = est["cl_l_per_h"]
    out = []
    if cur and cur["infusion_h"] < cur["interval_h"]:
        daily = cur["dose_mg"] * 24.0 / cur["interval_h"]
        out.append(f"AUC24 now = daily dose / CL = {f.mg(daily)} / {f.clearance(cl)} = {f.auc(daily / cl)} mg*h/L")
    if not reg:
        return out
    tau, tinf = reg["interval_h"], reg["infusion_h"]
    if reg.get("mode") == "continuous" or tinf >= tau:
        band = tg.get("css_mg_per_l")
        if band:
            mid = sum(band) / 2
            out.append(f"Rate = Css x CL = {f.conc(mid)} x {f.clearance(cl)} = {mid * cl:.1f} mg/h "
                       f"(given as {f.regimen_words(reg)})")
        return out
    band = tg.get("auc24_mg_h_per_l")
    if band:
        mid = sum(band) / 2
        daily = reg["dose_mg"] * 24 / tau
        out.append(f"Dose for AUC24 {f.auc(mid)} = AUC24 x CL x tau / 24 = {f.auc(mid)} x {f.clearance(cl)} x "
                   f"{_h(tau)} / 24 = {f.mg(round(mid * cl * tau / 24.0))} mg; given as {f.mg(reg['dose_mg'])} mg: "
                   f"AUC24 = {f.mg(daily)} / {f.clearance(cl)} = {f.auc(daily / cl)} mg*h/L")
    elif outcome.params is not None and not outcome.params.is_two_compartment:
        ke, vd = est["ke_per_h"], est["vd_l"]
        grow, acc = 1 - math.exp(-ke * tinf), 1 - math.exp(-ke * tau)
        cmax = (reg["dose_mg"] / tinf) * grow / (ke * vd * acc)
        out.append(f"{f.mg(reg['dose_mg'])} mg {f.every(tau)} over {f.duration(tinf)}: Cmax = (D/T)(1 - e^(-ke T)) / "
                   f"(ke Vd (1 - e^(-ke tau))) = {f.mg(reg['dose_mg'] / tinf)} x {_n(grow, 4)} / ({f.ke(ke)} x "
                   f"{f.litres(vd)} x {_n(acc, 4)}) = {f.conc(cmax)} mg/L; Cmin = {f.conc(cmax)} x "
                   f"e^(-{f.ke(ke)} x {_h(tau - tinf)}) = {f.conc(cmax * math.exp(-ke * (tau - tinf)))} mg/L")
    return out


def working_lines(outcome: Outcome, regimen: dict[str, Any] | None = None) -> list[str]:
    """The hand-checkable working for the estimate used and the regimen shown.

    Args:
        outcome: a computed :class:`~tdmtui.core.compute.Outcome`.
        regimen: the regimen the note gives (the chosen one, else the proposal).

    Returns:
        One string per step (the caller wraps them); empty when there is no estimate.
    """
    est = outcome.result.get("estimate")
    if not est:
        return []
    used = est.get("method") or outcome.result.get("method")
    lines = _levels_working(outcome) if used in LEVEL_METHODS else []
    if not lines:
        lines = _model_working(outcome) if used not in LEVEL_METHODS else lines
    more = _exposure(outcome, regimen if regimen is not None else outcome.result.get("regimen"))
    if lines and more and more[0].startswith("AUC24 now"):  # one line when both fit the note's width
        joined = lines[-1] + "; " + more[0].replace(" = daily dose / CL", "")
        if len(joined) <= f.WIDTH - 2:  # the working is indented two columns
            lines[-1] = joined
            more.pop(0)
    return lines + more
