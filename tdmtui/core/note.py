"""The chart note: a plain-text kinetics consult to paste into a progress note.

:func:`render_note` takes an :class:`~tdmtui.core.compute.Outcome` and writes,
in order: drug, indication and target; patient data and renal function; the
doses given; the levels and their timing; method, model and estimates beside
the other methods; current and proposed regimen; monitoring; warnings; the
standing caution; blank lines for the pharmacist to sign; and the record of
what produced the note. Plain text, at most 80 columns, no colour codes.
The elements follow pk-sources.md 6.2 (documentation of a kinetics consult).
Every figure is rounded by :mod:`tdmtui.core.notefmt`.
"""

from __future__ import annotations

from typing import Any

from tdmtui.core import notefmt as f
from tdmtui.core.fhir.provenance import note_lines as imported_note_lines
from tdmtui.core.safety import NOTE_LINE
from tdmtui.core.textsafe import neutralise

#: Method descriptions and their literature source (pk-sources.md 2.2-2.7).
METHOD_TEXT = {
    "two-level": "one-compartment model; ke and V solved exactly through the two most recent usable "
                 "levels with every dose superposed (standard infusion equations; two-level approach "
                 "after Pai MP et al. 2014, citation details from memory)",
    "sawchuk-zaske": "one-compartment, one dosing interval (Sawchuk RJ, Zaske DE. J Pharmacokinet "
                     "Biopharm 1976;4:183-195, citation from memory)",
    "least-squares": "one-compartment model fitted by least squares to every usable level, all doses "
                     "superposed (standard infusion equations)",
    "bayesian": "Bayesian estimate from the drug's published population models that fit the patient, "
                "each weighted by how well it explains these levels (maximum a posteriori on each model, "
                "log-normal between-patient variability; model averaging after Uster DW et al. 2021, from memory)",
    "population": "population values from CrCl and weight; no level used",
    "one-level": "one-compartment model with the population volume; ke solved from one level with every dose "
                 "superposed (standard infusion equations)",
    "one-level-steady-state": "the classic single-level method: steady-state infusion equation with the "
                              "population volume, solved for ke (standard infusion equations)",
    "continuous-steady-state": "level at steady state during a continuous infusion: CL = rate / level, "
                               "AUC24 = level x 24 (2020 vancomycin consensus guideline, from memory)",
    "nomogram": "level read against the drug's nomogram; the estimate below is the automatic method's",
}

SIGNATURE = ("Pharmacist: ____________________________________",
             "Date/time:  ____________________________________",
             "Prescriber contacted: __________________________")


