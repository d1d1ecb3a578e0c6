"""The audit record (`tdmtui compute --json --record`): enough to reproduce the numbers later.

Checks that the saved CASE.result.json (mode 0600) names the program and
library versions, the digest of the case bytes (checked with hashlib), the
method and its parameters, and that the recorded parameters give back the
recorded figures by published relations:
- AUC24 at steady state = daily dose / CL (pk-sources.md 2.3);
- CL = ke x V (case-format.md model conventions);
- a Bayesian estimate: P_i = TV x exp(eta_i) (pk-sources.md 2.7), from the
  recorded typical values and etas, with the model id and random seed.
"""

from __future__ import annotations

import hashlib
import json
import math
import os
import shutil

import pytest

from casedata import SAMPLES
from tdmtui import __version__
from tdmtui.cli import main
from tdmtui.core.library import LIBRARY_VERSION


def record_of(name: str, tmp_path) -> tuple[dict, bytes]:
    case = tmp_path / f"{name}.json"
    shutil.copyfile(SAMPLES / f"{name}.json", case)
    assert main(["compute", str(case), "--json", "--record"]) == 0
    record = tmp_path / f"{name}.result.json"
    assert os.stat(record).st_mode & 0o777 == 0o600
    return json.loads(record.read_text(encoding="utf-8")), case.read_bytes()


@pytest.mark.parametrize("name", ["vanc-steady-state", "gent-peak-trough"])
def test_record_names_versions_input_and_parameters(name, tmp_path, capsys):
    rec, data = record_of(name, tmp_path)
    capsys.readouterr()
    assert rec["version"] == __version__
    assert rec["library_version"] == LIBRARY_VERSION
    assert rec["input_sha256"] == hashlib.sha256(data).hexdigest()
    assert rec["input_saved"] is True
    assert rec["method"] in ("two-level", "sawchuk-zaske", "least-squares", "bayesian", "population", "nomogram")
    est = rec["estimate"]
    for key in ("ke_per_h", "half_life_h", "vd_l", "cl_l_per_h"):
        assert isinstance(est[key], float) and est[key] > 0, key
    assert est["cl_l_per_h"] == pytest.approx(est["ke_per_h"] * est["vd_l"], rel=1e-9)
    assert est["half_life_h"] == pytest.approx(math.log(2) / est["ke_per_h"], rel=1e-9)
    cur = rec["current_regimen"]
    daily = cur["dose_mg"] * 24.0 / cur["interval_h"]
    assert est["current"]["auc24_mg_h_per_l"] == pytest.approx(daily / est["cl_l_per_h"], rel=1e-6)


def test_record_of_a_bayesian_estimate_has_model_seed_and_etas(tmp_path, capsys):
    rec, _ = record_of("vanc-trough-only", tmp_path)
    capsys.readouterr()
    candidates = [e for k, e in rec.get("methods", {}).items() if k.startswith("bayesian:")]
    bayes = [e for e in candidates if e and e.get("method") == "bayesian" and e.get("weight")]
    assert bayes, "vanc-trough-only must carry a Bayesian estimate"
    e = bayes[0]
    model = e["model"]
    assert model["id"] and model["citation"]
    assert isinstance(model["seed"], int)
    assert model["draws"] > 0 and model["optimiser"]
    assert math.isfinite(model["objective"])
    assert e["interval90"]["auc24_mg_h_per_l"][0] < e["current"]["auc24_mg_h_per_l"] < e["interval90"]["auc24_mg_h_per_l"][1]
    # the recorded etas and typical values give back the individual parameters (P = TV exp(eta))
    etas = dict(zip(model["eta_names"], model["eta"]))
    typical = model["typical"]
    assert e["cl_l_per_h"] == pytest.approx(typical["cl_l_per_h"] * math.exp(etas["cl"]), rel=1e-9)
    if "v1" in etas and not typical.get("v2_l"):
        assert e["vd_l"] == pytest.approx(typical["v1_l"] * math.exp(etas["v1"]), rel=1e-9)


def test_record_of_the_model_average_gives_back_its_estimate(tmp_path, capsys):
    # The record holds each model's weight and estimate; the averaged CL is their weighted
    # geometric mean (the averaging rule documented in tdmtui/core/estimation/averaging.py), and the
    # weights of the models that take part sum to one.
    rec, _ = record_of("vanc-trough-only", tmp_path)
    capsys.readouterr()
    est = rec["estimate"]
    assert est["model"]["id"] == "model-average"
    weights = est["model"]["weights"]
    assert sum(weights.values()) == pytest.approx(1.0, abs=1e-12) and len(weights) >= 2
    members = {k.split(":", 1)[1]: e for k, e in rec["methods"].items() if k.startswith("bayesian:")}
    log_cl = sum(w * math.log(members[mid]["cl_l_per_h"]) for mid, w in weights.items())
    assert est["cl_l_per_h"] == pytest.approx(math.exp(log_cl), rel=1e-9)
    for mid, w in weights.items():
        assert members[mid]["weight"] == pytest.approx(w, rel=1e-12)
