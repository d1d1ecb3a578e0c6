"""Renal function: Cockcroft-Gault, CKD-EPI 2021, and the renal summary of one patient.

Units: SCr mg/dL, CrCl mL/min, eGFR mL/min/1.73 m^2 (indexed) or mL/min
(de-indexed), weight kg, height cm, age yr.

Equations (pk-sources.md section 1, tags there): Cockcroft-Gault CrCl (1976),
CKD-EPI 2021 race-free creatinine eGFR, de-indexed with Mosteller BSA.
:func:`renal_summary` puts them together with body size
(:mod:`tdmtui.core.patient.body`) and the local rules (weight in
Cockcroft-Gault, SCr floor, CrCl cap), each choice stated for the note; the
``scr-unstable`` rule is :mod:`tdmtui.core.patient.renaltrend`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

from tdmtui.core.alerts import Alert
from tdmtui.core.errors import InputError
from tdmtui.core.patient.body import (IbwResult, adjusted_weight, bmi, bsa_dubois, bsa_mosteller, crcl_weight,
                                      dosing_weight, ibw_devine, is_female, lbw_janmahasatian, positive)

if TYPE_CHECKING:
    from tdmtui.core.input.clock import Clock
    from tdmtui.core.library import Rules


def cockcroft_gault(age: float, sex: str, weight_kg: float, scr_mg_dl: float) -> float:
    """Creatinine clearance, mL/min: (140 - age) x weight / (72 x SCr), x 0.85 if female.

    Source: Cockcroft DW, Gault MH. Nephron 1976;16:31-41 (pk-sources.md 1.1, confirmed).
    Not normalised to 1.73 m^2; assumes a steady-state SCr.

    Raises:
        InputError: naming the field for non-positive inputs or age >= 140.
    """
    female = is_female(sex)
    positive(weight_kg, "patient.weight", "weight")
    positive(scr_mg_dl, "patient.scr", "serum creatinine")
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
    female = is_female(sex)
    positive(scr_mg_dl, "patient.scr", "serum creatinine")
    k, a = (0.7, -0.241) if female else (0.9, -0.302)
    r = scr_mg_dl / k
    egfr = 142.0 * min(r, 1.0) ** a * max(r, 1.0) ** -1.2 * 0.9938**age
    return egfr * 1.012 if female else egfr


def deindex_egfr(egfr_173: float, bsa_m2: float) -> float:
    """eGFR in mL/min from mL/min/1.73 m^2: eGFR x BSA / 1.73 (pk-sources.md 1.5, confirmed-secondary)."""
    return egfr_173 * bsa_m2 / 1.73


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
    #: times h of the SCr values that changed by the KDIGO rule (each raised ``scr-unstable``), in time order
    scr_change_times: tuple[float, ...] = ()

    @property
    def unstable(self) -> bool:
        """Renal function is changing: an SCr raised ``scr-unstable``. Every later stage reads this one flag."""
        return bool(self.scr_change_times)

    @property
    def unstable_since(self) -> float | None:
        """Time h of the latest SCr that raised ``scr-unstable``, or None."""
        return max(self.scr_change_times) if self.scr_change_times else None

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


def scr_trend(series: list[tuple[float, float, int | None]], rules: Rules,
              clock: Clock | None = None) -> tuple[list[Alert], tuple[float, ...]]:
    """``scr-unstable`` cautions for a time-sorted SCr series, by the KDIGO 2012 AKI definition, and the
    times h of the values that raised them.

    The rule is :mod:`tdmtui.core.patient.renaltrend` (a rise of ``renal.scr_change_abs_mg_dl``
    within ``renal.scr_change_window_h``, or to (1 + ``renal.scr_change_rel``) x the
    lowest value within ``renal.scr_change_rel_window_h``; falls by the mirror rule).
    One alert per later value, on the largest change that triggered it.
    """
    from tdmtui.core.patient import renaltrend

    th = renaltrend.Thresholds.of(rules)
    out: list[Alert] = []
    times: list[float] = []
    for ch in renaltrend.changes(series, th):
        ti, vi, _ = series[ch.i]
        tj, vj, ij = series[ch.j]
        verb = "rose" if vj > vi else "fell"
        facts = {"direction": verb, "from": _mg_dl(vi), "to": _mg_dl(vj), "change": f"{100 * (vj - vi) / vi:+.0f} %",
                 "span": f"{_hours(tj - ti)} h", "rule": renaltrend.rule_text(ch, th, vj > vi),
                 "source": "KDIGO acute kidney injury definition",
                 "advice_text": "Cockcroft-Gault and eGFR assume stable renal function: reassess renal function and "
                                "dose by levels"}
        out.append(Alert(
            "scr-unstable", "caution", f"{_scr_field(ij)}.value",
            f"SCr {verb} from {facts['from']} mg/dL ({_when(ti, clock)}) to {facts['to']} mg/dL ({_when(tj, clock)}): "
            f"{vj - vi:+.2f} mg/dL ({facts['change']}) in {facts['span']}, {facts['rule']} ({facts['source']}); "
            f"{facts['advice_text']}", facts))
        times.append(tj)
    return out, tuple(times)


def _order_scr(scr_series: list[tuple[float | None, float, int | None]]) -> list[tuple[float, float, int | None]]:
    """Validate and sort the SCr series by time (a single undated value gets time 0)."""
    if not scr_series:
        raise InputError("patient.scr", "at least one serum creatinine value is needed")
    for t, v, idx in scr_series:
        positive(v, f"{_scr_field(idx)}.value", "serum creatinine")
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
    weight = positive(weight, "patient.weight", "weight")
    series = _order_scr(scr_series)
    variant = str(rules.value("renal.ibw_short_height_variant"))
    ibw = ibw_devine(sex, height, variant, float(rules.value("renal.short_height_cm")))
    factor = float(rules.value("renal.adjusted_weight_factor"))
    alerts = _short_height_alerts(ibw, height, rules)
    t_last, scr, idx = series[-1]
    dated = not (len(scr_series) == 1 and scr_series[0][0] is None)
    floor, why = _scr_floor(rules, scr_floor)
    used = max(scr, floor)
    w_kg, w_text = crcl_weight(weight, ibw.kg, str(rules.value("renal.crcl_weight_rule")),
                               rules.get("renal.crcl_weight_threshold"), factor)
    where = _scr_field(idx) + (f" at {_when(t_last, clock)}" if dated else "")
    crcl, scr_text = _capped(cockcroft_gault(age, sex, w_kg, used), _scr_text(scr, used, floor, why, where), rules)
    bsa = bsa_mosteller(weight, height)
    egfr = ckd_epi_2021(age, sex, scr)
    dw_kg, dw_text = dosing_weight(weight, ibw.kg, rules)
    trend, changed = scr_trend(series, rules, clock)
    return RenalSummary(
        ibw=ibw.kg, ibw_variant=ibw.variant, ibw_flagged=ibw.flagged, adjbw=adjusted_weight(weight, ibw.kg, factor),
        bmi=bmi(weight, height), bsa=bsa, bsa_dubois=bsa_dubois(weight, height),
        lbw=lbw_janmahasatian(sex, weight, height), crcl_ml_min=crcl, crcl_rule=f"{w_text}; {scr_text}",
        crcl_weight_kg=w_kg, scr_measured_mg_dl=scr, scr_used_mg_dl=used, scr_index=idx,
        scr_time_h=t_last if dated else None,
        egfr_ckd_epi=egfr, egfr_ckd_epi_ml_min=deindex_egfr(egfr, bsa),
        dosing_weight_kg=dw_kg, dosing_weight_rule=dw_text, alerts=alerts + trend, scr_change_times=changed)


def _short_height_alerts(ibw: IbwResult, height: float, rules: Rules) -> list[Alert]:
    """``ibw-short-height`` where the height is below the library's short-height limit."""
    if not ibw.flagged:
        return []
    return [Alert("ibw-short-height", "caution", "patient.height",
                  f"height {height:g} cm is below {rules.value('renal.short_height_cm'):g} cm (60 in), "
                  f"where the Devine IBW is undefined; IBW {ibw.kg:.1f} kg by the {ibw.variant} variant")]