def _patient(outcome: Any) -> list[str]:
    case, res, renal, rules = outcome.case, outcome.result, outcome.renal, outcome.rules
    p, rp = case.patient, res["patient"]
    lines = f.heading("Patient")
    size = f"{p.age:g} yr {p.sex}, weight {f.kg(p.weight)} kg, height {p.height:.0f} cm"
    if rp.get("bmi_kg_m2") is not None:
        size += f", BMI {rp['bmi_kg_m2']:.1f} kg/m2"
    lines += f.wrap(size + f"; IBW {f.kg(rp['ibw_kg'])} kg" +
                    (f", AdjBW {f.kg(rp['adjbw_kg'])} kg." if rp.get("adjbw_kg") is not None else "."))
    lines += f.wrap(f"CrCl {rp['crcl_ml_min']:.0f} mL/min: {rp['crcl_rule']}.")
    if rp.get("egfr_ckd_epi_ml_min_173") is not None:
        lines += f.wrap(f"eGFR (CKD-EPI 2021) {rp['egfr_ckd_epi_ml_min_173']:.0f} mL/min/1.73 m2, "
                        f"{rp['egfr_ckd_epi_ml_min']:.0f} mL/min for this body size.")
    rule = str(rp["dosing_weight_rule"]).removeprefix("dosing weight: ")
    lines += f.wrap(f"Dosing weight {f.kg(rp['dosing_weight_kg'])} kg: {rule}.")
    series = sorted(p.scr, key=lambda s: (s.time if s.time is not None else -1e18, s.index or 0))
    entries = [f"{f.scr(s.value)} mg/dL{f.raw_scr(case, s.index)}"
               + (f" on {f.when(case.clock.format(s.time))}" if s.time is not None else " (undated)")
               for s in series]
    lines += f.wrap("SCr: " + "; ".join(entries) + ".")
    if len(series) > 1 and series[0].time is not None:
        a, b = series[0], series[-1]
        change = b.value - a.value
        span = f.duration(b.time - a.time)
        if abs(change) < 0.005:
            lines.append(f"  SCr trend: unchanged over {span}, first to latest.")
        else:
            lines += f.wrap(f"SCr trend: {'up' if change > 0 else 'down'} {f.scr(abs(change))} mg/dL "
                            f"({100.0 * change / a.value:+.0f} %) over {span}, first to latest.", "  ")
    floor = float(rules.value("renal.scr_floor_mg_dl")) if rules else 0.0
    if floor > 0:
        used = renal.scr_used_mg_dl if renal else rp.get("scr_used_mg_dl")
        measured = series[-1].value
        how = (f"CrCl computed with the floor instead of the measured {f.scr(measured)} mg/dL" if used > measured
               else "the measured SCr is at or above it")
        lines += f.wrap(f"SCr floor {f.scr(floor)} mg/dL ({rules.source('renal.scr_floor_mg_dl')}: "
                        f"{rules.citation('renal.scr_floor_mg_dl')}); {how}.")
    else:
        lines.append("SCr floor: none applied.")
    rrt = {"none": "none", "ihd": "intermittent haemodialysis", "crrt": "continuous renal replacement",
           "pd": "peritoneal dialysis"}.get(p.renal_replacement, p.renal_replacement)
    lines += f.wrap(f"Renal replacement: {rrt}. Conditions: {', '.join(p.conditions) or 'none recorded'}.")
    lines += f.wrap(f"Co-medications: {', '.join(p.comedications) or 'none recorded'}.")
    return lines


def _doses(outcome: Any) -> list[str]:
    case = outcome.case
    lines = f.heading("Doses given")
    if not case.doses:
        return lines + ["No dose recorded: the course has not started."]
    for k, d in enumerate(case.doses):
        start, end = case.clock.format(d.start), case.clock.format(d.end)
        end_txt = f.when(end)[11:] if end[:10] == start[:10] else f.when(end)
        flags = [d.kind] if d.kind != "maintenance" else []
        flags += [d.timing + " time"] if d.timing != "actual" else []
        flags += ["after as_of: not used"] if d.start > case.as_of else []
        lines.append(f"{k + 1:>3}. {f.when(start)} to {end_txt}  {f.mg(d.amount)} mg over {f.duration(d.duration)}"
                     + (f"  ({', '.join(flags)})" if flags else ""))
    return lines


def _levels(outcome: Any) -> list[str]:
    case, res = outcome.case, outcome.result
    cur = res.get("current_regimen")
    lines = f.heading("Levels")
    if not case.levels:
        return lines + ["No level measured."]
    table = {row["field"]: row for row in res.get("levels", [])}
    within = float(outcome.rules.get("monitoring.steady_state_within_rel", 0.05)) if outcome.rules else 0.05
    last_share = None
    for lv in case.levels:
        row = table.get(f"levels[{lv.index}]", {})
        mark = "<" if lv.below_loq else (">" if lv.above_uloq else "")
        head = f"{f.when(case.clock.format(lv.time))}  {mark}{f.conc(lv.conc)} mg/L"
        text = head + ": drawn " + f.level_timing(lv.time, list(case.doses), cur and cur["interval_h"])
        if lv.timing != "actual":
            text += f"; {lv.timing} time"
        if not lv.use or row.get("usable") is False:
            why = lv.reason if not lv.use else row.get("excluded_because") or "not usable"
            text += f". SET ASIDE: {why}"
        elif outcome.params is not None and cur:
            share = f.steady_state_share(outcome.params, list(case.doses), lv.time, cur)
            if share is not None:
                text += f"; model: {f.pct(share)} of its steady-state value"
                last_share = share
        lines += f.wrap(text + ".", "", "    ")
    if last_share is None:
        lines.append("Steady state: not assessed (needs an estimate and a current regimen).")
    else:
        state = "at steady state" if abs(last_share - 1.0) <= within else "NOT at steady state"
        lines += f.wrap(f"Steady state: {state} at the latest usable level ({f.pct(last_share)}; within "
                        f"{f.pct(within)} of the steady-state value counts).")
    return lines


