"""Reading a case: the contract's JSON in, a typed and checked :class:`Case` out.

``parse_case`` turns the raw JSON object into a :class:`Case` of plain floats
in canonical units, raising :class:`InputError` naming the field path (with
the 0-based index as the entry stands in the file) for anything malformed.
Drug-specific plausibility and course timing are judged later by
:mod:`tdmtui.core.course.history`, which raises warnings instead.

The Case and its parts are in :mod:`tdmtui.core.input.casetypes`; writing a
case back is :mod:`tdmtui.core.input.casefile`.
"""

from __future__ import annotations

import hashlib
from pathlib import Path
from typing import Any

from tdmtui.core.bounds import check_span, check_tree, decode_json, read_case_bytes
from tdmtui.core.alerts import Alert
from tdmtui.core.input.casefile import canonical_bytes
from tdmtui.core.input.casetypes import (DOSE_KINDS, FORMAT, METHODS, RENAL_REPLACEMENT, SEXES, TARGET_BANDS,
                                         TIMINGS, Case, Dose, Level, Patient, Schedule, ScrValue, Target)
from tdmtui.core.input.chosen import parse_chosen
from tdmtui.core.input.clock import Clock, ambiguous, clock_for
from tdmtui.core.errors import InputError
from tdmtui.core.library import DRUGS, Rules
from tdmtui.core.input.units import parse_quantity

#: Hard limits beyond which a value cannot be a person's (input error, exit 2).
#: Narrower drug- and adult-specific plausibility lives in the library.
_ABSURD = {"age": (0.0, 130.0), "weight": (0.3, 700.0), "height": (20.0, 280.0), "scr": (0.01, 50.0)}


def _obj(value: Any, field: str) -> dict[str, Any]:
    if not isinstance(value, dict):
        raise InputError(field, "expected an object")
    return value


def _need(d: dict[str, Any], key: str, prefix: str) -> Any:
    if key not in d:
        raise InputError(f"{prefix}{key}", "required key is missing")
    return d[key]


def _choice(value: Any, options: tuple[str, ...], field: str) -> str:
    if value not in options:
        raise InputError(field, f"{value!r} is not one of {', '.join(options)}")
    return str(value)


def _bool(value: Any, field: str) -> bool:
    if not isinstance(value, bool):
        raise InputError(field, "expected true or false")
    return value


def _text(value: Any, field: str) -> str:
    if not isinstance(value, str):
        raise InputError(field, "expected text")
    return value


def _bounded(value: float, key: str, field: str) -> float:
    lo, hi = _ABSURD[key]
    if not lo <= value <= hi:
        raise InputError(field, f"{value:g} is not a possible {key} (check the number and its unit)")
    return value


def _times(raw: dict[str, Any]) -> list[tuple[str, Any]]:
    out: list[tuple[str, Any]] = []
    if "as_of" in raw:
        out.append(("as_of", raw["as_of"]))
    pat = raw.get("patient")
    if isinstance(pat, dict) and isinstance(pat.get("scr"), list):
        for i, s in enumerate(pat["scr"]):
            if isinstance(s, dict) and "time" in s:
                out.append((f"patient.scr[{i}].time", s["time"]))
    for name, keys in (("doses", ("start", "end")), ("levels", ("time",))):
        rows = raw.get(name)
        if isinstance(rows, list):
            for i, row in enumerate(rows):
                if isinstance(row, dict):
                    out.extend((f"{name}[{i}].{k}", row[k]) for k in keys if k in row)
    from tdmtui.core.input.dialysis import times_of

    return out + times_of(raw)


