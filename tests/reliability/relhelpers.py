"""Helpers for the reliability suite: case generators, mutators and checks.

Imported by name (pytest puts tests/reliability on sys.path). Everything here
is deterministic given a seed: CI runs the same cases every time.
"""

from __future__ import annotations

import copy
import json
import math
import random
import re
from collections import Counter
from datetime import datetime, timedelta
from pathlib import Path
from typing import Any

#: Cases pushed through each stage, filled by the fuzz tests, printed by conftest.py.
FUZZ_COUNTS: Counter = Counter()

ROOT = Path(__file__).resolve().parents[2]
SAMPLES = ROOT / "sample_cases"

#: What an InputError's field may look like (the contract's field paths).
FIELD_RE = re.compile(
    r"^(format|drug|as_of|timezone|label|method|patient(\.\w+)*(\[\d+\])?(\.\w+)?|doses(\[\d+\](\.\w+)?)?"
    r"|levels(\[\d+\](\.\w+)?)?|schedule(\.\w+)?|target(\.\w+)*(\[\d\])?|\(file\)|\(case\)"
    r"|dialysis(\.\w+(\[\d+\](\.\w+)?)?)?)$")

DRUGS = ("vancomycin", "gentamicin", "tobramycin", "amikacin")
UNITS = ("mg", "g", "kg", "lb", "mcg", "ug", "µg", "μg", "cm", "m", "in", "ft", "min", "h", "hr", "day", "yr",
         "year", "month", "mg/L", "mcg/mL", "ug/mL", "µg/mL", "mg/dL", "umol/L", "µmol/L", "mg*h/L")
JUNK = (None, True, False, 0, -1, 1.5, float("1e308"), "", " ", "NaN", "inf", "-1 mg", "1e3 mg", "1,250 mg",
        "2*500 mg", "1250mg", "1250  mg", "1250 MG", "١٢ mg", "\u0000", "x" * 300, [], {}, [1, 2], {"a": 1},
        "2026-02-30T08:00", "2026-13-01T08:00", "2026-03-02 08:00", "2026-03-02T25:00", "2026-03-02T08:00+19:00",
        "2026-03-02T08:00Z", "08:00", "yesterday", "0 mg", "0 h", "0 kg", "99999999999999999999 mg")


def sample_raws() -> list[dict[str, Any]]:
    """Every sample case as a raw dict (the seeds of mutation fuzzing)."""
    return [json.loads(p.read_text(encoding="utf-8")) for p in sorted(SAMPLES.glob("*.json"))]


# --------------------------------------------------------------------------- paths


def resolve(raw: Any, path: str) -> tuple[bool, bool]:
    """Does ``path`` name a value in ``raw``? Returns (exists, parent_exists).

    ``doses[2].amount`` -> raw["doses"][2]["amount"]. The parent test accepts a
    required key that is missing (the error names where it should be).
    """
    if path in ("(file)", "(case)"):
        return True, True
    for i in [j for j, ch in enumerate(path) if ch == "."]:
        # an unknown key is named as it stands in the file: prefix.<key spelled any way>
        node_ok, _ = resolve(raw, path[:i])
        if node_ok:
            node = _lookup(raw, path[:i])
            if isinstance(node, dict) and path[i + 1:] in node:
                return True, True
    tokens = re.findall(r"[^.\[\]]+|\[\d+\]", path)
    node, parent_ok = raw, True
    for i, tok in enumerate(tokens):
        last = i == len(tokens) - 1
        if tok.startswith("["):
            idx = int(tok[1:-1])
            ok = isinstance(node, list) and idx < len(node)
        else:
            ok = isinstance(node, dict) and tok in node
        if not ok:
            return False, parent_ok and last
        node = node[idx] if tok.startswith("[") else node[tok]
    return True, True


def _lookup(raw: Any, path: str) -> Any:
    for tok in re.findall(r"[^.\[\]]+|\[\d+\]", path):
        raw = raw[int(tok[1:-1])] if tok.startswith("[") else raw[tok]
    return raw


# --------------------------------------------------------------------------- plausible cases


def _fmt_time(t: datetime) -> str:
    return t.strftime("%Y-%m-%dT%H:%M")