def _estimates(outcome: Any) -> list[str]:
    res = outcome.result
    est, method = res.get("estimate"), res.get("method")
    lines = f.heading("Method and estimate")
    if not est:
        lines += f.wrap("No estimate: no method applies to this case (see Warnings).")
    else:
        lines += f.wrap(f"Method: {method}: {METHOD_TEXT.get(method, method)}.")
        if res.get("method_reason"):
            lines += f.wrap(f"Why this method: {res['method_reason']}")
        if method == "nomogram":
            lines += f.wrap(f"Estimate beside it: {est.get('method')}: {METHOD_TEXT.get(est.get('method'), '')}.")
        if est.get("assumption"):
            lines += f.wrap(f"Assumption: {est['assumption']}.")
        if est.get("levels_used"):
            lines += f.wrap("Levels used: " + ", ".join(f.level_name(outcome.case, x) for x in est["levels_used"]) + ".")
        model = est.get("model") or {}
        if model:
            lines += f.wrap(f"Model: {model.get('id')}: {model.get('citation', '')}")
            if model.get("seed") is not None:
                obj = f"objective {model['objective']:.4g}; " if model.get("objective") is not None else ""
                lines += f.wrap(f"Fit: {model.get('optimiser', '-')}; {obj}"
                                f"intervals from {model.get('draws', '-')} draws, seed {model['seed']}.")
            if model.get("weights"):
                lines += f.wrap("Model weights (how well each model explains these levels): "
                                + ", ".join(f"{k} {f.pct(v)}" for k, v in model["weights"].items()) + ".")
            if model.get("covariates"):
                cov = ", ".join(f"{k} {v:.4g}" for k, v in model["covariates"].items())
                lines += f.wrap(f"Covariates: {cov}.")
        rows = [(f.row_name(est.get("method", method), est) + " (used)",) + f.estimate_cells(est)]
        rows += [(f.row_name(name, e),) + f.estimate_cells(e) for name, e in res.get("methods", {}).items()]
        width = max(16, min(36, max(len(r[0]) for r in rows) + 1))
        lines.append("")
        lines += f.table(("Method", "ke /h", "t1/2 h", "Vd L", "CL L/h", "AUC24"), rows, width)
        lines.append("AUC24 in mg*h/L for the current regimen at steady state." if res.get("current_regimen")
                     else "AUC24 in mg*h/L: none shown, no current regimen to predict.")
        iv = est.get("interval90") or {}
        if iv:
            parts = [f"{label} {fmt(iv[k][0])}-{fmt(iv[k][1])}{unit}"
                     for k, label, fmt, unit in (("ke_per_h", "ke", f.ke, " /h"), ("vd_l", "Vd", f.litres, " L"),
                                                 ("cl_l_per_h", "CL", f.clearance, " L/h"),
                                                 ("auc24_mg_h_per_l", "AUC24", f.auc, " mg*h/L"))
                     if k in iv]
            lines += f.wrap("90 % intervals: " + ", ".join(parts) + ".")
        if est.get("target_probability") is not None:
            lines += f.wrap(f"Probability the current regimen meets its target: {f.pct(est['target_probability'])}.")
        two = est.get("two_compartment")
        if two:
            parts = [f"{label} {fmt(two[k])}{unit}" for k, label, fmt, unit in (
                ("v1_l", "V1", f.litres, " L"), ("v2_l", "V2", f.litres, " L"), ("q_l_per_h", "Q", f.clearance, " L/h"),
                ("alpha_half_life_h", "alpha half-life", f.hours, " h"),
                ("beta_half_life_h", "terminal (beta) half-life", f.hours, " h"),
                ("vss_half_life_h", "ln 2 x Vss / CL", f.hours, " h")) if two.get(k) is not None]
            lines += f.wrap("Two-compartment model (figures above are the one-compartment equivalents, "
                            "Vd = V1 + V2): " + ", ".join(parts) + ".")
    for name, why in (res.get("methods_unavailable") or {}).items():
        lines += f.wrap(f"Not available: {name}: {why}.", "", "    ")
    return lines


