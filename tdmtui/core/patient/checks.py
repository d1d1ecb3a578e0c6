"""Patient-level cautions and stops: adult range, dialysis, conditions, co-medications, MIC."""

from __future__ import annotations

from tdmtui.core.alerts import Alert
from tdmtui.core.input.casetypes import Case
from tdmtui.core.errors import InputError
from tdmtui.core.library import Rules

CODES = {
    "age-out-of-range": "patient outside the adult range the equations were built on",
    "renal-replacement": "dialysis or CRRT: Cockcroft-Gault and two-level methods do not apply",
    "condition": "a documented condition that changes kinetics",
    "nephrotoxin": "a co-medication with known nephrotoxic risk",
    "mic-high": "vancomycin MIC of 2 mg/L or more",
    "obesity-extreme": "BMI of 40 or more, or weight over twice IBW",
    "scr-low": "a low SCr in an older or low-muscle-mass patient: Cockcroft-Gault overstates CrCl",
}


def body_plausibility(weight_kg: float, height_cm: float, scr_mg_dl: list[tuple[float, str]], rules: Rules) -> None:
    """Input errors for a weight, height or SCr (value, field) no adult has (library ``plausible.*``): the
    engine's check, which the app's derived values apply too before showing any figure from them."""
    _check_range(weight_kg, "plausible.weight_kg", "patient.weight", rules, "weight", "kg")
    _check_range(height_cm, "plausible.height_cm", "patient.height", rules, "height", "cm")
    for value, field in scr_mg_dl:
        _check_range(value, "plausible.scr_mg_dl", field, rules, "serum creatinine", "mg/dL")


def _check_range(value: float, key: str, field: str, rules: Rules, what: str, unit: str) -> None:
    lo, hi = (float(x) for x in rules.value(key))
    if not lo <= value <= hi:
        raise InputError(field, f"{value:g} {unit} is outside the plausible adult {what} {lo:g}-{hi:g} {unit} "
                                f"(check the number and the unit, e.g. lb typed as kg, umol/L as mg/dL)")


def plausibility(case: Case, rules: Rules) -> None:
    """Input errors for body values no adult has (library ``plausible.*``)."""
    p = case.patient
    body_plausibility(p.weight, p.height, [(s.value, s.field) for s in p.scr], rules)
    for d in case.doses:
        lo, hi = (float(x) for x in rules.value("plausible.infusion_h"))
        if not lo <= d.duration <= hi:
            raise InputError(f"doses[{d.index}].duration", f"an infusion of {d.duration:g} h is outside {lo:g}-{hi:g} h")
    _levels_after_first_dose(case)


def _levels_after_first_dose(case: Case) -> None:
    """A quantified level in use drawn at or before the first recorded dose is an input error.

    Drug was on board before any recorded dose: almost always a mistyped date
    (a year or a month slipped), else doses given elsewhere were not entered.
    Neither can be computed around; a baseline level below the assay limit, or
    one set aside (``use: false``), is fine.
    """
    first = min(case.doses, key=lambda d: d.start) if case.doses else None
    for lv in case.levels:
        if not (lv.use and lv.quantified and lv.conc > 0):
            continue
        if first is None:
            raise InputError(f"levels[{lv.index}].time",
                             f"level {lv.conc:g} mg/L with no dose recorded: enter the doses given (or set use: false "
                             "on this level)")
        if lv.time <= first.start:
            raise InputError(f"levels[{lv.index}].time",
                             f"{case.clock.format(lv.time)} is at or before the first recorded dose (doses[{first.index}] "
                             f"at {case.clock.format(first.start)}), yet the level is {lv.conc:g} mg/L: check the date "
                             "and time; if doses were given before (another ward or hospital), enter them, or set "
                             "use: false on this level")


