"""The orchestrator: a case in, the contract's result out.

Order of work (each step's rules are in its own module):

1. library rules with the local protocol laid on top (:mod:`library`);
2. body size and renal function (:mod:`patient`), plausibility (:mod:`checks`);
3. course checks, usable levels and the current regimen (:mod:`course`);
4. the targets the regimen is judged by (:func:`regimen_targets`);
5. every method of the registry side by side (:mod:`registry`, :mod:`methods`);
6. the method used: the one asked for, or by ``auto`` (:func:`choose`);
7. the timing sensitivity (:mod:`sensitivity`), the regimen (:mod:`regimen`) unless a stop stands.

A choice that names a regimen option (``nomogram``) takes its estimate from
the option's ``estimate_with`` choice and hands the option to the design.

``auto`` (case-format.md; the registry's ``auto_rank`` order) never ignores a usable level: two-level when two
usable levels give a unique solution; else the Bayesian estimate (every
usable level, censored ones as bounds, whatever the model's verification
status: a model checked against a secondary copy only carries a caution);
else a one-level method (a drug without a population model); the population
estimate only when no usable level exists. :func:`method_reason` says why in
one sentence for the note.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np

from tdmtui import __version__
from tdmtui.core import reconcile, registry
from tdmtui.core.patient import checks
from tdmtui.core.course import history as course
from tdmtui.core.regimen import exposure
from tdmtui.core.regimen import limits
from tdmtui.core.estimation import methods
from tdmtui.core.regimen import renalplan
from tdmtui.core.alerts import Alert, has_stop
from tdmtui.core.input.case import parse_case
from tdmtui.core.input.casetypes import Case
from tdmtui.core.estimation.context import MethodContext, history_of
from tdmtui.core.course.history import CurrentRegimen
from tdmtui.core.errors import NoEstimateError
from tdmtui.core.estimation.estimates import Estimate
from tdmtui.core.library import LIBRARY_VERSION, Protocol, Rules, library_digest
from tdmtui.core.models import DoseArrays, PKParams
from tdmtui.core.patient.renal import RenalSummary, renal_summary
from tdmtui.core.estimation.runs import MethodRuns
from tdmtui.core.estimation.sensitivity import timing_sensitivity
from tdmtui.core.estimation.working import WorkingStep

if TYPE_CHECKING:
    from tdmtui.core.regimen.targets import Targets
    from tdmtui.core.regimen.types import Plan as RegimenPlan
    from tdmtui.core.regimen.types import RegimenInput

RESULT_FORMAT = "tdmtui.result/1"


@dataclass(frozen=True, eq=False)
class Outcome:
    """Everything one computation produced (see the module docstring): one assessment, built once.

    Frozen: a view renders it and never sets anything on it (a view that needs more, such as the
    app's plot, builds its own object from it). ``result`` is the contract's result object, built
    by :func:`compute` from the typed fields beside it (the estimate's ``to_dict``, the plan's
    regimen, the alerts); ``eq=False`` keeps identity hashing, so a view may cache by outcome.
    """

    case: Case
    result: dict[str, Any]
    params: PKParams | None
    history: DoseArrays
    plan: DoseArrays | None = None
    working: tuple[WorkingStep, ...] = ()
    alerts: tuple[Alert, ...] = ()
    renal: RenalSummary | None = None
    estimates: dict[str, Estimate] = field(default_factory=dict)
    rules: Rules | None = None
    regimen_plan: RegimenPlan | None = None
    method_used: str | None = None
    band_source: tuple[MethodContext, Estimate] | None = field(default=None, repr=False)

    def band_over(self, t0: float, t1: float, points: int = 240) -> tuple[np.ndarray, np.ndarray, np.ndarray] | None:
        """The 90 % concentration band over [t0, t1] h (times, 5th, 95th percentile), computed when a view
        asks (only the app's plot shows it), or None without posterior draws."""
        if self.band_source is None:
            return None
        return methods.concentration_band(*self.band_source, self.plan, (t0, t1), points)

    def with_result(self, **changes: object) -> Outcome:
        """A copy whose result object has ``changes`` (e.g. ``input_saved=True``); this one is untouched."""
        return dataclasses.replace(self, result=dict(self.result, **changes))


def choose(requested: str, estimates: dict[str, Estimate], failures: dict[str, str]) -> str:
    """The method used: the one asked for, or the first of ``auto``'s order that gave an estimate.

    Raises NoEstimateError when a requested method gave none.
    """
    if requested != "auto":
        if requested in estimates:
            return requested
        raise NoEstimateError(requested, failures.get(requested, "this method does not apply to this case"))
    for m in registry.auto_order():
        if m.id in estimates:
            return m.id
    raise NoEstimateError("auto", "; ".join(f"{k}: {v}" for k, v in failures.items()) or "no method applies")


def regimen_input(case: Case, rules: Rules, renal: RenalSummary, history: DoseArrays,
                  cur: CurrentRegimen | None, option: str | None) -> RegimenInput:
    """What the regimen design is given, before any estimate (params None)."""
    from tdmtui.core.regimen.types import RegimenInput

    p = case.patient
    return RegimenInput(drug=case.drug, rules=rules, case_target=case.target, params=None,
                        history=history, as_of=case.as_of, clock=case.clock, current=cur,
                        dosing_weight_kg=renal.dosing_weight_kg, tbw_kg=p.weight, bmi=renal.bmi,
                        crcl_ml_min=renal.crcl_ml_min, renal_replacement=p.renal_replacement,
                        conditions=p.conditions, levels=case.levels, doses=case.doses, option=option)


def regimen_option(asked: str, chosen: str | None, base: RegimenInput) -> str | None:
    """The regimen option the design uses: the one chosen, or under ``auto`` the nomogram where the
    chart can be read for this extended-interval course (regimen/extended.applies)."""
    if chosen is not None or asked != "auto":
        return chosen
    from tdmtui.core.regimen.extended import applies

    return "nomogram" if applies(base) else None


def _auto_option_alert(option: str, est: Estimate) -> Alert:
    return Alert("nomogram-auto", "info", "method",
                 f"extended-interval course with a level in the chart's window: the interval is read on the "
                 f"nomogram; the individualised estimate ({est.method}) gives the predictions beside it")


def regimen_targets(base: RegimenInput) -> Targets:
    """The targets the regimen is judged by (mode from the drug, the case, the current order, the option)."""
    from tdmtui.core.regimen.design import choose_mode
    from tdmtui.core.regimen.targets import resolve_targets

    return resolve_targets(base.rules, base.case_target, choose_mode(base, []), tuple(base.conditions))


def method_reason(requested: str, used: str, estimates: dict[str, Estimate], failures: dict[str, str],
                  n_levels: int) -> str:
    """One sentence for the note: which method and why."""
    if requested != "auto":
        return f"{used} was asked for in the case or on the command line."
    est = estimates[used]
    n = len(est.levels_used)
    if used == "two-level":
        return "two usable levels give a single whole-history solution, so the estimate rests on them alone."
    if used == "bayesian":
        name = (est.model or {}).get("name", "the population model")
        count = "one usable level" if n == 1 else f"{n} usable levels"
        bounds = sum(r.get("kind") != "quantified" for r in est.extra.get("diagnostics", {}).get("residuals", []))
        if bounds:  # a level beyond an assay limit enters as a bound, and the sentence says so
            count = ("one level, reported beyond the assay limit and used as a bound" if n == 1
                     else f"{count} ({bounds} beyond the assay limit, used as a bound)")
        why = ""
        if n >= 2:
            tl = failures.get("two-level", "not available")
            short = ("set aside: " + tl.split("; set aside: ")[-1].split("; ")[0] if "set aside" in tl
                     else tl.split(" (")[0])
            why = f" and no single two-level solution ({short})"
        them = "it" if n == 1 else "them"
        return f"{count}{why}, so a Bayesian estimate on {name} combines {them} with what the model expects."
    if used == "continuous-steady-state":
        return ("one level drawn at steady state during a continuous infusion and no Bayesian estimate, so "
                "CL = rate / level and AUC24 = level x 24.")
    if used == "one-level":
        return (f"one usable level and no Bayesian estimate ({failures.get('bayesian', 'not available')}), so ke is "
                "solved from that level with the population volume.")
    if n_levels:
        return (f"{n_levels} level(s) on record but no method could use them (see the methods not available), so "
                "population values from CrCl and weight.")
    return "no usable level yet, so population values from CrCl and weight."


def compute(case: Case, protocol: Protocol | None = None, method: str | None = None) -> Outcome:
    """Compute a case. Raises InputError (exit 2) or NoEstimateError (exit 3)."""
    rules = Rules(case.drug, protocol)
    renal, alerts = _patient_stage(case, rules)
    ctx, base, asked, chosen = _before_estimation(case, rules, renal, method or case.method, alerts)
    runs = methods.run_all(ctx)
    estimates, failures = runs.estimates, runs.failures
    try:
        used = choose(asked, estimates, failures)
    except NoEstimateError:
        if asked == "auto" and has_stop(alerts):
            return _stopped(case, protocol, rules, renal, ctx.current, alerts, failures, ctx, estimates)
        raise
    est = estimates[used]
    n_levels = len(methods.levels_for_estimates(ctx))
    alerts += methods.compare(ctx, estimates, used)
    alerts += methods.used_alerts(ctx, est, runs)
    holds, corrections = exposure.exposure_alerts(ctx, est, base.option)
    alerts += holds
    base = dataclasses.replace(base, check_before_restart=exposure.calls_for_hold(holds))
    sens_rows, sens_alerts = timing_sensitivity(ctx, est)
    alerts += sens_alerts
    result = _header(case, protocol, renal, rules, ctx.current)
    result.update(_estimate_fields(ctx, runs, asked, chosen, used, n_levels, sens_rows))
    _dialysis_summary(case, rules, result)
    plan = _regimen_stage(ctx, est, base, chosen, result, alerts)
    plan_doses = plan.doses if plan is not None else None
    alerts += exposure.unresolved(corrections, result.get("regimen"), ctx.targets, rules)
    if "regimen" not in result and result["status"] == "stop":
        plan_doses = None
    alerts = reconcile.settle(alerts)
    result["warnings"] = [a.to_dict() for a in alerts]
    result["working"] = [w.to_dict() for w in est.working]
    return Outcome(case, result, est.params, ctx.history, plan=plan_doses, working=tuple(est.working),
                   band_source=(ctx, est) if est.samples else None,
                   alerts=tuple(alerts), renal=renal, estimates=estimates, rules=rules, regimen_plan=plan,
                   method_used=used)


def _patient_stage(case: Case, rules: Rules) -> tuple[RenalSummary, list[Alert]]:
    """Plausibility, body size and renal function, and the patient-level cautions (the case's own notices first)."""
    checks.plausibility(case, rules)
    p = case.patient
    renal = renal_summary(p.age, p.sex, p.weight, p.height, [(s.time, s.value, s.index) for s in p.scr], rules,
                          clock=case.clock)
    mic = case.target.mic if case.target.mic is not None else float(rules.value("mic.default_mg_l"))
    alerts: list[Alert] = list(case.notices) + list(renal.alerts)
    alerts += checks.patient_alerts(case, rules, renal.bmi, renal.ibw, mic)
    alerts += checks.low_scr_alerts(case, rules, renal.crcl_ml_min, renal.scr_used_mg_dl, renal.scr_measured_mg_dl,
                                    "patient.scr" if renal.scr_index is None else f"patient.scr[{renal.scr_index}].value")
    return renal, alerts


def _before_estimation(case: Case, rules: Rules, renal: RenalSummary, choice: str,
                       alerts: list[Alert]) -> tuple[MethodContext, RegimenInput, str, str | None]:
    """The course stage and the targets: what every method is given, the design's input before any estimate,
    and the choice split into (method or ``auto``, regimen option or None). Course alerts go to ``alerts``."""
    alerts += course.validate_course(case, rules, renal.dosing_weight_kg)
    cur, cur_alerts = course.current_regimen(case, rules)
    alerts += cur_alerts
    history = history_of(case)
    usable = course.usable_levels(case, rules)
    asked, chosen = registry.split_choice(choice)
    base = regimen_input(case, rules, renal, history, cur, chosen)
    base = dataclasses.replace(base, option=regimen_option(asked, chosen, base))
    return MethodContext(case, rules, renal, history, usable, cur, regimen_targets(base)), base, asked, chosen


def _estimate_fields(ctx: MethodContext, runs: MethodRuns, asked: str, chosen: str | None, used: str,
                     n_levels: int, sens_rows: list[dict[str, Any]]) -> dict[str, Any]:
    """The result's method, its reason, the estimate used, the other methods, the levels, the timing sensitivity."""
    cur, weight = ctx.current, ctx.case.patient.weight
    estimates = runs.estimates
    return {
        "method": chosen or used,
        "method_reason": method_reason(asked, used, estimates, runs.failures, n_levels),
        "estimate": estimates[used].to_dict(cur, weight),
        "methods": {k: v.to_dict(cur, weight) for k, v in estimates.items() if k != used},
        "methods_unavailable": runs.failures,
        "levels": methods.level_table(ctx),
        "timing_sensitivity": sens_rows,
    }


def _regimen_stage(ctx: MethodContext, est: Estimate, base: RegimenInput, chosen: str | None,
                   result: dict[str, Any], alerts: list[Alert]) -> RegimenPlan | None:
    """The design, the renal plan and the never-exceed guard (the final check), unless a stop stands;
    the result's regimen, target and sources filled, its status a stop where one stands."""
    if has_stop(alerts):
        result["status"] = "stop"
        return None
    if base.option is not None and base.option != chosen:
        alerts.append(_auto_option_alert(base.option, est))
    from tdmtui.core.regimen.dailycap import design_rules

    weight = ctx.case.patient.weight
    base = dataclasses.replace(base, rules=design_rules(ctx.rules, weight, ctx.renal.bmi, len(est.levels_used)))
    plan = renalplan.adjust(ctx, est, base, methods.attach_regimen(ctx, est, base))
    result["regimen"] = plan.regimen
    result["target"] = plan.targets
    result["sources"].update(plan.sources)
    plan_alerts = list(plan.alerts) + limits.guard(ctx.case.drug, result, plan.doses, weight)  # the final check
    alerts += plan_alerts
    if has_stop(plan_alerts):
        result["status"] = "stop"
        result.pop("regimen", None)
    return plan


def _dialysis_summary(case: Case, rules: Rules, result: dict[str, Any]) -> None:
    from tdmtui.core.input.dialysis import summary

    found = summary(case, rules)
    if found is not None:
        result["dialysis"] = found


def _header(case: Case, protocol: Protocol | None, renal: RenalSummary, rules: Rules, cur: CurrentRegimen | None) -> dict[str, Any]:
    return {
        "format": RESULT_FORMAT,
        "version": __version__,
        "library_version": LIBRARY_VERSION,
        "library_sha256": library_digest(),
        "input_sha256": case.sha256,
        "input_saved": case.saved,
        "protocol_sha256": protocol.sha256 if protocol else None,
        "protocol_name": protocol.name if protocol else None,
        "as_of": case.clock.format(case.as_of),
        "status": "ok",
        "drug": case.drug,
        "patient": {
            "crcl_ml_min": renal.crcl_ml_min, "crcl_rule": renal.crcl_rule, "ibw_kg": renal.ibw,
            "ibw_variant": renal.ibw_variant, "adjbw_kg": renal.adjbw, "bmi_kg_m2": renal.bmi, "bsa_m2": renal.bsa,
            "egfr_ckd_epi_ml_min_173": renal.egfr_ckd_epi, "egfr_ckd_epi_ml_min": renal.egfr_ckd_epi_ml_min,
            "dosing_weight_kg": renal.dosing_weight_kg, "dosing_weight_rule": renal.dosing_weight_rule,
            "scr_used_mg_dl": renal.scr_used_mg_dl,
        },
        "current_regimen": None if cur is None else {"dose_mg": cur.dose_mg, "interval_h": cur.interval_h,
                                                     "infusion_h": cur.infusion_h, "source": cur.source},
        "sources": {"target": "library", "rounding": rules.source("regimen.rounding_mg"),
                    "post_distribution_window": rules.source("windows.post_distribution_h"),
                    "crcl_weight_rule": rules.source("renal.crcl_weight_rule"),
                    "scr_floor": rules.source("renal.scr_floor_mg_dl"),
                    "dosing_weight_rule": rules.source("dosing_weight.rule")},
    }


def _stopped(case: Case, protocol: Protocol | None, rules: Rules, renal: RenalSummary, cur: CurrentRegimen | None,
             alerts: list[Alert], failures: dict[str, str], ctx: MethodContext, estimates: dict[str, Estimate]) -> Outcome:
    """A stop stands and no method gives an estimate: the result carries the stop, no estimate."""
    result = _header(case, protocol, renal, rules, cur)
    methods_out = {k: v.to_dict(cur, case.patient.weight) for k, v in estimates.items()}
    result.update({"status": "stop", "method": None, "estimate": None, "methods": methods_out,
                   "methods_unavailable": failures, "levels": methods.level_table(ctx),
                   "warnings": [a.to_dict() for a in alerts], "working": []})
    _dialysis_summary(case, rules, result)
    return Outcome(case, result, None, ctx.history, alerts=tuple(alerts), renal=renal, rules=rules,
                   estimates=dict(estimates))


def compute_raw(raw: object, data: bytes | None = None, protocol: Protocol | None = None,
                method: str | None = None) -> Outcome:
    """Parse a raw case object, then :func:`compute` it."""
    return compute(parse_case(raw, data), protocol, method)
