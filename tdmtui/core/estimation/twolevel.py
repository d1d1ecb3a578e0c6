"""Two-level estimates of ke and V, two ways (case-format.md "Model conventions").

``two-level``: ke and V solved exactly so that the one-compartment model,
summed over the whole dose history (pk-sources.md 2.2), passes through the two
most recent usable levels. Since C(t) = f(t; ke) / V, the ratio C1/C2 fixes
ke alone: we solve ln f(t1; ke) - ln f(t2; ke) = ln(C1/C2) by a bracketed root
search over a log grid of ke, refuse when there is no root or more than one,
then V = f(t1; ke) / C1.

``sawchuk-zaske``: the textbook one-interval calculation (pk-sources.md 2.4):
ke from the log-linear slope of two post-distribution levels after one dose,
Cmax back-extrapolated to the end of infusion, V from the infusion equation
with a measured pre-dose level (non-steady-state variant) or, without one,
the pre-dose concentration the dose history leaves at the start of that dose.
The steady-state assumption Cmin = Cmax e^(-ke (tau - t')) is used only when
the history shows the course at steady state (the accumulated pre-dose level
within ``monitoring.steady_state_within_rel`` of its steady-state value), and
the working says so; otherwise the accumulated pre-dose concentration is used
(pk-sources.md 2.4, non-steady-state variant: "use the superposition model with
all prior doses"). With C_pre = f / V, f the history's pre-dose concentration
computed with V = 1 L, the volume equation stays closed-form:
V = [k0 (1 - e^(-ke t')) + ke f e^(-ke t')] / (ke Cmax).
A pre-dose trough and a post-dose peak around one dose give ke only at steady
state; off steady state that pair is refused (the two-level fit uses it).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from tdmtui.core.input.casetypes import Dose, Level
from tdmtui.core.errors import NoEstimateError
from tdmtui.core.library import common_number
from tdmtui.core.models import DoseArrays, PKParams
from tdmtui.core.models import onecomp
from tdmtui.core.estimation.working import WorkingStep

#: ke search range for the exact solve, 1/h (half-lives of 0.14 h to 700 h).
KE_GRID = np.geomspace(1e-3, 5.0, 600)


@dataclass
class TwoLevelResult:
    """A two-level style estimate."""

    method: str
    params: PKParams
    levels_used: list[int]
    working: list[WorkingStep] = field(default_factory=list)
    assumption: str = ""


def _fmt(x: float, d: int = 4) -> str:
    return f"{x:.{d}g}"


def two_level(doses: DoseArrays, levels: list[Level], clock_fmt=None,  # noqa: ANN001
              min_gap_h: float | None = None) -> TwoLevelResult:
    """Exact whole-history fit through the two most recent usable levels.

    Args:
        doses: every dose before the later level (real history).
        levels: usable levels (see :func:`tdmtui.core.course.history.usable_levels`), by time.

    Raises:
        NoEstimateError: fewer than two usable levels, no root or several roots.
    """
    m = "two-level"
    if len(levels) < 2:
        raise NoEstimateError(m, f"needs two usable levels after the first dose; {len(levels)} available "
                                 "(add a second post-distribution level, or use the Bayesian or population method)")
    a, b = levels[-2], levels[-1]
    gap = _gap(min_gap_h)
    if b.time - a.time < gap:
        raise NoEstimateError(m, f"the two most recent usable levels are less than {gap * 60:.0f} min apart; "
                                 "draw them further apart")
    ta, tb = a.time, b.time
    from tdmtui.core.models.batch import Design, batch_concentration

    # C(t) for every ke on the grid at once, with V = 1 L (CL = ke)
    both = batch_concentration(KE_GRID, np.ones_like(KE_GRID), np.zeros_like(KE_GRID), np.zeros_like(KE_GRID),
                               Design.build(doses, [ta, tb]))
    fa, fb = both[:, 0], both[:, 1]
    if np.any(fa <= 0) or np.any(fb <= 0):
        raise NoEstimateError(m, "a level lies before any dose could reach it")
    target = math.log(a.conc / b.conc)
    g = np.log(fa) - np.log(fb) - target
    roots = np.nonzero(np.sign(g[:-1]) * np.sign(g[1:]) < 0)[0]
    if roots.size == 0:
        raise NoEstimateError(m, f"no elimination rate makes the dose history pass through {a.conc:g} and {b.conc:g} mg/L "
                                 "(check times and doses; levels may be inconsistent with the history)")
    if roots.size > 1:
        raise NoEstimateError(m, "several elimination rates fit these two levels equally well; "
                                 "draw a level after the last dose, or use the Bayesian method")
    from tdmtui.core.solvers import brent_root

    def gfun(k: float) -> float:
        return float(math.log(onecomp.concentration(k, 1.0, doses, ta)) - math.log(onecomp.concentration(k, 1.0, doses, tb)) - target)

    i = int(roots[0])
    ke = brent_root(gfun, float(KE_GRID[i]), float(KE_GRID[i + 1]), xtol=1e-14, rtol=1e-13)
    f1 = float(onecomp.concentration(ke, 1.0, doses, ta))
    v = f1 / a.conc
    fmt = clock_fmt or (lambda h: f"{h:.2f} h")
    steps = [
        WorkingStep("Model", "C(t) = sum over doses of (D/T)/(ke V) (1 - e^(-ke min(u,T))) e^(-ke max(u-T,0)), u = t - start",
                    f"{len(doses)} doses superposed; levels {a.conc:g} mg/L at {fmt(ta)} and {b.conc:g} mg/L at {fmt(tb)}", "", m),
        WorkingStep("Elimination rate", "solve C(t1)/C(t2) = C1/C2 for ke (the ratio does not depend on V)",
                    f"C1/C2 = {a.conc:g}/{b.conc:g} = {a.conc / b.conc:.4f}", f"ke = {_fmt(ke)} /h", m),
        WorkingStep("Half-life", "t1/2 = ln 2 / ke", f"0.6931 / {_fmt(ke)}", f"{_fmt(math.log(2) / ke, 3)} h", m),
        WorkingStep("Volume", "V = C(t1) computed with V = 1 L, divided by C1", f"{_fmt(f1)} / {a.conc:g}", f"V = {_fmt(v)} L", m),
        WorkingStep("Clearance", "CL = ke x V", f"{_fmt(ke)} x {_fmt(v)}", f"{_fmt(ke * v)} L/h", m),
    ]
    return TwoLevelResult(m, PKParams.one_compartment(ke, v), [a.index, b.index], steps, "whole dose history superposed")


def _gap(min_gap_h: float | None) -> float:
    """The shortest span between two levels that gives ke, h (library ``levels.min_gap_h`` unless given)."""
    return common_number("levels.min_gap_h") if min_gap_h is None else float(min_gap_h)


def _dose_before(doses: list[Dose], t: float) -> Dose | None:
    before = [d for d in doses if d.start < t]
    return before[-1] if before else None


def _history_predose(doses: list[Dose], dose: Dose, ke: float) -> tuple[float, int]:
    """Concentration (V = 1 L) the doses before ``dose`` leave at its start, and how many there are."""
    before = [d for d in doses if d.start < dose.start - 1e-9]
    if not before:
        return 0.0, 0
    arr = DoseArrays.from_lists([d.start for d in before], [d.duration for d in before], [d.amount for d in before])
    return float(onecomp.concentration(ke, 1.0, arr, dose.start)), len(before)


def _steady_predose(dose: Dose, ke: float, tau: float) -> float:
    """Steady-state pre-dose concentration (V = 1 L) of ``dose`` repeated every ``tau`` h (pk-sources.md 2.3)."""
    tp = dose.duration
    if tp > 0:
        cmax = dose.amount / tp * (1 - math.exp(-ke * tp)) / (ke * (1 - math.exp(-ke * tau)))
    else:
        cmax = dose.amount / (1 - math.exp(-ke * tau))
    return cmax * math.exp(-ke * (tau - tp))


def _steady_share(doses: list[Dose], dose: Dose, ke: float, tau: float | None) -> tuple[float | None, float, int]:
    """(history / steady-state pre-dose share or None, history pre-dose with V = 1 L, earlier doses)."""
    f, n = _history_predose(doses, dose, ke)
    if tau is None or tau <= dose.duration:
        return None, f, n
    return f / _steady_predose(dose, ke, tau), f, n


_SZ = "sawchuk-zaske"


@dataclass
class _Interval:
    """What the one-interval calculation found: ke 1/h, Cmax and the pre-dose level mg/L, and how.

    ``f_hist``: the pre-dose concentration the history leaves with V = 1 L (mg/L x L), when the
    pre-dose level is taken from the history (else 0).
    """

    ke: float
    cmax: float
    cpre: float
    f_hist: float
    assumption: str
    used: list[int]


def sawchuk_zaske(doses: list[Dose], levels: list[Level], tau: float | None,
                  steady_within: float | None = None, min_gap_h: float | None = None) -> TwoLevelResult:
    """Textbook one-interval Sawchuk-Zaske calculation (pk-sources.md 2.4).

    Uses the two most recent usable levels. Both after the same dose: ke from
    their slope; with a usable level in the interval before that dose it is the
    measured pre-dose level (non-steady-state variant), otherwise the
    steady-state assumption with ``tau``. A trough before a dose and a peak
    after it: steady-state assumption (the trough recurs at the same time
    before the next dose).

    Raises:
        NoEstimateError: too few levels, no interval where one is needed, or
            levels not around a single dose.
    """
    if steady_within is None:  # the library's rule (a protocol's, when the caller passes its Rules' value)
        steady_within = common_number("monitoring.steady_state_within_rel")
    if len(levels) < 2:
        raise NoEstimateError(_SZ, f"needs two usable levels around one dose; {len(levels)} available")
    a, b = levels[-2], levels[-1]
    gap = _gap(min_gap_h)
    if b.time - a.time < gap:
        raise NoEstimateError(_SZ, f"the two most recent usable levels are less than {gap * 60:.0f} min apart; "
                                   "draw them further apart")
    da, db = _doses_before(doses, a, b)
    steps: list[WorkingStep] = []
    if da is db:
        iv = _after_one_dose(doses, levels, db, tau, steady_within, steps)
    else:
        iv = _trough_then_peak(doses, a, b, da, db, tau, gap, steady_within, steps)
    v, eq, sub = _volume(db, iv)
    if not (v > 0 and math.isfinite(v)):
        raise NoEstimateError(_SZ, "the levels give no positive volume (the peak is not above the pre-dose level)")
    ke = iv.ke
    steps.append(WorkingStep("Volume", eq, sub, f"{v:.4g} L", _SZ))
    steps.append(WorkingStep("Clearance", "CL = ke x V", f"{ke:.4g} x {v:.4g}", f"{ke * v:.4g} L/h", _SZ))
    return TwoLevelResult(_SZ, PKParams.one_compartment(ke, v), iv.used, steps, iv.assumption)


def _doses_before(doses: list[Dose], a: Level, b: Level) -> tuple[Dose | None, Dose]:
    """The doses before each of the two levels; neither level drawn during an infusion."""
    da, db = _dose_before(doses, a.time), _dose_before(doses, b.time)
    if db is None:
        raise NoEstimateError(_SZ, "the later level precedes every dose")
    for lv, d in ((a, da), (b, db)):
        if d is not None and lv.time < d.end:
            raise NoEstimateError(_SZ, f"levels[{lv.index}] was drawn during an infusion (a continuous one): "
                                       "Sawchuk-Zaske needs levels after the end of an infusion; the two-level "
                                       "(whole-history) and Bayesian fits use it")
    return da, db


def _after_one_dose(doses: list[Dose], levels: list[Level], dose: Dose, tau: float | None, steady_within: float,
                    steps: list[WorkingStep]) -> _Interval:
    """Both levels after the same dose: ke from their slope, Cmax back-extrapolated, then the pre-dose level."""
    a, b = levels[-2], levels[-1]
    ke = math.log(a.conc / b.conc) / (b.time - a.time)
    if ke <= 0:
        raise NoEstimateError(_SZ, "the later level is not lower than the earlier one after the same dose")
    steps.append(WorkingStep("Elimination rate", "ke = ln(C1/C2) / (t2 - t1)",
                             f"ln({a.conc:g}/{b.conc:g}) / {b.time - a.time:.3g} h", f"{ke:.4g} /h", _SZ))
    cmax = a.conc * math.exp(ke * (a.time - dose.end))
    steps.append(WorkingStep("Peak at end of infusion", "Cmax = C1 e^(ke (t1 - t'))",
                             f"{a.conc:g} x e^({ke:.4g} x {a.time - dose.end:.3g})", f"{cmax:.4g} mg/L", _SZ))
    p = _measured_predose(doses, levels, dose)
    if p is not None:
        cpre = p.conc * math.exp(-ke * (dose.start - p.time))
        steps.append(WorkingStep("Pre-dose level", "Cpre = Cmeasured e^(-ke (start - t_drawn))",
                                 f"{p.conc:g} x e^(-{ke:.4g} x {dose.start - p.time:.3g})", f"{cpre:.4g} mg/L", _SZ))
        return _Interval(ke, cmax, cpre, 0.0, f"measured pre-dose level {p.conc:g} mg/L (levels[{p.index}])",
                         [p.index, a.index, b.index])
    return _predose_from_history(doses, dose, ke, cmax, tau, steady_within, [a.index, b.index], steps)


def _measured_predose(doses: list[Dose], levels: list[Level], dose: Dose) -> Level | None:
    """The latest usable level in the interval before ``dose`` (not during an infusion), or None."""
    prev = [lv for lv in levels[:-2] if lv.time < dose.start and ((d := _dose_before(doses, lv.time)) is None or
                                                                 d.end <= lv.time)]
    earlier = _dose_before(doses, dose.start - 1e-9)
    prev = [lv for lv in prev if earlier is None or lv.time > earlier.start]
    return prev[-1] if prev else None


def _predose_from_history(doses: list[Dose], dose: Dose, ke: float, cmax: float, tau: float | None,
                          steady_within: float, used: list[int], steps: list[WorkingStep]) -> _Interval:
    """No measured pre-dose level: steady state when the history shows it, else the history's accumulation."""
    share, f_hist, n_before = _steady_share(doses, dose, ke, tau)
    if share is not None and tau is not None and abs(share - 1.0) <= steady_within:
        cpre = cmax * math.exp(-ke * (tau - dose.duration))
        steps.append(WorkingStep("Trough (steady state)", "Cmin = Cmax e^(-ke (tau - t'))",
                                 f"{cmax:.4g} x e^(-{ke:.4g} x {tau - dose.duration:.3g}); history at "
                                 f"{share:.0%} of steady state", f"{cpre:.4g} mg/L", _SZ))
        return _Interval(ke, cmax, cpre, 0.0, f"steady state on a {tau:g} h interval (the {n_before} earlier doses "
                         f"put the pre-dose level at {share:.0%} of its steady-state value)", used)
    state = "" if share is None else f", {share:.0%} of steady state"
    assumption = ("first dose: no drug on board before it" if n_before == 0 else
                  f"not at steady state{state}: pre-dose level accumulated from the {n_before} earlier "
                  "dose(s) in the history")
    steps.append(WorkingStep("Pre-dose level (from the history)",
                             "Cpre = f / V, f = earlier doses superposed at the dose start with V = 1 L",
                             f"{n_before} earlier dose(s), ke {ke:.4g} /h", f"f = {f_hist:.4g} mg/L x L", _SZ))
    return _Interval(ke, cmax, 0.0, f_hist, assumption, used)


