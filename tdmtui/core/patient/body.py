"""Patient body size and renal function: pure functions on canonical floats.

Units: weight kg, height cm, age yr, serum creatinine (SCr) mg/dL, CrCl mL/min,
eGFR mL/min/1.73 m^2 (indexed) or mL/min (de-indexed), BSA m^2, BMI kg/m^2.

Equations (pk-sources.md section 1, tags there):
    Devine IBW (1974), adjusted body weight (IBW + factor x excess),
    BMI, Mosteller and DuBois BSA, Janmahasatian lean body weight,
    Cockcroft-Gault CrCl (1976), CKD-EPI 2021 race-free creatinine eGFR.

Which weight goes into Cockcroft-Gault and which weight a dose is based on are
local rules read from the drug library (``renal.*``, ``dosing_weight.*``);
every choice is returned as text so the note can state it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

from tdmtui.core.alerts import Alert
from tdmtui.core.errors import InputError

if TYPE_CHECKING:
    from tdmtui.core.input.clock import Clock
    from tdmtui.core.library import Rules

CM_PER_IN = 2.54
#: Devine IBW is defined from 60 in upwards (pk-sources.md 1.2).
DEVINE_BASE_IN = 60.0
IBW_VARIANTS = ("devine-extrapolated", "devine-floor")
WEIGHT_RULES = ("tbw", "ibw", "adj", "tbw-ibw-adj", "lower-of-tbw-ibw")
_EPS = 1e-9  # float slack for ">=" on clinical thresholds (1.4 - 1.1 < 0.3 in binary)


def _sex(sex: str) -> bool:
    """True for female; InputError naming ``patient.sex`` otherwise."""
    if sex not in ("male", "female"):
        raise InputError("patient.sex", f"{sex!r}: expected 'male' or 'female' (the sex the renal equations use)")
    return sex == "female"


def _positive(value: float, fld: str, what: str) -> float:
    if not (isinstance(value, (int, float)) and math.isfinite(value) and value > 0):
        raise InputError(fld, f"{what} must be a positive number, got {value!r}")
    return float(value)


# ---------------------------------------------------------------- body size
@dataclass(frozen=True)
class IbwResult:
    """Ideal body weight and how it was obtained.

    Attributes:
        kg: ideal body weight, kg.
        variant: ``devine`` (60 in or taller), ``devine-extrapolated`` or ``devine-floor``.
        flagged: height below the library's short-height limit.
    """

    kg: float
    variant: str
    flagged: bool


def ibw_devine(sex: str, height_cm: float, variant: str = "devine-extrapolated",
               short_height_cm: float = DEVINE_BASE_IN * CM_PER_IN) -> IbwResult:
    """Devine ideal body weight.

    IBW = 50 kg (male) or 45.5 kg (female) + 2.3 kg per inch over 60 in.
    Source: Devine BJ. Drug Intell Clin Pharm 1974;8:650-655 (pk-sources.md 1.2,
    confirmed-secondary). Below 60 in the equation is undefined; the variant
    used is stated: ``devine-extrapolated`` subtracts 2.3 kg per inch under
    60 in, ``devine-floor`` keeps 50/45.5 kg.

    Args:
        sex: ``male`` or ``female``.
        height_cm: height, cm.
        variant: rule below 60 in (see above).
        short_height_cm: heights below this are flagged (library ``renal.short_height_cm``).

    Raises:
        InputError: naming ``patient.height`` for a non-positive height or IBW.
    """
    female = _sex(sex)
    h = _positive(height_cm, "patient.height", "height")
    if variant not in IBW_VARIANTS:
        raise InputError("renal.ibw_short_height_variant", f"{variant!r}: expected one of {', '.join(IBW_VARIANTS)}")
    base = 45.5 if female else 50.0
    over_in = h / CM_PER_IN - DEVINE_BASE_IN
    used = "devine"
    if over_in < 0:
        used = variant
        if variant == "devine-floor":
            over_in = 0.0
    kg = base + 2.3 * over_in
    if kg <= 0:
        raise InputError("patient.height", f"{h:g} cm gives a Devine IBW of {kg:.1f} kg ({used}); check the height")
    return IbwResult(kg, used, h < short_height_cm)


def adjusted_weight(tbw: float, ibw: float, factor: float) -> float:
    """Adjusted body weight, kg: IBW + factor x (TBW - IBW).

    Source: 0.4 factor from aminoglycoside obesity work; Traynor AM et al.
    Antimicrob Agents Chemother 1995;39:545-548 confirms the 40 % convention
    (pk-sources.md 1.2).
    """
    return ibw + factor * (tbw - ibw)


def bmi(weight: float, height_cm: float) -> float:
    """Body mass index, kg/m^2: weight / height_m^2 (WHO; pk-sources.md 1.2, from memory)."""
    return weight / (height_cm / 100.0) ** 2


def bsa_mosteller(weight: float, height_cm: float) -> float:
    """Body surface area, m^2: sqrt(height_cm x weight_kg / 3600).

    Source: Mosteller RD. N Engl J Med 1987;317:1098 (pk-sources.md 1.3, from memory).
    """
    return math.sqrt(height_cm * weight / 3600.0)


def bsa_dubois(weight: float, height_cm: float) -> float:
    """Body surface area, m^2: 0.007184 x weight_kg^0.425 x height_cm^0.725.

    Source: DuBois D, DuBois EF. Arch Intern Med 1916;17:863-871
    (pk-sources.md 1.3, confirmed-secondary).
    """
    return 0.007184 * weight**0.425 * height_cm**0.725


def lbw_janmahasatian(sex: str, weight: float, height_cm: float) -> float:
    """Lean body weight, kg: 9270 x TBW / (6680 + 216 x BMI) male, (8780 + 244 x BMI) female.

    Source: Janmahasatian S et al. Clin Pharmacokinet 2005;44:1051-1065
    (pk-sources.md 1.2, from memory: verify before relying on it).
    """
    b = bmi(weight, height_cm)
    return 9270.0 * weight / ((8780.0 + 244.0 * b) if _sex(sex) else (6680.0 + 216.0 * b))


# ---------------------------------------------------------------- renal function
def cockcroft_gault(age: float, sex: str, weight_kg: float, scr_mg_dl: float) -> float:
    """Creatinine clearance, mL/min: (140 - age) x weight / (72 x SCr), x 0.85 if female.

    Source: Cockcroft DW, Gault MH. Nephron 1976;16:31-41 (pk-sources.md 1.1, confirmed).
    Not normalised to 1.73 m^2; assumes a steady-state SCr.

    Raises:
        InputError: naming the field for non-positive inputs or age >= 140.
    """
    female = _sex(sex)
    _positive(weight_kg, "patient.weight", "weight")
    _positive(scr_mg_dl, "patient.scr", "serum creatinine")
    if not math.isfinite(age) or age < 0 or age >= 140:
        raise InputError("patient.age", f"{age!r} yr: Cockcroft-Gault needs an age from 0 to below 140 yr")
    crcl = (140.0 - age) * weight_kg / (72.0 * scr_mg_dl)
    return crcl * 0.85 if female else crcl


def ckd_epi_2021(age: float, sex: str, scr_mg_dl: float) -> float:
    """eGFR, mL/min/1.73 m^2, CKD-EPI 2021 race-free creatinine equation.

    142 x min(SCr/k, 1)^a x max(SCr/k, 1)^-1.200 x 0.9938^age x 1.012 [female];
    k = 0.7 (F) / 0.9 (M), a = -0.241 (F) / -0.302 (M).
    Source: Inker LA et al. N Engl J Med 2021;385:1737-1749 (pk-sources.md 1.5, confirmed).
    """
    female = _sex(sex)
    _positive(scr_mg_dl, "patient.scr", "serum creatinine")
    k, a = (0.7, -0.241) if female else (0.9, -0.302)
    r = scr_mg_dl / k
    egfr = 142.0 * min(r, 1.0) ** a * max(r, 1.0) ** -1.2 * 0.9938**age
    return egfr * 1.012 if female else egfr


def deindex_egfr(egfr_173: float, bsa_m2: float) -> float:
    """eGFR in mL/min from mL/min/1.73 m^2: eGFR x BSA / 1.73 (pk-sources.md 1.5, confirmed-secondary)."""
    return egfr_173 * bsa_m2 / 1.73


# ---------------------------------------------------------------- weight rules
_NAMES = {"tbw": "total body weight", "ibw": "ideal body weight", "adj": "adjusted body weight"}


def _pick_weight(tbw: float, ibw: float, rule: str, threshold: float | None, factor: float,
                 key: str) -> tuple[float, str]:
    """Apply a weight rule; return (kg, "adjusted body weight 70.9 kg (TBW 162 % of IBW; rule ...)")."""
    if rule not in WEIGHT_RULES:
        raise InputError(key, f"{rule!r}: expected one of {', '.join(WEIGHT_RULES)}")
    if not 0.0 <= factor <= 1.0:
        raise InputError(key, f"adjusted-weight factor {factor!r} is outside 0-1")
    ratio = tbw / ibw
    if rule == "tbw-ibw-adj":
        if threshold is None or not threshold >= 1.0:
            raise InputError(key, f"rule tbw-ibw-adj needs a threshold of at least 1 (x IBW), got {threshold!r}")
        kind = "tbw" if tbw < ibw else ("ibw" if ratio <= threshold + _EPS else "adj")
    elif rule == "lower-of-tbw-ibw":
        kind = "tbw" if tbw < ibw else "ibw"
    else:
        kind = rule
    kg = {"tbw": tbw, "ibw": ibw, "adj": adjusted_weight(tbw, ibw, factor)}[kind]
    notes = f"TBW {100 * ratio:.0f} % of IBW; rule {rule}"
    if rule == "tbw-ibw-adj":
        notes += f", threshold {100 * threshold:.0f} %"  # type: ignore[operator]
    if kind == "adj":
        notes += f", IBW + {factor:g} x (TBW - IBW)"
    return kg, f"{_NAMES[kind]} {kg:.1f} kg ({notes})"


def crcl_weight(tbw: float, ibw: float, rule: str, threshold: float | None, factor: float) -> tuple[float, str]:
    """The weight put into Cockcroft-Gault, by a local rule (common practice, pk-sources.md 1.2).

    Rules: ``tbw``; ``ibw``; ``adj`` (IBW + factor x excess); ``tbw-ibw-adj``
    (TBW if below IBW, IBW up to threshold x IBW, adjusted above);
    ``lower-of-tbw-ibw``.

    Args:
        tbw: total body weight, kg.
        ibw: ideal body weight, kg.
        rule: one of the rules above (library ``renal.crcl_weight_rule``).
        threshold: multiple of IBW above which the adjusted weight is used (e.g. 1.2).
        factor: adjusted-weight factor (e.g. 0.4).

    Returns:
        (kg, text), e.g. "Cockcroft-Gault with adjusted body weight 70.9 kg
        (TBW 162 % of IBW; rule tbw-ibw-adj, threshold 120 %, IBW + 0.4 x (TBW - IBW))".

    Raises:
        InputError: naming ``renal.crcl_weight_rule`` for an unknown rule or bad threshold/factor.
    """
    kg, text = _pick_weight(tbw, ibw, rule, threshold, factor, "renal.crcl_weight_rule")
    return kg, f"Cockcroft-Gault with {text}"


def _cite(rules: Rules, key: str) -> str:
    return f"{rules.citation(key)} [{rules.source(key)}]"


def dosing_weight(tbw: float, ibw: float, rules: Rules) -> tuple[float, str]:
    """The weight a dose is based on, by the drug library's ``dosing_weight.rule``.

    Vancomycin doses on TBW (2020 consensus guideline); aminoglycosides on TBW
    below IBW, IBW up to ``dosing_weight.threshold`` x IBW, adjusted weight
    above (common practice; Traynor 1995) - pk-sources.md 1.2. The factor is
    ``dosing_weight.adjusted_factor`` where the drug has one, else
    ``renal.adjusted_weight_factor``.

    Returns:
        (kg, text naming the weight, the rule and its source).
    """
    rule = rules.value("dosing_weight.rule")
    fkey = "dosing_weight.adjusted_factor" if "dosing_weight.adjusted_factor" in rules else "renal.adjusted_weight_factor"
    kg, text = _pick_weight(tbw, ibw, rule, rules.get("dosing_weight.threshold"), float(rules.value(fkey)),
                            "dosing_weight.rule")
    return kg, f"dosing weight: {text}; source: {_cite(rules, 'dosing_weight.rule')}"


# ---------------------------------------------------------------- summary
@dataclass
class RenalSummary:
    """Body size and renal function of one patient, each choice stated.

    Weights kg, BMI kg/m^2, BSA m^2 (Mosteller), CrCl and de-indexed eGFR
    mL/min, indexed eGFR mL/min/1.73 m^2, SCr mg/dL.
    """

    ibw: float
    ibw_variant: str
    ibw_flagged: bool
    adjbw: float
    bmi: float
    bsa: float
    bsa_dubois: float
    lbw: float
    crcl_ml_min: float
    crcl_rule: str
    crcl_weight_kg: float
    scr_measured_mg_dl: float
    scr_used_mg_dl: float
    scr_index: int | None
    scr_time_h: float | None
    egfr_ckd_epi: float
    egfr_ckd_epi_ml_min: float
    dosing_weight_kg: float
    dosing_weight_rule: str
    alerts: list[Alert] = field(default_factory=list)

    def to_dict(self) -> dict[str, float | str]:
        """The result contract's ``patient`` block."""
        return {"crcl_ml_min": self.crcl_ml_min, "crcl_rule": self.crcl_rule, "ibw_kg": self.ibw,
                "dosing_weight_kg": self.dosing_weight_kg, "dosing_weight_rule": self.dosing_weight_rule}


