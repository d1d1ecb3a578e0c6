"""Targets a regimen is designed to, each with the time it refers to and its source.

Modes (how a regimen is judged):

* ``auc`` - vancomycin intermittent infusion: AUC24 band (2020 consensus
  guideline, 400-600 mg*h/L at MIC 1 mg/L; pk-sources.md 3.1), optionally a
  trough ceiling (library/protocol ``targets.trough_ceiling``, 0 = none).
* ``peak-trough`` - traditional aminoglycoside dosing: peak band compared at
  the library's ``targets.peak_reference`` time (end of infusion, or a draw
  time such as 1 h after the start) and a trough band (lower bound 0 = a
  ceiling only); indication variants from ``targets.variants``.
* ``extended`` - extended-interval aminoglycosides: ``extended.auc24``,
  ``extended.peak`` (0-0 = not used) and ``extended.trough_ceiling`` (the
  drug-free interval: the trough must fall under it).
* ``continuous`` - vancomycin continuous infusion: a Css band (``targets.css``);
  AUC24 = Css x 24 (pk-sources.md 2.5).

Precedence: a band written in the case wins, then the local protocol, then
the library; :class:`Targets` remembers which for the result's ``sources``.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from tdmtui.core.input.casetypes import Target
    from tdmtui.core.library import Rules

MODES = ("auc", "peak-trough", "extended", "continuous")
_REF = re.compile(r"(start|end)(?:\+(\d+(?:\.\d+)?)h)?")

Band = tuple[float, float]


@dataclass(frozen=True)
class Targets:
    """Resolved targets for one mode.

    Attributes:
        mode: one of :data:`MODES`.
        auc24: AUC24 band, mg*h/L, or None.
        peak: peak band, mg/L, or None.
        trough: trough band, mg/L (low 0 = ceiling only), or None.
        css: continuous-infusion steady-state band, mg/L, or None.
        peak_reference: ``end`` or ``start+1h``-style text: when the peak is compared.
        mic: MIC, mg/L.
        indication: the case's indication text (or None).
        sources: target name -> ``library``/``protocol``/``case``.
        citations: target name -> source text.
    """

    mode: str
    auc24: Band | None = None
    peak: Band | None = None
    trough: Band | None = None
    css: Band | None = None
    peak_reference: str = "end"
    mic: float = 1.0
    indication: str | None = None
    sources: dict[str, str] = field(default_factory=dict)
    citations: dict[str, str] = field(default_factory=dict)

    @property
    def trough_ceiling(self) -> float | None:
        """Upper trough limit, mg/L (None when there is none)."""
        return self.trough[1] if self.trough and self.trough[1] > 0 else None

    def peak_time(self, tinf: float) -> float:
        """Hours after a dose's start at which its peak is compared.

        ``end+Xh`` is X h after the end of infusion; ``start+Xh`` is X h
        after the start, but never before the end of the infusion (a draw
        during the infusion is no peak).
        """
        m = _REF.fullmatch(self.peak_reference.strip())
        if not m:
            return tinf
        base, extra = m.group(1), float(m.group(2) or 0.0)
        return tinf + extra if base == "end" else max(extra, tinf)

    @property
    def main_source(self) -> str:
        """The source of the target that drives the choice (``case`` wins if any)."""
        vals = list(self.sources.values())
        for s in ("case", "protocol"):
            if s in vals:
                return s
        return "library"

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready shape for the result's ``target``."""
        out: dict[str, Any] = {"mode": self.mode, "mic_mg_per_l": self.mic}
        if self.auc24:
            out["auc24_mg_h_per_l"] = list(self.auc24)
        if self.peak:
            out["peak_mg_per_l"] = list(self.peak)
            out["peak_reference"] = self.peak_reference
        if self.trough:
            out["trough_mg_per_l"] = list(self.trough)
        if self.css:
            out["css_mg_per_l"] = list(self.css)
        if self.indication:
            out["indication"] = self.indication
        out["sources"] = dict(self.sources)
        out["citations"] = dict(self.citations)
        return out


def _band(value: Any) -> Band | None:
    """A ``[low, high]`` library value; ``[0, 0]`` (unset) -> None."""
    if value is None:
        return None
    lo, hi = float(value[0]), float(value[1])
    return None if lo == 0.0 and hi == 0.0 else (lo, hi)


class _Picker:
    """Collects each target with its source."""

    def __init__(self, rules: Rules) -> None:
        self.rules = rules
        self.sources: dict[str, str] = {}
        self.citations: dict[str, str] = {}

    def lib(self, name: str, key: str) -> Any:
        if key not in self.rules:
            return None
        self.sources[name] = self.rules.source(key)
        self.citations[name] = self.rules.citation(key)
        return self.rules.value(key)

    def case(self, name: str, band: Band | None) -> Band | None:
        if band is not None:
            self.sources[name] = "case"
            self.citations[name] = "target written in the case"
        return band


