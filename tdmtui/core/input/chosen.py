"""The regimen chosen in review: the case's optional ``chosen_regimen`` key.

Case format (an optional key, documented in sample_cases/README.md)::

    "chosen_regimen": {"dose": "750 mg", "interval": "8 h", "duration": "1 h"}

It names one of the regimens the tool offered (the proposal or a candidate)
by its dose, interval and infusion time. The note then gives that regimen as
the regimen, with its own hold, loading dose, next dose and level times. When
a change to the case means it is no longer offered, the note says so and
gives the proposal.
"""

from __future__ import annotations

from typing import Any

from tdmtui.core.errors import InputError
from tdmtui.core.input.units import parse_quantity

KEY = "chosen_regimen"
_PARTS = (("dose", "dose", "dose_mg"), ("interval", "time", "interval_h"), ("duration", "time", "infusion_h"))


def parse_chosen(raw: object) -> dict[str, float] | None:
    """The case's ``chosen_regimen`` as ``{dose_mg, interval_h, infusion_h}``, or None when absent.

    Raises:
        InputError: naming ``chosen_regimen.<key>`` when a part does not read.
    """
    value = raw.get(KEY) if isinstance(raw, dict) else None
    if value is None:
        return None
    if not isinstance(value, dict):
        raise InputError(KEY, "expected an object with dose, interval and duration")
    out = {}
    for key, kind, name in _PARTS:
        if key not in value:
            raise InputError(f"{KEY}.{key}", "needed")
        x = parse_quantity(value[key], kind, f"{KEY}.{key}")
        if x <= 0 and key != "duration":
            raise InputError(f"{KEY}.{key}", "must be positive")
        out[name] = x
    return out


def chosen_raw(regimen: dict[str, Any]) -> dict[str, str]:
    """A regimen from the result as the case key stores it (contract strings)."""
    def num(x: float) -> str:
        return f"{round(float(x), 4):g}"

    return {"dose": f"{num(regimen['dose_mg'])} mg", "interval": f"{num(regimen['interval_h'])} h",
            "duration": f"{num(regimen['infusion_h'] * 60)} min"}


def offered(result: dict[str, Any]) -> list[dict[str, Any]]:
    """The regimens the tool offered: the proposal first, then the alternatives."""
    reg = result.get("regimen") or {}
    if reg.get("candidates"):
        return list(reg["candidates"])
    return ([reg] if reg else []) + list(reg.get("alternatives") or [])


def same(a: dict[str, Any], b: dict[str, Any]) -> bool:
    """Same dose, interval and infusion time (to 0.1 mg and 1 minute)."""
    return (abs(float(a["dose_mg"]) - float(b["dose_mg"])) < 0.05
            and abs(float(a["interval_h"]) - float(b["interval_h"])) < 1 / 120
            and abs(float(a["infusion_h"]) - float(b["infusion_h"])) < 1 / 120)


def find(result: dict[str, Any], chosen: dict[str, Any] | None) -> dict[str, Any] | None:
    """The offered regimen matching ``chosen``, or None (not chosen, or no longer offered)."""
    if not chosen:
        return None
    return next((r for r in offered(result) if same(r, chosen)), None)


def restart_level(regimen: dict[str, Any]) -> dict[str, Any] | None:
    """The level a regimen's first dose waits on after a hold for high exposure (the row
    regimen/handover.restart_check puts in ``next_levels``), or None. Here, with the other readers of
    the result's regimen, so the app's Plan screen reads it without the regimen package (numpy)."""
    return next((nl for nl in regimen.get("next_levels") or [] if nl.get("give_below_mg_l") is not None), None)
