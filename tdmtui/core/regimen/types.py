"""Plain data carried in and out of regimen design.

Units (canonical, as everywhere in the core): dose mg, time h (hours since
the epoch for clock times, durations in h), concentration mg/L, exposure
mg*h/L, weight kg, CrCl mL/min.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any, Protocol

from tdmtui.core.course.history import CurrentRegimen  # the one standing-order type (re-exported here)

if TYPE_CHECKING:
    import numpy as np

    from tdmtui.core.alerts import Alert
    from tdmtui.core.input.casetypes import Case, Dose, Level, Target
    from tdmtui.core.input.clock import Clock
    from tdmtui.core.library import Rules
    from tdmtui.core.models import DoseArrays, PKParams
    from tdmtui.core.patient.renal import RenalSummary
    from tdmtui.core.regimen.targets import Targets


@dataclass(frozen=True)
class RegimenInput:
    """Everything :func:`tdmtui.core.regimen.design` needs.

    Attributes:
        drug: library drug id.
        rules: library values with the local protocol on top.
        case_target: targets written in the case (None fields = library/protocol).
        params: the individual estimate (None when no estimate exists, e.g. a
            nomogram-only reading).
        history: the real doses given.
        as_of: "now", h since the epoch.
        clock: the case clock (formats times in the input's style).
        current: the standing order, or None.
        dosing_weight_kg: dosing weight per the library rule, kg.
        tbw_kg: actual (total) body weight, kg.
        bmi: body-mass index, kg/m^2.
        crcl_ml_min: Cockcroft-Gault CrCl, mL/min.
        renal_replacement: ``none``, ``ihd``, ``crrt`` or ``pd``.
        conditions: the case's condition ids.
        samples: posterior (or population) draws, for intervals and probability of target:
            a list of PKParams, or batched draws (arrays cl, v1, q, v2, optional weights,
            and a vectorised ``steady_state(dose, tau, tinf, peak_delay_h)``).
        method: estimation method of ``params`` (two-level, bayesian, population, ...).
        option: regimen option (registry ``OPTIONS``: ``nomogram`` reads a level against
            the drug's chart), or None for the regimen designed from the estimate.
        levels: the case's levels.
        doses: the case's doses (kind tells a loading dose; the nomogram finds its dose here).
        check_before_restart: an exposure caution calls for a hold (exposure.calls_for_hold): a proposal
            that leaves doses out books a level before its first dose, to be given only below the hold
            limit (handover.restart_check).
    """

    drug: str
    rules: Rules
    case_target: Target
    params: PKParams | None
    history: DoseArrays
    as_of: float
    clock: Clock
    current: CurrentRegimen | None = None
    dosing_weight_kg: float = 0.0
    tbw_kg: float = 0.0
    bmi: float = 0.0
    crcl_ml_min: float = 0.0
    renal_replacement: str = "none"
    conditions: tuple[str, ...] = ()
    samples: Any = None
    method: str = "population"
    option: str | None = None
    levels: tuple[Level, ...] = ()
    doses: tuple[Dose, ...] = ()
    check_before_restart: bool = False


__all__ = ["Assessed", "CurrentRegimen", "EstimateUsed", "Plan", "RegimenInput"]


class Assessed(Protocol):
    """What the rules after the design (exposure, the renal plan) read of the facts found before estimation.

    :class:`tdmtui.core.estimation.context.MethodContext` is one. The estimation stage calls the regimen
    design, so the regimen package names none of that stage's types, not even for annotations.
    """

    @property
    def case(self) -> Case: ...
    @property
    def rules(self) -> Rules: ...
    @property
    def renal(self) -> RenalSummary: ...
    @property
    def history(self) -> DoseArrays: ...
    @property
    def usable(self) -> list[Level]: ...
    @property
    def current(self) -> CurrentRegimen | None: ...
    @property
    def targets(self) -> Targets | None: ...


class EstimateUsed(Protocol):
    """What they read of the estimate used (:class:`tdmtui.core.estimation.estimates.Estimate` is one)."""

    @property
    def method(self) -> str: ...
    @property
    def params(self) -> PKParams: ...
    @property
    def samples(self) -> object: ...  # posterior draws or None, handed on as RegimenInput.samples
    @property
    def levels_used(self) -> list[int]: ...


@dataclass
class Plan:
    """The design's answer.

    Attributes:
        regimen: the contract's ``regimen`` object (JSON-ready), or None when
            a stop leaves nothing to recommend.
        targets: resolved targets (JSON-ready) for the result's ``target``.
        sources: where each target, limit and rule came from.
        alerts: warnings raised by the design.
        doses: the proposed doses from ``next_dose_at`` (loading included), or None.
        forecast: (times h, conc mg/L) over the history and the next 72 h, or None.
        candidates: the candidate table (JSON-ready dicts).
    """

    regimen: dict[str, Any] | None
    targets: dict[str, Any]
    sources: dict[str, Any]
    alerts: list[Alert] = field(default_factory=list)
    doses: DoseArrays | None = None
    forecast: tuple[np.ndarray, np.ndarray] | None = None
    candidates: list[dict[str, Any]] = field(default_factory=list)
