"""The estimation methods, one record each, and the regimen options.

Every list of methods reads this table: the case's ``method`` choices
(:data:`tdmtui.core.input.casetypes.METHODS`), the CLI's ``--method``, the app's method
choice, the note's method text, and the pipeline (which methods run, which one
``auto`` takes, how each refits for the timing sensitivity, which alerts belong
to the method used).

A record names its functions as ``"module:function"`` entry points, imported
only when the method runs: case loading reads this module, so it stays at the
bottom of the core and pulls in no estimation code (nor scipy), and names no
type of the estimation stage either (not even for annotations): the stage calls
the entry points with its own types (:mod:`tdmtui.core.estimation.runs`).

Estimation methods and regimen options are different things. A method turns
levels and doses into the patient's parameters (:class:`Method`); a regimen
option changes how the regimen is proposed and takes its estimate from another
choice (:class:`RegimenOption`: ``nomogram`` reads a level against the drug's
chart, with the estimate beside it from ``auto``). A case written with
``"method": "nomogram"`` keeps loading and means exactly that.

Adding a method: write ``estimate(ctx) -> MethodRun`` (and, if it can,
``refit(ctx, estimate) -> Estimate | None``, ``refit_many`` when many refits share work, and
``alerts(ctx, estimate, run)``)
in its own module, then add one :class:`Method` record to :data:`METHODS`.
"""

from __future__ import annotations

import importlib
from dataclasses import dataclass, field
from typing import Any, Callable, Generic, TypeVar

from tdmtui.core.alerts import Alert

#: How a caution points to a proposal on the Bayesian estimate when the one shown rests on another method
#: (the caution informs; the method the proposal rests on is the user's choice or auto's order), and what
#: it says when the proposal shown already rests on it. The engine's cautions and the note's merged ones
#: both end so.
CHOOSE_BAYESIAN = "for a proposal on it choose method bayesian"
RESTS_ON_BAYESIAN = "the proposal shown rests on it"

#: Why a method that needs no renal function is refused with renal replacement therapy.
RRT_REFUSAL = "not valid with renal replacement therapy (Cockcroft-Gault and two-level methods do not apply)"

#: The estimate type of a run: :class:`tdmtui.core.estimation.estimates.Estimate`. The table sits below the
#: estimation stage, so it names no type of that stage; the stage fills it in (``MethodRun[Estimate]``).
E = TypeVar("E")


def entry(name: str) -> Callable[..., Any]:
    """The function an entry point ``"module:function"`` names (imported when first called)."""
    module, func = name.split(":")
    fn: Callable[..., Any] = getattr(importlib.import_module(module), func)
    return fn


@dataclass(frozen=True)
class MethodRun(Generic[E]):
    """What one method's run gave.

    Attributes:
        estimates: estimates by result key (a method may give several, e.g.
            ``bayesian``, ``bayesian:<model>`` and ``population:<model>``).
        failures: result key -> why no estimate.
        flags: alerts that belong to the method when it is the one used.
    """

    estimates: dict[str, E] = field(default_factory=dict)
    failures: dict[str, str] = field(default_factory=dict)
    flags: tuple[Alert, ...] = ()


@dataclass(frozen=True)
class Method:
    """One estimation method.

    Attributes:
        id: the method's name in cases, results, the CLI and the app.
        description: what it is in one sentence, for the chart note (clinician's words).
        source: where the method comes from (for the code and the audit, not the note).
        estimate: entry point ``f(ctx) -> MethodRun``.
        refit: entry point ``f(ctx, estimate) -> Estimate | None``: the same
            method again on a shifted case (timing sensitivity); None = not refitted.
        refit_many: entry point ``f(ctx, estimate, cases) -> list[Estimate | None]``: ``refit``
            on many shifted copies of the case at once, the same estimates sooner; None = ``refit``
            on each.
        alerts: entry point ``f(ctx, estimate, runs) -> list[Alert]``: alerts that
            belong to it when it is the method used; None = none.
        auto_rank: its place in ``auto`` (lowest first); None = never chosen by ``auto``.
        min_levels: usable levels it needs (fewer: not run, said why).
        when: entry point ``f(ctx) -> bool``: False = the method does not concern this
            case (not run, not listed among the unavailable); None = always.
        explain: entry point ``f(ctx) -> list[str]``: notes added to the reason it gave no
            estimate (levels set aside, bounds from censored levels); None = none.
        with_renal_replacement: runs for patients on renal replacement therapy.
    """

    id: str
    description: str
    estimate: str
    source: str = ""
    refit: str | None = None
    refit_many: str | None = None
    alerts: str | None = None
    auto_rank: int | None = None
    min_levels: int = 0
    when: str | None = None
    explain: str | None = None
    with_renal_replacement: bool = False

    def refusal(self, usable: int, renal_replacement: str) -> str | None:
        """Why the method does not apply, given the usable levels and the renal replacement therapy
        (``patient.renal_replacement``), or None when it may run."""
        if usable < self.min_levels:
            return f"needs {_count(self.min_levels)} or more usable levels; {usable} available"
        if not self.with_renal_replacement and renal_replacement != "none":
            return RRT_REFUSAL
        return None


