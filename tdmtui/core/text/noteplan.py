"""The chart note's estimate, regimen, monitoring and warnings sections.

Written for clinicians: the method in a sentence, the estimate, the
working a reviewer can check by hand (:mod:`tdmtui.core.text.notework`), the
regimen the note gives (chosen in review, else the proposal) with its own
hold, loading dose, next dose and levels, and the warnings with case paths
put into words.
"""

from __future__ import annotations

import re
from typing import TYPE_CHECKING, Any

from tdmtui.core.input import chosen as ch
from tdmtui.core.text import notefmt as f
from tdmtui.core import registry
from tdmtui.core.text.notework import working_lines
from tdmtui.core.text.notewarn import warning_lines  # noqa: F401 - the note's sections, from one module

if TYPE_CHECKING:
    from tdmtui.core.compute import Outcome

#: Each method in one sentence, for the note: the method registry's descriptions.
METHOD_TEXT = {c: registry.description(c) for c in registry.CHOICES if c != "auto"}


def model_label(e: dict[str, Any]) -> str:
    """A model's short name, e.g. ``Thomson 2009``."""
    model = e.get("model") or {}
    name = str(model.get("name") or model.get("id") or "")
    return name.split(" (")[0]


def method_label(name: str, e: dict[str, Any]) -> str:
    """One naming of a method everywhere: ``bayesian (Thomson 2009)``, ``population (Goti 2018)``.

    The model-averaged Bayesian estimate is ``bayesian (model average)``.
    """
    family = name.split(":", 1)[0]
    named = (e.get("model") or {}).get("name")  # the library's own equations have an id only: ``population``
    model = model_label(e).removeprefix("the ") if named else ""
    return f"{family} ({model})" if model and family in ("bayesian", "population") else family


def _level_numbers(outcome: Outcome, fields: list[str]) -> str:
    order = {f"levels[{lv.index}]": n for n, lv in enumerate(outcome.case.levels, 1)}
    nums = [str(order[x]) for x in fields if x in order]
    return " and ".join(nums) if len(nums) <= 2 else ", ".join(nums[:-1]) + " and " + nums[-1]


def _others(res: dict[str, Any]) -> list[str]:
    cls = [e["cl_l_per_h"] for e in (res.get("methods") or {}).values() if e.get("cl_l_per_h")]
    if not cls:
        return []
    return f.wrap(f"Other methods and models ({len(cls)}): CL {f.clearance(min(cls))}-{f.clearance(max(cls))} L/h "
                  "(each one: tdmtui note --full).")


def estimate_lines(outcome: Outcome, regimen: dict[str, Any] | None, model_words: list[str], full: bool) -> list[str]:
    """Method, estimate, model and its inputs, the working by hand, the other methods in one line."""
    res = outcome.result
    est, method = res.get("estimate"), res.get("method")
    lines = f.heading("Estimate")
    if not est:
        return lines + f.wrap("No estimate: no method applies to this case (see Warnings).")
    used = est.get("method", method)
    nums = _level_numbers(outcome, est.get("levels_used") or [])
    why = res.get("method_reason")
    on = f" on level{'s' if ' ' in nums else ''} {nums}" if nums else ""
    option = registry.option(method)
    if option is not None:  # the regimen rests on the option (a nomogram); the estimate is given beside it
        lines += f.wrap(f"Method: {method}{on} ({option.description}): {method_label(used, est)}, "
                        f"{METHOD_TEXT.get(used, used)}.")
    elif why:  # the engine's one sentence says why this method and what it rests on
        lines += f.wrap(f"Method: {method_label(used, est)}{on}: {f.local_times(f.plain_paths(why))}")
    else:
        lines += f.wrap(f"Method: {method_label(used, est)} ({METHOD_TEXT.get(used, used)}){on}.")
    vkg = f" ({f.numfmt.qty(est['vd_l_per_kg'], 'volume_kg')})" if est.get("vd_l_per_kg") else ""
    lines += f.wrap(f"Estimate: ke {f.ke(est['ke_per_h'])} /h, t1/2 {f.hours(est['half_life_h'])} h, "
                    f"Vd {f.litres(est['vd_l'])} L{vkg}, CL {f.clearance(est['cl_l_per_h'])} L/h.")
    lines += model_words
    lines += [x for text in renal_course_words(res) for x in f.wrap(text)]
    iv = est.get("interval90") or {}
    if iv.get("cl_l_per_h") and iv.get("auc24_mg_h_per_l"):
        lines += f.wrap(f"90 % interval: CL {f.clearance(iv['cl_l_per_h'][0])}-{f.clearance(iv['cl_l_per_h'][1])} "
                        f"L/h, AUC24 now {f.auc(iv['auc24_mg_h_per_l'][0])}-{f.auc(iv['auc24_mg_h_per_l'][1])} "
                        "mg*h/L.")
    return lines + working_block(outcome, regimen) + ([] if full else _others(res))


