"""The proposal on intermittent haemodialysis: a dose after each session, aimed at the pre-dialysis target.

Schedule: the sessions to come (the case's ``dialysis.planned``, else the last
week's sessions repeated a week later; :func:`tdmtui.core.input.dialysis.schedule`)
within ``dialysis.plan_days``. A dose is given at the END of each session but
the last; each is chosen, in turn, as the practical dose (``regimen.rounding_mg``
steps up to ``regimen.max_single_dose_mg``, infusion time by the drug's rate
rules) whose predicted level just before the NEXT session lies nearest the
middle of the library's pre-dialysis band (vancomycin 15-20 mg/L, 2020
consensus guideline, pk-sources.md 3.1); "no dose" is a candidate when the
level is predicted above the band without one. Gaps of 48 and 72 h get
different doses that way.

Predictions: the fitted model's latest parameters (Goti 2018's dialysis flag
stands for the sessions) plus, only where the library or local protocol gives
one with its source, ``dialysis.session_clearance_l_h`` added during each
session (:mod:`tdmtui.core.models.timevarying`: closed form per piece).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from tdmtui.core.alerts import Alert
from tdmtui.core.models import DoseArrays, PKParams
from tdmtui.core.regimen.types import Plan, RegimenInput

MODE = "dialysis"


@dataclass(frozen=True)
class SessionPlan:
    """What the design is given about the sessions (h since the epoch)."""

    recorded: tuple[tuple[float, float], ...]
    upcoming: tuple[tuple[float, float], ...]
    projected: bool
    session_cl_l_h: float = 0.0


def predict(params: PKParams, doses: DoseArrays, t: np.ndarray, sessions: list[tuple[float, float]],
            session_cl: float) -> np.ndarray:
    """Concentrations mg/L at t with the session clearance added during each session (when given)."""
    from tdmtui.core.models import concentration

    if session_cl <= 0 or not sessions:
        return np.atleast_1d(concentration(params, doses, t))
    from tdmtui.core.models.timevarying import ParamSchedule, tv_concentration

    edges = sorted({x for s in sessions for x in s})
    pieces = []
    for j in range(len(edges) + 1):
        probe = edges[j] if j < len(edges) else edges[-1] + 1.0
        on = any(a < probe <= b for a, b in sessions)
        pieces.append(PKParams(params.cl + (session_cl if on else 0.0), params.v1, params.q, params.v2))
    return np.atleast_1d(tv_concentration(ParamSchedule(tuple(edges), tuple(pieces)), doses, t))


def _grid(rules: Any) -> np.ndarray:
    step = float(rules.value("regimen.rounding_mg"))
    top = float(rules.value("regimen.max_single_dose_mg"))
    return np.concatenate([[0.0], np.arange(step, top + 1e-9, step)])


def _choose(inp: RegimenInput, doses: DoseArrays, at: float, pre_t: float, band: tuple[float, float],
            sessions: list[tuple[float, float]], cl: float) -> tuple[float, float, float]:
    """(dose mg, infusion h, predicted pre-dialysis level) for the dose at ``at`` (module docstring)."""
    from tdmtui.core.regimen.grid import infusion_time

    assert inp.params is not None
    mid = 0.5 * (band[0] + band[1])
    best: tuple[float, float, float, float] | None = None
    for d in _grid(inp.rules):
        tinf = infusion_time(d, inp.rules) if d > 0 else 0.0
        trial = doses.concat(DoseArrays.from_lists([at], [tinf], [d])) if d > 0 else doses
        c = float(predict(inp.params, trial, np.array([pre_t]), sessions, cl)[0])
        score = abs(c - mid)
        if best is None or score < best[0] - 1e-9:
            best = (score, d, tinf, c)
    assert best is not None
    return best[1], best[2], best[3]


def design(inp: RegimenInput, sp: SessionPlan, targets_dict: dict[str, Any], sources: dict[str, Any]) -> Plan:
    """Doses after each upcoming session (module docstring)."""
    rules, clock = inp.rules, inp.clock
    lo_hi = [float(x) for x in rules.value("dialysis.pre_dialysis_target_mg_l")]
    band = (lo_hi[0], lo_hi[1])
    key = "dialysis.pre_dialysis_target_mg_l"
    targets = {"mode": MODE, "mic_mg_per_l": targets_dict.get("mic_mg_per_l"), "pre_dialysis_mg_per_l": list(band),
               "sources": {"pre": _src(rules, key)}, "citations": {"pre": rules.citation(key)}}
    plan = Plan(regimen=None, targets=targets, sources={**sources, "target": _src(rules, key),
                                                        "pre_dialysis_target": _src(rules, key)})
    if inp.params is None:
        plan.alerts.append(Alert("regimen-no-estimate", "caution", "", "no estimate of the patient's kinetics: "
                                                                      "no regimen designed"))
        return plan
    up = [s for s in sp.upcoming if s[0] >= inp.as_of]
    if len(up) < 2:
        plan.alerts.append(Alert("dialysis-no-schedule", "caution", "dialysis.planned",
                                 "fewer than two sessions to come are known: give the planned sessions "
                                 "(dialysis.planned) for a dose after each session"))
        return plan
    all_sessions = list(sp.recorded) + up
    doses = inp.history
    rows: list[dict[str, Any]] = []
    first_pre = float(predict(inp.params, doses, np.array([up[0][0]]), all_sessions, sp.session_cl_l_h)[0])
    for s0, s1, at, n0 in dose_points(inp, sp, up):
        d, tinf, c = _choose(inp, doses, at, n0, band, all_sessions, sp.session_cl_l_h)
        if d > 0:
            doses = doses.concat(DoseArrays.from_lists([at], [tinf], [d]))
        rows.append({"session_start": clock.format(s0), "session_end": clock.format(s1), "dose_mg": d,
                     "infusion_h": tinf, "dose_at": clock.format(at) if d > 0 else None,
                     "pre_dialysis_next_mg_per_l": c, "next_session_start": clock.format(n0),
                     "on_target": band[0] - 1e-9 <= c <= band[1] + 1e-9})
    given = [r for r in rows if r["dose_mg"] > 0]
    plan.doses = DoseArrays(doses.start[len(inp.history):], doses.duration[len(inp.history):],
                            doses.amount[len(inp.history):])
    plan.regimen = _shape(inp, up, rows, given, band, first_pre, sp)
    if any(not r["on_target"] for r in rows):
        plan.alerts.append(Alert("dialysis-off-target", "caution", "target",
                                 "no practical dose puts every predicted pre-dialysis level in "
                                 f"{band[0]:g}-{band[1]:g} mg/L: review the sessions, the caps and the estimate"))
    if sp.projected:
        plan.alerts.append(Alert("dialysis-projected", "info", "dialysis.planned",
                                 "no planned sessions given: the last week's sessions are taken to repeat a week "
                                 "later; check the dialysis unit's schedule"))
    return plan


def dose_points(inp: RegimenInput, sp: SessionPlan, up: list[tuple[float, float]]) -> list[tuple[float, ...]]:
    """(session start, session end, dose time, next pre-dialysis time) h for each dose to plan.

    The session just ended with no dose since: a dose now (``as_of``), aimed at the first session to come;
    then one at the end of each session to come but the last, aimed at the session after it.
    """
    out: list[tuple[float, ...]] = []
    if sp.recorded:
        s0, s1 = sp.recorded[-1]
        given_since = bool(len(inp.history)) and float(inp.history.start[-1]) >= s1 - 1e-9
        if s1 <= inp.as_of and not given_since and (not up or up[0][0] > inp.as_of):
            out.append((s0, s1, inp.as_of, up[0][0]))
    out += [(a, b, b, n) for (a, b), (n, _) in zip(up, up[1:])]
    return out


def _src(rules: Any, key: str) -> str:
    return rules.source(key) if key in rules else "library"


def _shape(inp: RegimenInput, up: list, rows: list, given: list, band: tuple, first_pre: float,
           sp: SessionPlan) -> dict[str, Any]:
    """The contract's regimen object for the dialysis mode (docs/dialysis.md)."""
    clock = inp.clock
    big = max(given, key=lambda r: r["dose_mg"]) if given else None
    gaps = [b[1] - a[1] for a, b in zip(up, up[1:])]
    first = given[0] if given else None
    return {
        "action": "dose-after-dialysis", "mode": MODE,
        # dose_mg / interval_h: the largest planned dose and the shortest gap between doses, for the limits check
        "dose_mg": big["dose_mg"] if big else 0.0, "interval_h": min(gaps) if gaps else None,
        "infusion_h": big["infusion_h"] if big else 0.0,
        "daily_dose_mg": None, "next_dose_at": first["dose_at"] if first else None, "hold_until": None,
        "loading_dose": None, "alternatives": [],
        "predicted": {"pre_dialysis_next_session_mg_per_l": first_pre,
                      "pre_dialysis_mg_per_l": [r["pre_dialysis_next_mg_per_l"] for r in rows]},
        "after_sessions": rows, "pre_dialysis_target_mg_per_l": list(band),
        "sessions_projected": sp.projected,
        "next_levels": [{"kind": "pre-dialysis", "at": rows[0]["next_session_start"],
                         "dose": "before the session after the first planned dose"}] if rows else [],
        "choice_rule": ("after each session the practical dose whose predicted level before the next session lies "
                        "nearest the middle of the pre-dialysis band (regimen/dialysis.py)"),
    }


