"""Intermittent haemodialysis as events of the course: sessions, the doses and levels beside them.

The case's optional ``dialysis`` object (docs/dialysis.md)::

    "dialysis": {
      "sessions": [{"start": "...", "end": "...", "dialyser": "high-flux"}],   # done, up to as_of
      "planned":  [{"start": "...", "end": "..."}]                             # to come, after as_of
    }

A session that ends before it starts, overlaps another, lies after ``as_of``
(recorded) or before it (planned), or runs outside the library's
``dialysis.session_h`` is an input error naming the field
(``dialysis.sessions[1].end``). Sessions need ``patient.renal_replacement`` =
``ihd``. Without ``planned`` sessions the plan repeats the last seven days of
recorded sessions a week later (a weekly pattern), and says so.

What the course knows: for each dose, whether it was given during a session or
after one (before the next); for each level, whether it was drawn before a
session (pre-dialysis), during one, or within ``dialysis.redistribution_h``
after one ends (the concentration is still rebounding from the tissues): the
last two are set aside unless the file keeps them (``"use": true`` written on
the level).

Removal during a session enters the fit only as library or protocol data with
its source (``dialysis.session_clearance_l_h``, added to the clearance while a
session runs). No value for vancomycin or the aminoglycosides is confirmed in
pk-sources.md, so the library gives none and the fitted model (Goti 2018's
dialysis flag, a time-fixed effect) stands for the sessions.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

from tdmtui.core.errors import InputError

if TYPE_CHECKING:
    from tdmtui.core.input.casetypes import Case, Level
    from tdmtui.core.input.clock import Clock
    from tdmtui.core.library import Rules

CODES = {
    "level-post-dialysis": "a level drawn soon after a dialysis session (redistribution): set aside unless kept",
    "level-during-dialysis": "a level drawn during a dialysis session: set aside unless kept",
    "dialysis-kept-level": "a level drawn during or soon after a session, kept by the user",
    "dialysis-projected": "no planned sessions given: the last week's sessions are repeated a week later",
}
KEYS = ("start", "end", "dialyser")


@dataclass(frozen=True)
class Session:
    """One session, h since the epoch; ``field`` is its path in the file."""

    index: int
    start: float
    end: float
    dialyser: str
    field: str


@dataclass(frozen=True)
class Dialysis:
    sessions: tuple[Session, ...] = ()
    planned: tuple[Session, ...] = ()


def times_of(raw: dict[str, Any]) -> list[tuple[str, Any]]:
    """(field, text) of every session time, for the case clock."""
    d = raw.get("dialysis")
    out: list[tuple[str, Any]] = []
    if isinstance(d, dict):
        for part in ("sessions", "planned"):
            rows = d.get(part)
            if isinstance(rows, list):
                for i, row in enumerate(rows):
                    if isinstance(row, dict):
                        out += [(f"dialysis.{part}[{i}].{k}", row[k]) for k in ("start", "end") if k in row]
    return out


def _session(row: Any, field: str, clock: Clock, rules: Rules) -> Session:
    if not isinstance(row, dict):
        raise InputError(field, "expected an object with start and end")
    for k in row:
        if k not in KEYS:
            raise InputError(f"{field}.{k}", "unknown key (start, end, dialyser)")
    for k in ("start", "end"):
        if k not in row:
            raise InputError(f"{field}.{k}", "required key is missing")
    start, end = clock.parse(row["start"], f"{field}.start"), clock.parse(row["end"], f"{field}.end")
    if end <= start:
        raise InputError(f"{field}.end", "the session ends before it starts")
    lo, hi = (float(x) for x in rules.value("dialysis.session_h"))
    if not lo <= end - start <= hi:
        raise InputError(f"{field}.end", f"a session of {end - start:g} h is outside {lo:g}-{hi:g} h "
                                         "(check the date and time of its end)")
    dialyser = row.get("dialyser", "")
    if not isinstance(dialyser, str):
        raise InputError(f"{field}.dialyser", "expected text (e.g. high-flux)")
    return Session(int(field.rsplit("[", 1)[1].rstrip("]")), start, end, dialyser, field)


def _rows(d: dict[str, Any], part: str, clock: Clock, rules: Rules) -> list[Session]:
    rows = d.get(part, [])
    if not isinstance(rows, list):
        raise InputError(f"dialysis.{part}", "expected a list of sessions")
    out = [_session(r, f"dialysis.{part}[{i}]", clock, rules) for i, r in enumerate(rows)]
    return sorted(out, key=lambda s: (s.start, s.index))


def _no_overlap(rows: list[Session]) -> None:
    for a, b in zip(rows, rows[1:]):
        if b.start < a.end:
            later = b if b.index > a.index else a
            other = a if later is b else b
            raise InputError(f"{later.field}.start", f"the session overlaps {other.field} "
                                                     f"({other.field} runs until its end)")


def parse_dialysis(raw: Any, clock: Clock, as_of: float, renal_replacement: str, rules: Rules) -> Dialysis | None:
    """The case's ``dialysis`` object, checked (module docstring); None when absent."""
    if raw is None:
        return None
    if not isinstance(raw, dict):
        raise InputError("dialysis", "expected an object with sessions (and optionally planned)")
    for k in raw:
        if k not in ("sessions", "planned"):
            raise InputError(f"dialysis.{k}", "unknown key (sessions, planned)")
    done, planned = _rows(raw, "sessions", clock, rules), _rows(raw, "planned", clock, rules)
    if (done or planned) and renal_replacement != "ihd":
        raise InputError("patient.renal_replacement", f"dialysis sessions are recorded but renal replacement is "
                                                      f"{renal_replacement!r}: set it to 'ihd'")
    for s in done:
        if s.start > as_of:
            raise InputError(f"{s.field}.start", "a recorded session starts after the assessment time (as_of); "
                                                 "put sessions to come under dialysis.planned")
        if s.end > as_of:
            raise InputError(f"{s.field}.end", "a recorded session ends after the assessment time (as_of): "
                                               "assess after it ends, or give its end as planned")
    for s in planned:
        if s.start < as_of:
            raise InputError(f"{s.field}.start", "a planned session starts before the assessment time (as_of); "
                                                 "record it under dialysis.sessions")
    _no_overlap(done)
    _no_overlap(planned)
    if done and planned and planned[0].start < done[-1].end:
        raise InputError(f"{planned[0].field}.start", f"the session overlaps {done[-1].field}")
    return Dialysis(tuple(done), tuple(planned))


