"""Formatting helpers for the chart note (:mod:`tdmtui.core.text.note`).

Plain text only, at most :data:`WIDTH` columns. The note's figures are rounded
by :mod:`tdmtui.core.text.numfmt` (the one rounding table, shared with the
command-line summary and the app); the functions below name its rules:

========== ============================ =====================
figure     rule                         example
========== ============================ =====================
ke         3 significant figures        0.0827 /h
t1/2       1 decimal place              8.4 h
Vd         1 decimal place              51.6 L
CL         2 decimal places             4.27 L/h
AUC24      whole number                 703 mg*h/L
conc.      1 decimal (2 below 1 mg/L)   18.2 mg/L, 0.16 mg/L, <0.01
CrCl       whole number                 92 mL/min
weight     1 decimal place              70.5 kg
SCr        up to 2 decimals             0.9 mg/dL
========== ============================ =====================

Steady-state share (:func:`steady_state_share`) follows the superposition and
steady-state equations of pk-sources.md 2.2-2.3 through :mod:`tdmtui.core.models`.
"""

from __future__ import annotations

import math
import textwrap
from typing import TYPE_CHECKING, Any

import numpy as np

from tdmtui.core.text import numfmt
from tdmtui.core.text.notewords import (  # noqa: F401 - the note's sections call them through this module
    local_times, nested, outer, plain_paths, plain_source, shared_offset, short_source, when)
from tdmtui.core.models import DoseArrays, PKParams, concentration

if TYPE_CHECKING:
    from tdmtui.core.input.casetypes import Case

WIDTH = 80


# --- numbers -------------------------------------------------------------------

def ke(x: float | None) -> str:
    """Elimination rate constant, 1/h: 3 significant figures, trailing zeros kept (:mod:`numfmt`)."""
    return numfmt.num(x, "ke")


def hours(x: float | None) -> str:
    """Half-life, h: 1 decimal place (:mod:`numfmt`)."""
    return numfmt.num(x, "half_life")


def litres(x: float | None) -> str:
    """Volume, L: 1 decimal place (:mod:`numfmt`)."""
    return numfmt.num(x, "volume")


def clearance(x: float | None) -> str:
    """Clearance, L/h: 2 decimal places (:mod:`numfmt`)."""
    return numfmt.num(x, "clearance")


def auc(x: float | None) -> str:
    """AUC24, mg*h/L: whole number (:mod:`numfmt`)."""
    return numfmt.num(x, "auc")


def conc(x: float | None) -> str:
    """Concentration, mg/L: 1 decimal place, 2 below 1 mg/L, ``<0.01`` below 0.005 (:mod:`numfmt`)."""
    return numfmt.num(x, "conc")


def mg(x: float | None) -> str:
    """Dose, mg: as given, without trailing zeros (at most 1 decimal; :mod:`numfmt`)."""
    return numfmt.num(x, "dose")


def scr(x: float) -> str:
    """Serum creatinine, mg/dL: up to 2 decimals, trailing zeros dropped (:mod:`numfmt`)."""
    return numfmt.num(x, "scr")


def kg(x: float) -> str:
    """Weight, kg: 1 decimal place (:mod:`numfmt`)."""
    return numfmt.num(x, "weight")


def pct(x: float) -> str:
    """A share as a whole percentage (``97 %``; :mod:`numfmt`)."""
    return numfmt.qty(x, "share")


def chance(x: float) -> str:
    """A probability of target as a whole percentage (``63 %``, ``<1 %``; :mod:`numfmt`)."""
    return numfmt.qty(x, "probability")


def weight_words(rp: dict[str, Any], weight: float, used: float) -> str:
    """Which weight ``used`` kg is, in words (``ideal body weight 70.5 kg``), from the result's patient object."""
    for label, value in (("total body weight", weight), ("ideal body weight", rp.get("ibw_kg")),
                         ("adjusted body weight", rp.get("adjbw_kg"))):
        if value is not None and abs(used - value) < 0.05:
            return f"{label} {kg(used)} kg"
    return f"weight {kg(used)} kg"


def duration(h: float) -> str:
    """A span of time to the minute: ``35 min``, ``1 h 05 min``, ``12 h``."""
    total = int(round(abs(h) * 60.0))
    hh, mm = divmod(total, 60)
    if hh == 0:
        return f"{mm} min"
    return f"{hh} h" if mm == 0 else f"{hh} h {mm:02d} min"


def every(tau: float) -> str:
    """A dosing interval: ``every 12 h``, ``every 36 h``."""
    return f"every {duration(tau)}"


# --- text layout ----------------------------------------------------------------

def wrap(text: str, indent: str = "", hang: str = "  ") -> list[str]:
    """Wrap one paragraph to :data:`WIDTH` columns with a hanging indent."""
    return textwrap.wrap(text, WIDTH, initial_indent=indent, subsequent_indent=indent + hang,
                         break_long_words=True, break_on_hyphens=False) or [indent.rstrip()]


def heading(title: str) -> list[str]:
    """A section heading after a blank line (the note's headings carry no underline)."""
    return ["", title.upper()]


