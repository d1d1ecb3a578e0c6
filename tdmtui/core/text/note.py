"""The chart note: a plain-text kinetics consult to paste into a progress note.

:func:`render_note` takes an :class:`~tdmtui.core.compute.Outcome` and writes,
in order: drug and status; case, indication, assessment time and the clock
its times are on; target; patient and renal function; the doses
given; the levels and their timing; the method and estimate with the working
a reviewer can check by hand; the regimen (the one chosen in review, else
the proposal); monitoring; warnings; the standing caution; blank lines for
the pharmacist to sign; and the record of what produced the note. Plain
text, at most 80 columns, no colour codes, written for clinicians: how a
source was checked stays in the drug library and the audit record.

The standard note of a one- or two-level case fits in 60 lines, each fact said
once: the UTC offset all its times share is given in the header only, and
warnings raised together for one cause are one caution
(:mod:`tdmtui.core.text.notewarn`; the result keeps every code). ``full``
adds the table of every method, every model with its inputs, each dose on
its own line, and the references (each once). The elements follow
pk-sources.md 6.2 (documentation of a kinetics consult). Every figure is
rounded by :mod:`tdmtui.core.text.notefmt`.
"""

from __future__ import annotations

import re
from typing import TYPE_CHECKING, Any

from tdmtui.core.input import chosen as ch
from tdmtui.core.text import notefmt as f
from tdmtui.core.library import common_number
from tdmtui.core.text.provenance import note_lines as imported_note_lines
from tdmtui.core.text.notefull import full_section, model_words, references
from tdmtui.core.text.noteplan import estimate_lines, monitoring_lines, regimen_lines, warning_lines
from tdmtui.core.text.safety import NOTE_LINE
from tdmtui.core.input.textsafe import neutralise

if TYPE_CHECKING:
    from tdmtui.core.compute import Outcome

SIGNATURE = ("Pharmacist: ____________________________________",
             "Date/time:  ____________________________________",
             "Prescriber contacted: __________________________")


weight_words = f.weight_words  # the name the note's callers use


def _patient(outcome: Outcome) -> list[str]:
    case, res, renal, rules = outcome.case, outcome.result, outcome.renal, outcome.rules
    p, rp = case.patient, res["patient"]
    lines = f.heading("Patient and course")
    extra = [f"BMI {f.numfmt.num(rp['bmi_kg_m2'], 'bmi')}"] if rp.get("bmi_kg_m2") is not None else []
    extra += [f"IBW {f.kg(rp['ibw_kg'])} kg"] + ([f"AdjBW {f.kg(rp['adjbw_kg'])} kg"] if rp.get("adjbw_kg") else [])
    lines += f.wrap(f"{p.age:g} yr {p.sex}, {f.kg(p.weight)} kg, {p.height:.0f} cm; {', '.join(extra)}.")
    dw = weight_words(rp, p.weight, rp["dosing_weight_kg"]).rsplit(" ", 2)
    crcl_w = renal.crcl_weight_kg if renal else rp["dosing_weight_kg"]
    measured = renal.scr_measured_mg_dl if renal else p.scr[-1].value
    crcl = (f"Dosing weight {dw[1]} kg ({dw[0]}). CrCl {f.numfmt.num(rp['crcl_ml_min'], 'crcl')} mL/min (Cockcroft-Gault, "
            f"{weight_words(rp, p.weight, crcl_w).rsplit(' ', 2)[0]}, SCr {f.scr(measured)} mg/dL)")
    if rp.get("egfr_ckd_epi_ml_min_173") is not None:
        crcl += f"; eGFR {f.numfmt.qty(rp['egfr_ckd_epi_ml_min_173'], 'egfr')}"
    lines += f.wrap(crcl + ".")
    used = renal.scr_used_mg_dl if renal else rp.get("scr_used_mg_dl")
    if rules is not None and used is not None and used > measured:
        floor = float(rules.value("renal.scr_floor_mg_dl"))
        lines += f.wrap(f"SCr floor {f.scr(floor)} mg/dL ({rules.source('renal.scr_floor_mg_dl')}: "
                        f"{f.plain_source(rules.citation('renal.scr_floor_mg_dl'))}); CrCl computed with the floor "
                        f"instead of the measured {f.scr(measured)} mg/dL.")
    lines += f.wrap(_scr_history(case))
    rrt = {"none": "none", "ihd": "intermittent haemodialysis", "crrt": "continuous renal replacement",
           "pd": "peritoneal dialysis"}.get(p.renal_replacement, p.renal_replacement)
    lines += f.wrap(_recorded([("Renal replacement", "" if rrt == "none" else rrt),
                               ("Conditions", ", ".join(c.replace("-", " ") for c in p.conditions)),
                               ("Co-medications", ", ".join(p.comedications))]))
    return lines


