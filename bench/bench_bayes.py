"""Benchmark and simulation study of the Bayesian estimate.

Run: /work/venv/bin/python bench/bench_bayes.py [--patients 400] [--reps 200]

1. Speed: one MAP fit on a 20-dose, 4-level course, without and with its
   uncertainty (2,000 Laplace draws: 90 % intervals and target probability).
   Medians of wall-clock time.
2. Coverage: seeded simulated patients (covariates drawn at random, true
   parameters from each model's own IIV, levels with its own residual error;
   levels under the assay limit kept as below-LOQ): share of 90 % AUC24
   intervals holding the true AUC24 (aim 85-95 %), from the Laplace draws and
   from importance-resampled draws (the exact posterior).
3. Trough-only: one trough before the 4th dose; MAP AUC24 vs truth: median
   bias and median absolute error (aim within +-10 % and under 20 %).
4. Mismatch: simulate with Thomson 2009 plus timing noise (draw times and
   infusion ends off by up to 15 min, recorded as scheduled), fit with Goti 2018.
"""

from __future__ import annotations

import argparse
import math
import os
import statistics
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from tdmtui.core.estimation import bayes  # noqa: E402
from tdmtui.core.estimation.draws import importance_samples, regimen_intervals, sample_posterior  # noqa: E402
from tdmtui.core.estimation.posterior import Observations  # noqa: E402
from tdmtui.core.models.batch import Design, batch_concentration  # noqa: E402
from tdmtui.core.regimen.candidates import target_probability  # noqa: E402
from tdmtui.core.regimen.targets import Targets  # noqa: E402
from tdmtui.core.errors import TdmError  # noqa: E402
from tdmtui.core.models import DoseArrays, PKParams  # noqa: E402
from tdmtui.core.estimation.popmodels import Covariates, PopModel, get_model  # noqa: E402

AUC_400_600 = Targets("auc", auc24=(400.0, 600.0))  # the speed figure's target band
REGIMEN = {"vancomycin": (1000.0, 12.0, 1.0, 2.0), "gentamicin": (400.0, 24.0, 0.5, 0.3),
           "tobramycin": (400.0, 24.0, 0.5, 0.3)}  # dose mg, tau h, infusion h, assay LOQ mg/L


def bench_speed(reps: int) -> None:
    doses = DoseArrays.regimen(0.0, 1000.0, 12.0, 1.0, 20)
    t = np.array([38.0, 47.5, 218.0, 227.5])
    cov = Covariates(age=64.0, sex="female", weight=78.0, height=168.0, scr=1.1)
    print(f"speed: 20 doses, 4 levels, {reps} repetitions, medians of wall and process CPU time "
          f"(load average {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores)")
    for mid in ("vancomycin-buelga-2005", "vancomycin-goti-2018", "vancomycin-thomson-2009"):
        m = get_model(mid)
        typ = m.typical(cov).params
        true = PKParams(typ.cl * 0.8, typ.v1 * 1.1, typ.q, typ.v2)
        y = batch_concentration([true.cl], [true.v1], [true.q], [true.v2], Design.build(doses, t))[0]
        obs = Observations.from_lists(t, y * np.array([1.05, 0.95, 1.08, 0.93]))
        bayes.map_fit(m, cov, doses, obs)  # warm-up (imports)
        wall: list[tuple[float, ...]] = []
        cpu: list[tuple[float, ...]] = []
        for _ in range(reps):
            t0, c0 = time.perf_counter(), time.process_time()
            fit = bayes.map_fit(m, cov, doses, obs)
            t1, c1 = time.perf_counter(), time.process_time()
            for draws in (sample_posterior(fit, 2000), None):
                if draws is None:  # the same figures from importance-resampled draws
                    t2, c2 = time.perf_counter(), time.process_time()
                    draws = importance_samples(fit, 2000, resample=True)
                regimen_intervals(draws, 1000.0, 12.0, 1.0)
                target_probability(draws, AUC_400_600, 1000.0, 12.0, 1.0)
            t3, c3 = time.perf_counter(), time.process_time()
            wall.append(((t1 - t0) * 1e3, (t2 - t0) * 1e3, (t1 - t0 + t3 - t2) * 1e3))
            cpu.append(((c1 - c0) * 1e3, (c2 - c0) * 1e3, (c1 - c0 + c3 - c2) * 1e3))
        (fw, uw, iw), (fc, uc, ic) = (tuple(statistics.median(x) for x in zip(*v)) for v in (wall, cpu))
        print(f"  {mid:26s} fit {fw:6.2f} ms (cpu {fc:5.2f})   with Laplace uncertainty {uw:6.2f} ms (cpu {uc:5.2f})"
              f"   with importance-resampled {iw:6.2f} ms (cpu {ic:5.2f})   [{fit.message}]")