def _chosen(reg: dict[str, Any], chosen: dict[str, Any] | None) -> list[str]:
    """The regimen picked in review, when it is not the proposal."""
    keys = ("dose_mg", "interval_h", "infusion_h")
    if not chosen or all(chosen.get(k) == reg.get(k) for k in keys):
        return []
    return f.wrap(f"Chosen in review instead: {f.regimen_words(chosen)}; predicted at steady state: "
                  + f.predicted(chosen.get("predicted") or {}) + ".")


def _regimen(outcome: Any, chosen: dict[str, Any] | None = None) -> list[str]:
    res = outcome.result
    est, cur, reg = res.get("estimate") or {}, res.get("current_regimen"), res.get("regimen")
    lines = f.heading("Regimen")
    if cur:
        lines += f.wrap(f"Current: {f.regimen_words(cur)} ({cur.get('source', '')}).")
        if est.get("current"):
            lines += f.wrap("Predicted at steady state: " + f.predicted(est["current"]) + ".", "  ")
    else:
        lines.append("Current: none (no standing order and fewer than two maintenance doses).")
    if not reg:
        why = ("a stop-level warning stands" if res.get("status") == "stop"
               else "the regimen designer gave none for this case")
        return lines + f.wrap(f"No regimen proposed: {why} (see Warnings).")
    verb = {"continue": "Continue", "change": "Change to", "hold-then-change": "Hold, then change to"}
    lines += f.wrap(f"Proposed: {verb.get(reg['action'], reg['action'])} {f.regimen_words(reg)}"
                    + (f" ({f.mg(reg['daily_dose_mg'])} mg a day)." if reg.get("daily_dose_mg") else "."))
    lines += f.wrap("Predicted at steady state: " + f.predicted(reg.get("predicted") or {}) + ".", "  ")
    lines += _chosen(reg, chosen)
    fc = reg.get("forecast_auc")
    if fc:
        lines += f.wrap(f"Predicted AUC from {f.when(fc.get('from'))}: first 24 h "
                        f"{f.auc(fc.get('day1_mg_h_per_l'))}, next 24 h {f.auc(fc.get('day2_mg_h_per_l'))} mg*h/L.", "  ")
    ld = reg.get("loading_dose")
    if ld:
        lines += f.wrap(f"Loading dose: {f.mg(ld['dose_mg'])} mg over {f.duration(ld['infusion_h'])} at "
                        f"{f.when(ld['at'])}" + (f" ({ld['basis']})." if ld.get("basis") else "."))
    else:
        lines.append("Loading dose: none.")
    lines.append(f"Hold: no dose until {f.when(reg['hold_until'])}." if reg.get("hold_until") else "Hold: none.")
    lines.append(f"Next dose: {f.when(reg.get('next_dose_at'))}.")
    for alt in reg.get("alternatives") or []:
        pr = alt.get("predicted") or {}
        lines += f.wrap(f"Also considered: {f.regimen_words(alt)}: AUC24 {f.auc(pr.get('auc24_mg_h_per_l'))}, "
                        f"peak {f.conc(pr.get('peak_mg_per_l'))}, trough {f.conc(pr.get('trough_mg_per_l'))}.", "", "    ")
    return lines


