"""The chart note's warnings: each caution once, in words for clinicians.

The result lists every warning the engine raised, by code (the contract's
``warnings``; the app shows them as raised). The note says each fact once:
warnings that share a cause are written as one caution here, while the
result keeps every code.

- ``methods-disagree-bayesian`` with ``ke-vs-terminal-rate`` (the same
  cause: the one-compartment shape for these draw times): one caution that
  says what the Bayesian estimate predicts and how to get a proposal on it;
- ``methods-disagree-one-level`` for several one-level methods: one caution
  naming them all;
- ``auc-toxic`` with ``trough-high`` (the same advice: hold, redraw, reassess):
  one caution with both findings;
- ``scr-unstable`` from one baseline: one caution with each rise (its times
  are in the Patient section's SCr line);
- several ``nephrotoxin``: one caution naming every co-medication;
- a ``condition`` of low muscle mass that ``scr-low`` already explains: only
  ``scr-low``.

A caution that tells the reader to base the regimen on the Bayesian estimate
while the regimen shown rests on another method says how to get a proposal on
it instead of contradicting the Plan. Case paths become words, times are
written as the rest of the note writes them, and names of the local
protocol's settings stay in the protocol file. A warning whose wording does
not match what a merge expects is given as raised: nothing is dropped.
"""

from __future__ import annotations

import re
from typing import Any

from tdmtui.core.text import notefmt as f

Raised = dict[str, Any]  # one warning of the result: code, severity, field, message

#: How the note points to a proposal on the Bayesian estimate when the regimen shown rests on another method
#: (the engine's cautions already end so; the merged caution says it once).
CHOOSE_BAYESIAN = "for a proposal on it choose method bayesian"

_DISAGREE = re.compile(r"^two-level and Bayesian \((?P<model>.+)\) differ on (?P<what>\w+) by (?P<gap>\d+%) "
                       r"\(over (?P<limit>\d+%)\): the difference is the one-compartment shape")
_SHAPE = re.compile(r"^these levels were drawn where the two-compartment model's curve still bends \((?P<ke>[^)]*)\): "
                    r"through them a one-compartment fit puts the current regimen's steady-state trough at "
                    r"(?P<t1>\S+) mg/L and AUC24 at (?P<a1>\d+) where the model gives (?P<t2>\S+) and (?P<a2>\d+) "
                    r"\((?P<rel>[\d.]+%), over (?P<limit>\d+%)\)")
_ONE_LEVEL = re.compile(r"^(?P<name>[\w-]+) and Bayesian differ on (?P<what>\w+) by (?P<gap>\d+%) "
                        r"\(over (?P<limit>\d+%)\): (?P<rest>.+)$")
_RISE = re.compile(r"^SCr rose from (?P<base>[\d.]+) mg/dL \([^)]*\) to (?P<to>[\d.]+) mg/dL \([^)]*\): "
                   r"\+[\d.]+ mg/dL \((?P<pct>[+\d]+ %)\) in (?P<span>[^,]+), (?P<rule>.+?) "
                   r"\((?P<source>KDIGO [^)]*)\); (?P<advice>.+)$")
_AUC_HIGH = re.compile(r"AUC24 (?P<auc>\d+) mg\*h/L predicted at steady state of the current regimen is above "
                       r"(?P<limit>\d+) \((?P<why>[^)]*)\)")
_TROUGH_HIGH = re.compile(r"measured trough (?P<meas>[\d.]+) mg/L \((?P<level>levels\[\d+\])\) and predicted "
                          r"steady-state trough (?P<pred>[\d.]+) mg/L above the (?P<limit>[\d.]+) mg/L limit")
_NEPHRO = re.compile(r"^(?P<names>.+?) with (?P<drug>[\w-]+): (?P<rest>added nephrotoxic risk.*)$")
_SETTING = re.compile(r"\b(?:renal|regimen|loading|monitoring|methods)\.[a-z0-9]+_[a-z0-9_]+(?:, | )?")

