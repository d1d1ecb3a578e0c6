"""Case files: the contract's JSON in, typed and checked values out, and back.

``parse_case`` turns the raw JSON object into a :class:`Case` of plain floats
in canonical units, raising :class:`InputError` naming the field path (with
the 0-based index as the entry stands in the file) for anything malformed.
Drug-specific plausibility and course timing are judged later by
:mod:`tdmtui.core.course.history`, which raises warnings instead.

``save_case`` writes atomically (temporary file, fsync, rename; mode 0600).
"""

from __future__ import annotations

import contextlib
import hashlib
import json
import os
import stat
import tempfile
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Iterator

from tdmtui.core import registry
from tdmtui.core.bounds import check_span, check_tree, decode_json, read_case_bytes
from tdmtui.core.alerts import Alert
from tdmtui.core.input.chosen import parse_chosen
from tdmtui.core.input.clock import Clock, ambiguous, clock_for
from tdmtui.core.errors import InputError
from tdmtui.core.library import DRUGS, Rules
from tdmtui.core.input.units import parse_quantity

FORMAT = "tdmtui.case/1"
SEXES = ("male", "female")
RENAL_REPLACEMENT = ("none", "ihd", "crrt", "pd")
DOSE_KINDS = ("loading", "maintenance", "extra")
TIMINGS = ("actual", "scheduled", "uncertain")
#: The case's ``method`` choices: ``auto``, every estimation method, every regimen option (registry.py).
METHODS = registry.CHOICES
TARGET_BANDS = ("auc24", "peak", "trough", "css")

#: Hard limits beyond which a value cannot be a person's (input error, exit 2).
#: Narrower drug- and adult-specific plausibility lives in the library.
_ABSURD = {"age": (0.0, 130.0), "weight": (0.3, 700.0), "height": (20.0, 280.0), "scr": (0.01, 50.0)}


@dataclass(frozen=True)
class Dose:
    """One infusion. Times in h since the epoch; amount mg."""

    index: int
    start: float
    duration: float
    amount: float
    kind: str = "maintenance"
    timing: str = "actual"

    @property
    def end(self) -> float:
        return self.start + self.duration


@dataclass(frozen=True)
class Level:
    """One measured concentration (mg/L); ``conc`` holds the limit when censored."""

    index: int
    time: float
    conc: float
    below_loq: bool = False
    above_uloq: bool = False
    use: bool = True
    reason: str = ""
    timing: str = "actual"

    @property
    def quantified(self) -> bool:
        return not (self.below_loq or self.above_uloq)


@dataclass(frozen=True)
class ScrValue:
    """A serum creatinine in mg/dL; ``index`` is None for the single-string form."""

    index: int | None
    time: float | None
    value: float

    @property
    def field(self) -> str:
        return "patient.scr" if self.index is None else f"patient.scr[{self.index}].value"


@dataclass(frozen=True)
class Patient:
    age: float
    sex: str
    weight: float
    height: float
    scr: tuple[ScrValue, ...]
    renal_replacement: str = "none"
    conditions: tuple[str, ...] = ()
    comedications: tuple[str, ...] = ()


@dataclass(frozen=True)
class Schedule:
    interval: float
    dose: float | None = None
    duration: float | None = None


@dataclass(frozen=True)
class Target:
    """Targets given in the case (None = take the library's or protocol's)."""

    auc24: tuple[float, float] | None = None
    peak: tuple[float, float] | None = None
    trough: tuple[float, float] | None = None
    css: tuple[float, float] | None = None
    mic: float | None = None
    indication: str | None = None


@dataclass(frozen=True)
class Case:
    """A parsed case. ``doses`` are sorted by start; ``levels`` by time."""

    drug: str
    label: str
    as_of: float
    as_of_given: bool
    clock: Clock
    patient: Patient
    doses: tuple[Dose, ...]
    levels: tuple[Level, ...]
    schedule: Schedule | None
    target: Target
    method: str
    raw: dict[str, Any]
    sha256: str
    saved: bool
    notices: tuple[Alert, ...] = ()  # warnings found while reading (ambiguous times, an unused timezone)
    dialysis: Any = None  # dialysis.Dialysis: haemodialysis sessions, or None (docs/dialysis.md)


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


def canonical_bytes(raw: dict[str, Any]) -> bytes:
    """The canonical serialisation used for digests of unsaved cases and for saving."""
    return (json.dumps(raw, ensure_ascii=False, indent=2) + "\n").encode("utf-8")


