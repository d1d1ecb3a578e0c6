"""Builders shared by the regimen tests (invented patients; no real data)."""

from __future__ import annotations

from typing import Any

from tdmtui.core.input.casetypes import Target
from tdmtui.core.input.clock import Clock
from tdmtui.core.library import Protocol, Rules
from tdmtui.core.models import DoseArrays, PKParams
from tdmtui.core.regimen import CurrentRegimen, RegimenInput

CLOCK = Clock("naive")
T0 = CLOCK.parse("2026-03-01T08:00", "test")


def rules(drug: str, **overrides: Any) -> Rules:
    """Library rules with protocol overrides given as dotted keys (``regimen__min_infusion_h``)."""
    if not overrides:
        return Rules(drug)
    flat = {k.replace("__", "."): (v, "test protocol") for k, v in overrides.items()}
    return Rules(drug, Protocol("test", "0" * 64, {drug: flat}))


def inp(drug: str, params: PKParams | None, history: DoseArrays | None = None, as_of: float = T0,
        current: CurrentRegimen | None = None, target: Target | None = None, r: Rules | None = None,
        **kw: Any) -> RegimenInput:
    """A RegimenInput with plausible defaults (80 kg, CrCl 90 mL/min)."""
    base: dict[str, Any] = dict(dosing_weight_kg=80.0, tbw_kg=80.0, bmi=25.0, crcl_ml_min=90.0)
    base.update(kw)
    return RegimenInput(drug=drug, rules=r or Rules(drug), case_target=target or Target(), params=params,
                        history=history if history is not None else DoseArrays.from_lists([], [], []),
                        as_of=as_of, clock=CLOCK, current=current, **base)
