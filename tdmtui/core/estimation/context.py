"""What every estimation method is given: the case and the facts computed before estimation.

The pipeline (:mod:`tdmtui.core.compute`) builds one :class:`MethodContext`
after the renal, course and target stages; every method of the registry
(:mod:`tdmtui.core.registry`) reads it and none changes it.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import TYPE_CHECKING

import numpy as np

from tdmtui.core.input.casetypes import Case, Level
from tdmtui.core.course.history import CurrentRegimen, usable_levels
from tdmtui.core.library import Rules
from tdmtui.core.models import DoseArrays
from tdmtui.core.patient.renal import RenalSummary

if TYPE_CHECKING:
    from tdmtui.core.regimen.targets import Targets


def history_of(case: Case) -> DoseArrays:
    """The real doses up to ``as_of`` as arrays."""
    ds = [d for d in case.doses if d.start <= case.as_of]
    return DoseArrays.from_lists([d.start for d in ds], [d.duration for d in ds], [d.amount for d in ds])


@dataclass(frozen=True)
class MethodContext:
    """What every method needs.

    Attributes:
        case: the parsed case.
        rules: library values with the local protocol on top.
        renal: body size and renal function.
        history: the real doses up to ``as_of``.
        usable: levels fit for one-compartment methods, by time.
        current: the standing order, or None.
        targets: the targets the regimen is judged by (probability of target
            of the current regimen uses them), or None.
    """

    case: Case
    rules: Rules
    renal: RenalSummary
    history: DoseArrays
    usable: list[Level]
    current: CurrentRegimen | None
    targets: Targets | None = None


def shifted(ctx: MethodContext, case: Case) -> MethodContext:
    """The context of ``case``, a copy of ``ctx.case`` with level or infusion-end times moved (timing
    sensitivity): its usable levels judged again, its dose arrays :func:`shifted_history`."""
    return replace(ctx, case=case, history=shifted_history(ctx, case), usable=usable_levels(case, ctx.rules))


def shifted_history(ctx: MethodContext, case: Case) -> DoseArrays:
    """The dose arrays of ``case`` (as :func:`shifted`): the base ones when only a level moved, one duration
    changed when one infusion end moved (the dose at the same start, amount and old duration), else rebuilt."""
    if case.doses is ctx.case.doses:
        return ctx.history
    h = ctx.history
    changed = [(a, b) for a, b in zip(ctx.case.doses, case.doses) if a is not b]
    if len(changed) == 1 and changed[0][0].start <= case.as_of:
        old, new = changed[0]
        at = np.flatnonzero((h.start == old.start) & (h.duration == old.duration) & (h.amount == old.amount))
        if at.size == 1:
            duration = h.duration.copy()
            duration[at[0]] = new.duration
            return DoseArrays(h.start, duration, h.amount)
    return history_of(case)
