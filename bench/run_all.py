"""Every benchmark in one command, with a summary table of medians.

Run: /work/venv/bin/python bench/run_all.py [--quick] [--reps N]

1. Runs each ``bench/bench_*.py`` in its own process and prints its output
   (bench_renal.py: renal function falling during the course, time-varying vs fixed fit)
   (``--quick`` passes smaller repetition counts to the ones that take them).
2. Times, itself, and prints one table (medians of wall-clock time):
   two-level solve, MAP fit, MAP fit with uncertainty (2,000 draws: 90 %
   intervals and target probability), regimen search, 1,000 cases computed
   in one process (total, and median per case), ``tdmtui compute`` cold start
   (a fresh interpreter each run), and the app's first paint headless (a fresh
   interpreter until Textual's Ready event: DOM mounted, first frame drawn).

Timings are wall clock on whatever machine runs this; the load average is
printed beside them because other work on the machine inflates them.
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import time
from pathlib import Path
from typing import Callable

ROOT = Path(__file__).resolve().parents[1]
BENCH = Path(__file__).resolve().parent
SAMPLES = sorted((ROOT / "sample_cases").glob("*.json"))
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(BENCH))

from timing import median_seconds  # noqa: E402

#: smaller arguments for --quick, for the benches that take them
QUICK_ARGS = {"bench_bayes.py": ["--patients", "60", "--reps", "30"], "bench_regimen.py": ["--reps", "10"],
              "bench_renal.py": ["--patients", "200"],
              "bench_scale.py": ["--quick"]}


def median_ms(fn: Callable[[], object], reps: int, warm: int = 1) -> float:
    return median_seconds(fn, reps, warm) * 1e3


# --------------------------------------------------------------------------- in-process benchmarks


def bench_two_level(reps: int) -> tuple[float, str]:
    from tdmtui.core.estimation import twolevel
    from tdmtui.core.input.casetypes import Level
    from tdmtui.core.models import DoseArrays

    doses = DoseArrays.regimen(0.0, 1000.0, 12.0, 1.0, 20)
    levels = [Level(0, 227.5, 12.1), Level(1, 230.5, 31.0)]
    return median_ms(lambda: twolevel.two_level(doses, levels), reps), "20 doses, trough and peak"


def _map_problem():  # noqa: ANN202
    import numpy as np

    from tdmtui.core.estimation import bayes
    from tdmtui.core.estimation.posterior import Observations
    from tdmtui.core.models import DoseArrays
    from tdmtui.core.models.batch import Design, batch_concentration
    from tdmtui.core.estimation.popmodels import Covariates, get_model

    model = get_model("vancomycin-goti-2018")
    cov = Covariates(age=64.0, sex="female", weight=78.0, height=168.0, scr=1.1)
    doses = DoseArrays.regimen(0.0, 1000.0, 12.0, 1.0, 20)
    t = np.array([38.0, 47.5, 218.0, 227.5])
    typ = model.typical(cov).params
    y = batch_concentration([typ.cl * 0.8], [typ.v1 * 1.1], [typ.q], [typ.v2], Design.build(doses, t))[0]
    obs = Observations.from_lists(t, y * np.array([1.05, 0.95, 1.08, 0.93]))
    return bayes, model, cov, doses, obs


def bench_map(reps: int) -> tuple[float, str]:
    bayes, model, cov, doses, obs = _map_problem()
    return median_ms(lambda: bayes.map_fit(model, cov, doses, obs), reps), "Goti 2018, 20 doses, 4 levels"


def bench_map_uncertainty(reps: int) -> tuple[float, str]:
    bayes, model, cov, doses, obs = _map_problem()

    from tdmtui.core.estimation.draws import regimen_intervals, sample_posterior
    from tdmtui.core.regimen.candidates import target_probability
    from tdmtui.core.regimen.targets import Targets

    band = Targets("auc", auc24=(400.0, 600.0))

    def run() -> None:
        fit = bayes.map_fit(model, cov, doses, obs)
        draws = sample_posterior(fit, 2000)
        regimen_intervals(draws, 1000.0, 12.0, 1.0)
        target_probability(draws, band, 1000.0, 12.0, 1.0)
    return median_ms(run, reps), "same, plus 2,000 draws: intervals, target probability"


def bench_regimen_search(reps: int) -> tuple[float, str]:
    from bench_regimen import cases  # the regimen bench's own inputs

    from tdmtui.core.regimen import design

    name, inp = next(iter(cases().items()))
    return median_ms(lambda: design(inp), reps), f"regimen design, bench_regimen case '{name}'"


def bench_thousand_cases() -> tuple[float, str]:
    from tdmtui.core.input.case import load_case
    from tdmtui.core.compute import compute
    from tdmtui.core.errors import TdmError

    cases = [load_case(p) for p in SAMPLES]
    compute(cases[0])  # imports
    per: list[float] = []
    t0 = time.perf_counter()
    for i in range(1000):
        t = time.perf_counter()
        try:
            compute(cases[i % len(cases)])
        except TdmError:
            pass
        per.append(time.perf_counter() - t)
    total = time.perf_counter() - t0
    return total * 1e3, f"{len(cases)} sample cases in turn; median {statistics.median(per) * 1e3:.1f} ms per case"


# --------------------------------------------------------------------------- fresh-process benchmarks


def bench_cold_start(reps: int) -> tuple[float, str]:
    case = str(ROOT / "sample_cases" / "vanc-steady-state.json")
    times = []
    for _ in range(reps):
        t = time.perf_counter()
        run = subprocess.run([sys.executable, "-m", "tdmtui", "compute", case, "--json"], capture_output=True, cwd=ROOT)
        times.append(time.perf_counter() - t)
        if run.returncode != 0:
            return float("nan"), f"failed: {run.stderr.decode()[-200:]}"
    return statistics.median(times) * 1e3, "python -m tdmtui compute vanc-steady-state.json --json"


_FIRST_PAINT = """
import asyncio, os, sys
from pathlib import Path
import tdmtui.ui.app as ui