def plausible_case(rng: random.Random) -> dict[str, Any]:
    """An invented, plausible course with levels made by a one-compartment model plus noise.

    The levels follow C(t) = sum of zero-order infusions with first-order
    elimination (the contract's model), so most cases fit; noise, censoring,
    set-aside levels and timing flags vary the path through the engine.
    """
    drug = rng.choice(DRUGS)
    vanc = drug == "vancomycin"
    age = rng.randint(18, 95)
    sex = rng.choice(("male", "female"))
    height = rng.randint(145, 200)
    weight = round(rng.uniform(40, 160), 1)
    scr = round(rng.uniform(0.4, 4.0), 2)
    tau = rng.choice((8, 12, 24) if vanc else (8, 12, 24, 36))
    dose = rng.choice((750, 1000, 1250, 1500)) if vanc else round(rng.choice((1.5, 2.5, 5, 7)) * weight / 10) * 10
    if drug == "amikacin":
        dose = round(15 * weight / 50) * 50
    tinf = rng.choice((1.0, 1.5, 2.0)) if vanc else 0.5
    n = rng.randint(1, 12)
    t0 = datetime(2026, rng.randint(1, 12), rng.randint(1, 28), rng.choice((6, 8, 9, 14, 20)), rng.choice((0, 15, 30)))
    doses = []
    for i in range(n):
        doses.append({"start": _fmt_time(t0 + timedelta(hours=i * tau)), "amount": f"{dose} mg",
                      "duration": f"{int(tinf * 60)} min"})
    if vanc and rng.random() < 0.4:
        doses[0]["kind"] = "loading"
        doses[0]["amount"] = f"{min(3000, round(25 * weight / 250) * 250)} mg"
    crcl = max(5.0, (140 - age) * weight / (72 * scr) * (0.85 if sex == "female" else 1.0))
    ke = (0.00083 * crcl + 0.0044) if vanc else (0.00293 * crcl + 0.014)
    ke *= math.exp(rng.gauss(0, 0.3))
    v = (0.7 if vanc else 0.26) * weight * math.exp(rng.gauss(0, 0.2))
    amounts = [float(d["amount"].split()[0]) for d in doses]

    def conc(t_h: float) -> float:
        c = 0.0
        for i, a in enumerate(amounts):
            u = t_h - i * tau
            if u <= 0:
                continue
            k0 = a / tinf
            c += k0 / (ke * v) * (1 - math.exp(-ke * min(u, tinf))) * math.exp(-ke * max(u - tinf, 0.0))
        return c

    last = (n - 1) * tau
    levels = []
    picks = sorted(rng.sample([last + tinf + 1.5, last + tau - 0.5, last - 0.5, last + tinf + 3], rng.randint(0, 3)))
    for th in picks:
        if th <= 0:
            continue
        c = conc(th) * math.exp(rng.gauss(0, 0.08))
        row: dict[str, Any] = {"time": _fmt_time(t0 + timedelta(hours=th)), "conc": f"{max(c, 0.05):.1f} mg/L"}
        if c < 0.3 and rng.random() < 0.7:
            row.update(conc="0.3 mg/L", below_loq=True)
        if rng.random() < 0.05:
            row.update(use=False, reason="haemolysed sample")
        if rng.random() < 0.05:
            row["timing"] = "uncertain"
        levels.append(row)
    as_of = t0 + timedelta(hours=last + tau - 0.25)
    scr_entry: Any = f"{scr} mg/dL" if rng.random() < 0.5 else f"{round(scr * 88.42)} umol/L"
    raw: dict[str, Any] = {
        "format": "tdmtui.case/1", "label": f"fuzz {rng.randrange(10**6)}", "drug": drug, "as_of": _fmt_time(as_of),
        "patient": {"age": f"{age} yr", "sex": sex, "weight": f"{weight} kg", "height": f"{height} cm",
                    "scr": scr_entry},
        "doses": doses, "levels": levels,
    }
    if rng.random() < 0.5:
        raw["schedule"] = {"interval": f"{tau} h", "dose": f"{dose} mg", "duration": f"{int(tinf * 60)} min"}
    if rng.random() < 0.3:
        raw["timezone"] = rng.choice(("Europe/London", "America/New_York", "Australia/Sydney"))
    if rng.random() < 0.15:
        raw["method"] = rng.choice(("two-level", "sawchuk-zaske", "bayesian", "population"))
    return raw


# --------------------------------------------------------------------------- mutations


def _nodes(raw: Any, path: tuple = ()) -> list[tuple]:
    """Every container path in ``raw`` (dicts and lists), root included."""
    out = [path]
    items = raw.items() if isinstance(raw, dict) else enumerate(raw) if isinstance(raw, list) else []
    for k, v in items:
        if isinstance(v, (dict, list)):
            out.extend(_nodes(v, path + (k,)))
    return out


def _get(raw: Any, path: tuple) -> Any:
    for k in path:
        raw = raw[k]
    return raw