def _parse_scr(value: Any, clock: Clock) -> tuple[ScrValue, ...]:
    if isinstance(value, str):
        return (ScrValue(None, None, _bounded(parse_quantity(value, "scr", "patient.scr"), "scr", "patient.scr")),)
    if not isinstance(value, list) or not value:
        raise InputError("patient.scr", "expected a quantity such as \"1.1 mg/dL\" or a list of {time, value}")
    out = []
    for i, item in enumerate(value):
        f = f"patient.scr[{i}]"
        item = _obj(item, f)
        t = clock.parse(_need(item, "time", f + "."), f + ".time")
        v = parse_quantity(_need(item, "value", f + "."), "scr", f + ".value")
        out.append(ScrValue(i, t, _bounded(v, "scr", f + ".value")))
    return tuple(out)


def _parse_patient(raw: Any, clock: Clock, rules: Rules) -> Patient:
    p = _obj(raw, "patient")
    age = _bounded(parse_quantity(_need(p, "age", "patient."), "age", "patient.age"), "age", "patient.age")
    sex = _choice(_need(p, "sex", "patient."), SEXES, "patient.sex")
    weight = _bounded(parse_quantity(_need(p, "weight", "patient."), "weight", "patient.weight"), "weight", "patient.weight")
    height = _bounded(parse_quantity(_need(p, "height", "patient."), "height", "patient.height"), "height", "patient.height")
    scr = _parse_scr(_need(p, "scr", "patient."), clock)
    rrt = _choice(p.get("renal_replacement", "none"), RENAL_REPLACEMENT, "patient.renal_replacement")
    known = tuple(rules.get("conditions", {}) or {})
    conditions = p.get("conditions", [])
    if not isinstance(conditions, list):
        raise InputError("patient.conditions", "expected a list")
    for i, c in enumerate(conditions):
        if c not in known:
            raise InputError(f"patient.conditions[{i}]", f"{c!r} is not in the documented list ({', '.join(known)})")
    comeds = p.get("comedications", [])
    if not isinstance(comeds, list):
        raise InputError("patient.comedications", "expected a list of names")
    for i, c in enumerate(comeds):
        _text(c, f"patient.comedications[{i}]")
    return Patient(age, sex, weight, height, scr, rrt, tuple(conditions), tuple(comeds))


def _parse_dose(row: Any, i: int, clock: Clock) -> Dose:
    f = f"doses[{i}]"
    d = _obj(row, f)
    start = clock.parse(_need(d, "start", f + "."), f + ".start")
    amount = parse_quantity(_need(d, "amount", f + "."), "dose", f + ".amount")
    if amount <= 0:
        raise InputError(f + ".amount", "a dose must be more than 0 mg")
    if ("duration" in d) == ("end" in d):
        raise InputError(f, "give exactly one of duration or end")
    if "duration" in d:
        duration = parse_quantity(d["duration"], "time", f + ".duration")
    else:
        duration = clock.parse(d["end"], f + ".end") - start
        if duration < 0:
            raise InputError(f + ".end", "the infusion ends before it starts")
    if duration > 72:
        raise InputError(f + (".duration" if "duration" in d else ".end"), f"an infusion of {duration:g} h is not an intermittent dose")
    kind = _choice(d.get("kind", "maintenance"), DOSE_KINDS, f + ".kind")
    timing = _choice(d.get("timing", "actual"), TIMINGS, f + ".timing")
    return Dose(i, start, duration, amount, kind, timing)


def _parse_level(row: Any, i: int, clock: Clock) -> Level:
    f = f"levels[{i}]"
    d = _obj(row, f)
    t = clock.parse(_need(d, "time", f + "."), f + ".time")
    conc = parse_quantity(_need(d, "conc", f + "."), "conc", f + ".conc")
    below = _bool(d.get("below_loq", False), f + ".below_loq")
    above = _bool(d.get("above_uloq", False), f + ".above_uloq")
    if below and above:
        raise InputError(f, "a level cannot be both below_loq and above_uloq")
    if (below or above) and conc <= 0:
        raise InputError(f + ".conc", "give the assay limit (more than 0) with below_loq or above_uloq")
    use = _bool(d.get("use", True), f + ".use")
    reason = d.get("reason", "")
    _text(reason, f + ".reason")
    if not use and not reason.strip():
        raise InputError(f + ".reason", "say why a level is set aside (use: false needs a reason)")
    timing = _choice(d.get("timing", "actual"), TIMINGS, f + ".timing")
    return Level(i, t, conc, below, above, use, reason, timing)