def _recorded(items: list[tuple[str, str]]) -> str:
    """``Conditions: frailty. No renal replacement or co-medications.`` (what is recorded, then what is not)."""
    given = [f"{name}: {value}." for name, value in items if value]
    empty = [name.lower() for name, value in items if not value]
    if empty:
        given.append("No " + (empty[0] if len(empty) == 1 else ", ".join(empty[:-1]) + " or " + empty[-1]) + ".")
    return " ".join(given)


def _scr_history(case: Any) -> str:
    series = sorted(case.patient.scr, key=lambda s: (s.time if s.time is not None else -1e18, s.index or 0))
    entries, year = [], None
    for s in series:
        when = f.when(case.clock.format(s.time)) if s.time is not None else ""
        shown = when[5:] if year is not None and when[:4] == year else when  # the year once, as the doses give it
        year = when[:4] if when else year
        entries.append(f"{f.scr(s.value)}{f.raw_scr(case, s.index)}" + (f" on {shown}" if when else " (undated)"))
    text = "SCr (mg/dL): " + ", ".join(entries)
    if len(series) > 1 and series[0].time is not None:
        a, b = series[0], series[-1]
        change, span = b.value - a.value, f.duration(b.time - a.time)
        text += (", unchanged" if abs(change) < 0.005 else
                 f"; {'+' if change > 0 else '-'}{f.scr(abs(change))} ({100.0 * change / a.value:+.0f} %) in {span}")
    return text + "."


def _doses(outcome: Outcome, full: bool) -> list[str]:
    case = outcome.case
    doses = list(case.doses)
    lines: list[str] = []
    if not doses:
        return lines + ["Doses: none recorded (the course has not started)."]
    runs = [[k] for k in range(len(doses))] if full else f.dose_runs(doses)
    for n, run in enumerate(runs):
        d = doses[run[0]]
        flags = [d.kind] if d.kind != "maintenance" else []
        flags += [d.timing + " time"] if d.timing != "actual" else []
        flags += ["after the assessment time: not used"] if d.start > case.as_of else []
        tail = f"  ({', '.join(flags)})" if flags else ""
        start = f.when(case.clock.format(d.start))
        lead = "Doses: " if n == 0 else "       "
        if len(run) == 1:
            lines.append(f"{lead}{run[0] + 1}. {start}  {f.mg(d.amount)} mg over {f.duration(d.duration)}{tail}")
            continue
        last = f.when(case.clock.format(doses[run[-1]].start))
        last = last[5:] if last[:4] == start[:4] else last  # the year once
        step = doses[run[1]].start - d.start
        lines += f.wrap(f"{lead}{run[0] + 1}-{run[-1] + 1}. {f.mg(d.amount)} mg over {f.duration(d.duration)} "
                        f"{f.every(step)}, {start} to {last}{tail}", "", "         ")
    return lines


def _levels(outcome: Outcome, full: bool) -> list[str]:
    case, res = outcome.case, outcome.result
    cur = res.get("current_regimen")
    if not case.levels:
        return ["Levels: none measured."]
    lines = ["Levels:"]
    table = {row["field"]: row for row in res.get("levels", [])}
    used = set((res.get("estimate") or {}).get("levels_used") or [])
    key = "monitoring.steady_state_within_rel"
    within = float(outcome.rules.value(key)) if outcome.rules else common_number(key)
    last_share = None
    for n, lv in enumerate(case.levels, 1):
        row = table.get(f"levels[{lv.index}]", {})
        mark = "<" if lv.below_loq else (">" if lv.above_uloq else "")
        text = (f"{n:>3}. {f.when(case.clock.format(lv.time))}  {mark}{f.conc(lv.conc)} mg/L: "
                + (f.level_timing(lv.time, list(case.doses), cur and cur["interval_h"]) if full
                   else f.level_when(lv.time, list(case.doses))))
        if lv.timing != "actual":
            text += f"; {lv.timing} time"
        if lv.use and row.get("usable") is False and f"levels[{lv.index}]" in used and mark:
            pass  # beyond an assay limit, taken by the estimate as a bound (its Method line says so)
        elif not lv.use or row.get("usable") is False:
            why = lv.reason if not lv.use else f.local_times(row.get("excluded_because") or "not usable")
            text += f". SET ASIDE: {f.plain_paths(why)}"
        elif outcome.params is not None and cur:
            last_share = f.steady_state_share(outcome.params, list(case.doses), lv.time, cur) or last_share
        lines += f.wrap(text + ".", "", "      ")
    if last_share is not None:
        state = "at steady state" if abs(last_share - 1.0) <= within else "NOT at steady state"
        lines[0] = f"Levels ({state}: the latest usable one is at {f.pct(last_share)} of it):"
    return lines


def _record(outcome: Outcome) -> list[str]:
    res, case = outcome.result, outcome.case
    proto = (f"local protocol {res.get('protocol_name')} (sha256 {res.get('protocol_sha256')})"
             if res.get("protocol_name") or res.get("protocol_sha256") else "no local protocol")
    lines = [""] + f.wrap(f"Written by tdmtui {res.get('version')}, drug library {res.get('library_version')}, "
                          f"{res.get('method') or 'no method'}, {proto}.")
    saved = res.get("input_saved", case.saved)
    lines.append(f"Case sha256 {res.get('input_sha256')}" if saved else f"UNSAVED sha256 {res.get('input_sha256')}")
    return lines


