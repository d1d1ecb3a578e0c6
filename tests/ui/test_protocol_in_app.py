"""The app takes the same inputs as the command line: the default local protocol, and the engine's CrCl in the header."""

from __future__ import annotations

import json
import subprocess
import sys

from textual.widgets import Static

from tdmtui.ui.app import TdmApp
from uihelpers import settle

# a floor of 1.0 mg/dL (local rule) above the sample's measured 0.9 mg/dL lowers its CrCl
PROTOCOL = 'name = "Demo ward"\n[common.renal.scr_floor_mg_dl]\nvalue = 1.0\nsource = "demo local rule"\n'


async def test_default_protocol_file_applies_and_header_shows_the_engines_crcl(state, sample_copy, tmp_path,
                                                                              monkeypatch):
    config = tmp_path / "config"
    (config / "tdmtui").mkdir(parents=True)
    (config / "tdmtui" / "protocol.toml").write_text(PROTOCOL, encoding="utf-8")
    monkeypatch.setenv("XDG_CONFIG_HOME", str(config))
    path = sample_copy("vanc-loading-early.json")
    cli = json.loads(subprocess.run([sys.executable, "-m", "tdmtui", "compute", str(path), "--json"],
                                    capture_output=True, text=True, check=True).stdout)
    assert cli["protocol_name"] == "Demo ward"
    app = TdmApp(str(path), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        assert app.outcome.result["protocol_name"] == "Demo ward"
        assert app.outcome.result["patient"]["crcl_ml_min"] == cli["patient"]["crcl_ml_min"]
        header = str(app.screen.query_one("#header", Static).content)
        assert f"CrCl {cli['patient']['crcl_ml_min']:.0f} mL/min" in header
        # the derived line under the form agrees with the engine too
        derived = str(app.screen.query_one("#derived-2").content)
        assert f"CrCl {cli['patient']['crcl_ml_min']:.0f} mL/min" in derived
        await pilot.press("ctrl+s")
        await pilot.pause()
    # nothing about the protocol is written into the case
    assert "protocol" not in json.loads(path.read_text(encoding="utf-8"))