def parse_case(raw: object, data: bytes | None = None) -> Case:
    """Check and convert a case object.

    Args:
        raw: the decoded JSON object.
        data: the file's bytes (for ``input_sha256``); None for an unsaved case,
            whose digest is then taken over :func:`canonical_bytes`.

    Raises:
        InputError: naming the field.
    """
    raw = _obj(raw, "(case)")
    check_tree(raw)
    fmt = _need(raw, "format", "")
    if fmt != FORMAT:
        raise InputError("format", f"expected {FORMAT!r}, got {fmt!r}")
    drug = _need(raw, "drug", "")
    if drug not in DRUGS:
        raise InputError("drug", f"{drug!r} is not in the drug library ({', '.join(DRUGS)})")
    rules = Rules(drug)
    label = _text(raw.get("label", ""), "label")
    clock = clock_for(_times(raw), raw.get("timezone"))
    patient = _parse_patient(_need(raw, "patient", ""), clock, rules)
    doses_raw = _need(raw, "doses", "")
    if not isinstance(doses_raw, list):
        raise InputError("doses", "expected a list (it may be empty)")
    doses = tuple(sorted((_parse_dose(r, i, clock) for i, r in enumerate(doses_raw)), key=lambda d: (d.start, d.index)))
    levels_raw = raw.get("levels", [])
    if not isinstance(levels_raw, list):
        raise InputError("levels", "expected a list")
    levels = tuple(sorted((_parse_level(r, i, clock) for i, r in enumerate(levels_raw)), key=lambda lv: (lv.time, lv.index)))
    schedule = _parse_schedule(raw.get("schedule"))
    target = _parse_target(raw.get("target"))
    method = _choice(raw.get("method", "auto"), METHODS, "method")
    parse_chosen(raw)  # checked here so a mistyped choice is named like any other field
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
    from tdmtui.core.input.dialysis import parse_dialysis

    dialysis = parse_dialysis(raw.get("dialysis"), clock, as_of, patient.renal_replacement, rules)
    digest = hashlib.sha256(data if data is not None else canonical_bytes(raw)).hexdigest()
    return Case(drug, label, as_of, given, clock, patient, doses, levels, schedule, target, method,
                raw, digest, data is not None, _notices(raw, clock), dialysis)


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


def write_atomic(path: str | Path, data: bytes, mode: int = 0o600) -> None:
    """Write bytes atomically: temporary file in the same folder, fsync, rename.

    The file is created with ``mode`` (0600: only the owner may read it).
    A crash at any point leaves either the old file or the new one, whole.
    """
    p = Path(path)
    fd, tmp = tempfile.mkstemp(prefix=f".{p.name}.", suffix=".tmp", dir=str(p.parent or "."))
    try:
        os.fchmod(fd, mode)
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, p)
        remove_stale_temps(p)
        try:
            dfd = os.open(str(p.parent or "."), os.O_RDONLY)
            try:
                os.fsync(dfd)
            finally:
                os.close(dfd)
        except OSError:
            pass
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise


#: A temporary file of an atomic write older than this was left by an interrupted save.
STALE_TEMP_S = 120.0


def remove_stale_temps(path: str | Path) -> int:
    """Remove this user's temporary files of interrupted writes of ``path`` (``.NAME.*.tmp``); count them.

    Only regular files owned by this user and older than :data:`STALE_TEMP_S`
    (a write in progress takes milliseconds) are removed; links are never followed.
    """
    p = Path(path)
    folder, prefix, removed = p.parent or Path("."), f".{p.name}.", 0
    try:
        names = [n for n in os.listdir(folder) if n.startswith(prefix) and n.endswith(".tmp")]
    except OSError:
        return 0
    import time

    now = time.time()
    for name in names:
        try:
            info = os.lstat(folder / name)
            if (stat.S_ISREG(info.st_mode) and info.st_uid == os.getuid()
                    and now - info.st_mtime > STALE_TEMP_S):
                os.unlink(folder / name)
                removed += 1
        except OSError:
            continue
    return removed


def save_case(path: str | Path, raw: dict[str, Any]) -> str:
    """Save a raw case object atomically with mode 0600; return the sha256 of what was written."""
    data = canonical_bytes(raw)
    write_atomic(path, data)
    return hashlib.sha256(data).hexdigest()


class SaveLockTimeout(Exception):
    """Another session (perhaps another user's) held the folder's save lock too long."""


#: How long a save waits for another session's save lock before giving up with a message.
LOCK_WAIT_S = 5.0


@contextlib.contextmanager
def folder_lock(path: str | Path, wait_s: float | None = None) -> Iterator[None]:
    """Hold an exclusive advisory lock on the folder of ``path`` (POSIX flock).

    Two sessions saving into the same folder take turns, so a check of the
    file's digest and the rename that follows it cannot be interleaved with
    another session's save (where flock is not available it is a no-op).
    A lock held longer than ``wait_s`` (another user may hold one on a shared
    folder for ever) raises :class:`SaveLockTimeout` instead of freezing.
    """
    try:
        import fcntl
    except ImportError:  # pragma: no cover - not POSIX
        yield
        return
    import time

    folder = str(Path(path).resolve().parent)
    fd = os.open(folder, os.O_RDONLY)
    try:
        deadline = time.monotonic() + (LOCK_WAIT_S if wait_s is None else wait_s)
        while True:
            try:
                fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
                break
            except BlockingIOError:
                if time.monotonic() >= deadline:
                    raise SaveLockTimeout(
                        f"another session is holding the save lock of {folder} (waited "
                        f"{LOCK_WAIT_S if wait_s is None else wait_s:g} s); nothing was written: try again, "
                        "or save under another folder") from None
                time.sleep(0.05)
        yield
    finally:
        try:
            fcntl.flock(fd, fcntl.LOCK_UN)
        finally:
            os.close(fd)
