"""The dose course judged as a whole: timing checks, usable levels, current regimen.

Every check raises an :class:`Alert` with a stable code (listed in
:data:`CODES`); windows and plausible ranges come from the drug library.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from tdmtui.core.alerts import Alert
from tdmtui.core.input.casetypes import Case, Dose, Level
from tdmtui.core.library import Rules

#: Stable warning codes raised here, with their meaning.
CODES = {
    "level-in-infusion": "a level drawn while an infusion was running (kept out of fits)",
    "level-in-distribution": "a level inside the post-distribution window (kept out of one-compartment fits)",
    "level-before-first-dose": "a quantified level before the first recorded dose: the history is incomplete",
    "level-zero": "a level of 0 is not a quantified result",
    "level-implausible": "a level outside the drug's plausible range",
    "level-set-aside": "a level marked use: false",
    "level-censored": "a level below or above the assay's limits",
    "levels-rising": "levels that rise with no dose between",
    "doses-overlap": "infusions that overlap",
    "dose-implausible": "a dose outside the drug's plausible mg/kg range",
    "duplicate-dose": "two identical dose rows",
    "duplicate-level": "two identical level rows",
    "after-as-of": "a dose or level after the as_of time",
    "clock-change": "a course that may span a clock change without offsets or timezone",
    "no-current-regimen": "no schedule and fewer than two maintenance doses",
    "nonstandard-interval": "the current interval is not a standard one",
    "timing-not-actual": "a dose or level time marked scheduled or uncertain",
}


@dataclass(frozen=True)
class CurrentRegimen:
    """The standing order as the case gives it (case-format.md "Current regimen").

    Attributes:
        dose_mg: amount per dose, mg (for a continuous infusion: mg per interval).
        interval_h: interval between starts, h.
        infusion_h: infusion duration, h (== interval for a continuous infusion).
        source: where it came from (``schedule`` or the last maintenance doses).
    """

    dose_mg: float
    interval_h: float
    infusion_h: float
    source: str = ""


def _alert(code: str, severity: str, field: str, message: str) -> Alert:
    return Alert(code, severity, field, message)


def level_exclusion(case: Case, level: Level, rules: Rules) -> tuple[str, str] | None:
    """Why a level is kept out of one-compartment fits: ``(code, text)`` or None if usable."""
    if not level.use:
        return "level-set-aside", f"set aside: {level.reason}"
    if level.below_loq or level.above_uloq:
        return "level-censored", "below the assay limit" if level.below_loq else "above the assay limit"
    if level.conc <= 0:
        return "level-zero", "a level of 0 is not quantified"
    if not case.doses or level.time <= case.doses[0].start:
        return "level-before-first-dose", "drawn before the first recorded dose"
    from tdmtui.core.input.dialysis import level_flag

    session = level_flag(case, level, rules)
    if session is not None:
        return session
    window = float(rules.value("windows.post_distribution_h"))
    start, end, dur = _dose_times(case)
    t = level.time
    inside = (start < t) & (t < end)
    if np.any(inside & (dur < _continuous_h(rules))):
        return "level-in-infusion", "drawn while an infusion was running"
    if np.any(inside):  # only continuous infusions run: the level is a steady-state one
        return None
    after = np.flatnonzero((end <= t) & (t < end + window) & (start < t))
    if after.size:
        d = case.doses[int(after[0])]
        return "level-in-distribution", f"drawn {60 * (level.time - d.end):.0f} min after the end of infusion, inside the {window:g} h distribution window"
    return None


_TIMES: dict[int, tuple[tuple, np.ndarray, np.ndarray, np.ndarray]] = {}


def _dose_times(case: Case) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Start, end and duration of every dose, h, in file order (kept for the last few dose lists: the level checks
    run for every level and every shifted copy of a case, and must stay linear in the doses)."""
    hit = _TIMES.get(id(case.doses))
    if hit is not None and hit[0] is case.doses:
        return hit[1], hit[2], hit[3]
    start = np.array([d.start for d in case.doses], dtype=float)
    end = np.array([d.end for d in case.doses], dtype=float)
    dur = np.array([d.duration for d in case.doses], dtype=float)
    if len(_TIMES) >= 16:
        _TIMES.clear()
    _TIMES[id(case.doses)] = (case.doses, start, end, dur)
    return start, end, dur


def _continuous_h(rules: Rules) -> float:
    return float(rules.value("windows.continuous_min_infusion_h"))