def _plain(w: Raised, full: bool = False) -> str:
    """One warning's text for clinicians: its paths in words, its times as the note writes them (the
    weights of a model average in the full note only)."""
    if w.get("code") == "model-secondary-only":
        name = str(w.get("message", "")).split(":", 1)[0] or "This model"
        paper = "the published papers" if " and " in re.sub(r"\([^)]*\)", "", name) else "the published paper"
        return f"{name}: values not checked against {paper}; weigh the estimate against the measured levels."
    text = str(w.get("message", ""))
    text = text.replace("verified from a secondary source only, so auto does not choose it",
                        "not checked against its published paper, so it is not chosen unless asked for")
    text = text.replace("is verified from a secondary source only", "has not been checked against its published paper")
    text = text.replace("was checked against a secondary copy only", "has not been checked against its published paper")
    text = text.replace(" is not confirmed", " is uncertain").replace(" not confirmed", " uncertain")
    text = text.replace("the library's never-exceed limit", "the never-exceed limit")  # the drug library's: no matter here
    text = _SETTING.sub("", text).replace("( ", "(")
    text = re.sub(r"\(the model average \((.+?)\)\)", r"(model average: \1)" if full else "(model average)", text)
    return f.local_times(f.plain_paths(f.plain_source(text)))


def _joined(items: list[str]) -> str:
    return items[0] if len(items) == 1 else ", ".join(items[:-1]) + " and " + items[-1]


def _model_name(text: str) -> str:
    """``the model average (Thomson 2009 32 %, Goti 2018 68 %)`` -> ``model average: Thomson 2009 32 %, ...``."""
    m = re.fullmatch(r"the model average \((.+)\)", text)
    return f"model average: {m.group(1)}" if m else text


def _shape_caution(disagree: Raised | None, shape: Raised, bayesian_used: bool, full: bool) -> str | None:
    """The methods-disagree-bayesian and ke-vs-terminal-rate pair (or the shape check alone) as one caution."""
    s = _SHAPE.match(str(shape.get("message", "")))
    d = _DISAGREE.match(str(disagree.get("message", ""))) if disagree else None
    if s is None or (disagree is not None and d is None):
        return None
    model = _model_name(d["model"]) if d and full else "model average" if d and "average" in d["model"] else \
        d["model"] if d else ""  # the models' weights: the full note
    head = f"two-level and Bayesian ({model}) differ on {d['what']} by {d['gap']}: " if d else ""
    advice = "the proposal shown rests on it" if bayesian_used else CHOOSE_BAYESIAN
    rates = f" ({s['ke']})" if full else ""  # the two rates behind it: the full note
    return (f"{head}these levels lie where the two-compartment curve still bends{rates}, which biases a "
            f"one-compartment fit by {s['rel']}; the Bayesian estimate puts the current regimen at trough "
            f"{s['t2']} mg/L, AUC24 {s['a2']} (steady state); {advice}")


def _one_level_caution(ws: list[Raised]) -> str | None:
    found = [_ONE_LEVEL.match(str(w.get("message", ""))) for w in ws]
    if not all(found) or len({(m["what"], m["limit"], m["rest"]) for m in found if m}) != 1:
        return None
    ms = [m for m in found if m]
    gaps = [m["gap"] for m in ms]
    by = f"by {gaps[0]}" if len(set(gaps)) == 1 else "by " + _joined(gaps) + " respectively"
    return (f"{_joined([m['name'] for m in ms])} each differ from Bayesian on {ms[0]['what']} {by} "
            f"(over {ms[0]['limit']}): {ms[0]['rest']}")


def _rises_caution(ws: list[Raised]) -> str | None:
    """Each SCr rise from one baseline, in one caution (the times are in the Patient section's SCr line)."""
    found = [_RISE.match(str(w.get("message", ""))) for w in ws]
    if not all(found) or len({(m["base"], m["source"], m["advice"]) for m in found if m}) != 1:
        return None
    ms = [m for m in found if m]
    rises = ", and ".join(f"to {m['to']} mg/dL ({m['pct']}) in {m['span']}, {m['rule']}" for m in ms)
    source = "acute kidney injury, KDIGO" if ms[0]["source"] == "KDIGO acute kidney injury definition" else ms[0]["source"]
    return f"SCr rose from {ms[0]['base']} {rises} ({source}); {ms[0]['advice']}"


def _nephro_caution(ws: list[Raised]) -> str | None:
    found = [_NEPHRO.match(str(w.get("message", ""))) for w in ws]
    if not all(found) or len({(m["drug"], m["rest"]) for m in found if m}) != 1:
        return None
    ms = [m for m in found if m]
    return f"{_joined([m['names'] for m in ms])} with {ms[0]['drug']}: {ms[0]['rest']}"


