"""Plain-text summary of a result for the command line (no colour, <= 80 columns).

Figures are rounded by :mod:`tdmtui.core.text.numfmt`, the rounding table the note and the app use.
"""

from __future__ import annotations

import textwrap
from typing import Any

from tdmtui.core.input.chosen import restart_level
from tdmtui.core.text.numfmt import interval as _interval
from tdmtui.core.text.numfmt import num
from tdmtui.core.text.safety import NOTE_LINE
from tdmtui.core.input.textsafe import neutralise

WIDTH = 80


def _wrap(text: str, indent: str = "") -> list[str]:
    return textwrap.wrap(text, WIDTH, initial_indent=indent, subsequent_indent=indent + "  ") or [indent]


def short_name(name: str, drug: str, e: dict[str, Any]) -> str:
    """The method's name as the note and the app give it: ``bayesian (Goti 2018)``, ``population (Thomson 2009)``."""
    from tdmtui.core.text.noteplan import method_label

    return method_label(name, e)[:NAME_W - 1]


def estimate_line(name: str, e: dict[str, Any]) -> str:
    """One row of the methods table."""
    cur = e.get("current") or {}
    cells = [(e.get(k), k, w) for k, w in (("ke_per_h", 7), ("half_life_h", 6), ("vd_l", 6), ("vd_l_per_kg", 5),
                                            ("cl_l_per_h", 7))]
    cells += [(cur.get(k), k, w) for k, w in (("auc24_mg_h_per_l", 6), ("peak_mg_per_l", 6), ("trough_mg_per_l", 7))]
    return f"{name:<{NAME_W}}" + "".join(f"{num(v, k):>{w}}" for v, k, w in cells)


#: The methods table's first column: the longest name the note uses, ``population (Thomson 2009)``, and a space.
NAME_W = 26
TABLE_HEAD = f"{'method':<{NAME_W}}{'ke /h':>7}{'t1/2':>6}{'Vd L':>6}{'L/kg':>5}{'CL L/h':>7}{'AUC24':>6}{'peak':>6}{'trough':>7}"


def summary_text(result: dict[str, Any]) -> str:
    """A readable summary of a ``tdmtui.result/1`` object."""
    lines = _patient_lines(result) + _estimate_lines(result) + _regimen_lines(result)
    if result.get("warnings"):
        lines.append("")
        lines.append("Warnings:")
        for w in result["warnings"]:
            lines += _wrap(f"{w['severity'].upper()} [{w['code']}] {w['field']}: {w['message']}", "  ")
    lines.append("")
    lines += _wrap(NOTE_LINE)
    # the output boundary: every line, free text included, loses its control characters here
    return "\n".join(neutralise(line) for line in lines) + "\n"


def _patient_lines(result: dict[str, Any]) -> list[str]:
    """Drug, time and status; CrCl, dosing weight and the standing order, each with its rule."""
    p = result["patient"]
    lines = [f"{result['drug']}  as of {result['as_of']}  status: {result['status'].upper()}"]
    lines += _wrap(f"CrCl {num(p['crcl_ml_min'], 'crcl')} mL/min ({p['crcl_rule']})")
    lines += _wrap(f"Dosing weight {num(p['dosing_weight_kg'], 'weight')} kg ({p['dosing_weight_rule']})")
    cur = result.get("current_regimen")
    if cur:
        lines += _wrap(f"Current regimen: {num(cur['dose_mg'], 'dose')} mg every {num(cur['interval_h'], 'interval')} h "
                       f"over {num(cur['infusion_h'], 'infusion')} h ({cur['source']})")
    return lines