def is_continuous(dose: Dose, rules: Rules) -> bool:
    """True for an infusion long enough to be a continuous infusion (library ``windows.continuous_min_infusion_h``)."""
    return dose.duration >= float(rules.value("windows.continuous_min_infusion_h"))


def running_continuous(case: Case, level: Level, rules: Rules) -> Dose | None:
    """The continuous infusion running when the level was drawn, or None."""
    start, end, dur = _dose_times(case)
    hit = np.flatnonzero((start < level.time) & (level.time < end) & (dur >= _continuous_h(rules)))
    return case.doses[int(hit[0])] if hit.size else None


def usable_levels(case: Case, rules: Rules) -> list[Level]:
    """Levels fit for one-compartment methods (case-format.md "usable level"), by time."""
    return [lv for lv in case.levels if lv.time <= case.as_of and level_exclusion(case, lv, rules) is None]


def _timing_alerts(case: Case, rules: Rules) -> list[Alert]:
    out: list[Alert] = []
    window = float(rules.value("windows.post_distribution_h"))
    for lv in case.levels:
        f = f"levels[{lv.index}]"
        why = level_exclusion(case, lv, rules)
        if why is None:
            continue
        code, text = why
        if code == "level-in-infusion":
            out.append(_alert(code, "caution", f + ".time", f"level {lv.conc:g} mg/L was {text}; it is kept out of every fit (was the next dose already running?)"))
        elif code == "level-in-distribution":
            out.append(_alert(code, "caution", f + ".time", f"level {lv.conc:g} mg/L {text} (library: {rules.citation('windows.post_distribution_h')}); kept out of one-compartment fits"))
        elif code == "level-before-first-dose" and lv.quantified and lv.conc > 0 and lv.use:
            out.append(_alert(code, "caution", f + ".time", f"level {lv.conc:g} mg/L was drawn before the first recorded dose: drug was on board, so the dose history is incomplete"))
        elif code == "level-zero":
            out.append(_alert(code, "caution", f + ".conc", "a level of 0 mg/L is not a quantified result: mark it below_loq with the assay's limit"))
        elif code == "level-set-aside":
            out.append(_alert(code, "info", f + ".use", f"level {lv.conc:g} mg/L {text}"))
        elif code == "level-censored":
            out.append(_alert(code, "info", f + ".conc", f"level {text} ({lv.conc:g} mg/L): the Bayesian fit uses it as a bound "
                                                         "(the probability of lying beyond the limit), never as the value; the "
                                                         "one-compartment methods state the bound it implies on ke"))
    del window
    return out


def _rising(case: Case, rules: Rules) -> list[Alert]:
    out: list[Alert] = []
    lv = [x for x in case.levels if x.use and x.quantified and x.conc > 0 and level_exclusion(case, x, rules) is None]
    for a, b in zip(lv, lv[1:]):
        dose_between = any(a.time < d.start + d.duration and d.start < b.time for d in case.doses)
        if not dose_between and b.conc > a.conc * 1.02:
            out.append(_alert("levels-rising", "stop", f"levels[{b.index}].conc",
                              f"level rose from {a.conc:g} to {b.conc:g} mg/L with no dose between: check times, sample labels and missed dose entries"))
    return out


def _dose_alerts(case: Case, rules: Rules, dosing_weight_kg: float) -> list[Alert]:
    out: list[Alert] = []
    lo, hi = rules.value("plausible.single_dose_mg_per_kg")
    for d in case.doses:
        per_kg = d.amount / dosing_weight_kg
        if not lo <= per_kg <= hi:
            out.append(_alert("dose-implausible", "stop", f"doses[{d.index}].amount",
                              f"{d.amount:g} mg is {per_kg:.2f} mg/kg of dosing weight, outside {lo:g}-{hi:g} mg/kg: check for a slipped decimal or a unit (mcg/mg, g/mg)"))
    seen: dict[tuple[float, float, float], int] = {}
    for d in case.doses:
        key = (round(d.start, 6), round(d.duration, 6), round(d.amount, 6))
        if key in seen:
            out.append(_alert("duplicate-dose", "caution", f"doses[{d.index}]",
                              f"same start, duration and amount as doses[{seen[key]}]: a likely double entry (both are kept)"))
        else:
            seen[key] = d.index
    for a, b in zip(case.doses, case.doses[1:]):
        if b.start < a.end - 1e-9 and (round(a.start, 6), round(a.duration, 6), round(a.amount, 6)) != (round(b.start, 6), round(b.duration, 6), round(b.amount, 6)):
            out.append(_alert("doses-overlap", "caution", f"doses[{b.index}].start",
                              f"starts before doses[{a.index}] has finished: overlapping infusions (check the times)"))
    return out


