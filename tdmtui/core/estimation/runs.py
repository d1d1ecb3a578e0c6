"""A method record's entry points called with the estimation stage's types, and every run merged.

The method table (:mod:`tdmtui.core.registry`) is data at the bottom of the core: each record names
its functions as ``"module:function"`` and the table imports nothing of the estimation stage. This
module calls them with the stage's :class:`~tdmtui.core.estimation.context.MethodContext` and
:class:`~tdmtui.core.estimation.estimates.Estimate`: whether the method concerns the case, why it is
refused, its run, the notes on why it gave none, its refit on shifted cases (timing sensitivity), and
the alerts that belong to it as the method used.
"""

from __future__ import annotations

from dataclasses import dataclass

from tdmtui.core.alerts import Alert
from tdmtui.core.errors import ConvergenceError, NoEstimateError
from tdmtui.core.estimation.context import MethodContext, shifted
from tdmtui.core.estimation.estimates import Estimate
from tdmtui.core.input.casetypes import Case
from tdmtui.core.registry import Method, MethodRun, entry


@dataclass(frozen=True)
class MethodRuns:
    """Every method's run, merged: estimates and failures by result key, flags by method id."""

    estimates: dict[str, Estimate]
    failures: dict[str, str]
    flags: dict[str, tuple[Alert, ...]]


def concerns(m: Method, ctx: MethodContext) -> bool:
    """Whether the method concerns this case at all (``when``)."""
    return m.when is None or bool(entry(m.when)(ctx))


def refusal(m: Method, ctx: MethodContext) -> str | None:
    """Why the method does not apply to this case (too few usable levels, renal replacement), or None."""
    return m.refusal(len(ctx.usable), ctx.case.patient.renal_replacement)


def run(m: Method, ctx: MethodContext) -> MethodRun[Estimate]:
    """Estimate with this method (raises NoEstimateError or ConvergenceError when it gives none)."""
    out: MethodRun[Estimate] = entry(m.estimate)(ctx)
    return out


def notes(m: Method, ctx: MethodContext) -> list[str]:
    """Notes for the reason it gave no estimate (``explain``)."""
    out: list[str] = entry(m.explain)(ctx) if m.explain else []
    return out


def refit(m: Method, ctx: MethodContext, est: Estimate) -> Estimate | None:
    """The same method on a changed case, or None when it is not refitted or gives none."""
    if m.refit is None:
        return None
    out: Estimate | None = entry(m.refit)(ctx, est)
    return out


def refit_many(m: Method, ctx: MethodContext, est: Estimate, cases: list[Case]) -> list[Estimate | None]:
    """:func:`refit` on each shifted copy of the case (``refit_many`` when the method has it); None for a copy
    it gives no estimate for."""
    if m.refit is None:
        return [None] * len(cases)
    if m.refit_many is not None:
        many: list[Estimate | None] = entry(m.refit_many)(ctx, est, cases)
        return many
    out: list[Estimate | None] = []
    for case in cases:
        try:
            out.append(refit(m, shifted(ctx, case), est))
        except (NoEstimateError, ConvergenceError):
            out.append(None)
    return out


def used_alerts(m: Method, ctx: MethodContext, est: Estimate, runs: MethodRuns) -> list[Alert]:
    """Alerts that belong to this method as the one used."""
    if m.alerts is None:
        return []
    out: list[Alert] = entry(m.alerts)(ctx, est, runs)
    return out