def _scr_field(index: int | None) -> str:
    return "patient.scr" if index is None else f"patient.scr[{index}]"


def _mg_dl(v: float) -> str:
    """SCr for text: at least one decimal (1.0, 0.85, 1.1)."""
    text = f"{v:.2f}"
    return text[:-1] if text.endswith("0") else text


def _hours(h: float) -> str:
    """A duration for text, to 0.1 h (24, 23.8)."""
    return f"{h:.1f}".removesuffix(".0")


def _when(t: float, clock: Clock | None) -> str:
    return clock.format(t) if clock is not None else f"{t:g} h"


def scr_alerts(series: list[tuple[float, float, int | None]], rules: Rules,
               clock: Clock | None = None) -> list[Alert]:
    """``scr-unstable`` cautions for a time-sorted SCr series, by the KDIGO 2012 AKI definition.

    The rule is :mod:`tdmtui.core.patient.renaltrend` (a rise of ``renal.scr_change_abs_mg_dl``
    within ``renal.scr_change_window_h``, or to (1 + ``renal.scr_change_rel``) x the
    lowest value within ``renal.scr_change_rel_window_h``; falls by the mirror rule).
    One alert per later value, on the largest change that triggered it.
    """
    from tdmtui.core.patient import renaltrend

    th = renaltrend.Thresholds.of(rules)
    out: list[Alert] = []
    for ch in renaltrend.changes(series, th):
        ti, vi, _ = series[ch.i]
        tj, vj, ij = series[ch.j]
        verb = "rose" if vj > vi else "fell"
        out.append(Alert(
            "scr-unstable", "caution", f"{_scr_field(ij)}.value",
            f"SCr {verb} from {_mg_dl(vi)} mg/dL ({_when(ti, clock)}) to {_mg_dl(vj)} mg/dL ({_when(tj, clock)}): "
            f"{vj - vi:+.2f} mg/dL ({100 * (vj - vi) / vi:+.0f} %) in {_hours(tj - ti)} h, "
            f"{renaltrend.rule_text(ch, th, vj > vi)} (KDIGO acute kidney injury definition); "
            "Cockcroft-Gault and eGFR assume stable renal function: reassess renal function and dose by levels"))
    return out