def _shared_offset(case: Any) -> str | None:
    """The UTC offset every time of the note carries (each is written in it), for a case with offsets."""
    return (case.clock.out_offset or "Z") if case.clock.style == "offset" else None


def _entered_offsets(node: Any) -> set[str]:
    """The UTC offsets written on the case's times, as entered."""
    if isinstance(node, dict):
        return set().union(*(_entered_offsets(v) for v in node.values())) if node else set()
    if isinstance(node, list):
        return set().union(*(_entered_offsets(v) for v in node)) if node else set()
    m = _ENTERED.fullmatch(node) if isinstance(node, str) else None
    return {m.group(1)} if m else set()


_ENTERED = re.compile(r"\d{4}-\d{2}-\d{2}T\d{2}:\d{2}(?::\d{2}(?:\.\d+)?)?(Z|[+-]\d{2}:\d{2})")


def _clock_words(case: Any) -> str:
    """The clock the note's times are on, said once: a time zone, or the UTC offset they all carry."""
    if case.clock.style == "zone":
        return f" (times {case.clock.zone_name})"
    off = _shared_offset(case)
    if off is None:
        return ""
    label = "UTC" if off in ("Z", "+00:00") else f"UTC{off}"
    if _entered_offsets(case.raw) - {off}:
        return f" (times {label}; those entered at another offset converted to it)"
    return f" (times {label})"


def _header(outcome: Outcome) -> list[str]:
    res, case = outcome.result, outcome.case
    status = "STOP: a stop-level warning stands" if res.get("status") == "stop" else "ok"
    lines = [f"{res['drug'].upper()} PHARMACOKINETIC CONSULT - status: {status}"]
    when = f.when(res.get("as_of")) + ("" if case.as_of_given else " (latest event; none given)")
    label, assessed = f"Case: {case.label or '(no label)'}", f"Assessed as of {when}{_clock_words(case)}."
    indication = f"Indication: {case.target.indication or 'not given'}."
    after_time = f.wrap(label) + f.wrap(f"{assessed} {indication}")
    after_label = f.wrap(f"{label.rstrip('.')}. {indication}") + f.wrap(assessed)
    lines += after_label if len(after_label) < len(after_time) else after_time  # the layout in fewer lines
    return lines + f.target_lines(res, case, outcome.rules.get("mic.default_mg_l") if outcome.rules else None)


def chosen_of(outcome: Outcome, chosen: dict[str, Any] | None = None) -> tuple[dict[str, Any] | None, bool]:
    """The regimen the note gives and whether it was chosen in review.

    ``chosen`` (``dose_mg``, ``interval_h``, ``infusion_h``) overrides the
    case's ``chosen_regimen`` key; a choice no longer offered gives the proposal.
    """
    wanted = chosen if chosen is not None else ch.parse_chosen(outcome.case.raw)
    found = ch.find(outcome.result, wanted)
    if found is not None:
        return found, True
    return outcome.result.get("regimen"), False


def render_note(outcome: Outcome, chosen: dict[str, Any] | None = None, full: bool = False) -> str:
    """The chart note for a computed case, plain text within 80 columns.

    Args:
        outcome: a :class:`~tdmtui.core.compute.Outcome` (its ``result``,
            ``case``, ``renal``, ``rules``, ``params``).
        chosen: the regimen picked in review (``dose_mg``, ``interval_h``,
            ``infusion_h``); None reads the case's ``chosen_regimen`` key.
            When it is one of the regimens offered, the note gives it as the
            regimen (its hold, loading dose, next dose and level times).
        full: add every method, every model and the references.

    Returns:
        The note, lines joined with newlines, ending with a newline.
    """
    with f.shared_offset(_shared_offset(outcome.case)):
        lines = _lines(outcome, chosen, full)
    lines += imported_note_lines(outcome.case.raw)  # each value as imported, its time with its own offset
    # the output boundary: every line, free text included, loses its control characters here
    return "\n".join(f.fit([neutralise(line) for line in lines])) + "\n"


def _lines(outcome: Outcome, chosen: dict[str, Any] | None, full: bool) -> list[str]:
    wanted = chosen if chosen is not None else ch.parse_chosen(outcome.case.raw)
    regimen, picked = chosen_of(outcome, chosen)
    lines = _header(outcome) + _patient(outcome) + _doses(outcome, full) + _levels(outcome, full)
    lines += estimate_lines(outcome, regimen, model_words(outcome), full)
    lines += regimen_lines(outcome, regimen, picked, wanted, full) + monitoring_lines(outcome, regimen)
    lines += warning_lines(outcome.result, full)
    if full:
        lines += full_section(outcome) + references(outcome)
    lines += [""] + f.wrap(NOTE_LINE, "", "") + list(SIGNATURE) + _record(outcome)  # signed under the caution
    return lines
