"""Mistyped and hostile local protocols: 2,000+ mutations a run, none can produce a dangerous dose.

Each mutated protocol is either refused with an InputError naming a key of
the protocol (``protocol.<section>.<key>``) or accepted; an accepted one is
computed on a case of its drug and every proposed dose, loading dose, daily
total and rate must lie within the library's never_exceed values (read from
the library file by the test itself, relhelpers.limit_problems). No other
exception may escape. The mutations are the slips seen in practice (numbers
as strings, a factor of 10-1,000, a key misspelt or in the wrong section, a
unit, a list for a number) and values at the edges of the schema's ranges,
which pass validation and so test the final guard. Seeds are fixed.
"""

from __future__ import annotations

import copy
import json
import math
import random
import sys
import traceback
from pathlib import Path

from relhelpers import FUZZ_COUNTS, ROOT, limit_problems, sample_raws
from tdmtui.core.input.case import parse_case
from tdmtui.core.compute import compute
from tdmtui.core.errors import InputError, NoEstimateError
from tdmtui.core.library import DRUGS, load_protocol, protocol_from_tree
from tdmtui.core.library.schema import SCHEMA

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib

SEED = 20261202
N_PROTOCOLS = 2_400
STAGE = "mutated protocols"
EXAMPLE = tomllib.loads((ROOT / "docs" / "protocol-example.toml").read_text("utf-8"))
#: one sample case per drug (the continuous-infusion vancomycin one too), parsed once
CASES = {}
for _raw in sample_raws():
    CASES.setdefault(_raw["drug"], []).append(parse_case(_raw))


def _leaf_tables(tree: dict, prefix: tuple = ()) -> list[tuple]:
    out = []
    for k, v in tree.items():
        if isinstance(v, dict) and "value" in v:
            out.append(prefix + (k,))
        elif isinstance(v, dict):
            out += _leaf_tables(v, prefix + (k,))
    return out


def _edge(spec, rng: random.Random):  # noqa: ANN001, ANN202 - a value at the edge of the schema's range
    lo = spec.lo if math.isfinite(spec.lo) else 0.0
    hi = spec.hi if math.isfinite(spec.hi) else 1e4
    x = rng.choice((lo, hi, hi * 0.999, lo + (hi - lo) * rng.random()))
    if spec.kind == "num":
        return x
    if spec.kind in ("band", "pair"):
        return [lo, hi] if rng.random() < 0.5 else [x * 0.5, x] if x > 0 else [lo, hi]
    if spec.kind == "nums":
        return [x] if x > 0 else [hi]
    return None


def _bad(value, rng: random.Random):  # noqa: ANN001, ANN202 - a slip of the pen
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        return rng.choice((str(value), value * 10, value * 100, value * 1000, -value, 0, float("nan"),
                           float("inf"), [value], True, f"{value} mg", None))
    if isinstance(value, list):
        return rng.choice(([str(v) for v in value], value[::-1], value * 2, [], [value], value[:1], "list"))
    return rng.choice((1, "", "nonsense", [value], {"x": value}))


def mutate_protocol(tree: dict, rng: random.Random) -> dict:
    """1-3 mutations of a deep copy of the example protocol."""
    out = copy.deepcopy(tree)
    for _ in range(rng.randint(1, 3)):
        leaves = _leaf_tables(out)
        if not leaves:
            break
        path = rng.choice(leaves)
        parent = out
        for k in path[:-1]:
            parent = parent[k]
        leaf = parent[path[-1]]
        key = ".".join(path[1:])
        op = rng.randrange(10)
        if op <= 2 and key in SCHEMA and SCHEMA[key].kind in ("num", "band", "pair", "nums"):
            edge = _edge(SCHEMA[key], rng)
            if edge is not None:
                leaf["value"] = edge
        elif op <= 5:
            leaf["value"] = _bad(leaf.get("value"), rng)
        elif op == 6:
            parent[path[-1] + rng.choice(("s", "_x", ""))[:2]] = parent.pop(path[-1])  # a misspelt key
        elif op == 7:
            leaf[rng.choice(("unit", "valeu", "source"))] = rng.choice(("mg", "g", 3, "x"))
        elif op == 8:
            section = rng.choice((*DRUGS, "common", "vancomycn", "never_exceed"))
            node = out.setdefault(section, {}) if isinstance(out.get(section, {}), dict) else {}
            node.setdefault(path[1] if len(path) > 1 else "regimen", {})
            if isinstance(node[path[1] if len(path) > 1 else "regimen"], dict):
                node[path[1] if len(path) > 1 else "regimen"][path[-1]] = copy.deepcopy(leaf)
        else:
            out.setdefault(path[0], {}).setdefault("never_exceed", {})["single_dose_mg"] = {"value": 1e5}
    return out