def _mutate_value(value: Any, rng: random.Random) -> Any:
    """A plausible slip or a hostile value in place of ``value``."""
    if isinstance(value, str) and " " in value and rng.random() < 0.6:
        number, _, unit = value.partition(" ")
        how = rng.randrange(7)
        if how == 0:
            return f"{number} {rng.choice(UNITS)}"
        if how == 1:
            try:
                return f"{float(number) * rng.choice((10, 0.1, 1000, 0.001, 2.2046, 88.4)):.6g} {unit}"
            except ValueError:
                return f"1 {unit}"
        if how == 2:
            return f"-{number} {unit}"
        if how == 3:
            return f"{rng.choice(('0', '0.0', '1e9', '99999999', '.5', '5.', '00012'))} {unit}"
        if how == 4:
            return number
        if how == 5:
            return f"{number}{unit}"
        return f"{number} {unit} "
    if isinstance(value, str) and re.match(r"\d{4}-\d\d-\d\dT\d\d:\d\d", value) and rng.random() < 0.7:
        how = rng.randrange(6)
        if how == 0:  # AM/PM slip
            hh = int(value[11:13])
            return f"{value[:11]}{(hh + 12) % 24:02d}{value[13:]}"
        if how == 1:  # date slip
            return value[:8] + f"{rng.randint(1, 31):02d}" + value[10:]
        if how == 2:
            return value[:4] + "-" + value[8:10] + "-" + value[5:7] + value[10:]
        if how == 3:
            return value + rng.choice(("Z", "+01:00", ":30", ":99", " "))
        if how == 4:
            return str(int(value[:4]) + rng.choice((-1, 1, 100))) + value[4:]
        return value.replace("T", " ")
    return copy.deepcopy(rng.choice(JUNK))


def mutate(raw: dict[str, Any], rng: random.Random, n: int | None = None) -> dict[str, Any]:
    """Apply 1-4 random structural or value mutations to a deep copy of ``raw``."""
    out = copy.deepcopy(raw)
    for _ in range(n or rng.randint(1, 4)):
        path = rng.choice(_nodes(out))
        node = _get(out, path)
        if isinstance(node, dict) and node:
            key = rng.choice(sorted(node, key=str))
            op = rng.randrange(10)
            if op == 0:
                del node[key]
            elif op == 1:
                node[key + rng.choice(("_", "x", ""))] = copy.deepcopy(rng.choice(JUNK))
            elif op == 2 and isinstance(node[key], list) and node[key]:
                node[key].append(copy.deepcopy(rng.choice(node[key])))
            else:
                node[key] = _mutate_value(node[key], rng)
        elif isinstance(node, list) and node:
            i = rng.randrange(len(node))
            op = rng.randrange(6)
            if op == 0:
                del node[i]
            elif op == 1:
                node.insert(i, copy.deepcopy(node[rng.randrange(len(node))]))
            elif op == 2:
                node.reverse()
            else:
                node[i] = _mutate_value(node[i], rng)
        elif isinstance(node, list):
            node.append(copy.deepcopy(rng.choice(JUNK)))
    return out


def mutate_bytes(data: bytes, rng: random.Random) -> bytes:
    """Byte-level damage: truncation, flips, insertions, bad encodings."""
    b = bytearray(data)
    how = rng.randrange(6)
    if how == 0:
        return bytes(b[: rng.randrange(len(b))])
    if how == 1:
        for _ in range(rng.randint(1, 8)):
            b[rng.randrange(len(b))] = rng.randrange(256)
        return bytes(b)
    if how == 2:
        i = rng.randrange(len(b))
        return bytes(b[:i] + rng.choice((b"\xff\xfe", b"\x00", b"{", b"]", b",", b'"', b"\xc3")) + b[i:])
    if how == 3:
        return b"\xef\xbb\xbf" + bytes(b)  # a byte-order mark
    if how == 4:
        return data.decode("utf-8").encode("utf-16")
    i = rng.randrange(len(b))
    return bytes(b[:i] + b[i + 1:])


# --------------------------------------------------------------------------- checks


def numbers(obj: Any, path: str = "") -> list[tuple[str, float]]:
    """Every number in a JSON-like object, with its path."""
    out: list[tuple[str, float]] = []
    if isinstance(obj, bool) or obj is None:
        return out
    if isinstance(obj, (int, float)):
        return [(path, float(obj))]
    if isinstance(obj, dict):
        for k, v in obj.items():
            out.extend(numbers(v, f"{path}.{k}"))
    elif isinstance(obj, (list, tuple)):
        for i, v in enumerate(obj):
            out.extend(numbers(v, f"{path}[{i}]"))
    return out


