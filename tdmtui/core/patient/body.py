"""Patient body size and the weight rules: pure functions on canonical floats.

Units: weight kg, height cm, BMI kg/m^2, BSA m^2.

Equations (pk-sources.md section 1, tags there):
    Devine IBW (1974), adjusted body weight (IBW + factor x excess),
    BMI, Mosteller and DuBois BSA, Janmahasatian lean body weight.

Which weight goes into Cockcroft-Gault and which weight a dose is based on are
local rules read from the drug library (``renal.*``, ``dosing_weight.*``);
every choice is returned as text so the note can state it. Renal function is
:mod:`tdmtui.core.patient.renal`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING

from tdmtui.core.errors import InputError

if TYPE_CHECKING:
    from tdmtui.core.library import Rules

CM_PER_IN = 2.54
#: Devine IBW is defined from 60 in upwards (pk-sources.md 1.2).
DEVINE_BASE_IN = 60.0
IBW_VARIANTS = ("devine-extrapolated", "devine-floor")
WEIGHT_RULES = ("tbw", "ibw", "adj", "tbw-ibw-adj", "lower-of-tbw-ibw")
_EPS = 1e-9  # float slack for ">=" on clinical thresholds (1.4 - 1.1 < 0.3 in binary)


def is_female(sex: str) -> bool:
    """True for female; InputError naming ``patient.sex`` otherwise."""
    if sex not in ("male", "female"):
        raise InputError("patient.sex", f"{sex!r}: expected 'male' or 'female' (the sex the renal equations use)")
    return sex == "female"


def positive(value: float, fld: str, what: str) -> float:
    """``value`` as a float when finite and above 0; InputError naming ``fld`` otherwise."""
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
    female = is_female(sex)
    h = positive(height_cm, "patient.height", "height")
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
    return 9270.0 * weight / ((8780.0 + 244.0 * b) if is_female(sex) else (6680.0 + 216.0 * b))



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

