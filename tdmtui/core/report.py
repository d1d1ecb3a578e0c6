"""Plain-text summary of a result for the command line (no colour, <= 80 columns)."""

from __future__ import annotations

import textwrap
from typing import Any

from tdmtui.core.safety import NOTE_LINE
from tdmtui.core.textsafe import neutralise

WIDTH = 80


def _n(x: float | None, digits: int = 3) -> str:
    if x is None:
        return "-"
    if abs(x) >= 100:
        return f"{x:.0f}"
    return f"{x:.{digits}g}"


def _wrap(text: str, indent: str = "") -> list[str]:
    return textwrap.wrap(text, WIDTH, initial_indent=indent, subsequent_indent=indent + "  ") or [indent]


def short_name(name: str, drug: str, e: dict[str, Any]) -> str:
    """The method's name as the note and the app give it: ``bayesian (Goti 2018)``, ``population (Thomson 2009)``."""
    from tdmtui.core.noteplan import method_label

    return method_label(name, e)[:NAME_W - 1]


def estimate_line(name: str, e: dict[str, Any]) -> str:
    """One row of the methods table."""
    cur = e.get("current") or {}
    return (f"{name:<{NAME_W}}{_n(e['ke_per_h']):>7}{_n(e['half_life_h']):>6}{_n(e['vd_l']):>6}"
            f"{_n(e['vd_l_per_kg']):>5}{_n(e['cl_l_per_h']):>7}{_n(cur.get('auc24_mg_h_per_l')):>6}"
            f"{_n(cur.get('peak_mg_per_l')):>6}{_n(cur.get('trough_mg_per_l')):>7}")


#: The methods table's first column: the longest name the note uses, ``population (Thomson 2009)``, and a space.
NAME_W = 26
TABLE_HEAD = f"{'method':<{NAME_W}}{'ke /h':>7}{'t1/2':>6}{'Vd L':>6}{'L/kg':>5}{'CL L/h':>7}{'AUC24':>6}{'peak':>6}{'trough':>7}"


def summary_text(result: dict[str, Any]) -> str:
    """A readable summary of a ``tdmtui.result/1`` object."""
    lines: list[str] = []
    p = result["patient"]
    lines.append(f"{result['drug']}  as of {result['as_of']}  status: {result['status'].upper()}")
    lines += _wrap(f"CrCl {p['crcl_ml_min']:.0f} mL/min ({p['crcl_rule']})")
    lines += _wrap(f"Dosing weight {p['dosing_weight_kg']:.1f} kg ({p['dosing_weight_rule']})")
    cur = result.get("current_regimen")
    if cur:
        lines += _wrap(f"Current regimen: {cur['dose_mg']:.0f} mg every {cur['interval_h']:g} h over "
                       f"{cur['infusion_h']:g} h ({cur['source']})")
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
        for key, (lo, hi) in iv.items():
            lines.append(f"  90 % interval {key}: {_n(lo)} to {_n(hi)}")
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
    reg = result.get("regimen")
    if reg:
        lines.append("")
        if reg.get("mode") == "continuous":
            lines += _wrap(f"Regimen: {reg['action']} - continuous infusion {reg['rate_mg_per_h']:.1f} mg/h "
                           f"({reg['daily_dose_mg']:.0f} mg/day), starting {reg['next_dose_at']}")
        else:
            lines += _wrap(f"Regimen: {reg['action']} - {reg['dose_mg']:.0f} mg every {reg['interval_h']:g} h over "
                           f"{reg['infusion_h']:g} h, next dose {reg['next_dose_at']}")
        pr = reg.get("predicted", {})
        lines.append(f"  predicted AUC24 {_n(pr.get('auc24_mg_h_per_l'))} mg*h/L, peak {_n(pr.get('peak_mg_per_l'))}, "
                     f"trough {_n(pr.get('trough_mg_per_l'))} mg/L")
        if reg.get("hold_until"):
            lines.append(f"  hold until {reg['hold_until']}")
        if reg.get("loading_dose"):
            ld = reg["loading_dose"]
            lines.append(f"  loading dose {ld['dose_mg']:.0f} mg over {ld['infusion_h']:g} h at {ld['at']}")
        for nl in reg.get("next_levels", []):
            lines.append(f"  next level: {nl['kind']} at {nl['at']}")
    elif result["status"] == "stop":
        lines.append("")
        lines.append("No regimen: a stop-level warning stands (see below).")
    if result.get("warnings"):
        lines.append("")
        lines.append("Warnings:")
        for w in result["warnings"]:
            lines += _wrap(f"{w['severity'].upper()} [{w['code']}] {w['field']}: {w['message']}", "  ")
    lines.append("")
    lines += _wrap(NOTE_LINE)
    # the output boundary: every line, free text included, loses its control characters here
    return "\n".join(neutralise(line) for line in lines) + "\n"
