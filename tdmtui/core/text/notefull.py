"""The chart note's model inputs in words, its optional full section and its references.

:func:`model_words` names the model behind the estimate used and the values
it was given, in words ("CrCl 102 mL/min (Cockcroft-Gault, total body
weight, as the model defines it)"), with the reason when the model's CrCl
differs from the patient's headline CrCl. :func:`full_section` adds, for
``tdmtui note --full``, every method side by side and each model's inputs;
:func:`references` lists each source once.
"""

from __future__ import annotations

import re
from typing import TYPE_CHECKING, Any

from tdmtui.core.text import notefmt as f

if TYPE_CHECKING:
    from tdmtui.core.compute import Outcome

#: The literature behind each level method (pk-sources.md 2.2-2.4; titles and pages from memory).
METHOD_REFERENCES = {
    "two-level": "Pai MP, Neely M, Rodvold KA, Lodise TP. Innovative approaches to optimizing the delivery of "
                 "vancomycin in individual patients. Adv Drug Deliv Rev 2014;77:50-57",
    "sawchuk-zaske": "Sawchuk RJ, Zaske DE. Pharmacokinetics of dosing regimens which utilize multiple "
                     "intravenous infusions: gentamicin in burn patients. J Pharmacokinet Biopharm 1976;4:183-195",
}
_WEIGHTS = {"tbw": "total body weight", "ibw": "ideal body weight", "adjbw": "adjusted body weight"}


def _rules_of(model_id: str) -> dict[str, Any]:
    from tdmtui.core.estimation.popmodels import get_model

    try:
        return dict(get_model(model_id).data.get("covariates") or {})
    except (KeyError, ValueError):
        return {}


def _used_covariates(model_id: str) -> list[str]:
    from tdmtui.core.estimation.popmodels import get_model

    try:
        params = get_model(model_id).data.get("parameters") or {}
    except (KeyError, ValueError):
        return []
    return sorted({t["covariate"] for spec in params.values() for k in ("linear", "power", "factor")
                   for t in spec.get(k, [])})


def _crcl_words(outcome: Outcome, model_id: str, value: float) -> str:
    """The model's CrCl; when it differs from the patient's CrCl above, how the model computes it and why."""
    rules = _rules_of(model_id)
    weight = _WEIGHTS.get(str(rules.get("crcl_weight", "tbw")), str(rules.get("crcl_weight")))
    headline = outcome.result["patient"]["crcl_ml_min"]
    if abs(value - headline) < 0.5:  # the patient's CrCl above, however the model defines it
        return f"CrCl {value:.0f} mL/min"
    how = [f"the model's Cockcroft-Gault on {weight}"]
    renal = outcome.renal
    floor = float(rules.get("scr_floor_mg_dl", 0) or 0)
    if floor > 0 and renal is not None and renal.scr_measured_mg_dl < floor:
        how.append(f"SCr raised to {f.scr(floor)} mg/dL")
    if renal is not None and renal.scr_used_mg_dl > renal.scr_measured_mg_dl:
        how.append("the SCr floor")
    if float(rules.get("crcl_cap_ml_min", 0) or 0) and value >= float(rules["crcl_cap_ml_min"]) - 0.5:
        how.append(f"capped at {float(rules['crcl_cap_ml_min']):.0f} mL/min")
    text = f"CrCl {value:.0f} mL/min ({', '.join(how)}"
    rp = outcome.result["patient"]
    model_weight = {"tbw": outcome.case.patient.weight, "ibw": rp.get("ibw_kg"),
                    "adjbw": rp.get("adjbw_kg")}.get(str(rules.get("crcl_weight", "tbw")))
    if renal is not None and model_weight and abs(headline * model_weight / renal.crcl_weight_kg - headline) >= 0.5:
        # the weights differ enough to change CrCl (Cockcroft-Gault is proportional to weight)
        text += "; the CrCl above uses " + f.weight_words(rp, outcome.case.patient.weight, renal.crcl_weight_kg)
    return text + ")"


def input_parts(outcome: Outcome, e: dict[str, Any]) -> list[str]:
    """The values a model was given, in words, only those the model uses."""
    model = e.get("model") or {}
    mid, cov = str(model.get("id") or ""), model.get("covariates") or {}
    used = _used_covariates(mid) or list(cov)
    parts = []
    if ("crcl_cg" in used or "crcl_cg_l_h" in used) and "crcl_cg" in cov:
        parts.append(_crcl_words(outcome, mid, float(cov["crcl_cg"])))
    words = {"tbw": ("weight", "kg"), "height": ("height", "cm"), "age": ("age", "yr")}
    for key, (label, unit) in words.items():
        if key in used and key in cov:
            parts.append(f"{label} {float(cov[key]):g} {unit}")
    if "dial" in used and "dial" in cov:
        parts.append("on intermittent haemodialysis" if cov["dial"] else "not on dialysis")
    return parts


def inputs_in_words(outcome: Outcome, e: dict[str, Any]) -> str:
    """:func:`input_parts` joined."""
    return ", ".join(input_parts(outcome, e))


def model_words(outcome: Outcome) -> list[str]:
    """The model behind the estimate used and what it was given (empty for level methods).

    For a model average, the inputs the models share are given once and the
    others with the model's name.
    """
    e = outcome.result.get("estimate") or {}
    model = e.get("model") or {}
    if not model.get("id"):
        return []
    if not model.get("weights"):
        words = inputs_in_words(outcome, e)
        return f.wrap(f"Model: {model.get('name') or model['id']}" + (f"; its inputs: {words}." if words else "."))
    each = []
    for mid in model["weights"]:
        part = (outcome.result.get("methods") or {}).get(f"bayesian:{mid}") or {}
        each.append((str((part.get("model") or {}).get("name", mid)).split(" (")[0], input_parts(outcome, part)))
    common = [p for p in each[0][1] if all(p in parts for _, parts in each)] if each else []
    extra = [f"{name} also {', '.join(p for p in parts if p not in common)}" for name, parts in each
             if any(p not in common for p in parts)]
    if not common and not extra:
        return []
    return f.wrap("Model inputs: " + "; ".join([", ".join(common)] + extra if common else extra) + ".")