def check_result(result: dict[str, Any]) -> list[str]:
    """Problems with a result: a non-finite number, non-positive parameters or regimen figures."""
    problems = [f"{p} = {v}" for p, v in numbers(result) if not math.isfinite(v)]
    try:
        json.dumps(result, allow_nan=False)
    except (TypeError, ValueError) as exc:
        problems.append(f"not JSON: {exc}")
    est = result.get("estimate")
    blocks = [est] if est else []
    blocks += list((result.get("methods") or {}).values())
    for e in blocks:
        for key in ("ke_per_h", "half_life_h", "vd_l", "cl_l_per_h"):
            if not (isinstance(e.get(key), (int, float)) and math.isfinite(e[key]) and e[key] > 0):
                problems.append(f"{e.get('method')}.{key} = {e.get(key)!r}")
        for k, v in (e.get("current") or {}).items():
            if not (math.isfinite(v) and v >= 0):
                problems.append(f"{e.get('method')}.current.{k} = {v}")
    reg = result.get("regimen")
    if reg:
        for key in ("dose_mg", "interval_h"):
            v = reg.get(key)
            if v is not None and not (math.isfinite(v) and v > 0):
                problems.append(f"regimen.{key} = {v!r}")
        for k, v in (reg.get("predicted") or {}).items():
            if isinstance(v, (int, float)) and not (math.isfinite(v) and v >= 0):
                problems.append(f"regimen.predicted.{k} = {v}")
    return problems


# --------------------------------------------------------------------------- never-exceed limits


def _never_exceed(drug: str) -> dict[str, float]:
    """The drug's never_exceed values read straight from its library file (not through the engine)."""
    import tomllib

    tree = tomllib.loads((ROOT / "tdmtui" / "core" / "library" / "drugs" / f"{drug}.toml").read_text("utf-8"))
    return {k: float(v["value"]) for k, v in tree["never_exceed"].items()}


def _over(x: float, limit: float) -> bool:
    return not math.isfinite(x) or x > limit * (1 + 1e-9)


def limit_problems(result: dict[str, Any], tbw_kg: float, plan: Any = None) -> list[str]:
    """Every proposed dose, loading dose, daily total and rate (regimen, alternatives, planned doses)
    checked against the library's never_exceed values, recomputed here from the proposal's own figures."""
    reg = result.get("regimen")
    if not reg:
        return []
    lim = _never_exceed(result["drug"])
    problems = []
    for j, r in enumerate([reg] + list(reg.get("alternatives") or [])):
        where = "regimen" if j == 0 else f"regimen.alternatives[{j - 1}]"
        if r.get("mode") == "continuous":
            rate = r["rate_mg_per_h"]
            daily = rate * 24.0
            if _over(rate, lim["rate_mg_per_h"]):
                problems.append(f"{where}: rate {rate} mg/h")
        else:
            dose, interval, inf = r["dose_mg"], r["interval_h"], r["infusion_h"]
            daily = dose * 24.0 / interval
            for what, x, key in (("dose", dose, "single_dose_mg"), ("dose/kg", dose / tbw_kg, "single_dose_mg_per_kg"),
                                 ("rate", dose / inf if inf > 0 else math.inf, "rate_mg_per_h")):
                if _over(x, lim[key]):
                    problems.append(f"{where}: {what} {x:g} over {lim[key]:g}")
        for what, x, key in (("daily", daily, "daily_dose_mg"), ("daily/kg", daily / tbw_kg, "daily_dose_mg_per_kg")):
            if _over(x, lim[key]):
                problems.append(f"{where}: {what} {x:g} over {lim[key]:g}")
        ld = r.get("loading_dose")
        if ld:
            for what, x, key in (("loading", ld["dose_mg"], "loading_dose_mg"),
                                 ("loading/kg", ld["dose_mg"] / tbw_kg, "single_dose_mg_per_kg"),
                                 ("loading rate", ld["dose_mg"] / ld["infusion_h"] if ld["infusion_h"] > 0 else math.inf,
                                  "rate_mg_per_h")):
                if _over(x, lim[key]):
                    problems.append(f"{where}: {what} {x:g} over {lim[key]:g}")
    if plan is not None:
        for a, d in zip(plan.amount, plan.duration):
            if d > 0 and _over(a / d, lim["rate_mg_per_h"]):
                problems.append(f"planned dose {a:g} mg over {d:g} h: rate over {lim['rate_mg_per_h']:g}")
            if d < 12 and _over(a, max(lim["single_dose_mg"], lim["loading_dose_mg"])):
                problems.append(f"planned dose {a:g} mg over {lim['single_dose_mg']:g}")
    return problems
