"""The one formatter for printed numbers and their units: chart note, command-line summary and app.

The result object (JSON) keeps every digit; anything a person reads goes
through :func:`num` / :func:`qty` with a quantity name from :data:`TABLE`, so
the same value reads the same on every screen and page (``ke 0.0827 /h`` in
the app, the note and ``tdmtui compute``).

The rounding table (one rule per quantity; the rules of the chart note, which
clinicians review, extended to every figure a view prints)::

    quantity      rule                                  example
    ------------  ------------------------------------  -------------------
    ke            3 significant figures, zeros kept     0.0827 /h, 0.100 /h
    half_life     1 decimal                             8.4 h
    volume        1 decimal                             51.6 L
    volume_kg     2 decimals                            0.70 L/kg
    clearance     2 decimals                            4.27 L/h
    auc           whole number                          703 mg*h/L
    conc          1 decimal, 2 below 1 mg/L,            18.2 mg/L, 0.16 mg/L,
                  "<0.01" below 0.005                   <0.01 mg/L
    rate          1 decimal                             93.8 mg/h
    dose          at most 1 decimal, zeros dropped      1250 mg, 82.5 mg
    interval      at most 2 decimals, zeros dropped     12 h, 36 h
    infusion      at most 2 decimals, zeros dropped     1.5 h, 0.5 h
    crcl          whole number                          92 mL/min
    egfr          whole number                          88 mL/min/1.73 m2
    weight        1 decimal                             70.5 kg
    bmi           1 decimal                             24.1 kg/m2
    scr           at most 2 decimals, zeros dropped     0.9 mg/dL
    probability   whole percent; "<1" below 0.5 %,      63 %, <1 %, >99 %
                  ">99" from 99.5 % (a share of a
                  finite set of draws is never 0 or 100)
    share         whole percent                         97 %, 100 %

An absent value (None, or anything that is not a number) prints ``-``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable, Sequence


@dataclass(frozen=True)
class Rule:
    """How one quantity is printed: its formatter (number only) and its unit as written."""

    render: Callable[[float], str]
    unit: str
    words: str


def _decimals(n: int) -> Callable[[float], str]:
    return lambda x: f"{x:.{n}f}"


def _trimmed(n: int) -> Callable[[float], str]:
    def render(x: float) -> str:
        text = f"{x:.{n}f}".rstrip("0").rstrip(".")
        return "0" if text in ("-0", "") else text
    return render


def _significant(x: float) -> str:
    return f"{x:#.3g}".rstrip(".")


def _conc(x: float) -> str:
    if x == 0:
        return "0"
    if 0 < x < 0.005:
        return "<0.01"
    return f"{x:.2f}" if abs(x) < 1.0 else f"{x:.1f}"


def _percent(p: float) -> str:
    x = 100.0 * p
    if 0 < x < 0.5:
        return "<1"
    if 99.5 <= x < 100:
        return ">99"
    return f"{x:.0f}"


#: quantity -> Rule (the table in the module docstring; change both together)
TABLE: dict[str, Rule] = {
    "ke": Rule(_significant, "/h", "3 significant figures"),
    "half_life": Rule(_decimals(1), "h", "1 decimal"),
    "volume": Rule(_decimals(1), "L", "1 decimal"),
    "volume_kg": Rule(_decimals(2), "L/kg", "2 decimals"),
    "clearance": Rule(_decimals(2), "L/h", "2 decimals"),
    "auc": Rule(_decimals(0), "mg*h/L", "whole number"),
    "conc": Rule(_conc, "mg/L", "1 decimal, 2 below 1 mg/L"),
    "rate": Rule(_decimals(1), "mg/h", "1 decimal"),
    "dose": Rule(_trimmed(1), "mg", "at most 1 decimal"),
    "interval": Rule(_trimmed(2), "h", "at most 2 decimals"),
    "infusion": Rule(_trimmed(2), "h", "at most 2 decimals"),
    "crcl": Rule(_decimals(0), "mL/min", "whole number"),
    "egfr": Rule(_decimals(0), "mL/min/1.73 m2", "whole number"),
    "weight": Rule(_decimals(1), "kg", "1 decimal"),
    "bmi": Rule(_decimals(1), "kg/m2", "1 decimal"),
    "scr": Rule(_trimmed(2), "mg/dL", "at most 2 decimals"),
    "probability": Rule(_percent, "%", "whole percent, <1 and >99 at the ends"),
    "share": Rule(lambda x: f"{100.0 * x:.0f}", "%", "whole percent"),
}

#: the result object's keys -> the quantity that prints them
KEYS: dict[str, str] = {
    "ke_per_h": "ke", "half_life_h": "half_life", "vd_l": "volume", "vd_l_per_kg": "volume_kg",
    "cl_l_per_h": "clearance", "auc24_mg_h_per_l": "auc", "peak_mg_per_l": "conc", "trough_mg_per_l": "conc",
    "css_mg_per_l": "conc", "rate_mg_per_h": "rate", "dose_mg": "dose", "daily_dose_mg": "dose",
    "interval_h": "interval", "infusion_h": "infusion", "crcl_ml_min": "crcl",
    "egfr_ckd_epi_ml_min_173": "egfr", "dosing_weight_kg": "weight", "ibw_kg": "weight", "adjbw_kg": "weight",
    "bmi_kg_m2": "bmi", "scr_used_mg_dl": "scr", "target_probability": "probability",
}


def _rule(quantity: str) -> Rule:
    return TABLE[KEYS.get(quantity, quantity)]


def _number(value: object) -> float | None:
    if value is None or isinstance(value, bool) or not isinstance(value, (int, float)):
        return None
    x = float(value)
    return x if math.isfinite(x) else None


def num(value: object, quantity: str) -> str:
    """``value`` rounded by the rule of ``quantity`` (a :data:`TABLE` name or a result key), no unit; ``-`` absent."""
    x = _number(value)
    return "-" if x is None else _rule(quantity).render(x)


def unit(quantity: str) -> str:
    """The unit ``quantity`` is printed with (``mg/L``, ``/h``, ``%``)."""
    return _rule(quantity).unit


def qty(value: object, quantity: str) -> str:
    """``value`` rounded, with its unit (``18.2 mg/L``, ``0.0827 /h``, ``63 %``); ``-`` absent."""
    text = num(value, quantity)
    return text if text == "-" else f"{text} {_rule(quantity).unit}"


def interval(pair: Sequence[object] | None, quantity: str) -> str:
    """A 90 % interval as ``[312-498]`` (numbers only); ``""`` when absent."""
    if not isinstance(pair, (list, tuple)) or len(pair) != 2:
        return ""
    return f"[{num(pair[0], quantity)}-{num(pair[1], quantity)}]"