@dataclass(frozen=True)
class RegimenOption:
    """A way of proposing the regimen that is not an estimation method.

    Attributes:
        id: its name where a method name is accepted (case ``method``, CLI, app).
        description: what it does, for the chart note.
        estimate_with: the method choice the estimate beside it comes from.
    """

    id: str
    description: str
    estimate_with: str = "auto"


def _count(n: int) -> str:
    return {1: "one", 2: "two", 3: "three"}.get(n, str(n))


_EST = "tdmtui.core.estimation.estimators"

#: The estimation methods, in the order they run and are listed (results keep this order).
METHODS: tuple[Method, ...] = (
    Method("two-level", "one compartment, every dose superposed",
           source="two-level approach after Pai MP et al. 2014 (citation details from memory); standard infusion "
                  "equations",
           estimate=f"{_EST}:two_level", refit=f"{_EST}:refit_two_level", auto_rank=1,
           explain=f"{_EST}:why_set_aside_or_bounded"),
    Method("sawchuk-zaske", "one compartment, peak and trough around one dose",
           source="Sawchuk RJ, Zaske DE. J Pharmacokinet Biopharm 1976;4:183-195 (citation from memory)",
           estimate=f"{_EST}:sawchuk_zaske", refit=f"{_EST}:refit_sawchuk_zaske",
           explain=f"{_EST}:why_set_aside_or_bounded"),
    Method("least-squares", "one compartment fitted to every usable level, every dose superposed",
           source="standard infusion equations, proportional weighting",
           estimate=f"{_EST}:least_squares", min_levels=3, explain=f"{_EST}:why_set_aside"),
    Method("population", "population values from CrCl and weight; no level used",
           source="library population relations (population.ke_per_h, population.v_l_per_kg)",
           estimate=f"{_EST}:population", alerts=f"{_EST}:population_alerts", auto_rank=9),
    Method("one-level", "one compartment, population volume, ke solved from the level with every dose superposed",
           source="standard infusion equations", estimate=f"{_EST}:one_level", auto_rank=4),
    Method("one-level-steady-state", "steady-state infusion equation, population volume, ke solved from the level",
           source="standard infusion equations", estimate=f"{_EST}:one_level_steady_state"),
    Method("continuous-steady-state", "level at steady state on a continuous infusion: CL = rate / level",
           source="2020 vancomycin consensus guideline (from memory)",
           estimate=f"{_EST}:continuous_steady_state", auto_rank=3, when=f"{_EST}:latest_in_continuous"),
    Method("bayesian", "the levels combined with the published population models that fit the patient",
           source="MAP on each model, log-normal between-patient variability; model averaging after Uster DW et "
                  "al. 2021 (from memory)",
           estimate="tdmtui.core.estimation.bayes_method:run", refit=f"{_EST}:refit_bayesian",
           refit_many=f"{_EST}:refit_bayesian_many", alerts=f"{_EST}:bayesian_alerts", auto_rank=2, with_renal_replacement=True),
)

#: Regimen options accepted where a method is chosen.
OPTIONS: tuple[RegimenOption, ...] = (
    RegimenOption("nomogram", "level read against the drug's nomogram; the estimate below is the automatic "
                              "method's"),
)

#: Every choice a case, the CLI and the app accept for ``method``, in menu order.
CHOICES: tuple[str, ...] = ("auto",) + tuple(m.id for m in METHODS) + tuple(o.id for o in OPTIONS)

_BY_ID = {m.id: m for m in METHODS}
_OPTIONS = {o.id: o for o in OPTIONS}


def get(method_id: str) -> Method | None:
    """The record of an estimation method (``bayesian:<model>`` keys resolve to ``bayesian``), or None."""
    return _BY_ID.get(method_id.split(":")[0])


def option(choice: str | None) -> RegimenOption | None:
    """The regimen option a choice names, or None when it names a method, ``auto`` or nothing."""
    return _OPTIONS.get(choice) if choice else None


def split_choice(choice: str) -> tuple[str, str | None]:
    """A method choice as (estimation method or ``auto``, regimen option or None)."""
    opt = _OPTIONS.get(choice)
    return (opt.estimate_with, opt.id) if opt else (choice, None)


def auto_order() -> list[Method]:
    """The methods ``auto`` considers, first choice first."""
    return sorted((m for m in METHODS if m.auto_rank is not None), key=lambda m: m.auto_rank or 0)


def description(choice: str) -> str:
    """The note's words for a method or option (the id itself when unknown)."""
    rec = _BY_ID.get(choice) or _OPTIONS.get(choice)
    return rec.description if rec else choice