def renal_course_words(result: dict[str, Any]) -> list[str]:
    """CrCl over the course and what the estimate did with it, when renal function changed (or a model
    followed it): each boundary time once, the levels' times with their date once."""
    est = result.get("estimate") or {}
    rows = est.get("renal_course")
    unstable = any(w.get("code") == "scr-unstable" for w in result.get("warnings") or [])
    if not rows or not (unstable or str(est.get("method", "")).startswith(("bayesian", "population"))):
        return []  # a classic method's estimate with stable renal function: nothing for the chart
    parts = [f"{r['crcl_ml_min']:.0f} (SCr {f.scr(r['scr_mg_dl'])})" + (f" until {f.when(r['until'])}" if r["until"] else "")
             for r in rows]
    course = parts[0] if len(parts) == 1 else ", ".join(parts[:-1]) + ", then " + parts[-1]
    how = est.get("renal_note") or ("clearance followed each value, held from its draw until the next; "
                                    "the forecast and the regimen use the latest")
    how = re.sub(r"(\d{4}-\d{2}-\d{2}) (\d{2}:\d{2}) to \1 ", r"\1 \2 to ", f.local_times(how))  # the date once
    classic = re.fullmatch(r"(?P<src>.+?) gives? (?P<q>ke|CL) \(CrCl does not enter\), one ke for the whole history"
                           r"; the levels were drawn (?P<span>.+): the estimate describes renal function then", how)
    if classic:  # one ke (or CL) from the levels for the whole history: renal function when they were drawn
        how = f"one {classic['q']} from {classic['src']}, for renal function when drawn ({classic['span']})"
    text = f"CrCl (mL/min): {course}. {how[0].upper() + how[1:]}."
    fixed = (result.get("methods") or {}).get("bayesian:fixed-renal")
    if fixed and str(est.get("method", "")).startswith("bayesian"):  # beside the estimate that follows each SCr
        auc = (fixed.get("current") or {}).get("auc24_mg_h_per_l")
        text += (f" Fitted as if the latest CrCl had held throughout: CL {fixed['cl_l_per_h']:.2f} L/h"
                 + (f", AUC24 now {auc:.0f} mg*h/L" if auc else "") + ".")
    return [text]


def working_block(outcome: Outcome, regimen: dict[str, Any] | None) -> list[str]:
    """The working a reviewer can check by hand, as the note and the app's working view print it."""
    lines = ["Working (to check by hand):"]
    for step in working_lines(outcome, regimen):
        lines += f.wrap(step, "  ", "  ")
    return lines


_LEVELS = ("peak_mg_per_l", "trough_mg_per_l", "auc24_mg_h_per_l")


def _predicted(r: dict[str, Any], current: dict[str, Any] | None) -> str:
    """What follows the regimen's words: its daily dose for an infusion rate (the working gives it for doses:
    AUC24 = daily dose / CL), its prediction at steady state (``predicted as the current`` when it continues
    the current regimen with the same figures), the level at the target's reference time, its chance of target."""
    p = r.get("predicted") or {}
    prob = r.get("target_probability", p.get("target_probability"))
    chance = [f"chance of meeting the target {f.chance(float(prob))}"] if prob is not None else []
    continuous = r.get("mode") == "continuous" or r.get("infusion_h", 0) >= r.get("interval_h", 1)
    daily = [f"{f.mg(r['daily_dose_mg'])} mg a day"] if r.get("daily_dose_mg") and continuous else []
    if r.get("action") == "continue" and current and \
            f.predicted({k: current.get(k) for k in _LEVELS}) == f.predicted({k: p.get(k) for k in _LEVELS}):
        at_reference = f.predicted(p).split("; ", 1)[1:]  # ``22.0 mg/L at 1 h after the start``
        return " (" + "; ".join(daily + ["predicted as the current"] + at_reference + chance) + ")"
    return (f" ({daily[0]})" if daily else "") + ": predicted at steady state " + f.predicted(p) + \
        "".join(f"; {c}" for c in chance)


