"""The core never imports the UI; heavy imports stay off the start-up path.

Each check runs in a fresh interpreter, so a deferred import cannot hide an
eager one (the static import graph could not tell them apart).
"""

from __future__ import annotations

import pkgutil
import subprocess
import sys
from pathlib import Path

import pytest

import tdmtui.core

CORE_MODULES = sorted(
    m.name for m in pkgutil.walk_packages(tdmtui.core.__path__, "tdmtui.core.")
)


def _loaded_after(code: str) -> set[str]:
    out = subprocess.run([sys.executable, "-c", code + "\nimport sys\nprint('\\n'.join(sys.modules))"],
                         capture_output=True, text=True, timeout=120, check=True).stdout
    return set(out.split())


@pytest.mark.parametrize("module", CORE_MODULES)
def test_core_module_imports_no_ui(module):
    loaded = _loaded_after(f"import {module}")
    bad = {m for m in loaded if m.split(".")[0] in ("textual", "rich") or m.startswith(("tdmtui.ui", "tdmtui.cli"))}
    assert not bad, f"{module} pulls in {sorted(bad)[:5]}"


def test_case_loading_path_needs_no_scipy_or_pint():
    loaded = _loaded_after("import tdmtui.core.input.case, tdmtui.core.patient.renal, tdmtui.core.input.units")
    assert "scipy" not in loaded
    assert "pint" not in loaded


def test_app_module_import_needs_no_scipy():
    loaded = _loaded_after("import tdmtui.ui.app")
    assert "scipy" not in loaded
    assert "pint" not in loaded


def test_compute_of_every_sample_case_needs_no_scipy():
    # Two-level, least-squares, Bayesian (censored levels too) and population computes use the project's own
    # solvers (tdmtui.core.solvers); scipy is imported only by the MAP's second-start fallback.
    samples = Path(__file__).resolve().parents[1] / "sample_cases"
    code = (
        "import pathlib\n"
        "from tdmtui.core.input.case import load_case\n"
        "from tdmtui.core.compute import compute\n"
        "from tdmtui.core.errors import TdmError\n"
        f"for p in sorted(pathlib.Path({str(samples)!r}).glob('*.json')):\n"
        "    for m in ('auto', 'two-level', 'least-squares', 'bayesian', 'population'):\n"
        "        try:\n"
        "            compute(load_case(p), None, m)\n"
        "        except TdmError:\n"
        "            pass\n"
    )
    loaded = _loaded_after(code)
    assert "scipy" not in {m.split(".")[0] for m in loaded}
    # numpy 2's unique and percentile import numpy.ma (~10 ms of start-up); the core uses solvers.distinct
    # and solvers.percentile instead
    assert "numpy.ma" not in loaded
