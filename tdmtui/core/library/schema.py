"""What a local protocol may set: every key, its type, unit and plausible range.

A protocol file is hostile or mistyped input like a case: "250" written as a
string, 23,000 for 2,300, a key spelt wrong. Every value is checked against
:data:`SCHEMA` (:mod:`tdmtui.core.library.protocolcheck`), an :class:`InputError` naming the
key (``protocol.vancomycin.regimen.rounding_mg``) for an unknown key, a wrong
type or unit, or a value outside the range. The ranges are wide plausibility
bounds (design choices: a value outside them is a slip, whatever the site);
what protects the patient whatever the protocol says is the library's
``never_exceed`` limits (:mod:`tdmtui.core.regimen.limits`), which no protocol may set.

Adding a key a protocol may set is ONE line in :data:`SCHEMA`::

    "regimen.rounding_mg": num("mg", 1, 1000),

Kinds: ``num`` (a number), ``band`` ([low, high]), ``nums`` (a list of
numbers), ``pair`` (exactly two numbers, any order), ``points`` ([[x, y], ...]),
``choice`` (one of some words), ``pattern`` (text matching a regular
expression), ``text``, ``names`` (a list of text), ``flag`` (true/false),
``table`` (a nested value checked by a function in
:data:`tdmtui.core.library.protocolcheck.TABLES`). Keys that the library leaves
to the protocol (no library value) take ``optional=True``. Other top-level
sections than a drug id or ``common`` register a checker in :data:`SECTIONS`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Callable

@dataclass(frozen=True)
class Spec:
    """One protocol key: its kind, unit, range and, for choices, the words allowed."""

    kind: str
    unit: str = ""
    lo: float = -math.inf
    hi: float = math.inf
    options: tuple[str, ...] = ()
    optional: bool = False


def num(unit: str, lo: float, hi: float, optional: bool = False) -> Spec:
    return Spec("num", unit, lo, hi, optional=optional)


def band(unit: str, lo: float, hi: float) -> Spec:
    return Spec("band", unit, lo, hi)


def nums(unit: str, lo: float, hi: float) -> Spec:
    return Spec("nums", unit, lo, hi)


def pair(unit: str, lo: float, hi: float) -> Spec:
    return Spec("pair", unit, lo, hi)


def points(unit: str, lo: float, hi: float, optional: bool = False) -> Spec:
    """[[hours, mg/L], ...]: ``lo``/``hi`` bound both coordinates."""
    return Spec("points", unit, lo, hi, optional=optional)


def choice(*options: str) -> Spec:
    return Spec("choice", options=options)


def pattern(regex: str, hint: str) -> Spec:
    return Spec("pattern", unit=hint, options=(regex,))


def text() -> Spec:
    return Spec("text")


def names() -> Spec:
    return Spec("names")


def flag(optional: bool = False) -> Spec:
    return Spec("flag", optional=optional)


def table(checker: str, optional: bool = False) -> Spec:
    """A nested value checked by ``TABLES[checker]``."""
    return Spec("table", options=(checker,), optional=optional)


WEIGHT_RULES = ("tbw", "ibw", "adj", "tbw-ibw-adj", "lower-of-tbw-ibw")

#: Every key a protocol may set (dotted, below the drug id or ``common``).
SCHEMA: dict[str, Spec] = {
    # ------------------------------------------------------------ renal function
    "renal.scr_change_abs_mg_dl": num("mg/dL", 0.05, 5.0),
    "renal.scr_change_window_h": num("h", 1.0, 168.0),
    "renal.scr_change_rel": num("fraction", 0.05, 5.0),
    "renal.scr_change_rel_window_h": num("h", 24.0, 720.0),
    "renal.crcl_weight_rule": choice(*WEIGHT_RULES),
    "renal.crcl_weight_threshold": num("x IBW", 1.0, 2.0),
    "renal.adjusted_weight_factor": num("fraction", 0.0, 1.0),
    "renal.scr_floor_mg_dl": num("mg/dL", 0.0, 1.5),
    "renal.scr_low_mg_dl": num("mg/dL", 0.0, 1.5),
    "renal.scr_low_age_yr": num("yr", 18.0, 110.0),
    "renal.scr_low_conditions": names(),
    "renal.crcl_cap_ml_min": num("mL/min", 0.0, 250.0),
    "renal.short_height_cm": num("cm", 100.0, 200.0),
    "renal.ibw_short_height_variant": choice("devine-extrapolated", "devine-floor"),
    "dosing_weight.rule": choice(*WEIGHT_RULES),
    "dosing_weight.threshold": num("x IBW", 1.0, 2.0),
    # ------------------------------------------------------------ high exposure (exposure.py)
    "exposure.trough_window_h": num("h", 0.0, 12.0),
    "exposure.peak_window_h": num("h", 0.0, 12.0),
    "exposure.peak_high_rel": num("x upper target", 1.0, 5.0),
    "exposure.trough_hold_rel": num("x limit", 1.0, 10.0),
    "exposure.auc24_toxic": num("mg*h/L", 0.0, 5000.0, optional=True),
    "exposure.trough_high_mg_l": num("mg/L", 0.0, 100.0, optional=True),
    # ------------------------------------------------------------ timing, methods, checks
    "timing.uncertain_shift_min": num("min", 0.0, 240.0),
    "timing.sensitivity_shift_min": num("min", 0.0, 120.0),
    "timing.sensitivity_warn_rel": num("fraction", 0.0, 1.0),
    "methods.disagreement_rel": num("fraction", 0.0, 1.0),
    "methods.shape_bias_rel": num("fraction", 0.0, 1.0),
    "methods.poor_fit_rel": num("fraction", 0.0, 5.0),
    "methods.large_iiv_sd": num("log-scale SD", 0.1, 5.0),
    "methods.large_iiv_movement_sd": num("SD", 0.1, 10.0),
    "methods.models_disagree_rel": num("fraction", 0.0, 2.0),
    "windows.post_distribution_h": num("h", 0.0, 6.0),
    # ------------------------------------------------------------ intermittent haemodialysis
    "dialysis.session_h": band("h", 0.5, 24.0),
    "dialysis.redistribution_h": num("h", 0.0, 24.0),
    "dialysis.plan_days": num("days", 2.0, 14.0),
    "dialysis.pre_dialysis_target_mg_l": band("mg/L", 0.0, 40.0),
    "dialysis.session_clearance_l_h": num("L/h", 0.0, 20.0, optional=True),
    "windows.continuous_min_infusion_h": num("h", 4.0, 24.0),
    "mic.default_mg_l": num("mg/L", 0.03, 64.0),
    "plausible.age_yr": band("yr", 0.0, 130.0),
    "plausible.weight_kg": band("kg", 0.3, 700.0),
    "plausible.height_cm": band("cm", 20.0, 280.0),
    "plausible.scr_mg_dl": band("mg/dL", 0.01, 50.0),
    "plausible.infusion_h": band("h", 0.0, 72.0),
    "plausible.single_dose_mg_per_kg": band("mg/kg", 0.0, 100.0),
    "plausible.level_mg_l": band("mg/L", 0.0, 1000.0),
    "population_limits.obesity_extreme_bmi": num("kg/m2", 20.0, 100.0),
    "population_limits.obesity_extreme_ibw_ratio": num("x IBW", 1.0, 5.0),
    "conditions": table("conditions"),
    "conditions_source": text(),
    "nephrotoxins.names": names(),
    "nephrotoxins.source": text(),
    # ------------------------------------------------------------ targets
    "targets.auc24": band("mg*h/L", 0.0, 1500.0),
    "targets.css": band("mg/L", 0.0, 60.0),
    "targets.peak": band("mg/L", 0.0, 80.0),
    "targets.trough": band("mg/L", 0.0, 40.0),
    "targets.trough_ceiling": num("mg/L", 0.0, 50.0),
    "targets.mic_caution_mg_l": num("mg/L", 0.03, 64.0),
    "targets.peak_reference": pattern(r"end|(end|start)\+\d+(\.\d+)?h", "end, end+Xh or start+Xh"),
    "targets.variants": table("variants"),
    # ------------------------------------------------------------ regimen
    "regimen.rounding_mg": num("mg", 1.0, 1000.0),
    "regimen.intervals_h": nums("h", 1.0, 168.0),
    "regimen.max_rate_mg_per_h": num("mg/h", 0.0, 10000.0),
    "regimen.min_infusion_h": num("h", 0.0, 24.0),
    "regimen.infusion_step_h": num("h", 0.05, 24.0),
    "regimen.max_single_dose_mg": num("mg", 1.0, 10000.0),
    "regimen.max_daily_dose_mg": num("mg", 1.0, 20000.0),
    "regimen.obese_initial_max_daily_mg": num("mg", 1.0, 20000.0, optional=True),
    "regimen.admin_times": table("admin_times"),
    "regimen.default_mode": choice("auc", "continuous", "extended", "peak-trough"),
    "regimen.max_interval_half_lives": num("half-lives", 0.5, 10.0),
    "regimen.extended_min_mg_per_kg": num("mg/kg", 0.0, 30.0),
    "regimen.choice_tie_rel": num("fraction", 0.0, 0.5),
    "regimen.min_hold_h": num("h", 0.0, 48.0),
    "regimen.hold_above_mg_l": num("mg/L", 0.0, 100.0),
    "regimen.min_interval_half_lives": num("half-lives", 0.0, 10.0),
    "regimen.keep_interval_within_rel": num("fraction", 0.0, 1.0),
    "regimen.time_grid_min": num("min", 0.0, 240.0),
    # ------------------------------------------------------------ loading and continuous infusion
    "loading.mg_per_kg": num("mg/kg", 0.0, 50.0),
    "loading.range_mg_per_kg": band("mg/kg", 0.0, 50.0),
    "loading.max_mg": num("mg", 0.0, 5000.0),
    "loading.obese_mg_per_kg": band("mg/kg", 0.0, 50.0),
    "loading.obese_bmi": num("kg/m2", 20.0, 80.0),
    "loading.target_peak_mg_l": num("mg/L", 0.0, 80.0),
    "loading.topup_min_rel": num("fraction", 0.0, 5.0),
    "continuous.loading_mg_per_kg": num("mg/kg", 0.0, 50.0),
    # ------------------------------------------------------------ population estimate
    "population.ke_per_h": pair("1/h per mL/min, 1/h", 0.0, 1.0),
    "population.v_l_per_kg": num("L/kg", 0.05, 2.0),
    # ------------------------------------------------------------ monitoring
    "monitoring.next_level": choice("trough", "peak", "peak-trough", "random", "steady-state"),
    "monitoring.scr": text(),
    "monitoring.toxicity": text(),
    "monitoring.levels": table("level_plans"),
    "monitoring.trough_before_h": num("h", 0.0, 6.0),
    "monitoring.peak_after_end_h": num("h", 0.0, 6.0),
    "monitoring.steady_state_within_rel": num("fraction", 0.0, 0.5),
    "monitoring.ward_hours": band("h of the day", 0.0, 24.0),
    "levels.min_gap_h": num("h", 0.05, 2.0),
    # ------------------------------------------------------------ extended-interval aminoglycosides
    "extended.mg_per_kg": num("mg/kg", 0.0, 30.0),
    "extended.auc24": band("mg*h/L", 0.0, 300.0),
    "extended.peak": band("mg/L", 0.0, 100.0),
    "extended.trough_ceiling": num("mg/L", 0.0, 20.0),
    "extended.min_crcl_ml_min": num("mL/min", 0.0, 200.0),
    "extended.min_interval_h": num("h", 1.0, 168.0),
    "extended.excluded_conditions": names(),
    "extended.keep_infusion": flag(),
    # ------------------------------------------------------------ nomogram
    "nomogram.window_h": band("h", 0.0, 48.0),
    "nomogram.q24_line": points("h, mg/L", 0.0, 100.0),
    "nomogram.q36_line": points("h, mg/L", 0.0, 100.0, optional=True),
    "nomogram.q48_line": points("h, mg/L", 0.0, 100.0, optional=True),
    "nomogram.q24_shape_confirmed": flag(),
    "nomogram.q36_shape_confirmed": flag(optional=True),
    "nomogram.q48_shape_confirmed": flag(optional=True),
    "nomogram.initial_interval": points("mL/min, h", 0.0, 200.0),
    "nomogram.dose_tolerance_rel": num("fraction", 0.0, 1.0),
    "nomogram.borderline_rel": num("fraction", 0.0, 0.5),
    "nomogram.above_top_line": text(),
}

#: Target bands an indication variant may set.
VARIANT_BANDS = {"peak": band("mg/L", 0.0, 80.0), "trough": band("mg/L", 0.0, 40.0),
                 "auc24": band("mg*h/L", 0.0, 1500.0), "css": band("mg/L", 0.0, 60.0)}

#: Top-level protocol sections other than a drug id or ``common``: name -> checker(body, field).
SECTIONS: dict[str, Callable[[Any, str], None]] = {}

#: Keys a leaf table may hold besides ``value``.
LEAF_KEYS = ("value", "source", "unit")

