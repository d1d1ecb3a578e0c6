"""Mutated exports: the import either builds a case and report or raises InputError; nothing else escapes.

Each case gets one to three mutations; each replaces one node of a sample export (found by a seeded walk)
with a value of another JSON type, a control-character string, a huge or
negative number, or removes it. The case that comes out, when it is
complete, parses or fails with InputError like any typed case.
"""

from __future__ import annotations

import json
import random

import pytest
from fhirdata import FHIR_SAMPLES, site_protocol

from tdmtui.core.errors import InputError
from tdmtui.core.fhir import check_case, import_export

EXPORTS = [p for p in sorted(FHIR_SAMPLES.glob("*.json")) if not p.name.endswith(".case.json")]
N = 300
SWAPS = [None, True, 0, -5, 1e308, "", "\x1b[2J\x07", [], {}, "2026-13-45T99:99:00Z", {"reference": "Patient/x"}]


def _paths(node, prefix=()):  # noqa: ANN001, ANN202
    yield prefix
    if isinstance(node, dict):
        for k, v in node.items():
            yield from _paths(v, prefix + (k,))
    elif isinstance(node, list):
        for i, v in enumerate(node):
            yield from _paths(v, prefix + (i,))


def _mutate(raw, rng):  # noqa: ANN001, ANN202
    paths = [p for p in _paths(raw) if p]
    path = rng.choice(paths)
    parent = raw
    for key in path[:-1]:
        parent = parent[key]
    if rng.random() < 0.2 and isinstance(parent, dict):
        del parent[path[-1]]
    else:
        parent[path[-1]] = rng.choice(SWAPS)
    return raw


@pytest.mark.parametrize("path", EXPORTS, ids=lambda p: p.name)
def test_mutated_exports_never_escape_as_other_errors(path):
    rng = random.Random(f"fhir-fuzz-{path.name}")
    proto = site_protocol()
    text = path.read_text(encoding="utf-8")
    outcomes = {"complete": 0, "incomplete": 0, "refused": 0}
    for _ in range(N):
        raw = json.loads(text)
        for _ in range(rng.choice([1, 1, 2, 3])):
            raw = _mutate(raw, rng)
        try:
            imp = import_export(json.dumps(raw).encode("utf-8"), "x.json", protocol=proto)
        except InputError:
            outcomes["refused"] += 1
            continue
        assert "\x1b" not in imp.report.text() and "\x07" not in imp.report.text()
        outcomes["complete" if imp.complete else "incomplete"] += 1
        try:
            check_case(imp)
        except InputError:
            pass
    assert outcomes["complete"] > 0 and outcomes["incomplete"] + outcomes["refused"] > 0, outcomes