def fit(lines: list[str]) -> list[str]:
    """Every line within :data:`WIDTH` columns (an overlong line is wrapped, never cut)."""
    out: list[str] = []
    for line in lines:
        if len(line) <= WIDTH:
            out.append(line.rstrip())
        else:
            lead = line[: len(line) - len(line.lstrip())]
            out += wrap(line.strip(), lead)
    return out


def table(header: tuple[str, ...], rows: list[tuple[str, ...]], first_width: int) -> list[str]:
    """A left-labelled table with right-aligned number columns of width 8."""
    def row(cells: tuple[str, ...]) -> str:
        return f"{cells[0]:<{first_width}}" + "".join(f"{c:>8}" for c in cells[1:])

    out = [row(header)]
    for r in rows:
        if len(r[0]) > first_width:
            out.append(r[0])
            out.append(row(("",) + r[1:]))
        else:
            out.append(row(r))
    return out


# --- timing of levels -------------------------------------------------------------

def level_timing(t: float, doses: list[Any], interval_h: float | None) -> str:
    """Where a level falls against the doses: ``1 h 05 min after the end of dose 8``.

    Args:
        t: level time, h.
        doses: the case's doses sorted by start (``start``, ``end``, ``duration`` h).
        interval_h: the current interval, h, to name the next dose when none is recorded.
    """
    before = [k for k, d in enumerate(doses) if d.start <= t]
    if not before:
        if not doses:
            return "no dose recorded"
        return f"before the first dose (baseline; {duration(doses[0].start - t)} before dose 1)"
    k = before[-1]
    d = doses[k]
    if d.duration <= 0.0:
        text = f"{duration(t - d.start)} after dose {k + 1} (bolus)"
    elif t < d.end:
        text = f"during the infusion of dose {k + 1}, {duration(t - d.start)} after its start"
    else:
        text = f"{duration(t - d.end)} after the end of the infusion of dose {k + 1}"
    if k + 1 < len(doses):
        text += f"; {duration(doses[k + 1].start - t)} before dose {k + 2}"
    elif interval_h and d.start + interval_h > t:
        text += f"; {duration(d.start + interval_h - t)} before the next dose due ({every(interval_h)})"
    return text


def level_when(t: float, doses: list[Any]) -> str:
    """A level's place against the doses in a few words: ``1 h after the end of dose 8``, ``30 min before dose 9``.

    Names the nearer of the end of the dose before and the start of the dose
    after (the next one due, when the course stops there).
    """
    before = [k for k, d in enumerate(doses) if d.start <= t]
    if not before:
        return "before the first dose" if doses else "no dose recorded"
    k = before[-1]
    d = doses[k]
    if t < d.end:
        return f"during the infusion of dose {k + 1}"
    since = f"{duration(t - d.end)} after the end of dose {k + 1}" if d.duration > 0 else \
        f"{duration(t - d.start)} after dose {k + 1} (bolus)"
    if k + 1 < len(doses) and doses[k + 1].start - t < t - d.end:
        return f"{duration(doses[k + 1].start - t)} before dose {k + 2}"
    return since


def terminal_half_life(params: PKParams) -> float:
    """ln 2 over the slowest disposition rate, h (beta for two compartments, pk-sources.md 2.6)."""
    if not params.is_two_compartment:
        return params.half_life
    k10, k12, k21 = params.cl / params.v1, params.q / params.v1, params.q / params.v2
    a = k10 + k12 + k21
    beta = 0.5 * (a - math.sqrt(a * a - 4.0 * k10 * k21))
    return math.log(2.0) / beta


def steady_state_share(params: PKParams, doses: list[Any], t: float, regimen: dict[str, Any]) -> float | None:
    """The model's concentration at ``t`` over its steady-state value at the same point.

    The model concentration at ``t`` from the real doses (superposition,
    pk-sources.md 2.2) is divided by the concentration the current regimen
    gives at steady state the same time after its latest dose start (2.3),
    simulated over 40 terminal half-lives (within 1e-12 of steady state).

    Returns:
        The share (1.0 = at steady state), or None without a dose before ``t``.
    """
    before = [d for d in doses if d.start <= t]
    if not before:
        return None
    hist = DoseArrays.from_lists([d.start for d in before], [d.duration for d in before],
                                 [d.amount for d in before])
    now = float(concentration(params, hist, np.array([t]))[0])
    tau, dose, tinf = float(regimen["interval_h"]), float(regimen["dose_mg"]), float(regimen["infusion_h"])
    n = int(min(5000, max(2, math.ceil(40.0 * terminal_half_life(params) / tau) + 1)))
    ss = DoseArrays.regimen(0.0, dose, tau, tinf, n)
    ref = float(concentration(params, ss, np.array([(n - 1) * tau + (t - before[-1].start)]))[0])
    return now / ref if ref > 0 else None


# --- phrases shared by the note's sections -------------------------------------------