def recorded(case: Case) -> tuple[Session, ...]:
    d = case.dialysis
    return d.sessions if d else ()


def fit_sessions(case: Case, rules: Rules) -> tuple[list[tuple[float, float]], float]:
    """Session spans (start, end) h and the clearance added while one runs, L/h (0: none given)."""
    cl = rules.get("dialysis.session_clearance_l_h")
    return [(s.start, s.end) for s in recorded(case)], float(cl) if cl else 0.0


def schedule(case: Case, rules: Rules) -> tuple[list[tuple[float, float]], bool]:
    """The sessions the plan doses after: (start, end) within ``dialysis.plan_days``; True when projected."""
    d = case.dialysis
    if d is None:
        return [], False
    horizon = case.as_of + 24.0 * float(rules.value("dialysis.plan_days"))
    if d.planned:
        return [(s.start, s.end) for s in d.planned if s.start <= horizon], False
    week = [s for s in d.sessions if s.start > case.as_of - 168.0]
    out = []
    for k in (1, 2):
        out += [(s.start + 168.0 * k, s.end + 168.0 * k) for s in week]
    return [s for s in out if s[0] >= case.as_of and s[0] <= horizon], True


def session_near(case: Case, t: float, after_h: float) -> tuple[str, Session] | None:
    """("during" | "after", session) when t lies in a session or within ``after_h`` after one."""
    for s in recorded(case):
        if s.start < t < s.end:
            return "during", s
        if s.end <= t < s.end + after_h:
            return "after", s
    return None


def level_flag(case: Case, level: Level, rules: Rules) -> tuple[str, str] | None:
    """Why a level is set aside for a session beside it, or None (kept or clear of every session)."""
    if not recorded(case):
        return None
    near = session_near(case, level.time, float(rules.value("dialysis.redistribution_h")))
    if near is None or kept(case, level):
        return None
    how, s = near
    if how == "during":
        return "level-during-dialysis", f"drawn during the session {s.field} (set aside unless kept)"
    window = float(rules.value("dialysis.redistribution_h"))
    return ("level-post-dialysis", f"drawn {level.time - s.end:.1f} h after the session {s.field} ended, inside "
                                   f"the {window:g} h of redistribution (set aside unless kept)")


def kept(case: Case, level: Level) -> bool:
    """True when the file writes ``"use": true`` on the level (keep it despite a session beside it)."""
    rows = case.raw.get("levels")
    row = rows[level.index] if isinstance(rows, list) and level.index < len(rows) else None
    return isinstance(row, dict) and row.get("use") is True