def _band(value: Any, kind: str, field: str) -> tuple[float, float]:
    if not isinstance(value, list) or len(value) != 2:
        raise InputError(field, "expected [low, high]")
    lo = parse_quantity(value[0], kind, field + "[0]")
    hi = parse_quantity(value[1], kind, field + "[1]")
    if not 0 <= lo < hi:
        raise InputError(field, "low must be at least 0 and below high")
    return lo, hi


def _parse_target(raw: Any) -> Target:
    if raw is None:
        return Target()
    t = _obj(raw, "target")
    kinds = {"auc24": "exposure", "peak": "conc", "trough": "conc", "css": "conc"}
    bands = {k: _band(t[k], kinds[k], f"target.{k}") for k in TARGET_BANDS if k in t}
    mic = None
    if "mic" in t:
        mic = parse_quantity(t["mic"], "conc", "target.mic")
        if mic <= 0:
            raise InputError("target.mic", "the MIC must be more than 0")
    indication = _text(t["indication"], "target.indication") if "indication" in t else None
    for k in t:
        if k not in (*TARGET_BANDS, "mic", "indication"):
            raise InputError(f"target.{k}", "unknown target key")
    return Target(mic=mic, indication=indication, **bands)


def _parse_schedule(raw: Any) -> Schedule | None:
    if raw is None:
        return None
    s = _obj(raw, "schedule")
    interval = parse_quantity(_need(s, "interval", "schedule."), "time", "schedule.interval")
    if interval <= 0:
        raise InputError("schedule.interval", "the interval must be more than 0 h")
    dose = parse_quantity(s["dose"], "dose", "schedule.dose") if "dose" in s else None
    if dose is not None and dose <= 0:
        raise InputError("schedule.dose", "a dose must be more than 0 mg")
    duration = parse_quantity(s["duration"], "time", "schedule.duration") if "duration" in s else None
    if duration is not None and duration >= interval:
        raise InputError("schedule.duration", "the infusion must be shorter than the interval")
    return Schedule(interval, dose, duration)


def looks_like_fhir(raw: object) -> bool:
    """True for a FHIR resource or a list of them: an export to import (``tdmtui import``), not a case."""
    if isinstance(raw, dict):
        return "resourceType" in raw and "format" not in raw
    return isinstance(raw, list) and bool(raw) and all(isinstance(r, dict) and "resourceType" in r for r in raw)


def parse_case(raw: object, data: bytes | None = None) -> Case:
    """Check and convert a case object.

    Args:
        raw: the decoded JSON object.
        data: the file's bytes (for ``input_sha256``); None for an unsaved case,
            whose digest is then taken over :func:`canonical_bytes`.

    Raises:
        InputError: naming the field.
    """
    if looks_like_fhir(raw):
        raise InputError("(case)", "this is a FHIR export, not a case: make a case of it with "
                                   "`tdmtui import FILE` (or open it in the app, which imports it)")
    raw = _obj(raw, "(case)")
    check_tree(raw)
    drug = _drug(raw)
    rules = Rules(drug)
    label = _text(raw.get("label", ""), "label")
    clock = clock_for(_times(raw), raw.get("timezone"))
    patient = _parse_patient(_need(raw, "patient", ""), clock, rules)
    doses, levels = _parse_rows(raw, clock)
    schedule = _parse_schedule(raw.get("schedule"))
    target = _parse_target(raw.get("target"))
    method = _choice(raw.get("method", "auto"), METHODS, "method")
    parse_chosen(raw)  # checked here so a mistyped choice is named like any other field
    as_of, given = _as_of(raw, clock, patient, doses, levels)
    from tdmtui.core.input.dialysis import parse_dialysis

    dialysis = parse_dialysis(raw.get("dialysis"), clock, as_of, patient.renal_replacement, rules)
    digest = hashlib.sha256(data if data is not None else canonical_bytes(raw)).hexdigest()
    return Case(drug, label, as_of, given, clock, patient, doses, levels, schedule, target, method,
                raw, digest, data is not None, _notices(raw, clock), dialysis)