def _table(res: dict[str, Any]) -> list[str]:
    from tdmtui.core.text.noteplan import method_label

    est = res["estimate"]
    rows = [(method_label(est.get("method", res.get("method")), est) + " (used)",) + f.estimate_cells(est)]
    rows += [(method_label(name, e),) + f.estimate_cells(e) for name, e in (res.get("methods") or {}).items()]
    width = max(16, min(36, max(len(r[0]) for r in rows) + 1))
    out = f.table(("Method", "ke /h", "t1/2 h", "Vd L", "CL L/h", "AUC24"), rows, width)
    return out + ["AUC24 in mg*h/L for the current regimen at steady state." if res.get("current_regimen")
                  else "AUC24 in mg*h/L: none shown, no current regimen to predict."]


def _model_detail(outcome: Outcome, label: str, e: dict[str, Any]) -> list[str]:
    model = e.get("model") or {}
    lines = f.wrap(f"{label}: {inputs_in_words(outcome, e) or 'no inputs recorded'}.", "", "    ")
    iv = e.get("interval90") or {}
    parts = [f"{name} {fmt(iv[k][0])}-{fmt(iv[k][1])}{unit}"
             for k, name, fmt, unit in (("ke_per_h", "ke", f.ke, " /h"), ("vd_l", "Vd", f.litres, " L"),
                                        ("cl_l_per_h", "CL", f.clearance, " L/h"),
                                        ("auc24_mg_h_per_l", "AUC24", f.auc, " mg*h/L")) if k in iv]
    if parts:
        seed = f" ({model.get('draws', '-')} draws, seed {model['seed']})" if model.get("seed") is not None else ""
        lines += f.wrap(f"90 % intervals{seed}: " + ", ".join(parts) + ".", "    ", "  ")
    two = e.get("two_compartment")
    if two:
        parts = [f"{name} {fmt(two[k])}{unit}" for k, name, fmt, unit in (
            ("v1_l", "V1", f.litres, " L"), ("v2_l", "V2", f.litres, " L"), ("q_l_per_h", "Q", f.clearance, " L/h"),
            ("alpha_half_life_h", "alpha half-life", f.hours, " h"),
            ("beta_half_life_h", "terminal (beta) half-life", f.hours, " h"),
            ("vss_half_life_h", "ln 2 x Vss / CL", f.hours, " h")) if two.get(k) is not None]
        lines += f.wrap("two compartments (Vd = Vss = V1 + V2): " + ", ".join(parts) + ".", "    ", "  ")
    return lines


def full_section(outcome: Outcome) -> list[str]:
    """Every method side by side, each model with its inputs, the methods that did not apply."""
    from tdmtui.core.text.noteplan import method_label

    res = outcome.result
    lines = ["", "EVERY METHOD (FULL DETAIL)"]
    if res.get("estimate"):
        lines += _table(res)
        everything = [(method_label(res.get("estimate", {}).get("method", ""), res["estimate"]) + " (used)",
                       res["estimate"])]
        everything += [(method_label(n, e), e) for n, e in (res.get("methods") or {}).items()]
        for label, e in everything:
            if (e.get("model") or {}).get("id"):
                lines += _model_detail(outcome, label, e)
    for name, why in (res.get("methods_unavailable") or {}).items():
        lines += f.wrap(f"Not available: {name}: {f.plain_paths(why)}.", "", "    ")
    return lines


_JOURNAL = re.compile(r"\b\d{4};\d+(?:\(\d+\))?:\d+-\d+")


def _same_work(text: str, listed: list[str]) -> bool:
    """True when ``text`` cites a paper (year;volume:pages) that a listed reference already cites."""
    m = _JOURNAL.search(text)
    return m is not None and any(m.group(0) in other for other in listed)


def references(outcome: Outcome) -> list[str]:
    """Each source the note rests on, once, as a clinician would cite it."""
    res, rules = outcome.result, outcome.rules
    found: list[str] = []
    for e in [res.get("estimate") or {}, *(res.get("methods") or {}).values()]:
        found.append(METHOD_REFERENCES.get(str(e.get("method", "")).split(":")[0], ""))
        if (e.get("model") or {}).get("name"):  # a published model (not the textbook equations)
            found.append(str(e["model"].get("citation") or ""))
    tg = res.get("target") or {}
    found += [str(v) for v in (tg.get("citations") or {}).values() if v != "target written in the case"]
    if rules is not None and float(rules.value("renal.scr_floor_mg_dl")) > 0:
        found.append(str(rules.citation("renal.scr_floor_mg_dl")))
    reg = res.get("regimen") or {}
    for r in [reg, *(reg.get("alternatives") or [])]:  # the sources the loading dose's basis names in the Plan
        found += f.nested(str((r.get("loading_dose") or {}).get("basis") or ""))
    seen: list[str] = []
    for text in (f.plain_source(x).rstrip(".") for x in found):
        if text and text not in seen and not _same_work(text, seen):
            seen.append(text)
    if not seen:
        return []
    lines = ["", "REFERENCES"]
    for n, text in enumerate(seen, 1):
        lines += f.wrap(f"{n}. {text}.", "", "   ")
    return lines
