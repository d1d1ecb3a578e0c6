"""FHIR import: our own reading against the fhir.resources models, on the same exports.

Run: .venv/bin/python bench/bench_fhir.py [--reps N]

Prints, for each sample export and for one long course (the gentamicin
export with its doses repeated to 300 administrations), the median time of
``import_export`` (our reading: the case and the report) and of a
``fhir.resources`` R4B model check of the same bytes, their ratio, and the
one-off cost of loading each in a fresh interpreter. Wall clock, medians; the
load average is printed because other work on the machine inflates the times.
"""

from __future__ import annotations

import argparse
import copy
import json
import os
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(Path(__file__).resolve().parent))

from timing import median_seconds  # noqa: E402

from tdmtui.core.fhir import import_export  # noqa: E402
from tdmtui.core.library import load_protocol  # noqa: E402

FHIR = ROOT / "sample_cases" / "fhir"


def long_course() -> bytes:
    b = json.loads((FHIR / "gent-rate.bundle.json").read_text(encoding="utf-8"))
    doses = [e for e in b["entry"] if e["resource"]["resourceType"] == "MedicationAdministration"]
    for i in range(300 - len(doses)):
        e = copy.deepcopy(doses[i % len(doses)])
        e["resource"]["id"] = f"extra-{i}"
        e["fullUrl"] = f"https://ehr.example.org/fhir/MedicationAdministration/extra-{i}"
        b["entry"].append(e)
    return json.dumps(b).encode("utf-8")


def load_cost(stmt: str, reps: int) -> float:
    def run() -> None:
        subprocess.run([sys.executable, "-c", stmt], check=True, cwd=ROOT)
    return median_seconds(run, reps, warm=1)


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--reps", type=int, default=20)
    args = ap.parse_args()
    from tdmtui.core.fhir.structure import structure_errors

    proto = load_protocol(FHIR / "site-codes.toml")
    inputs = [(p.name, p.read_bytes()) for p in sorted(FHIR.glob("*.json")) if not p.name.endswith(".case.json")]
    inputs.append(("long course (300 doses)", long_course()))
    print(f"load average {os.getloadavg()[0]:.2f}")
    print(f"{'export':34} {'ours ms':>8} {'models ms':>10} {'models/ours':>12}")
    for name, data in inputs:
        ours = median_seconds(lambda: import_export(data, name, protocol=proto), args.reps)
        models = median_seconds(lambda: structure_errors(json.loads(data)), args.reps)
        print(f"{name:34} {ours * 1e3:8.1f} {models * 1e3:10.1f} {models / ours:12.1f}")
    reps = max(3, args.reps // 4)
    base = load_cost("import tdmtui", reps)
    ours = load_cost("import tdmtui.core.fhir, tdmtui.core.input.case", reps)
    lib = load_cost("from fhir.resources.R4B import get_fhir_model_class as g; g('Bundle')", reps)
    print(f"fresh interpreter, ms: tdmtui alone {base * 1e3:.0f}; + our importer {ours * 1e3:.0f}; "
          f"fhir.resources R4B Bundle model {lib * 1e3:.0f}")


if __name__ == "__main__":
    main()