def _estimate_lines(result: dict[str, Any]) -> list[str]:
    """The method used and why, the methods table, the 90 % intervals, the model; the methods not available."""
    lines: list[str] = []
    est = result.get("estimate")
    if est:
        lines.append("")
        lines += _wrap(f"Method used: {result['method']}" + (f" - {est.get('assumption')}" if est.get("assumption") else ""))
        if result.get("method_reason"):
            lines += _wrap(f"Why: {result['method_reason']}")
        lines.append(TABLE_HEAD)
        lines.append(estimate_line(short_name(result["method"], result["drug"], est), est))
        for name, e in result.get("methods", {}).items():
            lines.append(estimate_line(short_name(name, result["drug"], e), e))
        iv = est.get("interval90") or {}
        for key, pair in iv.items():
            lines.append(f"  90 % interval {key}: {_interval(pair, key)[1:-1].replace('-', ' to ', 1)}")
        if est.get("model"):
            lines += _wrap(f"Model: {est['model'].get('id')} - {est['model'].get('citation')}")
    if not est and result.get("methods"):
        lines.append("")
        lines.append("No estimate is used (a stop stands); for reference:")
        lines.append(TABLE_HEAD)
        for name, e in result["methods"].items():
            lines.append(estimate_line(short_name(name, result["drug"], e), e))
    for name, why in result.get("methods_unavailable", {}).items():
        lines += _wrap(f"{name} not available: {why}", "  ")
    return lines


def _regimen_lines(result: dict[str, Any]) -> list[str]:
    """The proposal in words, its predicted figures, and what the ward does next; or why there is none."""
    reg = result.get("regimen")
    if not reg:
        return ["", "No regimen: a stop-level warning stands (see below)."] if result["status"] == "stop" else []
    lines = [""]
    if reg.get("mode") in ("dialysis", "redose-by-level"):
        from tdmtui.core.regimen.renalplan import plan_words

        for text in plan_words(reg):
            lines += _wrap(text)
    elif reg.get("mode") == "continuous":
        lines += _wrap(f"Regimen: {reg['action']} - continuous infusion {num(reg['rate_mg_per_h'], 'rate')} mg/h "
                       f"({num(reg['daily_dose_mg'], 'dose')} mg/day), starting {reg['next_dose_at']}")
    else:
        lines += _wrap(f"Regimen: {reg['action']} - {num(reg['dose_mg'], 'dose')} mg every "
                       f"{num(reg['interval_h'], 'interval')} h over {num(reg['infusion_h'], 'infusion')} h, "
                       f"next dose {reg['next_dose_at']}")
    pr = reg.get("predicted", {})
    if reg.get("mode") not in ("dialysis", "redose-by-level"):
        line = (f"  predicted AUC24 {num(pr.get('auc24_mg_h_per_l'), 'auc')} mg*h/L, peak "
                f"{num(pr.get('peak_mg_per_l'), 'conc')}, trough {num(pr.get('trough_mg_per_l'), 'conc')} mg/L")
        if pr.get("target_probability") is not None:
            line += f", chance of target {num(pr['target_probability'], 'probability')} %"
        lines += _wrap(line)
    return lines + _next_steps(reg)


def _next_steps(reg: dict[str, Any]) -> list[str]:
    """Doses held or not given, hold until, a nearer start, the loading dose, the next levels."""
    lines: list[str] = []
    if reg.get("skipped_doses"):
        lines += _wrap(f"{'hold' if reg.get('hold_until') else 'do not give'} the standing order's dose(s) due "
                       + ", ".join(reg["skipped_doses"]), "  ")
    if reg.get("hold_until"):
        lines.append(f"  hold until {reg['hold_until']}")
    if reg.get("nearer_start"):
        ns = reg["nearer_start"]
        lines.append(f"  nearer start {ns['next_dose_at']}: AUC next 24 h {num(ns['day1_mg_h_per_l'], 'auc')} mg*h/L")
    if reg.get("loading_dose"):
        ld = reg["loading_dose"]
        lines.append(f"  loading dose {num(ld['dose_mg'], 'dose')} mg over {num(ld['infusion_h'], 'infusion')} h "
                     f"at {ld['at']}")
    check = restart_level(reg)
    for nl in reg.get("next_levels", []):
        wait = "" if check is None or nl is not check else \
            f" (give the next dose only below {check['give_below_mg_l']:g} mg/L)"
        lines.append(f"  next level: {nl['kind']} at {nl['at']}{wait}")
    return lines