def _dose_times(times: list[str]) -> str:
    """``06:00 and 14:00 doses on 2026-02-10``; over several dates ``doses at 06:00 and 14:00 on 2026-02-10
    and 06:00 on 2026-02-11`` (each date once)."""
    groups: list[tuple[str, list[str]]] = []
    for t in times:
        day, _, clock = f.when(t).partition(" ")
        if groups and groups[-1][0] == day:
            groups[-1][1].append(clock)
        else:
            groups.append((day, [clock]))
    if len(groups) == 1:
        day, clocks = groups[0]
        return f"{_and(clocks)} {'dose' if len(clocks) == 1 else 'doses'} on {day}"
    return "doses at " + _and([f"{_and(clocks)} on {day}" for day, clocks in groups])


def _and(items: list[str]) -> str:
    return items[0] if len(items) == 1 else ", ".join(items[:-1]) + " and " + items[-1]


def _restart_check(reg: dict[str, Any]) -> str:
    check = ch.restart_level(reg)
    if check is None:
        return ""
    return f" if a level at {f.when(check['at']).split(' ')[-1]} is below {check['give_below_mg_l']:g} mg/L"


def hold_words(reg: dict[str, Any]) -> str:
    """What happens to the standing order's doses before the next dose, by clock time (regimen/wardclock.py);
    the level the next dose waits on after a hold for high exposure (handover.restart_check) is named with it."""
    when, check = f.when(reg.get("next_dose_at")), _restart_check(reg)
    nxt = when + check
    gone = [str(t) for t in reg.get("skipped_doses") or []]
    until = reg.get("hold_until")
    if until and gone:
        level = reg.get("hold_level_mg_l")
        if level and until == reg.get("next_dose_at"):
            held = _dose_times(gone)
            at = when.split(" ")[-1] if held.endswith(" on " + when.split(" ")[0]) else when  # the date once
            return f"Hold the {held} (level predicted above {level:.3g} mg/L until {at}, the next dose{check})"
        why = f" (level predicted above {level:.3g} mg/L until {f.when(until)})" if level else ""
        return f"Hold the {_dose_times(gone)}{why}; next dose {nxt}"
    if until:
        return (f"Hold: next dose at {nxt}, none before" if until == reg.get("next_dose_at")
                else f"Hold: no dose until {f.when(until)}; next dose {nxt}")
    if gone:
        return f"Do not give the current order's {_dose_times(gone)}; next dose {nxt}"
    return f"No hold; next dose {nxt}"