def _scr_floor(rules: Rules, scr_floor: float | None) -> tuple[float, str]:
    """(SCr floor mg/dL, whose rule it is): the caller's, else the library's or the local protocol's."""
    if scr_floor is None:
        floor = float(rules.value("renal.scr_floor_mg_dl"))
        why = "per local rule" if rules.source("renal.scr_floor_mg_dl") == "protocol" else "per library rule"
    else:
        floor, why = float(scr_floor), "per the requested floor"
    if not (math.isfinite(floor) and floor >= 0):
        raise InputError("renal.scr_floor_mg_dl", f"SCr floor {floor!r} mg/dL must be 0 (off) or positive")
    return floor, why


def _scr_text(scr: float, used: float, floor: float, why: str, where: str) -> str:
    """The SCr half of ``crcl_rule``: the latest value, and the floor where it was used instead."""
    text = f"latest SCr {_mg_dl(scr)} mg/dL ({where})"
    if used != scr:
        text += f"; computed with {_mg_dl(used)} {why} (SCr floor {_mg_dl(floor)} mg/dL)"
    return text


def _capped(crcl: float, scr_text: str, rules: Rules) -> tuple[float, str]:
    """CrCl under ``renal.crcl_cap_ml_min`` (0 = no cap), the cap stated in the rule's text when used."""
    cap = float(rules.value("renal.crcl_cap_ml_min"))
    if cap > 0 and crcl > cap:
        rule = "local rule" if rules.source("renal.crcl_cap_ml_min") == "protocol" else "library rule"
        return cap, scr_text + f"; CrCl {crcl:.0f} mL/min capped at {cap:g} mL/min per {rule}"
    return crcl, scr_text
