"""The core's module seams are typed: no bare ``Any`` in a public signature beyond the listed few.

scripts/count_any.py finds every parameter or return annotated exactly ``Any`` in a public
function or method of tdmtui/core. The ones left are values whose type is the data's own
(decoded JSON, a TOML library value, posterior draws in either of two shapes), each listed
here with the reason; a new one fails this test (give it a type, or list it with its reason).
"""

from __future__ import annotations

import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "scripts"))
import count_any  # noqa: E402

ALLOWED = {
    "bounds.py decode_json -> Any": "decoded JSON: any JSON value, checked field by field by case.py",
    "fhir/read.py decode -> Any": "decoded JSON of an export, checked by read_export",
    "fhir/values.py field(path)": "a path of keys and list indexes into a FHIR resource",
    "fhir/values.py field -> Any": "whatever JSON value sits at that path (None when absent)",
    "library/__init__.py value -> Any": "a TOML library value: number, text, list or table, by key",
    "library/__init__.py get(default)": "the caller's default for a key absent from the library",
    "library/__init__.py get -> Any": "a TOML library value (as value)",
    "library/__init__.py with_value(value)": "a TOML library value (as value), derived from others",
    "input/dialysis.py parse_dialysis(raw)": "the case's decoded JSON `dialysis` object, checked field by field",
    "regimen/candidates.py with_draws(samples)": "posterior draws: batched arrays or a list of PKParams",
    "regimen/candidates.py target_probability(samples)": "posterior draws: batched arrays or a list of PKParams",
    "regimen/candidates.py table_probabilities(samples)": "posterior draws: batched arrays or a list of PKParams",
}


def _key(seam: str) -> str:
    path, rest = seam.split(":", 1)
    return f"{path.removeprefix('tdmtui/core/')} {rest.split(' ', 1)[1]}"


def test_no_new_bare_any_at_the_core_seams():
    found = {_key(s) for p in sorted(count_any.ROOT.rglob("*.py")) for s in count_any.seams(p)}
    assert found - ALLOWED.keys() == set(), "give these a type (or list them with the reason)"


def test_the_counter_sees_a_bare_any(tmp_path, monkeypatch):
    core = tmp_path / "tdmtui" / "core"
    core.mkdir(parents=True)
    (core / "x.py").write_text("from typing import Any\n\ndef f(a: Any, b: dict[str, Any]) -> Any: ...\n"
                               "def _g(a: Any) -> Any: ...\nclass C:\n    def m(self, v: 'Any') -> int: ...\n")
    monkeypatch.setattr(count_any, "ROOT", core)
    assert count_any.seams(core / "x.py") == ["tdmtui/core/x.py:3 f(a)", "tdmtui/core/x.py:3 f -> Any",
                                              "tdmtui/core/x.py:6 m(v)"]
