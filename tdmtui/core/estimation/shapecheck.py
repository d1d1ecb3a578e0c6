"""Does the one-compartment shape matter for these draw times? (``ke-vs-terminal-rate``)

A two-compartment model always has a terminal rate (beta) slower than the
one-compartment ke fitted through two levels: comparing the two numbers fires
on nearly every case, correctly timed aminoglycoside peaks and troughs
included, and says nothing about whether the one-compartment answer is wrong
where it is used. The question that changes what a pharmacist does is: were
the levels drawn where the curve still bends, so that a one-compartment fit
through them mispredicts the regimen?

The check asks the fitted two-compartment (Bayesian) model itself: it
predicts the concentrations at the two draw times, fits the two-level
one-compartment method through those predicted values (the answer that method
would give if the model were the truth), and compares the two answers for the
current regimen at steady state: the trough (the long-interval prediction the
one-compartment ke makes) and the AUC24. Beyond ``methods.shape_bias_rel`` on
either, the one-compartment shape itself biases the two-level estimate for this
sampling; the Bayesian estimate is then the one to follow for the regimen.

:func:`disagreement_advice` words ``methods-disagree-bayesian`` so that it
names one estimate to follow, never "trust each less when ...".
Standard equations: superposition and infusion steady state (pk-sources.md 2.2, 2.3).
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from typing import TYPE_CHECKING

from tdmtui.core.alerts import Alert
from tdmtui.core.errors import ConvergenceError, NoEstimateError
from tdmtui.core.models import concentration, steady_state
from tdmtui.core.registry import CHOOSE_BAYESIAN, RESTS_ON_BAYESIAN

if TYPE_CHECKING:
    from tdmtui.core.estimation.context import MethodContext
    from tdmtui.core.estimation.estimates import Estimate


@dataclass(frozen=True)
class ShapeBias:
    """The two-level method's answer on the model's own curve, against the model's.

    Troughs mg/L, AUC24 mg*h/L; ``rel`` the larger relative difference.
    """

    model_trough: float
    implied_trough: float
    model_auc24: float
    implied_auc24: float
    rel: float


def shape_bias(ctx: MethodContext, two_level: Estimate, bayesian: Estimate) -> ShapeBias | None:
    """The bias of a one-compartment two-level fit for these draw times, or None when not computable."""
    from tdmtui.core.estimation.twolevel import two_level as fit

    cur = ctx.current
    used = [lv for lv in ctx.usable if lv.index in set(two_level.levels_used)]
    if cur is None or len(used) < 2 or not bayesian.params.is_two_compartment:
        return None
    times = [lv.time for lv in used]
    pred = concentration(bayesian.params, ctx.history, times)
    if not all(c > 0 for c in pred):
        return None
    synthetic = [dataclasses.replace(lv, conc=float(c)) for lv, c in zip(used, pred)]
    try:
        implied = fit(ctx.history, synthetic).params
    except (NoEstimateError, ConvergenceError):
        return None
    tinf = min(cur.infusion_h, cur.interval_h)
    ss_model = steady_state(bayesian.params, cur.dose_mg, cur.interval_h, tinf)
    ss_one = steady_state(implied, cur.dose_mg, cur.interval_h, tinf)
    rel = max(abs(ss_one.trough - ss_model.trough) / max(ss_model.trough, ss_one.trough, 1e-9),
              abs(ss_one.auc24 - ss_model.auc24) / max(ss_model.auc24, ss_one.auc24))
    return ShapeBias(ss_model.trough, ss_one.trough, ss_model.auc24, ss_one.auc24, rel)


def _proposal_on_bayesian(used: str) -> str:
    return RESTS_ON_BAYESIAN if used == "bayesian" else f"the proposal shown uses {used}; {CHOOSE_BAYESIAN}"


def terminal_rate_alert(ctx: MethodContext, two_level: Estimate, bayesian: Estimate, used: str) -> Alert | None:
    """``ke-vs-terminal-rate`` when the shape bias exceeds ``methods.shape_bias_rel`` (module docstring)."""
    bias = shape_bias(ctx, two_level, bayesian)
    limit = float(ctx.rules.value("methods.shape_bias_rel"))
    if bias is None or bias.rel <= limit:
        return None
    from tdmtui.core.estimation.estimates import two_compartment_figures

    beta = two_compartment_figures(bayesian.params)["beta_per_h"]
    facts = {"rates": f"two-level ke {two_level.params.ke:.4f} /h, model terminal rate {beta:.4f} /h",
             "one_compartment_trough": f"{bias.implied_trough:.3g}", "one_compartment_auc24": f"{bias.implied_auc24:.0f}",
             "model_trough": f"{bias.model_trough:.3g}", "model_auc24": f"{bias.model_auc24:.0f}",
             "bias": f"{bias.rel:.1%}", "limit": f"{limit:.0%}"}
    return Alert("ke-vs-terminal-rate", "caution", "levels",
                 f"these levels were drawn where the two-compartment model's curve still bends ({facts['rates']}): "
                 f"through them a one-compartment fit puts the current regimen's steady-state trough at "
                 f"{facts['one_compartment_trough']} mg/L and AUC24 at {facts['one_compartment_auc24']} where the "
                 f"model gives {facts['model_trough']} and {facts['model_auc24']} ({facts['bias']}, over "
                 f"{facts['limit']}): the Bayesian estimate follows that curve; {_proposal_on_bayesian(used)}", facts)


def disagreement_advice(ctx: MethodContext, two_level: Estimate, used: str, shape: bool) -> str:
    """Which of two-level and Bayesian to follow when they disagree: one answer, with its reason."""
    on_it = _proposal_on_bayesian(used)
    if shape:
        return ("the difference is the one-compartment shape for these draw times (ke-vs-terminal-rate): the "
                f"Bayesian estimate follows the two-compartment curve; {on_it}")
    used_levels = [lv for lv in ctx.case.levels if lv.index in set(two_level.levels_used)]
    doubtful = [f"levels[{lv.index}]" for lv in used_levels if lv.timing != "actual"]
    if doubtful:
        return (f"the two-level estimate rests on {', '.join(doubtful)} whose time is not exact: follow the "
                "Bayesian estimate, which weighs every level against the model, and confirm with the next level; "
                f"{on_it}")
    proposal = "" if used == "two-level" else f" (the proposal shown uses {used})"
    return (f"follow the two-level estimate{proposal}: it rests on these correctly timed levels alone, the "
            "Bayesian one also on its population model")