def _trough_then_peak(doses: list[Dose], a: Level, b: Level, da: Dose | None, db: Dose, tau: float | None,
                      gap: float, steady_within: float, steps: list[WorkingStep]) -> _Interval:
    """A trough ``a`` before dose ``db`` and a peak ``b`` after it: ke by the steady-state assumption."""
    if tau is None:
        raise NoEstimateError(_SZ, "a trough before the dose and a peak after it need the current interval (steady state)")
    if not (da is None or da.end <= a.time) or a.time > db.start:
        raise NoEstimateError(_SZ, "the two levels are not a trough before one dose and a peak after it")
    delta = db.start - a.time
    t_equiv = db.start + tau - delta
    if t_equiv - b.time < gap:
        raise NoEstimateError(_SZ, "the peak is drawn where the trough would recur at steady state "
                                   f"({tau:g} h interval): the two levels carry no elimination information")
    ke = math.log(b.conc / a.conc) / (t_equiv - b.time)
    if ke <= 0:
        raise NoEstimateError(_SZ, "the peak is not above the trough")
    share, _, n_before = _steady_share(doses, db, ke, tau)
    if share is None or abs(share - 1.0) > steady_within:
        raise NoEstimateError(_SZ, f"levels[{a.index}] (trough before the dose) and levels[{b.index}] (peak after it) "
                                   "give ke only at steady state, and the history is not at steady state"
                                   + ("" if share is None else f" ({share:.0%} of it after {n_before} doses)")
                                   + ": use the two-level (whole-history) estimate")
    steps.append(WorkingStep("Elimination rate (steady state)", "ke = ln(Cpeak/Ctrough) / ((tau - dt_trough) - t_peak)",
                             f"ln({b.conc:g}/{a.conc:g}) / ({tau:g} - {delta:.3g} - {b.time - db.start:.3g})",
                             f"{ke:.4g} /h", _SZ))
    cmax = b.conc * math.exp(ke * (b.time - db.end))
    steps.append(WorkingStep("Peak at end of infusion", "Cmax = Cpeak e^(ke (t_peak - t'))",
                             f"{b.conc:g} x e^({ke:.4g} x {b.time - db.end:.3g})", f"{cmax:.4g} mg/L", _SZ))
    cpre = a.conc * math.exp(-ke * delta)
    steps.append(WorkingStep("Trough at dose start", "Cmin = Ctrough e^(-ke dt)",
                             f"{a.conc:g} x e^(-{ke:.4g} x {delta:.3g})", f"{cpre:.4g} mg/L", _SZ))
    return _Interval(ke, cmax, cpre, 0.0, f"steady state on a {tau:g} h interval (trough before the dose)",
                     [a.index, b.index])


