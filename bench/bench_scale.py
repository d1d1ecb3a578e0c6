"""Speed and scale: start-up, the dose-count curve, batch wall time; one table of figure, aim, ratio.

Run: .venv/bin/python bench/bench_scale.py [--quick] [--cases N]

1. Start-up, paired in one run: ``python -m tdmtui compute CASE --json`` (a
   Bayesian sample case) against ``python -c 'import numpy, scipy.optimize'``,
   alternated, medians. Aim: ratio <= 0.7.
2. Dose-count curve: an invented vancomycin course (bench/scale_cases.py,
   q12h, 20 levels spread over it, method bayesian) of 100 ... 5,000 doses,
   each computed in a fresh interpreter after one warm-up compute of a small
   case: compute time (median of 3) and the process's peak resident memory.
   Aims: 5,000 doses under 2 s and 300 MB; cost within 1.2x of linear, taken
   as the marginal cost per dose over 1,000-5,000 divided by that over
   100-1,000 (a quadratic history would give about 5).
3. Batch: ``tdmtui batch -`` on N (1,000) invented short Bayesian cases as JSON
   lines, one worker per core; wall time. Aim: at most 30 s.

The machine may be shared: the load average is printed, and figures taken
under load are slower than the code is.
"""

from __future__ import annotations

import argparse
import json
import os
import statistics
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(Path(__file__).resolve().parent))

from scale_cases import long_course, short_bayesian  # noqa: E402

CURVE = (100, 250, 500, 1000, 2000, 5000)

_ONE = """
import json, resource, sys, time
sys.path.insert(0, {bench!r})
from scale_cases import long_course
from tdmtui.core.input.case import parse_case
from tdmtui.core.compute import compute
compute(parse_case(long_course(20)))
case = parse_case(long_course({n}))
times = []
for _ in range({reps}):
    t = time.perf_counter()
    compute(case)
    times.append(time.perf_counter() - t)
print(json.dumps({{"times": times, "peak_kb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss}}))
"""


def _wall(cmd: list[str], **kw) -> float:  # noqa: ANN003
    t = time.perf_counter()
    run = subprocess.run(cmd, capture_output=True, cwd=ROOT, **kw)
    took = time.perf_counter() - t
    if run.returncode != 0:
        raise SystemExit(f"failed: {' '.join(cmd)}\n{run.stderr.decode()[-400:]}")
    return took


def startup(reps: int) -> tuple[float, float]:
    case = str(ROOT / "sample_cases" / "vanc-trough-only.json")
    ours, bare = [], []
    for _ in range(reps):
        ours.append(_wall([sys.executable, "-m", "tdmtui", "compute", case, "--json"]))
        bare.append(_wall([sys.executable, "-c", "import numpy, scipy.optimize"]))
    return statistics.median(ours), statistics.median(bare)


def curve(reps: int) -> list[tuple[int, float, float]]:
    out = []
    for n in CURVE:
        code = _ONE.format(bench=str(Path(__file__).resolve().parent), n=n, reps=reps)
        run = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT)
        if run.returncode != 0:
            raise SystemExit(f"{n} doses failed: {run.stderr[-400:]}")
        got = json.loads(run.stdout.strip().splitlines()[-1])
        out.append((n, statistics.median(got["times"]), got["peak_kb"] / 1024.0))
        print(f"  {n:>5} doses: {out[-1][1]:7.3f} s   peak {out[-1][2]:6.0f} MB", flush=True)
    return out


def batch(n: int) -> float:
    lines = "".join(json.dumps(short_bayesian(i)) + "\n" for i in range(n))
    return _wall([sys.executable, "-m", "tdmtui", "batch", "-"], input=lines.encode())


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="fewer repetitions and 200 batch cases")
    ap.add_argument("--cases", type=int, default=0, help="batch cases (default 1,000; --quick 200)")
    args = ap.parse_args()
    cases = args.cases or (200 if args.quick else 1000)
    print(f"load average {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores (shared machine: figures are noisy)")
    ours, bare = startup(3 if args.quick else 7)
    print("dose-count curve (fresh interpreter per size):", flush=True)
    pts = curve(1 if args.quick else 3)
    wall = batch(cases)
    t = {n: s for n, s, _ in pts}
    low = (t[1000] - t[100]) / 900.0
    high = (t[5000] - t[1000]) / 4000.0
    n5, s5, m5 = pts[-1]
    rows = [
        ("compute --json start-up / bare numpy+scipy.optimize", f"{ours * 1e3:.0f} / {bare * 1e3:.0f} ms",
         "<= 0.7", ours / bare, 0.7),
        (f"{n5:,}-dose, 20-level Bayesian compute", f"{s5:.2f} s", "< 2 s", s5 / 2.0, 1.0),
        (f"{n5:,}-dose peak memory (whole process)", f"{m5:.0f} MB", "< 300 MB", m5 / 300.0, 1.0),
        ("marginal cost per dose, 1,000-5,000 / 100-1,000",
         f"{high * 1e3:.3f} / {low * 1e3:.3f} ms", "<= 1.2", high / low if low > 0 else float("nan"), 1.2),
        (f"batch of {cases:,} Bayesian cases (wall, {os.cpu_count()} cores)", f"{wall:.1f} s",
         f"<= {30 * cases / 1000:g} s", wall / (30.0 * cases / 1000.0), 1.0),
    ]
    print(f"\n{'figure':<52} {'measured':>20} {'aim':>10} {'ratio':>7}  met")
    for name, value, aim, ratio, limit in rows:
        met = "yes" if ratio <= limit else "NO"
        print(f"{name:<52} {value:>20} {aim:>10} {ratio:7.2f}  {met}")
    print("(ratio: measured over the aim's bound; for the first and fourth rows the ratio itself is the figure)")


if __name__ == "__main__":
    main()