def _order_scr(scr_series: list[tuple[float | None, float, int | None]]) -> list[tuple[float, float, int | None]]:
    """Validate and sort the SCr series by time (a single undated value gets time 0)."""
    if not scr_series:
        raise InputError("patient.scr", "at least one serum creatinine value is needed")
    for t, v, idx in scr_series:
        _positive(v, f"{_scr_field(idx)}.value", "serum creatinine")
        if t is None and len(scr_series) > 1:
            raise InputError(f"{_scr_field(idx)}.time", "with more than one SCr value each needs a time")
    if len(scr_series) == 1 and scr_series[0][0] is None:
        return [(0.0, float(scr_series[0][1]), scr_series[0][2])]
    order = sorted(range(len(scr_series)), key=lambda k: (scr_series[k][0], k))
    return [(float(scr_series[k][0]), float(scr_series[k][1]), scr_series[k][2]) for k in order]  # type: ignore[arg-type]


def renal_summary(age: float, sex: str, weight: float, height: float,
                  scr_series: list[tuple[float | None, float, int | None]], rules: Rules,
                  scr_floor: float | None = None, clock: Clock | None = None) -> RenalSummary:
    """Everything the engine and the note need about body size and renal function.

    Cockcroft-Gault uses the LATEST SCr by time (file order breaks ties), the
    weight chosen by ``renal.crcl_weight_rule`` / ``renal.crcl_weight_threshold``
    / ``renal.adjusted_weight_factor``, and a SCr floor when one is set
    (``renal.scr_floor_mg_dl``, 0 = off, or ``scr_floor`` from the caller, e.g.
    a population model's own rule); the floor's use is stated in ``crcl_rule``.
    CKD-EPI 2021 uses the measured SCr; de-indexed with Mosteller BSA.

    Args:
        age: yr. sex: ``male``/``female``. weight: TBW, kg. height: cm.
        scr_series: ``(time_h or None, value_mg_dl, index in the file or None)``.
        rules: the drug's library values.
        scr_floor: overrides the library floor when given (mg/dL, 0 = off).
        clock: formats times in alert messages (hours are shown without one).

    Raises:
        InputError: naming the field for impossible values.
    """
    weight = _positive(weight, "patient.weight", "weight")
    series = _order_scr(scr_series)
    variant = str(rules.value("renal.ibw_short_height_variant"))
    ibw = ibw_devine(sex, height, variant, float(rules.value("renal.short_height_cm")))
    factor = float(rules.value("renal.adjusted_weight_factor"))
    alerts: list[Alert] = []
    if ibw.flagged:
        alerts.append(Alert("ibw-short-height", "caution", "patient.height",
                            f"height {height:g} cm is below {rules.value('renal.short_height_cm'):g} cm (60 in), "
                            f"where the Devine IBW is undefined; IBW {ibw.kg:.1f} kg by the {ibw.variant} variant"))
    t_last, scr, idx = series[-1]
    dated = not (len(scr_series) == 1 and scr_series[0][0] is None)
    if scr_floor is None:
        floor = float(rules.value("renal.scr_floor_mg_dl"))
        why = "per local rule" if rules.source("renal.scr_floor_mg_dl") == "protocol" else "per library rule"
    else:
        floor, why = float(scr_floor), "per the requested floor"
    if not (math.isfinite(floor) and floor >= 0):
        raise InputError("renal.scr_floor_mg_dl", f"SCr floor {floor!r} mg/dL must be 0 (off) or positive")
    used = max(scr, floor)
    w_kg, w_text = crcl_weight(weight, ibw.kg, str(rules.value("renal.crcl_weight_rule")),
                               rules.get("renal.crcl_weight_threshold"), factor)
    crcl = cockcroft_gault(age, sex, w_kg, used)
    where = _scr_field(idx) + (f" at {_when(t_last, clock)}" if dated else "")
    scr_text = f"latest SCr {_mg_dl(scr)} mg/dL ({where})"
    if used != scr:
        scr_text += f"; computed with {_mg_dl(used)} {why} (SCr floor {_mg_dl(floor)} mg/dL)"
    cap = float(rules.value("renal.crcl_cap_ml_min"))
    if cap > 0 and crcl > cap:
        rule = "local rule" if rules.source("renal.crcl_cap_ml_min") == "protocol" else "library rule"
        scr_text += f"; CrCl {crcl:.0f} mL/min capped at {cap:g} mL/min per {rule}"
        crcl = cap
    bsa = bsa_mosteller(weight, height)
    egfr = ckd_epi_2021(age, sex, scr)
    dw_kg, dw_text = dosing_weight(weight, ibw.kg, rules)
    alerts += scr_alerts(series, rules, clock)
    return RenalSummary(
        ibw=ibw.kg, ibw_variant=ibw.variant, ibw_flagged=ibw.flagged, adjbw=adjusted_weight(weight, ibw.kg, factor),
        bmi=bmi(weight, height), bsa=bsa, bsa_dubois=bsa_dubois(weight, height),
        lbw=lbw_janmahasatian(sex, weight, height), crcl_ml_min=crcl, crcl_rule=f"{w_text}; {scr_text}",
        crcl_weight_kg=w_kg, scr_measured_mg_dl=scr, scr_used_mg_dl=used, scr_index=idx,
        scr_time_h=t_last if dated else None,
        egfr_ckd_epi=egfr, egfr_ckd_epi_ml_min=deindex_egfr(egfr, bsa),
        dosing_weight_kg=dw_kg, dosing_weight_rule=dw_text, alerts=alerts)