def _level_range_alerts(case: Case, rules: Rules) -> list[Alert]:
    out: list[Alert] = []
    lo, hi = rules.value("plausible.level_mg_l")
    seen: dict[tuple[float, float], int] = {}
    for lv in case.levels:
        if not lo <= lv.conc <= hi:
            out.append(_alert("level-implausible", "stop", f"levels[{lv.index}].conc",
                              f"{lv.conc:g} mg/L is outside the plausible {lo:g}-{hi:g} mg/L for {case.drug}: check the unit and the sample"))
        key = (round(lv.time, 6), round(lv.conc, 6))
        if key in seen:
            out.append(_alert("duplicate-level", "caution", f"levels[{lv.index}]", f"same time and value as levels[{seen[key]}]: a likely double entry"))
        else:
            seen[key] = lv.index
    return out


def _other_alerts(case: Case) -> list[Alert]:
    out: list[Alert] = []
    for d in case.doses:
        if d.start > case.as_of:
            out.append(_alert("after-as-of", "caution", f"doses[{d.index}].start", "this dose starts after as_of: it is left out of the estimate"))
        if d.timing != "actual":
            out.append(_alert("timing-not-actual", "info", f"doses[{d.index}].timing", f"dose time is {d.timing}: the estimate is only as good as the times"))
    for lv in case.levels:
        if lv.time > case.as_of:
            out.append(_alert("after-as-of", "caution", f"levels[{lv.index}].time", "this level is after as_of: it is left out"))
        if lv.timing != "actual":
            out.append(_alert("timing-not-actual", "info", f"levels[{lv.index}].timing", f"level time is {lv.timing}: see the timing sensitivity"))
    times = [d.start for d in case.doses] + [lv.time for lv in case.levels]
    if times and case.clock.may_span_clock_change(min(times), max(times + [case.as_of])):
        out.append(_alert("clock-change", "caution", "timezone",
                          "the course may span a daylight-saving change and the times carry no offset or timezone: give a timezone"))
    return out


def validate_course(case: Case, rules: Rules, dosing_weight_kg: float) -> list[Alert]:
    """Every course check, in a stable order."""
    return (_dose_alerts(case, rules, dosing_weight_kg) + _level_range_alerts(case, rules)
            + _timing_alerts(case, rules) + _rising(case, rules) + _other_alerts(case))


def current_regimen(case: Case, rules: Rules) -> tuple[CurrentRegimen | None, list[Alert]]:
    """The standing order: ``schedule`` where given, else the last two maintenance doses."""
    alerts: list[Alert] = []
    maint = [d for d in case.doses if d.kind == "maintenance" and d.start <= case.as_of]
    standard = [float(x) for x in rules.value("regimen.intervals_h")]
    s = case.schedule
    if s is not None:
        dose = s.dose if s.dose is not None else (maint[-1].amount if maint else None)
        tinf = s.duration if s.duration is not None else (maint[-1].duration if maint else None)
        if dose is None or tinf is None:
            alerts.append(_alert("no-current-regimen", "caution", "schedule", "the schedule gives no dose or duration and no maintenance dose is recorded"))
            return None, alerts
        cur = CurrentRegimen(dose, s.interval, tinf, "schedule")
    elif len({round(d.start, 6) for d in maint}) >= 2:
        # a row entered twice has the same start: the interval is to the last earlier start
        earlier = [d for d in maint if d.start < maint[-1].start - 1e-9]
        tau = maint[-1].start - earlier[-1].start
        cur = CurrentRegimen(maint[-1].amount, tau, maint[-1].duration, "last two maintenance doses")
    else:
        alerts.append(_alert("no-current-regimen", "caution", "schedule",
                             "no schedule and fewer than two maintenance doses: no current regimen to predict"))
        return None, alerts
    if all(abs(cur.interval_h - x) > 1e-6 for x in standard):
        alerts.append(_alert("nonstandard-interval", "info", "schedule.interval" if s else f"doses[{maint[-1].index}].start",
                             f"current interval {cur.interval_h:g} h is not one of the standard intervals ({', '.join(f'{x:g}' for x in standard)} h)"))
    return cur, alerts