def words(reg: dict[str, Any]) -> list[str]:
    """Plain sentences for the note and the summary."""
    band = reg.get("pre_dialysis_target_mg_per_l") or ["-", "-"]
    pre = (reg.get("predicted") or {}).get("pre_dialysis_next_session_mg_per_l")
    out = [f"Proposed: a dose after each haemodialysis session, aimed at a pre-dialysis level of "
           f"{band[0]:g}-{band[1]:g} mg/L" + (f" (with no further dose, {pre:.1f} mg/L is predicted before the next session)" if pre is not None
                                               else "") + "."]
    for r in reg.get("after_sessions", []):
        what = (f"{r['dose_mg']:.0f} mg over {r['infusion_h']:g} h at {r['dose_at'].replace('T', ' ')}"
                if r["dose_mg"] > 0 else "no dose")
        out.append(f"After the session ending {r['session_end'].replace('T', ' ')}: {what}; predicted "
                   f"pre-dialysis level {r['pre_dialysis_next_mg_per_l']:.1f} mg/L before "
                   f"{r['next_session_start'].replace('T', ' ')}.")
    if reg.get("sessions_projected"):
        out.append("Sessions to come taken as last week's repeated; check the unit's schedule.")
    out.append("Measure a pre-dialysis level before sessions and redose by it.")
    return out
