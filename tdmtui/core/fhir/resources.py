"""One FHIR resource to one piece of a case, or the reason it cannot be one.

Each ``map_*`` returns a :class:`Piece` or raises
:class:`~tdmtui.core.fhir.values.Skip`. Statuses that count: Observation
``final``/``amended``/``corrected``; MedicationAdministration ``completed``
(``not-done``, ``stopped``, ``entered-in-error`` and the rest do not);
MedicationRequest ``active``. Subjects must resolve to the export's Patient.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field as dfield
from decimal import Decimal
from typing import Any

from tdmtui.core.fhir.codes import MASS_RATE_MG_PER_H, UCUM, CodeBook, CodeMeaning, unconfirmed_hint
from tdmtui.core.fhir.read import Entry, Export
from tdmtui.core.fhir.values import Skip, case_time, codings, concept_words, field, number, number_text, quantity

OBSERVATION_OK = ("final", "amended", "corrected")
TIME_H = {"min": Decimal(1) / 60, "h": Decimal(1), "d": Decimal(24)}


@dataclass
class Piece:
    """What one resource gives the case.

    kind: ``level``, ``scr``, ``weight``, ``height``, ``dose`` or ``schedule``;
    drug: for levels, doses and orders; time: the case time used for ordering;
    value: the case value (a row dict, or a quantity string for weight/height).
    """

    kind: str
    entry: Entry
    value: Any
    time: str | None = None
    drug: str | None = None
    mapping: str = ""
    notes: list[str] = dfield(default_factory=list)


def check_subject(e: Entry, export: Export, patient: Entry | None) -> None:
    """The resource's subject must be the export's one Patient."""
    ref = e.resource.get("subject")
    target = export.resolve(ref)
    if target is None or target is not patient:
        shown = ref.get("reference") if isinstance(ref, dict) else None
        raise Skip(f"subject reference {shown!r} does not resolve to the export's Patient" if shown
                   else "no subject reference")


def _meaning(concept: object, book: CodeBook) -> CodeMeaning:
    pairs = codings(concept)
    found = {(m.kind, m.what): m for m in (book.meaning(s, c) for s, c in pairs) if m is not None}
    if len(found) > 1:
        raise Skip("its codes disagree: " + ", ".join(f"{k} {w}" for k, w in found))
    if found:
        return next(iter(found.values()))
    hints = [h for h in (unconfirmed_hint(s, c) for s, c in pairs) if h]
    if hints:
        raise Skip(hints[0])
    shown = ", ".join(f"{s}|{c}" for s, c in pairs) or "no coding"
    raise Skip(f"unknown code ({shown})")


def map_observation(e: Entry, export: Export, book: CodeBook, patient: Entry | None) -> Piece:
    """A drug level, serum creatinine, body weight or height."""
    r = e.resource
    status = r.get("status")
    if status not in OBSERVATION_OK:
        raise Skip(f"status {status!r} (only {', '.join(OBSERVATION_OK)} results are read)")
    meaning = _meaning(r.get("code"), book)
    if meaning.kind == "medication":
        raise Skip(f"its code names a medication, not a result [{meaning.mapping}]")
    check_subject(e, export, patient)
    if "dataAbsentReason" in r:
        raise Skip("no value (dataAbsentReason)")
    when = case_time(r.get("effectiveDateTime", r.get("effectiveInstant")), "effectiveDateTime")
    q = r.get("valueQuantity")
    if meaning.kind == "level":
        value, unit = quantity(q, "conc", "the level", meaning.unit)
        row: dict[str, Any] = {"time": when, "conc": f"{number_text(value)} {unit}"}
        comparator = q.get("comparator") if isinstance(q, dict) else None
        if comparator == "<":
            row["below_loq"] = True
        elif comparator == ">":
            row["above_uloq"] = True
        elif comparator is not None:
            raise Skip(f"comparator {comparator!r} (only < and > are read, as below or above the assay limits)")
        return Piece("level", e, row, when, meaning.what, meaning.mapping)
    if isinstance(q, dict) and "comparator" in q:
        raise Skip(f"a {meaning.what} with comparator {q['comparator']!r} is not a measured value")
    value, unit = quantity(q, meaning.what, meaning.what, meaning.unit)
    text = f"{number_text(value)} {unit}"
    if meaning.what == "scr":
        return Piece("scr", e, {"time": when, "value": text}, when, None, meaning.mapping)
    return Piece(meaning.what, e, text, when, None, meaning.mapping)


def medication_drug(r: dict[str, Any], export: Export, book: CodeBook, drugs: tuple[str, ...]) -> tuple[str, str]:
    """Which library drug a MedicationAdministration or MedicationRequest gives, and how we know."""
    concept = r.get("medicationCodeableConcept")
    if concept is None and "medicationReference" in r:
        med = export.resolve(r["medicationReference"])
        if med is None or med.type != "Medication":
            ref = field(r, "medicationReference", "reference")
            raise Skip(f"medication reference {ref!r} does not resolve to a Medication in the export")
        concept = med.resource.get("code")
    meanings = {m.what: m for m in (book.meaning(s, c) for s, c in codings(concept))
                if m is not None and m.kind == "medication"}
    if len(meanings) == 1:
        m = next(iter(meanings.values()))
        return m.what, m.mapping
    if len(meanings) > 1:
        raise Skip("its medication codes name more than one drug: " + ", ".join(meanings))
    words = set(re.findall(r"[a-z]+", concept_words(concept)))
    named = [d for d in drugs if d in words]
    if len(named) == 1:
        return named[0], f"medication named {named[0]!r}"
    if named:
        raise Skip("its medication name names more than one drug: " + ", ".join(named))
    return "", ""


def _route_ok(dosage: dict[str, Any]) -> str | None:
    route = dosage.get("route")
    if route is None:
        return "route not stated; read as an intravenous infusion (the case holds IV doses)"
    words = concept_words(route)
    if "intravenous" in words or re.search(r"\biv\b", words):
        return None
    raise Skip(f"route {words or codings(route)!r} is not intravenous (the case holds IV infusions)")


def _infusion_minutes(amount: Decimal, unit: str, rate: object) -> Decimal:
    if not isinstance(rate, dict):
        raise Skip("an effectiveDateTime without an end or a rate: the infusion time is unknown")
    code = rate.get("code")
    if rate.get("system") not in (None, UCUM) or not isinstance(code, str) or code not in MASS_RATE_MG_PER_H:
        raise Skip(f"rate in {code!r}: only a mass rate (mg/h) gives the infusion time "
                   "(a volume rate needs the infused volume, which is not given)")
    mg = amount * {"mg": Decimal(1), "g": Decimal(1000), "ug": Decimal("0.001")}[unit]
    per_h = number(rate.get("value"), "the rate") * Decimal(str(MASS_RATE_MG_PER_H[code]))
    if per_h <= 0:
        raise Skip("a rate of 0")
    return mg / per_h * 60


def minutes_text(minutes: Decimal) -> tuple[str, bool]:
    """A duration in minutes as a case string, and whether it was rounded (to 0.01 min, under a second)."""
    if minutes > 10**6:
        raise Skip(f"an infusion of {minutes:.0f} min is not a dose")
    q = minutes.quantize(Decimal("0.01"))
    return f"{number_text(q.normalize() if q == q.to_integral() else q)} min", q != minutes


MA_STATUS_OK = "completed"


def map_administration(e: Entry, export: Export, book: CodeBook, patient: Entry | None,
                       drugs: tuple[str, ...]) -> Piece:
    """A dose actually given: start, amount, and end or infusion time."""
    r = e.resource
    status = r.get("status")
    if status != MA_STATUS_OK:
        why = concept_words(field(r, "statusReason", 0))
        raise Skip(f"status {status!r}" + (f" ({why})" if why else "") + " (only completed doses count)")
    drug, mapping = medication_drug(r, export, book, drugs)
    if not drug:
        raise Skip(f"medication {concept_words(r.get('medicationCodeableConcept')) or 'not named'!r} "
                   "is not a drug of the library")
    check_subject(e, export, patient)
    dosage: dict[str, Any] = r["dosage"] if isinstance(r.get("dosage"), dict) else {}
    notes = [n for n in (_route_ok(dosage),) if n]
    amount, unit = quantity(dosage.get("dose"), "dose", "the dose")
    if amount <= 0:
        raise Skip("a dose of 0")
    row: dict[str, Any] = {"amount": f"{number_text(amount)} {unit}"}
    period = r.get("effectivePeriod")
    if isinstance(period, dict):
        row["start"] = case_time(period.get("start"), "effectivePeriod.start")
        if period.get("end") is not None:
            row["end"] = case_time(period.get("end"), "effectivePeriod.end")
        else:
            row["duration"], rounded = minutes_text(_infusion_minutes(amount, unit, dosage.get("rateQuantity")))
            notes += [f"infusion time {row['duration']} from the dose and rate (rounded)"] if rounded else []
    else:
        row["start"] = case_time(r.get("effectiveDateTime"), "effectiveDateTime")
        row["duration"], rounded = minutes_text(_infusion_minutes(amount, unit, dosage.get("rateQuantity")))
        notes += [f"infusion time {row['duration']} from the dose and rate (rounded)"] if rounded else []
    ordered = {k: row[k] for k in ("start", "amount", "duration", "end") if k in row}
    return Piece("dose", e, ordered, ordered["start"], drug, mapping, notes)


def _hours(value: object, unit: object, what: str) -> Decimal:
    if not isinstance(unit, str) or unit not in TIME_H:
        raise Skip(f"{what} unit {unit!r} is not min, h or d")
    return number(value, what) * TIME_H[str(unit)]


def _hours_text(hours: Decimal) -> str:
    if hours == hours.to_integral():
        return f"{number_text(hours.normalize())} h"
    return minutes_text(hours * 60)[0]


def map_request(e: Entry, export: Export, book: CodeBook, patient: Entry | None, drugs: tuple[str, ...]) -> Piece:
    """The standing order: interval, and the dose and infusion time where given."""
    r = e.resource
    if r.get("status") != "active":
        raise Skip(f"status {r.get('status')!r} (only an active order is the standing order)")
    drug, mapping = medication_drug(r, export, book, drugs)
    if not drug:
        raise Skip("its medication is not a drug of the library")
    check_subject(e, export, patient)
    instructions = r.get("dosageInstruction")
    if not isinstance(instructions, list) or len(instructions) != 1:
        raise Skip("expected exactly one dosageInstruction")
    repeat = field(instructions[0], "timing", "repeat")
    if not isinstance(repeat, dict):
        raise Skip("no timing.repeat: the interval is unknown")
    freq = number(repeat.get("frequency", 1), "timing.repeat.frequency")
    if freq != freq.to_integral() or freq < 1:
        raise Skip(f"timing.repeat.frequency {freq} is not a whole number of doses")
    if "period" not in repeat:
        raise Skip("no timing.repeat.period: the interval is unknown")
    sched: dict[str, Any] = {"interval": _hours_text(_hours(repeat["period"], repeat.get("periodUnit"), "the period") / freq)}
    how = field(instructions[0], "doseAndRate", 0)
    how = how if isinstance(how, dict) else {}
    if "doseQuantity" in how:
        amount, unit = quantity(how["doseQuantity"], "dose", "the ordered dose")
        sched["dose"] = f"{number_text(amount)} {unit}"
        if "rateQuantity" in how and "duration" not in repeat:
            sched["duration"] = minutes_text(_infusion_minutes(amount, unit, how["rateQuantity"]))[0]
    if "duration" in repeat:
        sched["duration"] = _hours_text(_hours(repeat["duration"], repeat.get("durationUnit"), "the duration"))
    return Piece("schedule", e, sched, None, drug, mapping)
