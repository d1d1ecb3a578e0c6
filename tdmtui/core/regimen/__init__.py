"""Regimen design: targets, practical candidates, the hand-over from now, loading doses,
extended-interval (Hartford nomogram) and continuous-infusion dosing.

Entry point::

    plan = design(RegimenInput(drug=..., rules=..., case_target=..., params=..., history=...,
                               as_of=..., clock=..., current=CurrentRegimen(...) or None, ...))

``plan.regimen`` is the contract's ``regimen`` object (case-format.md) with
these extra keys: ``mode`` (``auc``, ``peak-trough``, ``extended``,
``continuous``), ``daily_dose_mg``, ``forecast_auc`` ({``from``,
``day1_mg_h_per_l``, ``day2_mg_h_per_l``}: exact AUC of the next 0-24 h and
24-48 h from ``as_of``), ``current_predicted`` / ``current_on_target`` (the
standing order's steady state), ``choice_rule`` (text), for continuous
infusions ``rate_mg_per_h`` and ``css_mg_per_l``, for the nomogram
``nomogram`` (the reading and which line came from where), and in
``predicted`` ``peak_at_reference_mg_per_l`` where the target compares peaks
at a draw time other than the end of infusion. ``loading_dose`` carries
``basis``, ``exact_mg`` and ``capped`` as well. ``plan.candidates`` is the
candidate table for the UI. Modules:

* targets.py - targets per mode with their source.
* candidates.py - candidates judged against the targets, the documented choice rule, posterior draws.
* grid.py, steadystate.py - the practical dose and infusion-time grid; steady-state figures per mg.
* handover.py - next dose, hold, 72 h forecast, next levels.
* timing.py, wardclock.py, practice.py - the hand-over on the grid and ward hours, skipped doses, hold limit, intervals by half-life.
* loading.py - new-start and top-up loading doses.
* nomogram.py, extended.py - Hartford nomogram and its entry checks.
* continuous.py - continuous-infusion rate for a Css.
* design.py - the orchestration.
"""

from __future__ import annotations

from tdmtui.core.regimen.design import design
from tdmtui.core.regimen.types import CurrentRegimen, Plan, RegimenInput

__all__ = ["CurrentRegimen", "Plan", "RegimenInput", "design"]
