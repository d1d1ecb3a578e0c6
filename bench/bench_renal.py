"""Renal function falling during the course: trough-only AUC24 error, time-varying fit vs fixed fit.

Invented patients (default 240): adults 40-85 y, 55-110 kg, baseline SCr 0.7-1.2 mg/dL,
simulated from the Thomson 2009 vancomycin model (the library's; random effects and
residual error as the model states). Renal function falls by 30-60 % (CrCl, so SCr rises
by 1/(1 - drop)) at a time drawn uniformly over day 2-3 of the course (24-72 h after the
first dose); SCr is measured daily at 06:00 and reflects the change from the first
measurement after it (a step; real creatinine lags, which this leaves out). True
clearance follows each SCr by the model's own CrCl equation, the individual's eta fixed.

Course: 1000 mg every 12 h over 1 h from 08:00 on day 0, 8 doses; two troughs, 30 min
before the 3rd dose (day 1) and before the 8th (day 3, after the change). Fitted with
the same model, MAP:

* time-varying: clearance follows each dated SCr (tdmtui/core/estimation/renalcourse.py);
* fixed: the latest SCr as if it had held throughout (the engine before).

Error: AUC24 of the latest regimen (1000 mg q12h at steady state) from the estimate's
CL vs the truth's latest CL; printed as median error, median absolute error, 90th
percentile of the absolute error and the share within +-20 %, for both fits, with the
median of the paired ratio |error fixed| / |error time-varying|.

Run: .venv/bin/python bench/bench_renal.py [--patients N] [--seed S]
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from tdmtui.core.estimation import bayes  # noqa: E402
from tdmtui.core.estimation.posterior import NO_LEVELS, Observations, Posterior  # noqa: E402
from tdmtui.core.estimation import popmodels
from tdmtui.core.estimation import renalcourse# noqa: E402
from tdmtui.core.errors import ConvergenceError, NoEstimateError  # noqa: E402
from tdmtui.core.models import DoseArrays  # noqa: E402
from tdmtui.core.models.timevarying import batch_tv_concentration  # noqa: E402

MODEL = "vancomycin-thomson-2009"
DOSE, TAU, TINF, N_DOSES = 1000.0, 12.0, 1.0, 8


def patient(rng: np.random.Generator) -> dict:
    age = rng.uniform(40, 85)
    return {"age": age, "sex": "male" if rng.random() < 0.5 else "female", "weight": rng.uniform(55, 110),
            "height": rng.uniform(155, 190), "scr0": rng.uniform(0.7, 1.2), "drop": rng.uniform(0.30, 0.60),
            "t_change": rng.uniform(24.0, 72.0)}


def one(model: popmodels.PopModel, rng: np.random.Generator) -> tuple[float, float] | str:
    p = patient(rng)
    first = 8.0  # 08:00 on day 0 (h from midnight)
    doses = DoseArrays.regimen(first, DOSE, TAU, TINF, N_DOSES)
    scr_hi = p["scr0"] / (1.0 - p["drop"])
    days = [6.0 + 24.0 * k for k in range(0, 4)]  # 06:00 daily, days 0-3
    t_change = first + p["t_change"]
    values = [p["scr0"] if t < t_change else scr_hi for t in days]
    steps = []
    for t, v in zip(days, values):
        if not steps or abs(steps[-1].scr_mg_dl - v) > 1e-12:
            steps.append(renalcourse.RenalStep(t, v, "patient.scr"))
    if len(steps) < 2:
        return "unseen"  # the fall comes after the last SCr before the troughs: both fits are the same
    cov = popmodels.Covariates(p["age"], p["sex"], p["weight"], p["height"], values[-1])
    sched = renalcourse.schedule_for(model, cov, steps)
    eta = rng.multivariate_normal(np.zeros(len(model.eta_names)), model.omega)
    post = Posterior(model, sched.latest, doses, NO_LEVELS, renalcourse.build_course(sched, sched.latest))
    true_pieces = post.piece_params(eta[None, :])
    true_latest_cl = float(true_pieces[0][0, -1])
    trough_t = np.array([first + 2 * TAU - 0.5, first + 7 * TAU - 0.5])
    conc = batch_tv_concentration(post.course.changes, *true_pieces, doses, trough_t)[0]
    sd = np.sqrt(model.additive_sd ** 2 + (model.proportional_sd * conc) ** 2)
    obs_c = np.maximum(conc + rng.standard_normal(conc.size) * sd, 0.5)
    obs = Observations.from_lists(trough_t, obs_c)
    true_auc = 24.0 * DOSE / (TAU * true_latest_cl)
    try:
        tv = bayes.map_fit(model, cov, doses, obs, course=renalcourse.build_course(sched, sched.latest),
                           typical=sched.latest)
        fixed = bayes.map_fit(model, cov, doses, obs)
    except (ConvergenceError, NoEstimateError):
        return "failed"
    err = lambda f: (24.0 * DOSE / (TAU * f.params.cl) - true_auc) / true_auc  # noqa: E731
    return err(tv), err(fixed)


def summary(name: str, e: np.ndarray) -> str:
    a = np.abs(e)
    return (f"{name:<14} median error {100 * np.median(e):+6.1f} %   median |error| {100 * np.median(a):5.1f} %   "
            f"90th pct |error| {100 * np.percentile(a, 90):5.1f} %   within +-20 % {100 * np.mean(a <= 0.2):5.1f} %")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--patients", type=int, default=240)
    ap.add_argument("--seed", type=int, default=20261202)
    args = ap.parse_args()
    model = popmodels.get_model(MODEL)
    rng = np.random.default_rng(args.seed)
    got = [one(model, rng) for _ in range(args.patients)]
    rows = [r for r in got if not isinstance(r, str)]
    tv, fx = (np.array(x) for x in zip(*rows))
    print(f"bench_renal: {len(rows)} of {args.patients} invented patients (CrCl falling 30-60 % on day 2-3), "
          f"model {MODEL}, troughs before doses 3 and 8; AUC24 of 1000 mg q12h from the estimate vs the truth; "
          f"left out: {got.count('unseen')} whose fall no SCr before the troughs shows, {got.count('failed')} "
          "with no MAP estimate")
    print(summary("time-varying", tv))
    print(summary("fixed", fx))
    ratio = np.abs(fx) / np.maximum(np.abs(tv), 1e-9)
    print(f"paired: median |error fixed| / |error time-varying| {np.median(ratio):.2f}; "
          f"time-varying closer in {100 * np.mean(np.abs(tv) < np.abs(fx)):.0f} % of patients")


if __name__ == "__main__":
    main()
