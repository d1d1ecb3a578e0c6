"""Patient-level cautions and stops: adult range, dialysis, conditions, co-medications, MIC."""

from __future__ import annotations

from tdmtui.core.alerts import Alert
from tdmtui.core.case import Case
from tdmtui.core.errors import InputError
from tdmtui.core.library import Rules

CODES = {
    "age-out-of-range": "patient outside the adult range the equations were built on",
    "renal-replacement": "dialysis or CRRT: Cockcroft-Gault and two-level methods do not apply",
    "condition": "a documented condition that changes kinetics",
    "nephrotoxin": "a co-medication with known nephrotoxic risk",
    "mic-high": "vancomycin MIC of 2 mg/L or more",
    "obesity-extreme": "BMI of 40 or more, or weight over twice IBW",
}


def _check_range(value: float, key: str, field: str, rules: Rules, what: str, unit: str) -> None:
    lo, hi = (float(x) for x in rules.value(key))
    if not lo <= value <= hi:
        raise InputError(field, f"{value:g} {unit} is outside the plausible adult {what} {lo:g}-{hi:g} {unit} "
                                f"(check the number and the unit, e.g. lb typed as kg, umol/L as mg/dL)")


def plausibility(case: Case, rules: Rules) -> None:
    """Input errors for body values no adult has (library ``plausible.*``)."""
    p = case.patient
    _check_range(p.weight, "plausible.weight_kg", "patient.weight", rules, "weight", "kg")
    _check_range(p.height, "plausible.height_cm", "patient.height", rules, "height", "cm")
    for s in p.scr:
        _check_range(s.value, "plausible.scr_mg_dl", s.field, rules, "serum creatinine", "mg/dL")
    for d in case.doses:
        lo, hi = (float(x) for x in rules.value("plausible.infusion_h"))
        if not lo <= d.duration <= hi:
            raise InputError(f"doses[{d.index}].duration", f"an infusion of {d.duration:g} h is outside {lo:g}-{hi:g} h")


def patient_alerts(case: Case, rules: Rules, bmi: float, ibw: float, mic: float) -> list[Alert]:
    """Cautions and stops about the patient as a whole."""
    p = case.patient
    out: list[Alert] = []
    lo, hi = (float(x) for x in rules.value("plausible.age_yr"))
    if not lo <= p.age <= hi:
        out.append(Alert("age-out-of-range", "stop", "patient.age",
                         f"age {p.age:g} yr is outside {lo:g}-{hi:g} yr: this tool's equations and models are for adults "
                         f"({rules.citation('plausible.age_yr')})"))
    from tdmtui.core.dialysis import renal_replacement_alerts

    out += renal_replacement_alerts(case, rules)
    known = rules.get("conditions", {}) or {}
    for i, c in enumerate(p.conditions):
        out.append(Alert("condition", "caution", f"patient.conditions[{i}]", str(known.get(c, c))))
    names = [str(n).lower() for n in rules.value("nephrotoxins.names")]
    for i, c in enumerate(p.comedications):
        if c.strip().lower() in names and c.strip().lower() != case.drug:
            out.append(Alert("nephrotoxin", "caution", f"patient.comedications[{i}]",
                             f"{c} with {case.drug}: added nephrotoxic risk; monitor SCr closely"))
    if case.drug == "vancomycin" and mic >= float(rules.value("targets.mic_caution_mg_l")):
        out.append(Alert("mic-high", "caution", "target.mic",
                         f"MIC {mic:g} mg/L: an AUC24/MIC of 400-600 is unlikely to be reached safely; consider another agent"))
    bmi_max = float(rules.value("population_limits.obesity_extreme_bmi"))
    ratio_max = float(rules.value("population_limits.obesity_extreme_ibw_ratio"))
    if bmi >= bmi_max or p.weight > ratio_max * ibw:
        out.append(Alert("obesity-extreme", "caution", "patient.weight",
                         f"BMI {bmi:.1f} kg/m2 (weight {p.weight / ibw:.0%} of IBW): population values fit poorly; rely on levels"))
    return out