def _variant(rules: Rules, indication: str | None, pick: _Picker, conditions: tuple[str, ...] = ()) -> dict[str, Any]:
    """The library's indication variant whose id matches the case's indication text, else one whose id
    is a documented patient condition of the case (``endocarditis`` on gentamicin: synergy bands)."""
    if "targets.variants" not in rules:
        return {}
    variants = rules.value("targets.variants") or {}
    text = (indication or "").strip().lower()
    found = next((vid for vid in variants if text and (vid == text or vid.replace("-", " ") in text)), None)
    if found is None:
        found = next((vid for vid in variants if vid in conditions), None)
    if found is None:
        return {}
    pick.sources["variant"] = rules.source("targets.variants")
    pick.citations["variant"] = f"{found}: {rules.citation('targets.variants')}"
    return dict(variants[found])


def resolve_targets(rules: Rules, case_target: Target | None, mode: str,
                    conditions: tuple[str, ...] = ()) -> Targets:
    """Targets for ``mode`` from the case, the protocol and the library.

    Args:
        rules: library values with the local protocol on top.
        case_target: the case's ``target`` (None fields are taken from rules).
        mode: one of :data:`MODES`.
        conditions: the patient's documented conditions (a variant may be named by one).

    Returns:
        The resolved :class:`Targets`.
    """
    if mode not in MODES:
        raise ValueError(f"unknown regimen mode {mode!r}")
    pick = _Picker(rules)
    ct = case_target
    mic = ct.mic if ct and ct.mic else float(rules.value("mic.default_mg_l"))
    ref = str(rules.value("targets.peak_reference"))
    indication = ct.indication if ct else None
    if mode == "auc":
        kw = _auc_bands(pick, ct)
    elif mode == "peak-trough":
        kw = _peak_trough_bands(pick, ct, _variant(rules, indication, pick, tuple(conditions)))
    elif mode == "extended":
        kw = _extended_bands(pick, ct)
    else:
        kw = _continuous_bands(pick, ct)
    if kw.get("peak") is not None:
        pick.sources.setdefault("peak_reference", rules.source("targets.peak_reference")
                                if "targets.peak_reference" in rules else "library")
    return Targets(mode=mode, peak_reference=ref, mic=float(mic), indication=indication,
                   sources=pick.sources, citations=pick.citations,
                   **{k: ((float(v[0]), float(v[1])) if v else None) for k, v in kw.items()})


#: A mode's bands by name (``auc24``, ``peak``, ``trough``, ``css``), None where the mode has none.
_Bands = dict[str, Any]


def _auc_bands(pick: _Picker, ct: Target | None) -> _Bands:
    """AUC24 band, and a trough ceiling where the case or the library gives one."""
    kw: _Bands = {"auc24": pick.case("auc24", ct.auc24 if ct else None) or _band(pick.lib("auc24", "targets.auc24"))}
    trough = pick.case("trough", ct.trough if ct else None)
    if trough is None:
        ceiling = float(pick.lib("trough", "targets.trough_ceiling") or 0.0)
        trough = (0.0, ceiling) if ceiling > 0 else None
        if trough is None:
            pick.sources.pop("trough", None)
            pick.citations.pop("trough", None)
    kw["trough"] = trough
    return kw


def _peak_trough_bands(pick: _Picker, ct: Target | None, var: dict[str, Any]) -> _Bands:
    """Peak and trough bands: the case's, else the indication variant's, else the library's."""
    kw: _Bands = {}
    kw["peak"] = pick.case("peak", ct.peak if ct else None) or (
        tuple(var["peak"]) if "peak" in var else _band(pick.lib("peak", "targets.peak")))
    kw["trough"] = pick.case("trough", ct.trough if ct else None) or (
        tuple(var["trough"]) if "trough" in var else _band(pick.lib("trough", "targets.trough")))
    if "peak" in var and not (ct and ct.peak):
        pick.sources["peak"] = pick.sources["variant"]
    if "trough" in var and not (ct and ct.trough):
        pick.sources["trough"] = pick.sources["variant"]
    return kw


def _extended_bands(pick: _Picker, ct: Target | None) -> _Bands:
    """Extended-interval AUC24 and peak bands where set, and the trough ceiling."""
    kw: _Bands = {}
    kw["auc24"] = pick.case("auc24", ct.auc24 if ct else None) or _band(pick.lib("auc24", "extended.auc24"))
    kw["peak"] = pick.case("peak", ct.peak if ct else None) or _band(pick.lib("peak", "extended.peak"))
    trough = pick.case("trough", ct.trough if ct else None)
    if trough is None:
        ceiling = float(pick.lib("trough", "extended.trough_ceiling") or 0.0)
        trough = (0.0, ceiling) if ceiling > 0 else None
    kw["trough"] = trough
    for name in ("auc24", "peak"):
        if kw[name] is None:
            pick.sources.pop(name, None)
            pick.citations.pop(name, None)
    return kw


def _continuous_bands(pick: _Picker, ct: Target | None) -> _Bands:
    """The Css band, and the AUC24 band it makes (Css x 24 h)."""
    kw: _Bands = {"css": pick.case("css", ct.css if ct else None) or _band(pick.lib("css", "targets.css"))}
    if kw["css"]:
        kw["auc24"] = (kw["css"][0] * 24.0, kw["css"][1] * 24.0)
    return kw