def _volume(dose: Dose, iv: _Interval) -> tuple[float, str, str]:
    """(V L, equation, numbers): the infusion equation with the pre-dose level measured, assumed or accumulated."""
    ke, cmax, cpre, f_hist, tp = iv.ke, iv.cmax, iv.cpre, iv.f_hist, dose.duration
    k0 = dose.amount / dose.duration if dose.duration > 0 else math.inf
    if f_hist > 0 and tp > 0:
        v = (k0 * (1 - math.exp(-ke * tp)) + ke * f_hist * math.exp(-ke * tp)) / (ke * cmax)
        return (v, "V = [k0 (1 - e^(-ke t')) + ke f e^(-ke t')] / (ke Cmax)   (Cpre = f / V)",
                f"[{k0:.4g} x (1 - e^(-{ke:.4g} x {tp:g})) + {ke:.4g} x {f_hist:.4g} x e^(-{ke:.4g} x {tp:g})] / "
                f"({ke:.4g} x {cmax:.4g})")
    if f_hist > 0:
        v = (dose.amount + f_hist) / cmax
        return v, "V = (D + f) / Cmax   (Cpre = f / V)", f"({dose.amount:g} + {f_hist:.4g}) / {cmax:.4g}"
    if tp > 0:
        v = k0 * (1 - math.exp(-ke * tp)) / (ke * (cmax - cpre * math.exp(-ke * tp)))
        return (v, "V = k0 (1 - e^(-ke t')) / (ke [Cmax - Cmin e^(-ke t')])",
                f"{k0:.4g} x (1 - e^(-{ke:.4g} x {tp:g})) / ({ke:.4g} x [{cmax:.4g} - {cpre:.4g} x "
                f"e^(-{ke:.4g} x {tp:g})])")
    v = dose.amount / (cmax - cpre)
    return v, "V = D / (Cmax - Cmin)", f"{dose.amount:g} / ({cmax:.4g} - {cpre:.4g})"
