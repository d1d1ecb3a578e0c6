"""What a case is: the parsed case and its parts, typed, in canonical units.

:class:`Case` holds plain floats (mg, L, h, mg/L, kg, cm, yr; SCr mg/dL) and
times in hours since the epoch; :mod:`tdmtui.core.input.case` builds one from
the case file's JSON and checks every field on the way. The vocabularies below
are the words the case format accepts (case-format.md).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from tdmtui.core import registry
from tdmtui.core.alerts import Alert
from tdmtui.core.input.clock import Clock

FORMAT = "tdmtui.case/1"
SEXES = ("male", "female")
RENAL_REPLACEMENT = ("none", "ihd", "crrt", "pd")
DOSE_KINDS = ("loading", "maintenance", "extra")
TIMINGS = ("actual", "scheduled", "uncertain")
#: The case's ``method`` choices: ``auto``, every estimation method, every regimen option (registry.py).
METHODS = registry.CHOICES
TARGET_BANDS = ("auc24", "peak", "trough", "css")


@dataclass(frozen=True)
class Dose:
    """One infusion. Times in h since the epoch; amount mg."""

    index: int
    start: float
    duration: float
    amount: float
    kind: str = "maintenance"
    timing: str = "actual"

    @property
    def end(self) -> float:
        return self.start + self.duration


@dataclass(frozen=True)
class Level:
    """One measured concentration (mg/L); ``conc`` holds the limit when censored."""

    index: int
    time: float
    conc: float
    below_loq: bool = False
    above_uloq: bool = False
    use: bool = True
    reason: str = ""
    timing: str = "actual"

    @property
    def quantified(self) -> bool:
        return not (self.below_loq or self.above_uloq)


@dataclass(frozen=True)
class ScrValue:
    """A serum creatinine in mg/dL; ``index`` is None for the single-string form."""

    index: int | None
    time: float | None
    value: float

    @property
    def field(self) -> str:
        return "patient.scr" if self.index is None else f"patient.scr[{self.index}].value"


@dataclass(frozen=True)
class Patient:
    age: float
    sex: str
    weight: float
    height: float
    scr: tuple[ScrValue, ...]
    renal_replacement: str = "none"
    conditions: tuple[str, ...] = ()
    comedications: tuple[str, ...] = ()


@dataclass(frozen=True)
class Schedule:
    interval: float
    dose: float | None = None
    duration: float | None = None


@dataclass(frozen=True)
class Target:
    """Targets given in the case (None = take the library's or protocol's)."""

    auc24: tuple[float, float] | None = None
    peak: tuple[float, float] | None = None
    trough: tuple[float, float] | None = None
    css: tuple[float, float] | None = None
    mic: float | None = None
    indication: str | None = None


@dataclass(frozen=True)
class Case:
    """A parsed case. ``doses`` are sorted by start; ``levels`` by time."""

    drug: str
    label: str
    as_of: float
    as_of_given: bool
    clock: Clock
    patient: Patient
    doses: tuple[Dose, ...]
    levels: tuple[Level, ...]
    schedule: Schedule | None
    target: Target
    method: str
    raw: dict[str, Any]
    sha256: str
    saved: bool
    notices: tuple[Alert, ...] = ()  # warnings found while reading (ambiguous times, an unused timezone)
    dialysis: Any = None  # dialysis.Dialysis: haemodialysis sessions, or None (docs/dialysis.md)