def dose_relations(case: Case) -> list[dict[str, Any]]:
    """For each dose: given during a session, after one (and which), or with no session before it."""
    out = []
    sessions = recorded(case)
    for d in case.doses:
        rel, which = "none", None
        for s in sessions:
            if s.start < d.start < s.end or (d.start <= s.start < d.end):
                rel, which = "during", s
                break
            if s.end <= d.start:
                rel, which = "after", s
        out.append({"dose": f"doses[{d.index}]", "relation": rel, "session": which.field if which else None,
                    "hours_after_end": round(d.start - which.end, 2) if which and rel == "after" else None})
    return out


def level_relations(case: Case) -> list[dict[str, Any]]:
    """For each level, the session it was drawn during, or the nearer of the last one ended before it and
    the next one started after it, with the hours between (``relation`` none without a session)."""
    out = []
    sessions = recorded(case)
    for lv in sorted(case.levels, key=lambda x: x.index):
        rel: tuple[str, Session | None, float | None] = ("none", None, None)
        during = [s for s in sessions if s.start < lv.time < s.end]
        if during:
            rel = ("during", during[0], None)
        else:
            ended = [(lv.time - s.end, s) for s in sessions if s.end <= lv.time]
            coming = [(s.start - lv.time, s) for s in sessions if s.start >= lv.time]
            near = min([("after", *x) for x in ended] + [("before", *x) for x in coming],
                       key=lambda x: (x[1], x[0]), default=None)
            if near is not None:
                rel = (near[0], near[2], round(near[1], 2))
        out.append({"level": f"levels[{lv.index}]", "relation": rel[0],
                    "session": rel[1].field if rel[1] else None, "session_number": rel[1].index + 1 if rel[1] else None,
                    "hours": rel[2]})
    return out


def summary(case: Case, rules: Rules) -> dict[str, Any] | None:
    """JSON-ready: sessions, the doses beside them, the plan's sessions (the result's ``dialysis``)."""
    d = case.dialysis
    if d is None:
        return None
    plan, projected = schedule(case, rules)
    cl = rules.get("dialysis.session_clearance_l_h")
    return {
        "sessions": [{"field": s.field, "start": case.clock.format(s.start), "end": case.clock.format(s.end),
                      "dialyser": s.dialyser} for s in d.sessions],
        "doses": dose_relations(case),
        "levels": level_relations(case),
        "plan_sessions": [{"start": case.clock.format(a), "end": case.clock.format(b)} for a, b in plan],
        "plan_sessions_projected": projected,
        "session_removal": ({"clearance_l_per_h": float(cl), "source": rules.citation("dialysis.session_clearance_l_h")}
                            if cl else None),
        "session_removal_note": None if cl else (
            "no intradialytic clearance is confirmed in the drug library; the fitted model's dialysis effect "
            "stands for the sessions"),
    }


_RRT_WORDS = {"crrt": "continuous renal replacement therapy", "pd": "peritoneal dialysis"}


def renal_replacement_alerts(case: Case, rules: Rules) -> list[Any]:
    """The ``renal-replacement`` warning: a caution when a dose-after-session plan can be made
    (intermittent haemodialysis, sessions recorded, a pre-dialysis target in the library), else a stop."""
    from tdmtui.core.alerts import Alert

    rrt = case.patient.renal_replacement
    if rrt == "none":
        return []
    base = (f"renal replacement ({rrt}): Cockcroft-Gault-based and two-level methods do not apply")
    if rrt in _RRT_WORDS:
        return [Alert("renal-replacement", "stop", "patient.renal_replacement",
                      f"{_RRT_WORDS[rrt]} ({rrt}): this tool does not model it and proposes no regimen; drug removal "
                      "depends on the machine settings and the time on circuit; follow the local protocol and dose "
                      "by measured levels")]
    if "dialysis.pre_dialysis_target_mg_l" not in rules:
        return [Alert("renal-replacement", "stop", "patient.renal_replacement",
                      f"{base} and no regimen is proposed: the drug library holds no pre-dialysis target for "
                      f"{case.drug}; follow the local dialysis protocol")]
    if not recorded(case):
        return [Alert("renal-replacement", "stop", "patient.renal_replacement",
                      f"{base} and no regimen is proposed; follow the local dialysis protocol (an estimate on a "
                      "population model built with such patients, where one is offered, is shown under methods for "
                      "reference). Record the sessions (dialysis.sessions) for a dose after each session")]
    return [Alert("renal-replacement", "caution", "patient.renal_replacement",
                  f"intermittent haemodialysis: Cockcroft-Gault-based and two-level methods do not apply; the estimate "
                  "rests on a population model built with haemodialysis patients, fitted to pre-dialysis levels, and "
                  "the proposal is a dose after each session aimed at the pre-dialysis target; follow the local "
                  "dialysis protocol")]
