"""Estimates in the contract's shape, and the textbook population estimate.

An :class:`Estimate` is what every method returns: parameters, the levels it
used, its show-working steps, and optional Bayesian extras. ``to_dict`` gives
the contract's ``estimate`` object (unrounded numbers).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

from tdmtui.core.course.history import CurrentRegimen
from tdmtui.core.library import Rules
from tdmtui.core.models import PKParams, steady_state
from tdmtui.core.estimation.working import WorkingStep

if TYPE_CHECKING:
    from tdmtui.core.estimation.draws import ParamSamples


@dataclass
class Estimate:
    """One method's estimate.

    Attributes:
        method: method id (``two-level``, ``sawchuk-zaske``, ``least-squares``,
            ``bayesian``, ``population``).
        params: individual parameters.
        levels_used: file indices of the levels the method used.
        working: show-working steps.
        assumption: the key assumption in words.
        model: ``{"id", "citation", ...}`` for model-based methods.
        interval90: 90 % intervals of any figure (Bayesian).
        target_probability: probability the current regimen meets its target.
        samples: posterior parameter draws (not serialised).
        extra: further JSON-ready keys (diagnostics, two-compartment figures...).
        warm: where a refit starts (not serialised): model id -> eta of its MAP, and ``"weights"`` of a
            model average; the timing sensitivity's refits start there.
    """

    method: str
    params: PKParams
    levels_used: list[int] = field(default_factory=list)
    working: list[WorkingStep] = field(default_factory=list)
    assumption: str = ""
    model: dict[str, Any] | None = None
    interval90: dict[str, list[float]] | None = None
    target_probability: float | None = None
    samples: ParamSamples | None = None
    extra: dict[str, Any] = field(default_factory=dict)
    warm: dict[str, Any] = field(default_factory=dict, repr=False)

    def current(self, cur: CurrentRegimen | None) -> dict[str, float] | None:
        """Steady-state figures of the current regimen with these parameters."""
        if cur is None:
            return None
        # an infusion as long as the interval or longer (overlapping rows) runs the whole interval
        ss = steady_state(self.params, cur.dose_mg, cur.interval_h, min(cur.infusion_h, cur.interval_h))
        return {"auc24_mg_h_per_l": ss.auc24, "peak_mg_per_l": ss.peak, "trough_mg_per_l": ss.trough}

    def to_dict(self, cur: CurrentRegimen | None, weight_kg: float) -> dict[str, Any]:
        """The contract's ``estimate`` object."""
        p = self.params
        out: dict[str, Any] = {
            "method": self.method,
            "ke_per_h": p.ke, "half_life_h": p.half_life, "vd_l": p.vss, "vd_l_per_kg": p.vss / weight_kg,
            "cl_l_per_h": p.cl, "levels_used": [f"levels[{i}]" for i in self.levels_used],
        }
        current = self.current(cur)
        if current is not None:
            out["current"] = current
        if self.assumption:
            out["assumption"] = self.assumption
        if self.model is not None:
            out["model"] = self.model
        if self.interval90 is not None:
            out["interval90"] = self.interval90
        if self.target_probability is not None:
            out["target_probability"] = self.target_probability
        if p.is_two_compartment:
            out["two_compartment"] = two_compartment_figures(p)
        out.update(self.extra)
        return out


def two_compartment_figures(p: PKParams) -> dict[str, float]:
    """V1, V2, Q, Vss, alpha/beta half-lives (pk-sources.md 2.6 macro-constants) and ln 2 x Vss / CL.

    The terminal (beta) half-life is what governs how long a level takes to fall; ln 2 x Vss / CL is the
    one-compartment equivalent shown in the estimate table. They differ when distribution is slow.
    """
    k10, k12, k21 = p.cl / p.v1, p.q / p.v1, p.q / p.v2
    s = k10 + k12 + k21
    root = math.sqrt(max(s * s - 4 * k10 * k21, 0.0))
    alpha, beta = (s + root) / 2, (s - root) / 2
    return {"cl_l_per_h": p.cl, "v1_l": p.v1, "v2_l": p.v2, "q_l_per_h": p.q, "vss_l": p.vss,
            "alpha_per_h": alpha, "beta_per_h": beta,
            "alpha_half_life_h": math.log(2) / alpha, "beta_half_life_h": math.log(2) / beta,
            "vss_half_life_h": math.log(2) * p.vss / p.cl}


def textbook_population(rules: Rules, crcl: float, tbw: float, dosing_weight: float) -> Estimate:
    """A priori ke and V from the library's hand-calculation relations.

    Vancomycin: ke = 0.00083 x CrCl + 0.0044, V = 0.7 L/kg TBW; aminoglycosides:
    ke = 0.00293 x CrCl + 0.014, V = 0.26 L/kg dosing weight (pk-sources.md 3.3,
    4.2; slopes and volumes are library data with their sources).
    """
    slope, intercept = (float(x) for x in rules.value("population.ke_per_h"))
    v_per_kg = float(rules.value("population.v_l_per_kg"))
    weight = tbw if rules.value("dosing_weight.rule") == "tbw" else dosing_weight
    ke = slope * crcl + intercept
    v = v_per_kg * weight
    m = "population"
    steps = [
        WorkingStep("Elimination rate (population)", f"ke = {slope:g} x CrCl + {intercept:g}",
                    f"{slope:g} x {crcl:.1f} + {intercept:g}", f"{ke:.4g} /h", m),
        WorkingStep("Volume (population)", f"V = {v_per_kg:g} L/kg x weight", f"{v_per_kg:g} x {weight:.1f}", f"{v:.4g} L", m),
        WorkingStep("Clearance", "CL = ke x V", f"{ke:.4g} x {v:.4g}", f"{ke * v:.4g} L/h", m),
    ]
    model = {"id": f"{rules.drug}-textbook", "citation": f"{rules.citation('population.ke_per_h')}; {rules.citation('population.v_l_per_kg')}"}
    return Estimate(m, PKParams.one_compartment(ke, v), [], steps, "population relations from CrCl and weight; no level used",
                    model=model)