def _exposure_caution(auc: Raised, trough: Raised) -> str | None:
    """``auc-toxic`` and ``trough-high`` give the same advice: both findings, the trough's advice once."""
    a_head, _, a_advice = str(auc.get("message", "")).partition(": ")
    t_head, _, t_advice = str(trough.get("message", "")).partition(": ")
    t_head = re.sub(r"\((levels\[\d+\]), [^)]*\)", r"(\1)", t_head, count=1)  # its timing: the list of levels
    if not (a_advice.startswith("hold the next dose") and t_advice.startswith("hold the next dose")):
        return None
    a, t = _AUC_HIGH.fullmatch(a_head), _TROUGH_HIGH.fullmatch(t_head)
    if a is None or t is None:
        return f"{a_head}; {t_head}: {t_advice}"
    return (f"AUC24 {a['auc']} mg*h/L (above {a['limit']}: {a['why']}) and trough {t['pred']} mg/L predicted for "
            f"the current regimen, and measured trough {t['meas']} mg/L ({t['level']}), above the {t['limit']} mg/L "
            f"limit: {t_advice}")


def _low_muscle_conditions(ws: list[Raised]) -> set[int]:
    """Positions of ``condition`` warnings whose condition ``scr-low`` already names (low muscle mass)."""
    low = [str(w.get("message", "")).split(":", 1)[0] for w in ws if w.get("code") == "scr-low"]
    if not low:
        return set()
    return {k for k, w in enumerate(ws) if w.get("code") == "condition"
            and "creatinine" in str(w.get("message", "")).lower()
            and str(w.get("message", "")).split(":", 1)[0] in low[0]}


def cautions(result: dict[str, Any], shown: list[Raised], full: bool = False) -> list[tuple[str, str]]:
    """``(severity, text)`` for each caution the note gives, warnings of one cause merged (module docstring)."""
    est = result.get("estimate") or {}
    bayesian_used = str(est.get("method", result.get("method", ""))).startswith("bayesian")
    by_code: dict[str, list[int]] = {}
    for k, w in enumerate(shown):
        by_code.setdefault(str(w.get("code")), []).append(k)
    merged: dict[int, str] = {}  # position of the first warning of a group -> the group's text
    gone = _low_muscle_conditions(shown)

    def group(positions: list[int], text: str | None) -> None:
        if text is not None and positions:
            merged[positions[0]] = text
            gone.update(positions[1:])

    shape = by_code.get("ke-vs-terminal-rate", [])
    disagree = [k for k in by_code.get("methods-disagree-bayesian", []) if _DISAGREE.match(shown[k]["message"])]
    if shape:
        pair = sorted(disagree[:1] + shape[:1])
        group(pair, _shape_caution(shown[disagree[0]] if disagree else None, shown[shape[0]], bayesian_used, full))
    for code, join, least in (("methods-disagree-one-level", _one_level_caution, 2),
                              ("scr-unstable", _rises_caution, 1), ("nephrotoxin", _nephro_caution, 2)):
        if len(by_code.get(code, [])) >= least:
            group(by_code[code], join([shown[k] for k in by_code[code]]))
    auc, trough = by_code.get("auc-toxic", []), by_code.get("trough-high", [])
    if len(auc) == 1 and len(trough) == 1:
        group(sorted(auc + trough), _exposure_caution(shown[auc[0]], shown[trough[0]]))
    out = []
    for k, w in enumerate(shown):
        if k in gone:
            continue
        text = merged.get(k) or _plain(w, full)
        if w.get("code") == "trough-high":  # the level's timing is in the note's list of levels
            text = re.sub(r"\((level \d+), [^)]*\)", r"(\1)", text, count=1)
        out.append((str(w["severity"]), f.local_times(f.plain_paths(text))))
    return out


def warning_lines(result: dict[str, Any], full: bool = False) -> list[str]:
    """Every stop and caution (information-only warnings with ``full``), each cause once, case paths in words."""
    lines = f.heading("Warnings")
    ws = result.get("warnings") or []
    shown = [w for w in ws if full or w.get("severity") != "info"]
    for severity, text in cautions(result, shown, full):
        lines += f.wrap(f"- {severity.upper()}: {text}", "", "    ")
    if len(shown) < len(ws):
        n = len(ws) - len(shown)
        lines.append(f"- and {n} for information only (tdmtui note --full gives {'it' if n == 1 else 'them'}).")
    return lines + ([] if ws else ["None raised."])
