"""An export's pieces assembled into a case, with the report of what went where.

Choices made here, each said in the report: the drug (``--drug``, else the one
drug the doses and levels name); the as-of time (``--as-of``, else the
Bundle's ``timestamp``, else left out so the case takes its latest event);
the latest weight and height at the as-of time; every creatinine up to it;
every completed dose and every level. Dose kinds are not in FHIR: every dose
is a maintenance dose until the pharmacist marks a loading dose.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date
from typing import Any, Callable

from tdmtui.core.errors import InputError, one_line
from tdmtui.core.fhir.codes import CodeBook
from tdmtui.core.fhir.read import Entry, Export
from tdmtui.core.fhir.report import Report
from tdmtui.core.fhir.resources import Piece, map_administration, map_observation, map_request
from tdmtui.core.fhir.values import Skip, birth_date, case_time, moment

FORMAT = "tdmtui.case/1"
SEX = {"male": "male", "female": "female"}
REQUIRED = ("patient.age", "patient.sex", "patient.weight", "patient.height", "patient.scr")
MAPPERS: dict[str, Callable[..., Piece]] = {"Observation": map_observation, "MedicationAdministration": map_administration,
           "MedicationRequest": map_request}


@dataclass
class Imported:
    """The case built from an export (``raw``; missing parts left as ``""``) and its report."""

    raw: dict[str, Any]
    report: Report

    @property
    def complete(self) -> bool:
        return not self.report.missing


def _pieces(export: Export, book: CodeBook, patient: Entry | None, drugs: tuple[str, ...],
            report: Report) -> list[Piece]:
    out = []
    for e in export.entries:
        mapper = MAPPERS.get(e.type)
        if e.type in ("Patient", "Medication"):
            continue
        if mapper is None:
            report.skip(e.name, f"{e.type} resources are not read by the import")
            continue
        try:
            args = (e, export, book, patient) + ((drugs,) if e.type != "Observation" else ())
            out.append(mapper(*args))
        except Skip as why:
            report.skip(e.name, why.reason)
    return out


def _choose_drug(pieces: list[Piece], asked: str | None, drugs: tuple[str, ...]) -> str:
    if asked is not None:
        if asked not in drugs:
            raise InputError("--drug", f"{asked!r} is not in the drug library ({', '.join(drugs)})")
        return asked
    named = sorted({p.drug for p in pieces if p.drug})
    if len(named) > 1:
        raise InputError("--drug", f"the export holds doses or levels of {' and '.join(named)}: choose one with --drug")
    if not named:
        raise InputError("drug", "no dose, level or order in the export names a library drug: give --drug")
    return named[0]


def _as_of(asked: str | None, export: Export) -> tuple[str | None, str]:
    if asked is not None:
        try:
            return case_time(asked, "--as-of"), "given with --as-of"
        except Skip as why:
            raise InputError("--as-of", why.reason) from None
    if export.timestamp:
        try:
            return case_time(export.timestamp, "Bundle.timestamp"), "the Bundle's timestamp"
        except Skip:
            pass
    return None, "not given: the case takes its latest event"


def _after(time: str | None, as_of: str | None) -> bool:
    if time is None or as_of is None:
        return False
    a, b = moment(time), moment(as_of)
    if (a.tzinfo is None) != (b.tzinfo is None):
        raise InputError("--as-of", f"give the as-of time with a UTC offset like the export's times ({time})"
                         if a.tzinfo else "the export's times carry no UTC offset: give --as-of without one")
    return a > b


def _age(birth: date, as_of: str) -> int:
    day = date.fromisoformat(as_of[:10])
    return day.year - birth.year - ((day.month, day.day) < (birth.month, birth.day))


def _order(pieces: list[Piece]) -> list[Piece]:
    try:
        return sorted(pieces, key=lambda p: moment(p.time or ""))
    except TypeError:
        raise InputError("(bundle)", "some of the export's times carry a UTC offset and some do not") from None


class _Case:
    """The case dict under construction, its provenance and the report."""

    def __init__(self, report: Report, drug: str, as_of: str | None) -> None:
        self.report = report
        self.values: list[dict[str, Any]] = []
        self.patient: dict[str, Any] = {"age": "", "sex": "", "weight": "", "height": "", "scr": ""}
        self.raw: dict[str, Any] = {"format": FORMAT, "label": "Imported from a FHIR export (review before saving)",
                                    "drug": drug}
        if as_of is not None:
            self.raw["as_of"] = as_of

    def put(self, fieldname: str, value: Any, resource: str, text: str, mapping: str = "") -> None:
        self.values.append({"field": fieldname, "value": value, "resource": resource})
        self.report.used(resource, text, mapping)

    def missing(self, part: str, why: str) -> None:
        self.report.missing.append((part, why))


def _patient(c: _Case, patient: Entry | None, age_at: str | None) -> None:
    if patient is None:
        for part in ("patient.age", "patient.sex"):
            c.missing(part, "the export holds no Patient resource")
        return
    r, name = patient.resource, patient.name
    gender = r.get("gender")
    sex = SEX.get(gender) if isinstance(gender, str) else None
    if sex:
        c.patient["sex"] = sex
        c.put("patient.sex", sex, name, f"sex {sex} (gender)")
    else:
        c.missing("patient.sex", f"gender {gender!r} is not male or female (the renal equations need one)")
    try:
        born = birth_date(r.get("birthDate"))
        if age_at is None:
            raise Skip("no as-of time to reckon the age at: give --as-of")
        age = f"{_age(born, age_at)} yr"
        c.patient["age"] = age
        c.put("patient.age", age, name, f"age {age} at {age_at[:10]} (birthDate)")
    except Skip as why:
        c.missing("patient.age", why.reason)


def _latest(c: _Case, pieces: list[Piece], kind: str, as_of: str | None) -> None:
    found = [p for p in pieces if p.kind == kind]
    usable = [p for p in found if not _after(p.time, as_of)]
    for p in found:
        if p not in usable:
            c.report.skip(p.entry.name, f"{kind} {p.value} at {p.time} is after the as-of time", p.mapping)
    if not usable:
        c.missing(f"patient.{kind}", f"no usable {kind} Observation in the export" + (" (see Not used)" if found else ""))
        return
    *older, last = usable
    c.patient[kind] = last.value
    c.put(f"patient.{kind}", last.value, last.entry.name, f"{kind} {last.value} at {last.time}", last.mapping)
    for p in older:
        c.report.skip(p.entry.name, f"{kind} {p.value} at {p.time}: the later {last.entry.name} is used", p.mapping)


def _rows(c: _Case, pieces: list[Piece], kind: str, key: str, as_of: str | None) -> list[dict[str, Any]]:
    rows = []
    for p in pieces:
        if p.kind != kind:
            continue
        if kind == "scr" and _after(p.time, as_of):
            c.report.skip(p.entry.name, f"creatinine at {p.time} is after the as-of time", p.mapping)
            continue
        rows.append(p.value)
        c.put(key, p.value, p.entry.name, _row_text(kind, p.value), p.mapping)
        for n in p.notes:
            c.report.note(n, p.entry.name)
    return rows


def _row_text(kind: str, row: dict[str, Any]) -> str:
    if kind == "dose":
        how = f"ending {row['end']}" if "end" in row else f"over {row['duration']}"
        return f"dose {row['amount']} from {row['start']}, {how}"
    flags = "".join(f" ({k.replace('_', ' ')})" for k in ("below_loq", "above_uloq") if row.get(k) is True)
    return f"{kind} {row.get('conc') or row.get('value')} at {row['time']}{flags}"


def _schedule(c: _Case, pieces: list[Piece]) -> None:
    orders = [p for p in pieces if p.kind == "schedule"]
    if len(orders) == 1:
        p = orders[0]
        c.raw["schedule"] = p.value
        shown = ", ".join(f"{k} {v}" for k, v in p.value.items())
        c.put("schedule", p.value, p.entry.name, f"standing order: {shown}", p.mapping)
    for p in orders if len(orders) > 1 else []:
        c.report.skip(p.entry.name, f"{len(orders)} active orders for this drug: which one stands is not known", p.mapping)


def _latest_event(pieces: list[Piece]) -> str | None:
    timed = [p for p in pieces if p.kind in ("dose", "level", "scr") and p.time]
    return _order(timed)[-1].time if timed else None


def build_case(export: Export, book: CodeBook, drugs: tuple[str, ...], *, drug: str | None = None,
               as_of: str | None = None, source: str = "", sha256: str = "") -> Imported:
    """Assemble a case from an export.

    Raises:
        InputError: ``--drug`` / ``--as-of`` unusable, or the drug cannot be told.
    """
    report = Report(source)
    patients = export.of_type("Patient")
    patient = patients[0] if patients else None
    pieces = _pieces(export, book, patient, drugs, report)
    chosen = _choose_drug(pieces, drug, drugs)
    report.drug = chosen
    mine = []
    for p in pieces:
        if p.drug and p.drug != chosen:
            report.skip(p.entry.name, f"a {p.kind} of {p.drug}, not of this case's {chosen}", p.mapping)
        else:
            mine.append(p)
    mine = _order([p for p in mine if p.time]) + [p for p in mine if not p.time]
    as_of_text, how = _as_of(as_of, export)
    report.as_of, report.as_of_from = as_of_text or "", how
    c = _Case(report, chosen, as_of_text)
    _patient(c, patient, as_of_text or _latest_event(mine))
    for kind in ("weight", "height"):
        _latest(c, mine, kind, as_of_text)
    scr = _rows(c, mine, "scr", "patient.scr", as_of_text)
    c.patient["scr"] = scr or ""
    if not scr:
        c.missing("patient.scr", "no usable serum creatinine Observation in the export")
    c.raw["patient"] = c.patient
    c.raw["doses"] = _rows(c, mine, "dose", "doses", as_of_text)
    c.raw["levels"] = _rows(c, mine, "level", "levels", as_of_text)
    _schedule(c, mine)
    if c.raw["doses"]:
        report.note("FHIR carries no loading flag: every dose is read as a maintenance dose; mark a loading dose by hand")
    c.raw["imported"] = {"from": one_line(source), "sha256": sha256, "bundle": one_line(export.bundle_id),
                         "values": c.values}
    report.missing.sort(key=lambda m: REQUIRED.index(m[0]) if m[0] in REQUIRED else len(REQUIRED))
    return Imported(c.raw, report)