def patient(rng: np.random.Generator) -> Covariates:
    return Covariates(age=float(rng.uniform(25, 85)), sex=str(rng.choice(["male", "female"])),
                      weight=float(rng.uniform(50, 110)), height=float(rng.uniform(155, 190)),
                      scr=float(rng.uniform(0.6, 1.8)))


def simulate(model: PopModel, cov: Covariates, rng: np.random.Generator, times: np.ndarray, timing_min: float = 0.0):
    """True parameters, dose history and noisy levels (censored below the assay LOQ)."""
    dose, tau, tinf, loq = REGIMEN[model.drug]
    eta = rng.multivariate_normal(np.zeros(len(model.eta_names)), model.omega)
    typ = model.typical(cov).params
    vals = {n: getattr(typ, n) for n in ("cl", "v1", "q", "v2")}
    for n, e in zip(model.eta_names, eta):
        vals[n] *= math.exp(e)
    recorded = DoseArrays.regimen(0.0, dose, tau, tinf, 4)
    shift = timing_min / 60.0
    actual = DoseArrays.from_lists(recorded.start, recorded.duration + rng.uniform(-shift, shift, 4), recorded.amount)
    t_true = times + rng.uniform(-shift, shift, times.size)
    c = batch_concentration([vals["cl"]], [vals["v1"]], [vals["q"]], [vals["v2"]],
                                  Design.build(actual, t_true))[0]
    y = c + rng.normal(0, 1, c.size) * np.sqrt(model.additive_sd ** 2 + (model.proportional_sd * c) ** 2)
    below = y < loq
    obs = Observations.from_lists(times, np.where(below, loq, y), below_loq=below)
    return vals, recorded, obs


def study(sim: PopModel, fit_model: PopModel, n: int, seed: int, times: np.ndarray, timing_min: float = 0.0):
    """Coverage of the 90 % AUC24 interval and relative errors of the MAP AUC24."""
    rng = np.random.default_rng(seed)
    dose, tau, tinf, _ = REGIMEN[sim.drug]
    hits, hits_is, errors, failed = 0, 0, [], 0
    for _ in range(n):
        cov = patient(rng)
        try:
            vals, doses, obs = simulate(sim, cov, rng, times, timing_min)
            fit = bayes.map_fit(fit_model, cov, doses, obs)
        except TdmError:
            failed += 1
            continue
        true_auc = 24.0 * dose / (tau * vals["cl"])
        lo, hi = regimen_intervals(sample_posterior(fit, 2000), dose, tau, tinf)["auc24"]
        hits += lo <= true_auc <= hi
        lo, hi = regimen_intervals(importance_samples(fit, 2000, resample=True), dose, tau, tinf)["auc24"]
        hits_is += lo <= true_auc <= hi
        errors.append(24.0 * dose / (tau * fit.params.cl) / true_auc - 1.0)
    done = n - failed
    cover = hits / done
    se = math.sqrt(cover * (1 - cover) / done)
    err = np.array(errors)
    return cover, se, float(np.median(err)), float(np.median(np.abs(err))), failed, hits_is / done


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--patients", type=int, default=400)
    ap.add_argument("--reps", type=int, default=200)
    args = ap.parse_args()
    bench_speed(args.reps)
    n = args.patients
    if n <= 0:
        return
    print(f"\nsimulation: {n} seeded patients per row, 4 doses; AUC24 of the regimen")
    print(f"  {'simulated with / fitted with':58s} {'levels':12s} cover90   +-se   bias    MAE  failed  "
          "cover90 (importance-resampled)")
    rows = []
    for mid in ("vancomycin-buelga-2005", "vancomycin-thomson-2009", "vancomycin-goti-2018",
                "gentamicin-staatz-2006", "tobramycin-conil-2011"):
        m = get_model(mid)
        tau, tinf = REGIMEN[m.drug][1], REGIMEN[m.drug][2]
        peak_trough = np.array([2 * tau + tinf + 1.0, 3 * tau - 0.5])
        rows.append((f"{mid} / same", "peak+trough", study(m, m, n, 1, peak_trough)))
        rows.append((f"{mid} / same", "trough only", study(m, m, n, 2, np.array([3 * tau - 0.5]))))
    sim, fit = get_model("vancomycin-thomson-2009"), get_model("vancomycin-goti-2018")
    for label, times in (("peak+trough", np.array([27.0, 35.5])), ("trough only", np.array([35.5]))):
        rows.append(("thomson-2009 + 15 min timing noise / goti-2018", label, study(sim, fit, n, 3, times, 15.0)))
    for name, label, (cover, se, bias, mae, failed, cover_is) in rows:
        print(f"  {name:58s} {label:12s} {cover:6.1%} {se:6.1%} {bias:+6.1%} {mae:6.1%} {failed:5d}  {cover_is:6.1%}")


if __name__ == "__main__":
    main()
