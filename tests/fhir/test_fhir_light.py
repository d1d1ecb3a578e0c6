"""The import stays light: no engine, no UI, no FHIR model library, on its path."""

from __future__ import annotations

import subprocess
import sys

from fhirdata import FHIR_SAMPLES, SITE_CODES


def test_importing_a_bundle_loads_no_engine_ui_or_model_library():
    code = (
        "import sys\n"
        "from tdmtui.importcmd import main\n"
        f"main([{str(FHIR_SAMPLES / 'gent-rate.bundle.json')!r}, '--protocol', {str(SITE_CODES)!r}])\n"
        "print('\\n'.join(sys.modules), file=sys.stderr)\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120, check=True)
    loaded = set(out.stderr.split())
    heavy = {m.split(".")[0] for m in loaded} & {"scipy", "numpy", "pint", "textual", "rich", "fhir", "pydantic"}
    assert heavy == set()
    assert '"drug": "gentamicin"' in out.stdout
