"""A regimen's steady state by the shared models, per mg: peak, trough, AUC24, the peak at a draw time.

Steady-state peak (end of infusion), trough (just before the next dose) and
AUC24 come from the shared models (:func:`tdmtui.core.models.steady_state`,
pk-sources.md 2.3); the peak at the target's draw time is the steady-state
profile at that time (superposition, pk-sources.md 2.2). All are linear in
the dose, so the candidate search (:mod:`tdmtui.core.regimen.candidates`)
evaluates each (interval, infusion time) pair once for 1 mg. The textbook
peak/trough redesign on the same one-compartment equations is here too.
"""

from __future__ import annotations

import math

import numpy as np

from tdmtui.core.models import DoseArrays, PKParams, concentration, steady_state


def terminal_rate(params: PKParams) -> float:
    """Slowest disposition rate constant, 1/h (ke, or beta for two compartments)."""
    if params.is_two_compartment:
        from tdmtui.core.models.twocomp import macro_constants

        return float(macro_constants(params.cl, params.v1, params.q, params.v2)[1])
    return params.ke


def ss_at(params: PKParams, dose: float, tau: float, tinf: float, u: float | np.ndarray) -> np.ndarray:
    """Steady-state concentration ``u`` h after the start of a dose (0 <= u <= tau), mg/L.

    Superposition (pk-sources.md 2.2) of the dose at 0 and every earlier dose
    back until the terminal exponential has decayed by e^-25.
    """
    n = int(math.ceil(25.0 / (terminal_rate(params) * tau))) + 1
    starts = -tau * np.arange(n - 1, -1, -1, dtype=float)
    hist = DoseArrays(starts, np.full(n, float(tinf)), np.full(n, float(dose)))
    return concentration(params, hist, np.asarray(u, dtype=float))


def unit_values(params: PKParams, tau: float, tinf: float, t_ref: float) -> tuple[float, float, float, float]:
    """(peak, trough, auc24, peak at t_ref) of 1 mg every tau h over tinf h."""
    ss = steady_state(params, 1.0, tau, tinf)
    ref = ss.peak if abs(t_ref - tinf) < 1e-12 else float(ss_at(params, 1.0, tau, tinf, t_ref))
    return ss.peak, ss.trough, ss.auc24, ref


def textbook_redesign(ke: float, v: float, tinf: float, cmax: float, cmin: float,
                      intervals: list[float], rounding: float) -> dict[str, float]:
    """Textbook peak/trough redesign (pk-sources.md 2.4, Bauer's form).

    tau = ln(Cmax/Cmin)/ke + t' (rounded to the nearest interval in the set);
    k0 = Cmax ke V (1 - e^(-ke tau)) / (1 - e^(-ke t')); dose = k0 t' rounded
    to the grid.

    Returns:
        ``tau_exact``, ``tau``, ``dose_exact`` (mg) and ``dose`` (mg).
    """
    tau_exact = math.log(cmax / cmin) / ke + tinf
    tau = min(intervals, key=lambda x: (abs(x - tau_exact), x))
    k0 = cmax * ke * v * -math.expm1(-ke * tau) / -math.expm1(-ke * tinf)
    dose_exact = k0 * tinf
    return {"tau_exact": tau_exact, "tau": float(tau), "dose_exact": dose_exact,
            "dose": round(dose_exact / rounding) * rounding}
