"""Renal function through the course: a population model's parameters from each dated SCr.

Every dated serum creatinine up to ``as_of`` gives a CrCl at its time by the
model's OWN covariate rules (its formula, weight, SCr floor and CrCl cap:
:meth:`PopModel.typical`), hence the model's typical clearance at that time.

Between values the covariate is held **piecewise constant**: the value drawn
at t_i holds from t_i until the next value (the first value also holds before
its own draw, nothing earlier being known). This is how covariates that
change in time are carried in the data records of population analyses
(last observation carried forward; common practice, the convention of NONMEM
data records, from memory). None of the library's models was built with a
linear interpolation between creatinine values (Staatz 2006, the library's
gentamicin model, uses a change-from-baseline term whose exact form is not
confirmed, pk-sources.md 4.4.1; it is applied here like the others). Within
each piece the model stays closed form (:mod:`tdmtui.core.models.timevarying`).

Random effects are the individual's and do not change with time: the same eta
multiplies every piece's typical value. The forecast and the regimen use the
LATEST piece (the renal function now), and say so.

On intermittent haemodialysis the creatinine swings with each session and
does not measure renal function: no renal course is built (the model's
dialysis flag stands for it), see :mod:`tdmtui.core.input.dialysis`.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from tdmtui.core.estimation.posterior import Course
    from tdmtui.core.input.casetypes import Case
    from tdmtui.core.input.clock import Clock
    from tdmtui.core.estimation.context import MethodContext
    from tdmtui.core.estimation.estimates import Estimate
    from tdmtui.core.estimation.popmodels import Covariates, PopModel, Typical

CODES = {
    "renal-time-varying": "renal function changed during the course: the fit follows each dated SCr",
}


@dataclass(frozen=True)
class RenalStep:
    """One dated SCr as the course sees it: from ``time`` h on (until the next step)."""

    time: float
    scr_mg_dl: float
    field: str


def steps_of(case: Case) -> list[RenalStep]:
    """The dated SCr values up to ``as_of``, by time, equal neighbours merged (the first kept).

    Empty when there is only one value, no dated value, or the patient is on
    renal replacement (module docstring).
    """
    if case.patient.renal_replacement != "none":
        return []
    dated = sorted((s for s in case.patient.scr if s.time is not None and s.time <= case.as_of),
                   key=lambda s: (s.time, s.index))
    out: list[RenalStep] = []
    for s in dated:
        if out and abs(out[-1].scr_mg_dl - s.value) < 1e-12:
            continue
        out.append(RenalStep(float(s.time), s.value, s.field.removesuffix(".value")))  # type: ignore[arg-type]
    return out if len(out) > 1 else []


@dataclass(frozen=True)
class RenalSchedule:
    """A model's typical parameters piece by piece.

    Attributes:
        changes: (s - 1,) times h at which a new piece starts (the steps after the first).
        typicals: (s,) the model's typical values for each piece (``typicals[-1]``: now).
        steps: the SCr steps the pieces come from.
    """

    changes: tuple[float, ...]
    typicals: tuple[Typical, ...]
    steps: tuple[RenalStep, ...]

    @property
    def latest(self) -> Typical:
        return self.typicals[-1]


def schedule_for(model: PopModel, cov: Covariates, steps: list[RenalStep]) -> RenalSchedule | None:
    """The model's typical values at each step (None when there is no change to follow).

    Raises:
        NoEstimateError: when the model gives an invalid typical value at some step.
    """
    if len(steps) < 2:
        return None
    typicals = tuple(model.typical(dataclasses.replace(cov, scr=s.scr_mg_dl)) for s in steps)
    return RenalSchedule(tuple(s.time for s in steps[1:]), typicals, tuple(steps))


def intervals(schedule: RenalSchedule, clock: Clock) -> list[dict[str, Any]]:
    """JSON-ready: which CrCl (and typical CL) held over which interval, for the result and the note."""
    out = []
    for i, (step, typ) in enumerate(zip(schedule.steps, schedule.typicals)):
        until = schedule.steps[i + 1].time if i + 1 < len(schedule.steps) else None
        out.append({"from": None if i == 0 else clock.format(step.time),
                    "until": None if until is None else clock.format(until),
                    "scr_mg_dl": step.scr_mg_dl, "scr_field": step.field,
                    "crcl_ml_min": typ.covariates["crcl_cg"], "typical_cl_l_per_h": typ.params.cl})
    return out


def describe(schedule: RenalSchedule, clock: Clock) -> str:
    """One line: CrCl per interval, and that the forecast uses the latest."""
    parts = []
    for row in intervals(schedule, clock):
        span = ("until " + row["until"] if row["from"] is None else
                f"{row['from']} to {row['until']}" if row["until"] else f"from {row['from']}")
        parts.append(f"CrCl {row['crcl_ml_min']:.0f} mL/min (SCr {row['scr_mg_dl']:.2f} mg/dL) {span}")
    return "; ".join(parts) + "; the forecast and the regimen use the latest CrCl"


def build_course(schedule: RenalSchedule | None, typical: Typical,
                 sessions: list[tuple[float, float]] = (), session_cl_l_h: float = 0.0) -> Course | None:  # type: ignore[assignment]
    """The Bayesian fit's :class:`~tdmtui.core.estimation.posterior.Course`: renal pieces and, where a session
    removal is given (library or protocol ``dialysis.session_clearance_l_h``), each session as a piece
    with that clearance added. None when nothing changes."""
    from tdmtui.core.estimation.posterior import Course

    use_sessions = session_cl_l_h > 0 and len(sessions) > 0
    if schedule is None and not use_sessions:
        return None
    renal_t = list(schedule.changes) if schedule else []
    renal_p = list(schedule.typicals) if schedule else [typical]
    edges = sorted(set(renal_t) | ({t for s in sessions for t in s} if use_sessions else set()))
    params, added = [], []
    for j in range(len(edges) + 1):
        # a representative time inside piece j: (edges[j-1], edges[j]]
        t = edges[j] if j < len(edges) else (edges[-1] + 1.0 if edges else 0.0)
        k = sum(1 for c in renal_t if c < t)
        params.append(renal_p[k].params)
        inside = use_sessions and any(a < t <= b for a, b in sessions)
        added.append(session_cl_l_h if inside else 0.0)
    return Course(tuple(edges), tuple(params), tuple(added))


#: The classic methods and what renal function means for each.
_CLASSIC = {
    "two-level": "the levels alone give ke (CrCl does not enter)",
    "sawchuk-zaske": "the levels alone give ke (CrCl does not enter)",
    "least-squares": "the levels alone give ke (CrCl does not enter)",
    "one-level": "one level and the population volume give ke (CrCl does not enter)",
    "one-level-steady-state": "one level and the population volume give ke (CrCl does not enter)",
    "continuous-steady-state": "the steady-state level gives CL (CrCl does not enter)",
    "population": "the population ke comes from the latest CrCl",
}


def classic_note(ctx: MethodContext, method: str, est: Estimate) -> None:
    """Say, on a classic method's estimate, which CrCl held over which interval and what the method did
    with it (one ke over the whole history; the forecast uses the estimate as it stands now)."""
    if method not in _CLASSIC:
        return
    steps = steps_of(ctx.case)
    if not steps:
        return
    r = ctx.renal
    clock = ctx.case.clock
    floor = float(ctx.rules.value("renal.scr_floor_mg_dl"))
    rows = []
    for i, s in enumerate(steps):
        # Cockcroft-Gault is inversely proportional to SCr (pk-sources.md 1.1): the headline CrCl rescaled
        used = max(s.scr_mg_dl, floor)
        until = steps[i + 1].time if i + 1 < len(steps) else None
        rows.append({"from": None if i == 0 else clock.format(s.time),
                     "until": None if until is None else clock.format(until), "scr_mg_dl": s.scr_mg_dl,
                     "scr_field": s.field, "crcl_ml_min": r.crcl_ml_min * r.scr_used_mg_dl / used})
    times = [lv.time for lv in ctx.case.levels if lv.index in est.levels_used]
    fmt = lambda t: clock.format(t).replace("T", " ")  # noqa: E731
    when = (f"; the levels were drawn {fmt(min(times))} to {fmt(max(times))}: the estimate describes renal "
            "function then" if times and method != "population" else "")
    est.extra["renal_course"] = rows
    est.extra["renal_note"] = f"{_CLASSIC[method]}, one ke for the whole history{when}"


#: Methods that fit one ke to several levels.
_ONE_KE = ("two-level", "sawchuk-zaske", "least-squares")


def straddle_reason(ctx: MethodContext, method: str, est: Estimate) -> str | None:
    """Why a one-ke method's estimate is withheld: its levels lie either side of a change in renal
    function (an SCr that raised ``scr-unstable``), so no single ke describes them; else None."""
    if method not in _ONE_KE:
        return None
    times = [lv.time for lv in ctx.case.levels if lv.index in est.levels_used]
    if len(times) < 2:
        return None
    for t in ctx.renal.scr_change_times:
        if min(times) < t < max(times):
            return (f"the levels lie either side of a change in renal function (SCr at "
                    f"{ctx.case.clock.format(t)}): one ke cannot describe both; the Bayesian fit follows each SCr")
    return None