def low_scr_alerts(case: Case, rules: Rules, crcl_ml_min: float, scr_used_mg_dl: float, scr_measured: float,
                   field: str) -> list[Alert]:
    """``scr-low``: a SCr under ``renal.scr_low_mg_dl`` in a patient of ``renal.scr_low_age_yr`` or
    more, or with a condition of ``renal.scr_low_conditions`` (low muscle mass).

    Quiet when a SCr floor or a CrCl cap of the local protocol already acted on this value
    (pk-sources.md 1.1 and 1.4: Cockcroft-Gault overestimates in the frail elderly with a low
    SCr; rounding up is common practice with mixed evidence).
    """
    p = case.patient
    low = float(rules.value("renal.scr_low_mg_dl"))
    frail = [c for c in p.conditions if c in set(rules.value("renal.scr_low_conditions"))]
    older = p.age >= float(rules.value("renal.scr_low_age_yr"))
    if scr_measured >= low or not (older or frail) or scr_used_mg_dl > scr_measured:
        return []
    cap = float(rules.value("renal.crcl_cap_ml_min"))
    if cap > 0 and crcl_ml_min >= cap - 1e-9:
        return []
    who = f"age {p.age:g} yr" if older else "low muscle mass"
    if frail:
        who += (" and " if older else " (") + ", ".join(frail) + ("" if older else ")")
    return [Alert("scr-low", "caution", field,
                  f"SCr {scr_measured:g} mg/dL with {who}: a low creatinine from low muscle mass makes Cockcroft-Gault "
                  f"overstate renal function (CrCl {crcl_ml_min:.0f} mL/min here) and the dose rests on it. Options "
                  "the local protocol can set: round SCr up (renal.scr_floor_mg_dl, 0.8 mg/dL as in Reichley 1995 "
                  "or 1.0 mg/dL; rounding up can understate CrCl, Smythe 1994, Winter 2012) or cap CrCl "
                  "(renal.crcl_cap_ml_min, e.g. 150 mL/min as evaluated by Hughes 2024); or measure CrCl, and draw "
                  "an early level")]


def patient_alerts(case: Case, rules: Rules, bmi: float, ibw: float, mic: float) -> list[Alert]:
    """Cautions and stops about the patient as a whole."""
    p = case.patient
    out: list[Alert] = []
    lo, hi = (float(x) for x in rules.value("plausible.age_yr"))
    if not lo <= p.age <= hi:
        out.append(Alert("age-out-of-range", "stop", "patient.age",
                         f"age {p.age:g} yr is outside {lo:g}-{hi:g} yr: this tool's equations and models are for adults "
                         f"({rules.citation('plausible.age_yr')})"))
    from tdmtui.core.input.dialysis import renal_replacement_alerts

    out += renal_replacement_alerts(case, rules)
    known = rules.get("conditions", {}) or {}
    for i, c in enumerate(p.conditions):
        out.append(Alert("condition", "caution", f"patient.conditions[{i}]", str(known.get(c, c))))
    names = [str(n).lower() for n in rules.value("nephrotoxins.names")]
    for i, c in enumerate(p.comedications):
        if c.strip().lower() in names and c.strip().lower() != case.drug:
            advice = "added nephrotoxic risk; monitor SCr closely"
            out.append(Alert("nephrotoxin", "caution", f"patient.comedications[{i}]", f"{c} with {case.drug}: {advice}",
                             {"comedication": c, "drug": case.drug, "advice_text": advice}))
    if case.drug == "vancomycin" and mic >= float(rules.value("targets.mic_caution_mg_l")):
        out.append(Alert("mic-high", "caution", "target.mic",
                         f"MIC {mic:g} mg/L: an AUC24/MIC of 400-600 is unlikely to be reached safely; consider another agent"))
    bmi_max = float(rules.value("population_limits.obesity_extreme_bmi"))
    ratio_max = float(rules.value("population_limits.obesity_extreme_ibw_ratio"))
    if bmi >= bmi_max or p.weight > ratio_max * ibw:
        out.append(Alert("obesity-extreme", "caution", "patient.weight",
                         f"BMI {bmi:.1f} kg/m2 (weight {p.weight / ibw:.0%} of IBW): population values fit poorly; rely on levels"))
    return out
