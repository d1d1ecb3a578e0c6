"""Benchmark of regimen design: median wall-clock time of a full candidate search.

Run: /work/venv/bin/python bench/bench_regimen.py [--reps 50]

Cases (invented): vancomycin one- and two-compartment with a 10-dose history,
gentamicin traditional and extended-interval, amikacin extended (the largest
grid: 25 mg steps to 2,500 mg), vancomycin continuous infusion, and vancomycin
with 2,000 batched posterior draws (intervals and probability of target for
the chosen regimen and its alternatives).
"""

from __future__ import annotations

import argparse
import statistics
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from tdmtui.core.input.casetypes import Target  # noqa: E402
from tdmtui.core.input.clock import Clock  # noqa: E402
from tdmtui.core.library import Rules  # noqa: E402
from tdmtui.core.models import DoseArrays, PKParams  # noqa: E402
from tdmtui.core.regimen import CurrentRegimen, RegimenInput, design  # noqa: E402


class Draws:
    """Batched draws shaped like the Bayesian module's (arrays plus a vectorised steady state)."""

    def __init__(self, n: int, seed: int = 7) -> None:
        rng = np.random.default_rng(seed)
        self.cl = 4.3 * np.exp(rng.normal(0, 0.3, n))
        self.v1 = 50.0 * np.exp(rng.normal(0, 0.2, n))
        self.q = np.zeros(n)
        self.v2 = np.zeros(n)
        self.weights = None

    def __len__(self) -> int:
        return self.cl.size

    def steady_state(self, dose: float, tau: float, tinf: float, peak_delay_h: float = 0.0) -> dict:
        ke = self.cl / self.v1
        peak = dose / tinf * -np.expm1(-ke * tinf) / (self.cl * -np.expm1(-ke * tau))
        return {"peak": peak * np.exp(-ke * peak_delay_h), "trough": peak * np.exp(-ke * (tau - tinf)),
                "auc24": 24.0 * dose / (tau * self.cl)}


def cases() -> dict[str, RegimenInput]:
    clock = Clock("naive")
    t0 = clock.parse("2026-03-01T08:00", "bench")
    hist = DoseArrays.regimen(t0, 1500.0, 12.0, 1.5, 10)
    as_of = float(hist.start[-1]) + 11.5
    common = dict(clock=clock, dosing_weight_kg=80.0, tbw_kg=80.0, bmi=25.0, crcl_ml_min=80.0)
    vanc = dict(drug="vancomycin", rules=Rules("vancomycin"), case_target=Target(), history=hist, as_of=as_of,
                current=CurrentRegimen(1500.0, 12.0, 1.5), method="two-level", **common)
    gent_hist = DoseArrays.regimen(t0, 120.0, 8.0, 0.5, 10)
    empty = DoseArrays.from_lists([], [], [])
    return {
        "vancomycin 1-cpt": RegimenInput(params=PKParams.one_compartment(0.0827, 51.6), **vanc),
        "vancomycin 2-cpt": RegimenInput(params=PKParams(4.0, 30.0, 7.0, 40.0), **vanc),
        "vancomycin + 2000 draws": RegimenInput(params=PKParams.one_compartment(0.0827, 51.6),
                                                **{**vanc, "samples": Draws(2000), "method": "bayesian"}),
        "vancomycin continuous": RegimenInput(params=PKParams.one_compartment(0.0827, 51.6),
                                              **{**vanc, "case_target": Target(css=(20.0, 25.0)), "current": None}),
        "gentamicin traditional": RegimenInput(
            drug="gentamicin", rules=Rules("gentamicin"), case_target=Target(peak=(6.0, 10.0), trough=(0.5, 2.0)),
            params=PKParams.one_compartment(0.1544, 25.1), history=gent_hist, as_of=float(gent_hist.start[-1]) + 7.5,
            current=CurrentRegimen(120.0, 8.0, 0.5), **common),
        "gentamicin extended": RegimenInput(drug="gentamicin", rules=Rules("gentamicin"), case_target=Target(),
                                            params=PKParams.one_compartment(0.2, 22.0), history=empty, as_of=t0, **common),
        "amikacin extended": RegimenInput(drug="amikacin", rules=Rules("amikacin"), case_target=Target(),
                                          params=PKParams.one_compartment(0.15, 20.0), history=empty, as_of=t0, **common),
    }


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--reps", type=int, default=50)
    args = ap.parse_args()
    print(f"regimen design, median of {args.reps} runs (after one warm-up)")
    for name, inp in cases().items():
        design(inp)
        times = []
        for _ in range(args.reps):
            t = time.perf_counter()
            plan = design(inp)
            times.append(time.perf_counter() - t)
        r = plan.regimen
        print(f"  {name:26s} {statistics.median(times) * 1000:8.1f} ms   {len(plan.candidates):4d} candidates   "
              f"-> {r['dose_mg']:g} mg q{r['interval_h']:g}h ({r['action']})")


if __name__ == "__main__":
    main()
