"""Offline install: the documented wheelhouse command, then an install with no index.

``scripts/build-wheelhouse.sh DIR`` (README "Offline install") writes tdmtui
and every dependency as wheels; a fresh virtual environment then installs
with ``pip install --no-index --find-links DIR tdmtui`` and computes a sample
case to the same bytes as the checkout does (so the packaged drug library,
models and styles are all inside the wheel).

Takes about a minute on a 2-core machine (most of it installing numpy and
scipy into the fresh environment); kept in CI because hospital machines
depend on it.
"""

from __future__ import annotations

import os
import subprocess
import sys

from relhelpers import ROOT

SAMPLE = ROOT / "sample_cases" / "vanc-steady-state.json"


def _run(cmd: list[str], **kw) -> subprocess.CompletedProcess:  # noqa: ANN003
    return subprocess.run(cmd, capture_output=True, text=True, timeout=900, **kw)


def test_wheelhouse_installs_with_no_index_in_a_fresh_venv(tmp_path):
    house = tmp_path / "wheelhouse"
    build = _run(["bash", str(ROOT / "scripts" / "build-wheelhouse.sh"), str(house)], cwd=ROOT,
                 env=dict(os.environ, PYTHON=sys.executable))
    assert build.returncode == 0, build.stderr[-3000:]
    wheels = sorted(p.name for p in house.glob("*.whl"))
    for name in ("tdmtui-", "textual-", "rich-", "numpy-", "scipy-", "tzdata-"):
        assert any(w.startswith(name) for w in wheels), (name, wheels)

    venv = tmp_path / "fresh"
    made = _run([sys.executable, "-m", "venv", str(venv)])
    assert made.returncode == 0, made.stderr
    env = {k: v for k, v in os.environ.items() if not k.startswith(("PIP_", "PYTHON"))}
    env.update(PIP_NO_INDEX="1", PIP_CONFIG_FILE=os.devnull, PIP_DISABLE_PIP_VERSION_CHECK="1")
    install = _run([str(venv / "bin" / "pip"), "install", "--no-index", "--find-links", str(house), "tdmtui"],
                   env=env, cwd=tmp_path)
    assert install.returncode == 0, install.stdout[-2000:] + install.stderr[-2000:]

    # the installed command, from outside the checkout, gives the checkout's bytes
    installed = _run([str(venv / "bin" / "tdmtui"), "compute", str(SAMPLE), "--json"], env=env, cwd=tmp_path)
    assert installed.returncode == 0, installed.stderr
    here = _run([sys.executable, "-m", "tdmtui", "compute", str(SAMPLE), "--json"], cwd=ROOT)
    assert installed.stdout == here.stdout
    where = _run([str(venv / "bin" / "python"), "-c", "import tdmtui; print(tdmtui.__file__)"], env=env, cwd=tmp_path)
    assert where.stdout.startswith(str(venv))
    # the app's styles ship in the wheel too
    css = _run([str(venv / "bin" / "python"), "-c",
                "import importlib.resources as r; print(r.files('tdmtui.ui').joinpath('app.tcss').is_file())"],
               env=env, cwd=tmp_path)
    assert css.stdout.strip() == "True", css.stderr
