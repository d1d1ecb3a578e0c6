"""The chart note's estimate, regimen, monitoring and warnings sections.

Written for clinicians: the method in a sentence, the estimate, the
working a reviewer can check by hand (:mod:`tdmtui.core.text.notework`), the
regimen the note gives (chosen in review, else the proposal) with its own
hold, loading dose, next dose and levels, and the warnings with case paths
put into words.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from tdmtui.core.input import chosen as ch
from tdmtui.core.text import notefmt as f
from tdmtui.core import registry
from tdmtui.core.text.notework import working_lines

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
        lines += f.wrap(f"Method: {method} ({option.description}){on}: {method_label(used, est)}.")
    elif why:  # the engine's one sentence says why this method and what it rests on
        lines += f.wrap(f"Method: {method_label(used, est)}{on}: {f.plain_paths(why)}")
    else:
        lines += f.wrap(f"Method: {method_label(used, est)} ({METHOD_TEXT.get(used, used)}){on}.")
    if registry.option(method) is not None:
        lines += f.wrap(f"Estimate beside it: {method_label(used, est)}: {METHOD_TEXT.get(used, '')}.")
    vkg = f" ({f.numfmt.qty(est['vd_l_per_kg'], 'volume_kg')})" if est.get("vd_l_per_kg") else ""
    lines += f.wrap(f"Estimate: ke {f.ke(est['ke_per_h'])} /h, t1/2 {f.hours(est['half_life_h'])} h, "
                    f"Vd {f.litres(est['vd_l'])} L{vkg}, CL {f.clearance(est['cl_l_per_h'])} L/h.")
    lines += model_words
    from tdmtui.core.estimation.renalcourse import note_lines

    lines += [x for text in note_lines(res) for x in f.wrap(text)]
    iv = est.get("interval90") or {}
    if iv.get("cl_l_per_h") and iv.get("auc24_mg_h_per_l"):
        lines += f.wrap(f"90 % interval: CL {f.clearance(iv['cl_l_per_h'][0])}-{f.clearance(iv['cl_l_per_h'][1])} "
                        f"L/h, AUC24 now {f.auc(iv['auc24_mg_h_per_l'][0])}-{f.auc(iv['auc24_mg_h_per_l'][1])} "
                        "mg*h/L.")
    return lines + working_block(outcome, regimen) + ([] if full else _others(res))


def working_block(outcome: Outcome, regimen: dict[str, Any] | None) -> list[str]:
    """The working a reviewer can check by hand, as the note and the app's working view print it."""
    lines = ["Working (to check by hand):"]
    for step in working_lines(outcome, regimen):
        lines += f.wrap(step, "  ", "  ")
    return lines


def _predicted(r: dict[str, Any]) -> str:
    p = r.get("predicted") or {}
    text = ": predicted at steady state " + f.predicted(p)
    prob = r.get("target_probability", p.get("target_probability"))
    if prob is not None:
        text += f"; chance of meeting the target {f.chance(float(prob))}"
    return text


def _dose_times(times: list[str]) -> str:
    """``06:00 and 14:00 doses on 2026-02-10`` (each with its date when the dates differ)."""
    parts = [f.when(t).split(" ") for t in times]
    dates = {p[0] for p in parts}
    clocks = [p[-1] for p in parts] if len(dates) == 1 else [f"{p[-1]} on {p[0]}" for p in parts]
    text = clocks[0] if len(clocks) == 1 else ", ".join(clocks[:-1]) + " and " + clocks[-1]
    noun = "dose" if len(clocks) == 1 else "doses"
    return f"{text} {noun}" + (f" on {parts[0][0]}" if len(dates) == 1 else "")