MODES = {"auc": "AUC-guided", "peak-trough": "traditional dosing",
         "extended": "extended-interval", "continuous": "continuous infusion",
         "dialysis": "dose after each haemodialysis session"}


def raw_scr(case: Case, index: int | None) -> str:
    """`` (entered 601 umol/L)`` when the SCr was entered in another unit than mg/dL, else ''."""
    raw = (case.raw.get("patient") or {}).get("scr")
    text = raw if index is None else (raw[index] or {}).get("value") if isinstance(raw, list) else None
    return f" (entered {text})" if isinstance(text, str) and "mg/dL" not in text else ""


def target_lines(result: dict[str, Any], case: Case, default_mic: float | None) -> list[str]:
    """Target bands, each with the name of its source (never an empty one), and the MIC."""
    tg = result.get("target")
    if tg:
        groups: dict[str, list[str]] = {}
        for key, label, fmt, unit in (("auc24_mg_h_per_l", "AUC24", auc, "mg*h/L"),
                                      ("peak_mg_per_l", "peak", conc, "mg/L"),
                                      ("trough_mg_per_l", "trough", conc, "mg/L"),
                                      ("css_mg_per_l", "Css", conc, "mg/L"),
                                      ("pre_dialysis_mg_per_l", "pre-dialysis level", conc, "mg/L")):
            if tg.get(key):
                lo, hi = tg[key]
                src = key.split("_")[0]
                origin = (tg.get("sources") or {}).get(src, "")
                why = short_source((tg.get("citations") or {}).get(src) or "")
                if origin == "case" or not why:
                    why = {"case": "from the case", "protocol": "local protocol"}.get(origin, "drug library")
                groups.setdefault(why, []).append(f"{label} {fmt(lo)}-{fmt(hi)} {unit}")
        bands = [f"{', '.join(items)} ({why})" for why, items in groups.items()]
        ref = str(tg.get("peak_reference") or "")
        if ref.startswith("start+"):
            bands.append(f"peak read {ref[6:].replace('h', ' h').replace('  ', ' ')} after the start of the dose")
        text = f"Target, {MODES.get(str(tg.get('mode')), str(tg.get('mode', '-')))}: " + "; ".join(bands)
        mic = tg.get("mic_mg_per_l")
    else:
        text = "Target: not assessed (no regimen is designed while a stop stands)"
        mic = case.target.mic
    given = case.target.mic is not None
    if mic is None and default_mic is not None:
        mic = default_mic
    text += (f". MIC {mic:g} mg/L" + ("." if given else " (default).")
             if mic is not None else ". MIC not given.")
    return wrap(text)


def estimate_cells(e: dict[str, Any]) -> tuple[str, ...]:
    """ke, t1/2, Vd, CL and current AUC24 of one estimate, rounded for the table."""
    cur = e.get("current") or {}
    return (ke(e.get("ke_per_h")), hours(e.get("half_life_h")), litres(e.get("vd_l")),
            clearance(e.get("cl_l_per_h")), auc(cur.get("auc24_mg_h_per_l")))


def predicted(p: dict[str, Any]) -> str:
    """Predicted steady-state peak, trough and AUC24 in words (``peak 32.7, trough 16.3 mg/L, AUC24 568 mg*h/L``)."""
    peak, trough = conc(p.get("peak_mg_per_l")), conc(p.get("trough_mg_per_l"))
    levels = f"Css {peak} mg/L" if peak == trough else f"peak {peak}, trough {trough} mg/L"  # a continuous infusion
    text = f"{levels}, AUC24 {auc(p.get('auc24_mg_h_per_l'))} mg*h/L"
    if p.get("peak_at_reference_mg_per_l") is not None:
        text += (f"; {conc(p['peak_at_reference_mg_per_l'])} mg/L at "
                 f"{duration(p.get('peak_reference_h_after_start', 0))} after the start")
    return text


def regimen_words(r: dict[str, Any]) -> str:
    """``1000 mg every 12 h over 1 h``, or for a continuous infusion ``a continuous infusion of 93.8 mg/h``."""
    if r.get("mode") == "continuous" or r.get("infusion_h", 0) >= r.get("interval_h", 1):
        rate = r.get("rate_mg_per_h") or r["dose_mg"] / r["infusion_h"]
        return f"a continuous infusion of {rate:.1f} mg/h"
    return f"{mg(r['dose_mg'])} mg {every(r['interval_h'])} over {duration(r['infusion_h'])}"


def dose_runs(doses: list[Any]) -> list[list[int]]:
    """Indices of the doses in runs of the same amount, infusion, kind and timing at a steady interval."""
    runs: list[list[int]] = []
    for k, d in enumerate(doses):
        run = runs[-1] if runs else None
        if run:
            last = doses[run[-1]]
            step = d.start - last.start
            same = (d.amount, d.duration, d.kind, d.timing) == (last.amount, last.duration, last.kind, last.timing)
            regular = len(run) < 2 or abs(step - (last.start - doses[run[-2]].start)) < 1 / 120
            if same and regular and step > 0 and d.timing == "actual":
                run.append(k)
                continue
        runs.append([k])
    return runs
