"""Speed and scale: start-up, CPU per case, the dose-count curve, batch wall time; one table of figure, aim, ratio.

Run: .venv/bin/python bench/bench_scale.py [--quick] [--cases N] [--against DIR]

1. Start-up, paired in one run: ``python -m tdmtui compute CASE --json`` (a
   Bayesian sample case) against ``python -c 'import numpy, scipy.optimize'``,
   alternated, medians. Aim: ratio <= 0.7. The package's bytecode is compiled
   first (``compileall``), as an installed package has it: numpy and scipy come
   compiled, and with PYTHONDONTWRITEBYTECODE set (as on some shells here) every
   run would otherwise compile the ~70 modules of a compute again.
2. CPU per Bayesian case: N (200; --quick 60) invented short Bayesian cases
   (bench/scale_cases.py) computed one after another in one process as ``tdmtui
   batch`` computes each (batchrow.run), after one warm-up case: process CPU time
   per case, which the machine's other load changes far less than wall time.
   Aim: <= 60 ms, the batch aim with both cores busy (30 s x 2 cores / 1,000).
3. Dose-count curve: an invented vancomycin course (bench/scale_cases.py,
   q12h, 20 levels spread over it, method bayesian) of 100 ... 5,000 doses,
   each computed in a fresh interpreter after one warm-up compute of a small
   case: compute time (median of 3) and the process's peak resident memory.
   Aims: 5,000 doses under 2 s and 300 MB; cost within 1.2x of linear, taken
   as the marginal cost per dose over 1,000-5,000 divided by that over
   100-1,000 (a quadratic history would give about 5).
4. Batch: ``tdmtui batch -`` on N (1,000) invented short Bayesian cases as JSON
   lines, one worker per core; wall time. Aim: at most 30 s.

``--against DIR``: another checkout of the project (for instance the parent
commit: ``git worktree add /tmp/parent HEAD~1``). Start-up and CPU per case are
then measured for both, alternated in the same run, and the table gets a last
column: this checkout's figure over the other's.

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


_CPU = """
import json, sys, time
sys.path[:0] = [{tree!r}, {bench!r}]
import tdmtui
assert tdmtui.__file__.startswith({tree!r}), tdmtui.__file__
from scale_cases import short_bayesian
from tdmtui.batchrow import Item, run
items = [Item(f"case {{i}}", line=json.dumps(short_bayesian(i)).encode()) for i in range({n})]
run(items[0])
t = time.process_time()
for it in items:
    assert run(it).values["status"] in ("ok", "stop")
print((time.process_time() - t) / {n})
"""


def _wall(cmd: list[str], cwd: Path = ROOT, **kw) -> float:  # noqa: ANN003
    t = time.perf_counter()
    run = subprocess.run(cmd, capture_output=True, cwd=cwd, **kw)
    took = time.perf_counter() - t
    if run.returncode != 0:
        raise SystemExit(f"failed: {' '.join(cmd)}\n{run.stderr.decode()[-400:]}")
    return took


def compile_package(tree: Path) -> None:
    """Write the package's bytecode, as an installed package has it (module docstring, 1)."""
    subprocess.run([sys.executable, "-m", "compileall", "-q", str(tree / "tdmtui")], check=True, capture_output=True)


def startup(reps: int, trees: list[Path]) -> tuple[list[float], float]:
    """Median start-up of ``compute --json`` in each tree (run from it, so it imports its own package) and
    of the bare import, alternated."""
    case = str(ROOT / "sample_cases" / "vanc-trough-only.json")
    ours: list[list[float]] = [[] for _ in trees]
    bare = []
    for _ in range(reps):
        for i, tree in enumerate(trees):
            ours[i].append(_wall([sys.executable, "-m", "tdmtui", "compute", case, "--json"], cwd=tree))
        bare.append(_wall([sys.executable, "-c", "import numpy, scipy.optimize"]))
    return [statistics.median(x) for x in ours], statistics.median(bare)