def _sections(tree: dict) -> list[str]:
    return [s for s in tree if s in DRUGS]


def run_protocol(tree: dict, rng: random.Random, failures: list[str]) -> None:
    FUZZ_COUNTS[f"{STAGE}: protocols"] += 1
    try:
        proto = protocol_from_tree(tree, "0" * 64, "fuzz")
    except InputError as exc:
        FUZZ_COUNTS[f"{STAGE}: refused naming a key"] += 1
        if not (exc.field or "").startswith("protocol"):
            failures.append(f"refusal names {exc.field!r}, not a protocol key: {exc.message}")
        return
    FUZZ_COUNTS[f"{STAGE}: accepted"] += 1
    drug = rng.choice(_sections(tree) or list(DRUGS))
    case = rng.choice(CASES[drug])
    try:
        outcome = compute(case, proto)
    except (InputError, NoEstimateError):
        FUZZ_COUNTS[f"{STAGE}: accepted, case refused or no estimate"] += 1
        return
    except Exception as exc:  # noqa: BLE001 - the point of the test
        failures.append(f"uncaught {type(exc).__name__}: {exc} with {json.dumps(tree, default=str)[:300]}\n"
                        + "".join(traceback.format_exception(type(exc), exc, exc.__traceback__)[-3:]))
        return
    FUZZ_COUNTS[f"{STAGE}: computed"] += 1
    if outcome.result.get("regimen"):
        FUZZ_COUNTS[f"{STAGE}: proposals checked against the never-exceed limits"] += 1
    elif any(w["code"] == "never-exceed" for w in outcome.result["warnings"]):
        FUZZ_COUNTS[f"{STAGE}: proposal beyond a limit turned into a stop"] += 1
    failures.extend(f"never-exceed: {p} ({drug}, {json.dumps(tree, default=str)[:300]})"
                    for p in limit_problems(outcome.result, case.patient.weight, outcome.plan))


def _chunk(seeds: list[int]) -> tuple[list[str], dict[str, int]]:
    FUZZ_COUNTS.clear()
    failures: list[str] = []
    for seed in seeds:
        rng = random.Random(seed)
        run_protocol(mutate_protocol(EXAMPLE, rng), rng, failures)
    return failures, dict(FUZZ_COUNTS)


def test_mutated_protocols_are_refused_naming_a_key_or_stay_within_the_never_exceed_limits():
    from test_fuzz_cases import in_workers

    failures: list[str] = []
    for share_failures, counts in in_workers(_chunk, [SEED + i for i in range(N_PROTOCOLS)]):
        failures += share_failures
        FUZZ_COUNTS.update(counts)
    assert not failures, "\n".join(failures[:10])
    assert FUZZ_COUNTS[f"{STAGE}: protocols"] == N_PROTOCOLS
    assert FUZZ_COUNTS[f"{STAGE}: computed"] >= 400
    assert FUZZ_COUNTS[f"{STAGE}: refused naming a key"] >= 800


def test_the_example_protocol_and_the_library_pass_the_schema():
    proto = load_protocol(ROOT / "docs" / "protocol-example.toml")
    assert proto.overrides["vancomycin"]["regimen.rounding_mg"][0] == 250.0


def test_damaged_protocol_files_are_refused_as_protocol_errors(tmp_path: Path):
    text = (ROOT / "docs" / "protocol-example.toml").read_bytes()
    rng = random.Random(SEED)
    for i in range(200):
        data = bytearray(text)
        for _ in range(rng.randint(1, 5)):
            data[rng.randrange(len(data))] = rng.randrange(256)
        p = tmp_path / f"p{i}.toml"
        p.write_bytes(bytes(data))
        try:
            load_protocol(p)
        except InputError as exc:
            assert exc.field.startswith("protocol"), exc.field
