"""The estimate section's model-average view (key m), at 80x24, against the engine's result dict.

Weights are the engine's (``estimate.model.weights``, as ``tdmtui compute --json`` gives them), rounded
here to whole percent; CL to 2 decimals and AUC24 to whole numbers (the display rules of the journeys).
"""

from __future__ import annotations

import json

from textual.widgets import Static

from tdmtui.core.compute import compute_raw
from tdmtui.ui.app import TdmApp
from uihelpers import SAMPLES, settle


async def _view(state, path) -> str:
    app = TdmApp(str(path), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await pilot.press("f5", "m")
        await pilot.pause()
        assert app.screen.query_one("#est-views").current == "est-models"
        return str(app.screen.query_one("#est-models-text", Static).content)


async def test_each_model_keeps_its_row_with_its_weight(state, sample_copy):
    path = sample_copy("vanc-trough-only.json")
    res = compute_raw(json.loads(path.read_text())).result
    text = await _view(state, path)
    rows = {line.split("  ")[0].strip(): line for line in text.splitlines()}
    weights = res["estimate"]["model"]["weights"]
    assert set(weights) == {"vancomycin-thomson-2009", "vancomycin-goti-2018"}
    for mid, name in (("vancomycin-thomson-2009", "Thomson 2009"), ("vancomycin-goti-2018", "Goti 2018")):
        est = res["methods"][f"bayesian:{mid}"]
        cells = rows[name].split()
        assert f"{100 * weights[mid]:.0f}" == cells[2]
        assert f"{est['cl_l_per_h']:.2f}" in cells and f"{est['current']['auc24_mg_h_per_l']:.0f}" in cells
    # the model built only on haematological malignancy keeps its row, weight 0, and the reason below
    assert rows["Buelga 2005"].split()[2:4] == ["0", "%"] and "(1) no weight" in rows["Buelga 2005"]
    assert "(1) no weight: the model was built only on patients with a condition" in text
    avg = rows["average (used)"].split()
    assert f"{res['estimate']['cl_l_per_h']:.2f}" in avg
    lo, hi = res["estimate"]["interval90"]["auc24_mg_h_per_l"]
    assert f"[{lo:.0f}-{hi:.0f}]" in rows["average (used)"]
    assert max(len(line) for line in text.splitlines()) <= 78  # fits 80 columns with the section's border


async def test_models_excluded_for_the_patient_say_why(state, sample_copy):
    # haemodialysis: only Goti 2018 was built on patients on it (pk-sources.md 3.4.3); the others are named
    # with the engine's reason, not dropped silently
    path = sample_copy("vanc-stop-dialysis.json")
    res = compute_raw(json.loads(path.read_text())).result
    text = await _view(state, path)
    for mid in ("vancomycin-thomson-2009", "vancomycin-buelga-2005"):
        assert res["methods_unavailable"][f"bayesian:{mid}"].split(" was not")[0] in text.replace("\n    ", " ")
    assert "Goti 2018         100 %" in text


async def test_a_drug_without_population_models_says_so(state, sample_copy):
    text = await _view(state, sample_copy("amikacin.json"))
    assert "No population model for this drug" in text