def regimen_lines(outcome: Outcome, reg: dict[str, Any] | None, picked: bool,
                  wanted: dict[str, Any] | None, full: bool = False) -> list[str]:
    """Current regimen, the regimen given (chosen or proposed), its timing, the others considered."""
    res = outcome.result
    est, cur, proposal = res.get("estimate") or {}, res.get("current_regimen"), res.get("regimen")
    lines = f.heading("Plan")
    if cur:
        now = ": predicted at steady state " + f.predicted(est["current"]) if est.get("current") else ""
        lines += f.wrap(f"Current: {f.regimen_words(cur)} ({cur.get('source', '')}){now}.")
    else:
        lines.append("Current: none (no standing order and fewer than two maintenance doses).")
    if not reg:
        why = ("a stop-level warning stands" if res.get("status") == "stop"
               else "the regimen designer gave none for this case")
        return lines + f.wrap(f"No regimen proposed: {why} (see Warnings).")
    if reg.get("mode") == "dialysis":
        return lines + dialysis_lines(reg)
    if reg.get("mode") == "redose-by-level":
        from tdmtui.core.regimen.renalplan import plan_words

        return lines + [x for text in plan_words(reg) for x in f.wrap(text)]
    verb = {"continue": "continue", "change": "change to", "hold-then-change": "hold, then change to"}
    act = verb.get(reg.get("action", ""), reg.get("action", ""))
    ld = reg.get("loading_dose")
    load = (f"loading dose {f.mg(ld['dose_mg'])} mg over {f.duration(ld['infusion_h'])} at {f.when(ld['at'])}"
            + (f": {f.outer(f.plain_source(ld['basis']))}" if ld.get("basis") else "") if ld else "no loading dose")
    timing = f" {hold_words(reg)}; {load}."
    predicted = _predicted(reg, est.get("current"))
    if picked:
        lines += f.wrap(f"Chosen in review: {act} {f.regimen_words(reg)}{predicted}.{timing}")
        if proposal and not ch.same(reg, proposal):
            lines += f.wrap(f"(The tool proposed {f.regimen_words(proposal)}.)", "  ")
    else:
        lines += f.wrap(f"Proposed: {act} {f.regimen_words(reg)}{predicted}.{timing}")
        if wanted:
            lines += f.wrap(f"The regimen chosen in review ({f.regimen_words(wanted)}) is no longer offered "
                            "for this case: choose again.", "  ")
    others = [r for r in ch.offered(res) if not ch.same(r, reg)]
    if others and full:
        lines += f.wrap("Also considered (AUC24 mg*h/L): " + "; ".join(
            f"{f.mg(r['dose_mg'])} mg {f.every(r['interval_h'])} ({f.auc((r.get('predicted') or {}).get('auc24_mg_h_per_l'))})"
            for r in others) + ".")
    return lines


def dialysis_lines(reg: dict[str, Any]) -> list[str]:
    """A dose after each haemodialysis session: the aim, then one line a session (its end, the dose and when,
    the pre-dialysis level predicted before the next session), each date once."""
    band = reg.get("pre_dialysis_target_mg_per_l") or ["-", "-"]
    pre = (reg.get("predicted") or {}).get("pre_dialysis_next_session_mg_per_l")
    lines = f.wrap(f"Proposed: a dose after each haemodialysis session, aimed at a pre-dialysis level of "
                   f"{band[0]:g}-{band[1]:g} mg/L" + (f" ({pre:.1f} mg/L predicted before the next session with "
                                                       "no further dose)" if pre is not None else "")
                   + ". After the session ending: dose; pre-dialysis level predicted:")
    for r in reg.get("after_sessions", []):
        end = f.when(r["session_end"])
        at = f.when(r["dose_at"])
        at = at.split(" ")[-1] if at.split(" ")[0] == end.split(" ")[0] else at[5:]  # the date once
        what = f"{f.mg(r['dose_mg'])} mg over {f.duration(r['infusion_h'])} at {at}" if r["dose_mg"] > 0 else "no dose"
        nxt = f.when(r["next_session_start"])
        lines += f.wrap(f"{end}: {what}; {r['pre_dialysis_next_mg_per_l']:.1f} mg/L before {nxt[5:]}", "  ", "  ")
    if reg.get("sessions_projected"):
        lines.append("Sessions to come taken as last week's repeated; check the unit's schedule.")
    return lines + ["Measure a pre-dialysis level before sessions and redose by it."]


def monitoring_lines(outcome: Outcome, reg: dict[str, Any] | None) -> list[str]:
    """When to draw the next levels (of the regimen given) and what else to watch."""
    rules = outcome.rules
    lines: list[str] = []
    levels = (reg or {}).get("next_levels") or []
    check = ch.restart_level(reg or {})  # the next dose's own check: said with the next dose (hold_words)
    parts = []
    for nl in levels:
        if nl is check:
            continue
        why = str(nl.get("dose", "")).split(": ", 1)[-1].removesuffix(" of the new regimen")
        parts.append(f"{nl['kind']} at {f.when(nl['at'])}" + (f" ({why})" if why else ""))
    text = "Next levels: " + ("; ".join(parts) if parts else "none planned by the tool")
    if rules is not None:  # the renal watch beside the drug levels, in the note's word for it
        text += f"; {str(rules.value('monitoring.scr')).replace('serum creatinine', 'SCr')}"
    text += "."
    return lines + f.wrap(text)