def hold_words(reg: dict[str, Any]) -> str:
    """What happens to the standing order's doses before the next dose, by clock time (regimen/wardclock.py)."""
    nxt = f.when(reg.get("next_dose_at"))
    gone = [str(t) for t in reg.get("skipped_doses") or []]
    until = reg.get("hold_until")
    if until and gone:
        level = reg.get("hold_level_mg_l")
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
    if reg.get("mode") in ("dialysis", "redose-by-level"):
        from tdmtui.core.regimen.renalplan import plan_words

        return lines + [x for text in plan_words(reg) for x in f.wrap(text)]
    verb = {"continue": "continue", "change": "change to", "hold-then-change": "hold, then change to"}
    act = verb.get(reg.get("action", ""), reg.get("action", ""))
    daily = f" ({f.mg(reg['daily_dose_mg'])} mg a day)" if reg.get("daily_dose_mg") else ""
    ld = reg.get("loading_dose")
    load = (f"loading dose {f.mg(ld['dose_mg'])} mg over {f.duration(ld['infusion_h'])} at {f.when(ld['at'])}"
            + (f" ({f.plain_source(ld['basis'])})" if ld.get("basis") else "") if ld else "no loading dose")
    timing = f" {hold_words(reg)}; {load}."
    if picked:
        lines += f.wrap(f"Chosen in review: {act} {f.regimen_words(reg)}{daily}{_predicted(reg)}.{timing}")
        if proposal and not ch.same(reg, proposal):
            lines += f.wrap(f"(The tool proposed {f.regimen_words(proposal)}.)", "  ")
    else:
        lines += f.wrap(f"Proposed: {act} {f.regimen_words(reg)}{daily}{_predicted(reg)}.{timing}")
        if wanted:
            lines += f.wrap(f"The regimen chosen in review ({f.regimen_words(wanted)}) is no longer offered "
                            "for this case: choose again.", "  ")
    others = [r for r in ch.offered(res) if not ch.same(r, reg)]
    if others and full:
        lines += f.wrap("Also considered (AUC24 mg*h/L): " + "; ".join(
            f"{f.mg(r['dose_mg'])} mg {f.every(r['interval_h'])} ({f.auc((r.get('predicted') or {}).get('auc24_mg_h_per_l'))})"
            for r in others) + ".")
    return lines


def monitoring_lines(outcome: Outcome, reg: dict[str, Any] | None) -> list[str]:
    """When to draw the next levels (of the regimen given) and what else to watch."""
    rules = outcome.rules
    lines: list[str] = []
    levels = (reg or {}).get("next_levels") or []
    parts = []
    for nl in levels:
        why = str(nl.get("dose", "")).split(": ", 1)[-1].removesuffix(" of the new regimen")
        parts.append(f"{nl['kind']} at {f.when(nl['at'])}" + (f" ({why})" if why else ""))
    text = ("Next levels: " + "; ".join(parts) + ".") if parts else "Next levels: none planned by the tool."
    if rules is not None:
        text += f" Renal: {rules.value('monitoring.scr')}."
    return lines + f.wrap(text)


def _warning_text(w: dict[str, Any]) -> str:
    if w.get("code") == "model-secondary-only":
        name = str(w.get("message", "")).split(":", 1)[0] or "This model"
        whose = "these models' values have" if " and " in name else "this model's values have"
        return (f"{name}: {whose} not been checked against the published paper; "
                "weigh the estimate against the measured levels.")
    text = str(w.get("message", ""))
    text = text.replace("verified from a secondary source only, so auto does not choose it",
                        "not checked against its published paper, so it is not chosen unless asked for")
    text = text.replace("is verified from a secondary source only", "has not been checked against its published paper")
    text = text.replace("was checked against a secondary copy only", "has not been checked against its published paper")
    text = text.replace(" is not confirmed", " is uncertain").replace(" not confirmed", " uncertain")
    return f.plain_paths(f.plain_source(text))


def warning_lines(result: dict[str, Any], full: bool = False) -> list[str]:
    """Every stop and caution (information-only warnings with ``full``), case paths in words."""
    lines = f.heading("Warnings")
    ws = result.get("warnings") or []
    shown = [w for w in ws if full or w.get("severity") != "info"]
    for w in shown:
        lines += f.wrap(f"- {w['severity'].upper()}: {_warning_text(w)}", "", "    ")
    if len(shown) < len(ws):
        n = len(ws) - len(shown)
        lines.append(f"- and {n} for information only (tdmtui note --full gives {'it' if n == 1 else 'them'}).")
    return lines + ([] if ws else ["None raised."])