class Timed(ui.TdmApp):
    CSS_PATH = str(Path(ui.__file__).with_name("app.tcss"))  # a class made here has no file of its own

    def on_ready(self) -> None:
        os.write(1, b"ready\\n")  # the app captures print(); write to the real stdout
        self.exit(0)

async def main():
    app = Timed(sys.argv[1], None)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause(30)

asyncio.run(main())
"""


def bench_first_paint(reps: int, tmp: Path) -> tuple[float, str]:
    case = tmp / "case.json"
    case.write_bytes((ROOT / "sample_cases" / "vanc-steady-state.json").read_bytes())
    env = dict(os.environ, XDG_STATE_HOME=str(tmp / "state"))
    times = []
    for _ in range(reps):
        t = time.perf_counter()
        proc = subprocess.Popen([sys.executable, "-c", _FIRST_PAINT, str(case)], stdout=subprocess.PIPE,
                                stderr=subprocess.DEVNULL, text=True, cwd=ROOT, env=env)
        line = proc.stdout.readline()
        times.append(time.perf_counter() - t)
        proc.kill()
        proc.wait()
        if not line.startswith("ready"):
            return float("nan"), "the app did not reach Ready"
    return statistics.median(times) * 1e3, "fresh interpreter to Textual Ready (80x24, headless, a case open)"


# --------------------------------------------------------------------------- driver


def run_bench_scripts(quick: bool) -> None:
    for script in sorted(BENCH.glob("bench_*.py")):
        args = QUICK_ARGS.get(script.name, []) if quick else []
        print(f"\n=== {script.name} {' '.join(args)}".rstrip(), flush=True)
        t = time.perf_counter()
        run = subprocess.run([sys.executable, str(script), *args], cwd=ROOT, text=True, capture_output=True)
        sys.stdout.write(run.stdout)
        if run.returncode != 0:
            print(f"  (exit {run.returncode}) {run.stderr.strip()[-500:]}")
        print(f"  [{script.name}: {time.perf_counter() - t:.1f} s]", flush=True)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="smaller repetition counts everywhere")
    ap.add_argument("--reps", type=int, default=0, help="repetitions of the in-process timings")
    ap.add_argument("--skip-scripts", action="store_true", help="only the summary table")
    args = ap.parse_args()
    reps = args.reps or (20 if args.quick else 100)
    fresh = 3 if args.quick else 7
    if not args.skip_scripts:
        run_bench_scripts(args.quick)
    import tempfile

    rows: list[tuple[str, float, str]] = []
    with tempfile.TemporaryDirectory() as tmp:
        jobs = [
            ("two-level solve", lambda: bench_two_level(reps)),
            ("MAP fit", lambda: bench_map(reps)),
            ("MAP fit with uncertainty", lambda: bench_map_uncertainty(max(5, reps // 5))),
            ("regimen search", lambda: bench_regimen_search(max(5, reps // 5))),
            ("1,000 cases in one process (total)", bench_thousand_cases),
            ("tdmtui compute cold start", lambda: bench_cold_start(fresh)),
            ("app first paint (headless)", lambda: bench_first_paint(fresh, Path(tmp))),
        ]
        for name, job in jobs:
            try:
                ms, what = job()
            except Exception as exc:  # noqa: BLE001 - a missing piece is reported, not fatal
                ms, what = float("nan"), f"not run: {type(exc).__name__}: {exc}"
            rows.append((name, ms, what))
            print(f"  ... {name}: {ms:.2f} ms", flush=True)
    load = os.getloadavg()
    print(f"\nSummary (medians, wall clock; Python {sys.version.split()[0]}, {os.cpu_count()} cores, "
          f"load average {load[0]:.1f} at the end; in-process reps {reps}, fresh processes {fresh})")
    print(f"| {'benchmark':<36} | {'median':>12} | what |")
    print(f"|{'-' * 38}|{'-' * 14}|------|")
    for name, ms, what in rows:
        shown = f"{ms / 1000:.2f} s" if ms >= 1000 else f"{ms:.2f} ms"
        print(f"| {name:<36} | {shown:>12} | {what} |")


if __name__ == "__main__":
    main()