def _monitoring(outcome: Any) -> list[str]:
    reg, rules = outcome.result.get("regimen") or {}, outcome.rules
    lines = f.heading("Monitoring")
    levels = reg.get("next_levels") or []
    for nl in levels:
        why = str(nl.get("dose", "")).split(": ", 1)[-1]
        lines += f.wrap(f"Next level: {nl['kind']} at {f.when(nl['at'])}" + (f" ({why})." if why else "."))
    if not levels:
        lines.append("Next level: none planned by the tool.")
    if rules is not None:
        lines += f.wrap(f"Renal: {rules.value('monitoring.scr')}.")
        lines += f.wrap(f"Toxicity: {rules.value('monitoring.toxicity')}.")
    return lines


def _warnings(result: dict[str, Any]) -> list[str]:
    lines = f.heading("Warnings")
    ws = result.get("warnings") or []
    for w in ws:
        where = f" [{w['field']}]" if w.get("field") else ""
        lines += f.wrap(f"- {w['severity'].upper()}: {w['message']}{where}", "", "    ")
    return lines + ([] if ws else ["None raised."])


def _record(outcome: Any) -> list[str]:
    res, case = outcome.result, outcome.case
    lines = f.heading("Record")
    lines.append(f"tdmtui {res.get('version')}, drug library {res.get('library_version')}, "
                 f"method {res.get('method') or 'none'}.")
    if res.get("protocol_name") or res.get("protocol_sha256"):
        lines += [f"Local protocol: {res.get('protocol_name')}, sha256:", f"  {res.get('protocol_sha256')}"]
    else:
        lines.append("Local protocol: none (drug library values only).")
    lines.append(f"As of: {f.when(res.get('as_of'))}" + ("" if case.as_of_given else " (latest event; none given)")
                 + (f", time zone {case.clock.zone_name}" if case.clock.style == "zone" else "") + ".")
    saved = res.get("input_saved", case.saved)
    lines.append("Case file sha256:" if saved else "Case sha256 (UNSAVED: digest of its canonical form):")
    lines.append(f"  {res.get('input_sha256')}")
    return lines


def render_note(outcome: Any, chosen: dict[str, Any] | None = None) -> str:
    """The chart note for a computed case, plain text within 80 columns.

    Args:
        outcome: a :class:`~tdmtui.core.compute.Outcome` (its ``result``,
            ``case``, ``renal``, ``rules``, ``params``).
        chosen: optional regimen picked in review (shaped like
            ``result["regimen"]``: ``dose_mg``, ``interval_h``, ``infusion_h``,
            ``predicted``), printed beside the proposal when it differs.

    Returns:
        The note, lines joined with newlines, ending with a newline.
    """
    res, case = outcome.result, outcome.case
    status = "STOP: a stop-level warning stands" if res.get("status") == "stop" else "ok"
    lines = [f"{res['drug'].upper()} PHARMACOKINETIC CONSULT"]
    lines += f.wrap(f"Case: {case.label or '(no label)'}")
    lines.append(f"Assessed as of {f.when(res.get('as_of'))}. Status: {status}.")
    lines.append("")
    lines += f.wrap(f"Indication: {case.target.indication or 'not given'}.")
    lines += f.target_lines(res, case, outcome.rules.get("mic.default_mg_l") if outcome.rules else None)
    lines += _patient(outcome) + _doses(outcome) + _levels(outcome) + _estimates(outcome)
    lines += _regimen(outcome, chosen) + _monitoring(outcome) + _warnings(res)
    lines += [""] + f.wrap(NOTE_LINE, "", "") + [""] + list(SIGNATURE) + _record(outcome)
    lines += imported_note_lines(case.raw)
    # the output boundary: every line, free text included, loses its control characters here
    return "\n".join(f.fit([neutralise(line) for line in lines])) + "\n"
