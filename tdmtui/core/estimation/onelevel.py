"""One-level textbook methods: ke from a single level with the population volume, by hand.

A reviewer can check the Bayesian answer with these (pk-sources.md 2.2-2.3, 3.3, 4.2):

``one-level`` (superposition): V is the population value (the library's
``population.v_l_per_kg`` x weight); ke is the one value that makes the whole
dose history, superposed with that V, pass through the level. C(t; ke) falls
as ke rises at every time after a dose starts, so the root is unique; it is
found by bisection on ln ke.

``one-level-steady-state`` (the classic single-trough method): the same
population V and the steady-state infusion equation of pk-sources.md 2.3 for
the current regimen, solved for ke. It applies only when the history shows the
regimen at steady state at the level (the share of ``monitoring.steady_state_within_rel``).

``continuous-steady-state``: a level drawn during a continuous infusion that
has run at one rate long enough for steady state: CL = rate / Css and
AUC24 = Css x 24 (2020 vancomycin consensus guideline, Rybak MJ et al., Am J
Health-Syst Pharm 2020;77:835-864; identity from memory, pk-sources.md 2.5).

A level below the assay limit gives a bound, never a value: C(t; ke) < LOQ
means ke is above the ke that puts C at the LOQ; the refusal states it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Callable

from tdmtui.core.errors import NoEstimateError
from tdmtui.core.estimation.estimates import Estimate
from tdmtui.core.models import DoseArrays, PKParams
from tdmtui.core.models import onecomp
from tdmtui.core.estimation.working import WorkingStep

#: ke search range, 1/h (half-lives of 0.14 h to 700 h), as for the two-level solve.
KE_LO, KE_HI = 1e-3, 5.0


def solve_decreasing(fn: Callable[[float], float], target: float, lo: float = KE_LO, hi: float = KE_HI) -> float | None:
    """ke with fn(ke) = target for fn decreasing in ke, by bisection on ln ke; None when outside [lo, hi]."""
    if not (fn(lo) >= target >= fn(hi)):
        return None
    a, b = math.log(lo), math.log(hi)
    for _ in range(200):
        mid = 0.5 * (a + b)
        if fn(math.exp(mid)) > target:
            a = mid
        else:
            b = mid
        if b - a < 1e-13:
            break
    return math.exp(0.5 * (a + b))


@dataclass(frozen=True)
class OneLevelInput:
    """What the one-level methods need: the history, the level, the population volume and the rules."""

    history: DoseArrays
    level: Any
    v_pop: float
    v_working: WorkingStep
    tau: float | None
    dose: Any
    steady_within: float


def _bound_message(m: str, lv: Any, fn: Callable[[float], float]) -> NoEstimateError:
    ke = solve_decreasing(fn, lv.conc)
    if ke is None:
        return NoEstimateError(m, f"levels[{lv.index}] is below the assay limit ({lv.conc:g} mg/L) and gives no bound")
    return NoEstimateError(m, f"levels[{lv.index}] is below the assay limit (< {lv.conc:g} mg/L): with the population "
                              f"volume it says only that ke is at least {ke:.4g} /h (half-life at most "
                              f"{math.log(2) / ke:.3g} h); the Bayesian estimate uses it as that bound")


def superposition(inp: OneLevelInput) -> Estimate:
    """ke through one level with the population V, every dose superposed."""
    m, lv, v = "one-level", inp.level, inp.v_pop
    conc = onecomp.concentration_in_ke(v, inp.history, lv.time)
    ke = _ke_through(m, lv, conc, f"no ke between {KE_LO:g} and {KE_HI:g} /h puts the history through "
                                  f"levels[{lv.index}] {lv.conc:g} mg/L with the population volume {v:.4g} L")
    steps = [inp.v_working,
             WorkingStep("Model", "C(t) = sum over doses of (D/T)/(ke V) (1 - e^(-ke min(u,T))) e^(-ke max(u-T,0))",
                         f"{len(inp.history)} doses superposed, V {v:.4g} L, levels[{lv.index}] {lv.conc:g} mg/L",
                         "", m),
             WorkingStep("Elimination rate", "solve C(t_level; ke) = C_measured for ke (C falls as ke rises)",
                         f"C = {lv.conc:g} mg/L", f"ke = {ke:.4g} /h, t1/2 = {math.log(2) / ke:.3g} h", m),
             WorkingStep("Clearance", "CL = ke x V", f"{ke:.4g} x {v:.4g}", f"{ke * v:.4g} L/h", m)]
    return Estimate(m, PKParams.one_compartment(ke, v), [lv.index], steps,
                    "population volume; ke from one level with every dose superposed")


def _ke_through(m: str, lv: Any, c: Callable[[float], float], none_found: str) -> float:
    """ke putting the curve ``c`` through the level (a censored level is a bound, refused with it)."""
    if lv.below_loq:
        raise _bound_message(m, lv, c)
    if lv.above_uloq:
        raise NoEstimateError(m, f"levels[{lv.index}] is above the assay limit: no value to solve for")
    ke = solve_decreasing(c, lv.conc)
    if ke is None:
        raise NoEstimateError(m, none_found)
    return ke


def _ss_conc(dose: Any, tau: float, v: float, u: float) -> Callable[[float], float]:
    """Steady-state concentration u h after a dose starts (pk-sources.md 2.3), as a function of ke."""
    tp = dose.duration

    def c(ke: float) -> float:
        if tp > 0:
            peak = dose.amount / tp * (1 - math.exp(-ke * tp)) / (ke * v * (1 - math.exp(-ke * tau)))
        else:
            peak = dose.amount / (v * (1 - math.exp(-ke * tau)))
        if u < tp:
            return dose.amount / tp / (ke * v) * (1 - math.exp(-ke * u)) + (peak * math.exp(-ke * (tau - tp))) * math.exp(-ke * u)
        return peak * math.exp(-ke * (u - tp))

    return c


def steady_state_trough(inp: OneLevelInput) -> Estimate:
    """The classic single-level method: steady-state equation with the population V, solved for ke."""
    m, lv, v = "one-level-steady-state", inp.level, inp.v_pop
    if inp.tau is None or inp.dose is None:
        raise NoEstimateError(m, "needs a current regimen (the steady-state equation needs its dose and interval)")
    u = lv.time - inp.dose.start
    if not 0 < u <= inp.tau + 1e-9:
        raise NoEstimateError(m, f"levels[{lv.index}] is not within one interval after the last dose")
    c = _ss_conc(inp.dose, inp.tau, v, u)
    ke = _ke_through(m, lv, c, f"no ke puts the steady-state curve through levels[{lv.index}] {lv.conc:g} mg/L "
                               f"with the population volume {v:.4g} L")
    share = float(onecomp.concentration(ke, v, inp.history, lv.time)) / c(ke)
    if abs(share - 1.0) > inp.steady_within:
        raise NoEstimateError(m, f"levels[{lv.index}] is not at steady state (the history puts it at {share:.0%} of "
                                 "its steady-state value): the classic steady-state method does not apply; see "
                                 "one-level (superposition)")
    tp = inp.dose.duration
    eq = ("C = k0 (1 - e^(-ke t')) / (ke V (1 - e^(-ke tau))) x e^(-ke (u - t'))" if tp > 0
          else "C = D / (V (1 - e^(-ke tau))) x e^(-ke u)")
    steps = [inp.v_working,
             WorkingStep("Steady-state level", eq,
                         f"D {inp.dose.amount:g} mg over {tp:g} h every {inp.tau:g} h; drawn u = {u:.3g} h after the "
                         f"start; V {v:.4g} L; C = {lv.conc:g} mg/L", f"ke = {ke:.4g} /h", m),
             WorkingStep("Steady state", "history / steady-state value at the level", f"{share:.1%}",
                         "at steady state", m),
             WorkingStep("Clearance", "CL = ke x V", f"{ke:.4g} x {v:.4g}", f"{ke * v:.4g} L/h", m)]
    return Estimate(m, PKParams.one_compartment(ke, v), [lv.index], steps,
                    f"steady state on a {inp.tau:g} h interval; population volume; ke from one level")


def continuous_steady_state(inp: OneLevelInput) -> Estimate:
    """CL = rate / Css and AUC24 = Css x 24 for a level at steady state during a continuous infusion."""
    m, lv, v = "continuous-steady-state", inp.level, inp.v_pop
    d = inp.dose
    if d is None or not (d.start < lv.time < d.end):
        raise NoEstimateError(m, "needs a level drawn during a continuous infusion")
    if lv.below_loq or lv.above_uloq:
        raise NoEstimateError(m, f"levels[{lv.index}] is censored: Css needs a quantified level")
    rate = d.amount / d.duration
    cl = rate / lv.conc
    ke = cl / v
    share = float(onecomp.concentration(ke, v, inp.history, lv.time)) / (rate / cl)
    if abs(share - 1.0) > inp.steady_within:
        raise NoEstimateError(m, f"levels[{lv.index}] is not at steady state (with CL = rate / level the history "
                                 f"puts it at {share:.0%} of Css): the whole-history and Bayesian fits use it instead")
    steps = [WorkingStep("Clearance (steady state)", "CL = R / Css", f"{rate:.4g} mg/h / {lv.conc:g} mg/L",
                         f"{cl:.4g} L/h", m),
             WorkingStep("Exposure", "AUC24 = Css x 24 (2020 vancomycin consensus guideline)", f"{lv.conc:g} x 24",
                         f"{lv.conc * 24:.4g} mg*h/L", m),
             inp.v_working,
             WorkingStep("Steady state", "history / Css at the level (with this CL and V)", f"{share:.1%}",
                         "at steady state", m)]
    return Estimate(m, PKParams.one_compartment(ke, v), [lv.index], steps,
                    f"steady state during a continuous infusion of {rate:.4g} mg/h; V is the population value "
                    "(it does not change CL or AUC24)")