def cpu_per_case(n: int, rounds: int, trees: list[Path]) -> list[float]:
    """Median over ``rounds`` of the CPU seconds per Bayesian case in each tree, the trees alternated."""
    got: list[list[float]] = [[] for _ in trees]
    for r in range(rounds):
        order = list(enumerate(trees)) if r % 2 == 0 else list(enumerate(trees))[::-1]
        for i, tree in order:
            code = _CPU.format(tree=str(tree), bench=str(Path(__file__).resolve().parent), n=n)
            run = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=tree)
            if run.returncode != 0:
                raise SystemExit(f"CPU per case in {tree} failed: {run.stderr[-400:]}")
            got[i].append(float(run.stdout.strip().splitlines()[-1]))
    return [statistics.median(x) for x in got]


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
    ap.add_argument("--quick", action="store_true", help="fewer repetitions, 60 CPU cases and 200 batch cases")
    ap.add_argument("--cases", type=int, default=0, help="batch cases (default 1,000; --quick 200)")
    ap.add_argument("--against", type=Path, help="another checkout: start-up and CPU per case measured for both")
    args = ap.parse_args()
    cases = args.cases or (200 if args.quick else 1000)
    trees = [ROOT] + ([args.against.resolve()] if args.against else [])
    print(f"load average {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores (shared machine: figures are noisy)")
    for tree in trees:
        compile_package(tree)
    ours, bare = startup(3 if args.quick else 7, trees)
    cpu = cpu_per_case(60 if args.quick else 200, 2 if args.quick else 3, trees)
    print("dose-count curve (fresh interpreter per size):", flush=True)
    pts = curve(1 if args.quick else 3)
    wall = batch(cases)
    t = {n: s for n, s, _ in pts}
    low = (t[1000] - t[100]) / 900.0
    high = (t[5000] - t[1000]) / 4000.0
    n5, s5, m5 = pts[-1]
    other = len(trees) > 1
    rows = [
        ("compute --json start-up / bare numpy+scipy.optimize", f"{ours[0] * 1e3:.0f} / {bare * 1e3:.0f} ms",
         "<= 0.7", ours[0] / bare, 0.7, ours[0] / ours[1] if other else None),
        ("CPU per Bayesian case (one process)", f"{cpu[0] * 1e3:.1f} ms", "<= 60 ms", cpu[0] / 0.060, 1.0,
         cpu[0] / cpu[1] if other else None),
        (f"{n5:,}-dose, 20-level Bayesian compute", f"{s5:.2f} s", "< 2 s", s5 / 2.0, 1.0, None),
        (f"{n5:,}-dose peak memory (whole process)", f"{m5:.0f} MB", "< 300 MB", m5 / 300.0, 1.0, None),
        ("marginal cost per dose, 1,000-5,000 / 100-1,000",
         f"{high * 1e3:.3f} / {low * 1e3:.3f} ms", "<= 1.2", high / low if low > 0 else float("nan"), 1.2, None),
        (f"batch of {cases:,} Bayesian cases (wall, {os.cpu_count()} cores)", f"{wall:.1f} s",
         f"<= {30 * cases / 1000:g} s", wall / (30.0 * cases / 1000.0), 1.0, None),
    ]
    vs = f"  vs {trees[1]}" if other else ""
    print(f"\n{'figure':<52} {'measured':>20} {'aim':>10} {'ratio':>7}  met{vs}")
    for name, value, aim, ratio, limit, paired in rows:
        met = "yes" if ratio <= limit else "NO"
        extra = f"  {paired:5.3f}" if paired is not None else ("      -" if other else "")
        print(f"{name:<52} {value:>20} {aim:>10} {ratio:7.2f}  {met:>3}{extra}")
    print("(ratio: measured over the aim's bound; for the first and fifth rows the ratio itself is the figure)")
    if other:
        print(f"(last column: this checkout's figure over {trees[1]}'s, measured alternately in this run;"
              f" bare import {bare * 1e3:.0f} ms, the other's start-up {ours[1] * 1e3:.0f} ms,"
              f" CPU per case {cpu[1] * 1e3:.1f} ms)")


if __name__ == "__main__":
    main()