def _drug(raw: dict[str, Any]) -> str:
    """The case's format checked, and its drug (one of the library's)."""
    fmt = _need(raw, "format", "")
    if fmt != FORMAT:
        raise InputError("format", f"expected {FORMAT!r}, got {fmt!r}")
    drug = _need(raw, "drug", "")
    if drug not in DRUGS:
        raise InputError("drug", f"{drug!r} is not in the drug library ({', '.join(DRUGS)})")
    return str(drug)


def _parse_rows(raw: dict[str, Any], clock: Clock) -> tuple[tuple[Dose, ...], tuple[Level, ...]]:
    """The doses sorted by start and the levels by time (file order breaks ties)."""
    doses_raw = _need(raw, "doses", "")
    if not isinstance(doses_raw, list):
        raise InputError("doses", "expected a list (it may be empty)")
    doses = tuple(sorted((_parse_dose(r, i, clock) for i, r in enumerate(doses_raw)), key=lambda d: (d.start, d.index)))
    levels_raw = raw.get("levels", [])
    if not isinstance(levels_raw, list):
        raise InputError("levels", "expected a list")
    levels = tuple(sorted((_parse_level(r, i, clock) for i, r in enumerate(levels_raw)), key=lambda lv: (lv.time, lv.index)))
    return doses, levels


def _as_of(raw: dict[str, Any], clock: Clock, patient: Patient, doses: tuple[Dose, ...],
           levels: tuple[Level, ...]) -> tuple[float, bool]:
    """(assessment time h, given in the file): ``as_of``, else the latest event; the span checked."""
    if "as_of" in raw:
        as_of, given = clock.parse(raw["as_of"], "as_of"), True
    else:
        events = [d.start for d in doses] + [lv.time for lv in levels]
        events += [s.time for s in patient.scr if s.time is not None]
        if not events:
            raise InputError("as_of", "a case with no doses, levels or dated SCr needs an as_of time")
        as_of, given = max(events), False
    check_span([(f"doses[{d.index}].start", d.start) for d in doses] + [(f"levels[{lv.index}].time", lv.time) for lv in levels]
               + [(s.field.removesuffix(".value") + ".time", s.time) for s in patient.scr if s.time is not None]
               + [("as_of", as_of)])
    return as_of, given


#: Warning codes raised while reading a case.
CODES = {
    "ambiguous-time": "a wall-clock time that happens twice in the case's timezone (read as the first)",
    "timezone-ignored": "a timezone given while every time carries its own UTC offset",
}


def _notices(raw: dict[str, Any], clock: Clock) -> tuple[Alert, ...]:
    """Times read one way of two, and a timezone that placed nothing: warned, naming the field."""
    out = [Alert("ambiguous-time", "caution", f,
                 f"{_lookup_time(raw, f)} happens twice in {clock.zone_name} (the clocks go back): read as the "
                 "first, before the change; if it was the second, give every time with its UTC offset")
           for f in ambiguous(clock, _times(raw))]
    if clock.style == "offset" and raw.get("timezone") is not None:
        out.append(Alert("timezone-ignored", "info", "timezone",
                         f"timezone {raw['timezone']!r} is not used: every time carries its own UTC offset"))
    return tuple(out)


def _lookup_time(raw: dict[str, Any], field: str) -> str:
    return next((str(t) for f, t in _times(raw) if f == field), field)


def load_case(path: str | Path) -> Case:
    """Read and parse a case file.

    Raises:
        InputError: ``(file)`` when unreadable or not JSON, else naming the field.
    """
    data = read_case_bytes(path)
    return parse_case(decode_json(data, str(path)), data)

