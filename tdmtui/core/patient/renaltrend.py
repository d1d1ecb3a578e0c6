"""Renal trend: the ``scr-unstable`` rule by the KDIGO acute kidney injury definition.

KDIGO 2012 AKI guideline (Kidney Int Suppl 2012;2:1-138; pk-sources.md 6.1,
definition from memory): a rise in serum creatinine of at least 0.3 mg/dL
within 48 h, or to at least 1.5 times the lowest value within the prior 7
days. Every pair of values inside each window is compared, not only
consecutive ones, so a steady climb 0.9 -> 1.1 -> 1.3 -> 1.5 mg/dL over 6 days
(1.5 / 0.9 = 1.67) is found.

Falls are warned by the mirror rule (a fall of the same size within 48 h, or
to at most ``1 - renal.scr_change_rel`` of the highest value within the
window): recovering kidney injury also leaves SCr out of steady state, and
Cockcroft-Gault assumes a steady SCr (Cockcroft 1976; pk-sources.md 1.1).

Library keys (``common.toml``, each with its source): ``renal.scr_change_abs_mg_dl``
(0.3), ``renal.scr_change_window_h`` (48), ``renal.scr_change_rel`` (0.5: to
1.5 x the lowest), ``renal.scr_change_rel_window_h`` (168).
"""

from __future__ import annotations

from dataclasses import dataclass

from tdmtui.core.library import Rules

_EPS = 1e-9  # float slack for ">=" on clinical thresholds (1.4 - 1.1 < 0.3 in binary)

#: (time h, value mg/dL, index in the file or None), sorted by time
Series = list[tuple[float, float, "int | None"]]


@dataclass(frozen=True)
class Change:
    """One qualifying change: the later value ``j`` against the earlier value ``i``.

    ``rule`` is ``abs`` (0.3 mg/dL within 48 h) or ``ratio`` (1.5 x within 7 days).
    """

    i: int
    j: int
    rule: str


@dataclass(frozen=True)
class Thresholds:
    """The rule's numbers, mg/dL, h, fraction (library values)."""

    d_abs: float
    window_abs: float
    rel: float
    window_rel: float

    @classmethod
    def of(cls, rules: Rules) -> Thresholds:
        """Read from the library (or the local protocol)."""
        return cls(float(rules.value("renal.scr_change_abs_mg_dl")), float(rules.value("renal.scr_change_window_h")),
                   float(rules.value("renal.scr_change_rel")), float(rules.value("renal.scr_change_rel_window_h")))


def _qualifies(vi: float, vj: float, dt: float, th: Thresholds) -> str | None:
    if dt <= th.window_abs + _EPS and abs(vj - vi) >= th.d_abs - _EPS:
        return "abs"
    if dt <= th.window_rel + _EPS and (vj >= (1.0 + th.rel) * vi - _EPS or vj <= (1.0 - th.rel) * vi + _EPS):
        return "ratio"
    return None


def changes(series: Series, th: Thresholds) -> list[Change]:
    """Per later value, the largest qualifying change against any earlier value in a window.

    The reference is the earlier value giving the largest absolute change
    (for a rise: the lowest value in the window, as KDIGO's baseline).
    """
    out: list[Change] = []
    for j in range(1, len(series)):
        tj, vj, _ = series[j]
        best: tuple[float, int, str] | None = None
        for i in range(j):
            ti, vi, _ = series[i]
            rule = _qualifies(vi, vj, tj - ti, th)
            if rule is not None and (best is None or abs(vj - vi) > best[0] + _EPS):
                best = (abs(vj - vi), i, rule)
        if best is not None:
            out.append(Change(best[1], j, best[2]))
    return out


def rule_text(change: Change, th: Thresholds, rising: bool) -> str:
    """Which arm of the definition the change meets, in words."""
    if change.rule == "abs":
        return f"{'a rise' if rising else 'a fall'} of {th.d_abs:g} mg/dL or more within {th.window_abs:g} h"
    days = th.window_rel / 24.0
    if rising:
        return f"a rise to {1 + th.rel:g} x the lowest value or more within {days:g} days"
    return f"a fall to {1 - th.rel:g} x the highest value or less within {days:g} days"
