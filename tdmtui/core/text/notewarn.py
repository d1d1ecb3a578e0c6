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
protocol's settings stay in the protocol file. Merges read each warning's
``facts`` (the figures and advice its message words, as the engine wrote
them), never its wording; a warning without the facts a merge needs is given
as raised: nothing is dropped.
"""

from __future__ import annotations

import re
from typing import Any

from tdmtui.core.registry import CHOOSE_BAYESIAN, RESTS_ON_BAYESIAN
from tdmtui.core.text import notefmt as f

Raised = dict[str, Any]  # one warning of the result: code, severity, field, message

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


def _facts(w: Raised | None) -> dict[str, str]:
    """A warning's facts (the figures and advice its message words), or none."""
    got = (w or {}).get("facts")
    return {str(k): str(v) for k, v in got.items()} if isinstance(got, dict) else {}


def _shape_caution(disagree: Raised | None, shape: Raised, bayesian_used: bool, full: bool) -> str | None:
    """The methods-disagree-bayesian and ke-vs-terminal-rate pair (or the shape check alone) as one caution."""
    s, d = _facts(shape), _facts(disagree)
    if not s or (disagree is not None and d.get("cause") != "curve-shape"):
        return None
    model = _model_name(d["model"]) if d and full else "model average" if d and "average" in d["model"] else \
        d.get("model", "")  # the models' weights: the full note
    head = f"two-level and Bayesian ({model}) differ on {d['figure']} by {d['gap']}: " if d else ""
    advice = RESTS_ON_BAYESIAN if bayesian_used else CHOOSE_BAYESIAN
    rates = f" ({s['rates']})" if full else ""  # the two rates behind it: the full note
    return (f"{head}these levels lie where the two-compartment curve still bends{rates}, which biases a "
            f"one-compartment fit by {s['bias']}; the Bayesian estimate puts the current regimen at trough "
            f"{s['model_trough']} mg/L, AUC24 {s['model_auc24']} (steady state); {advice}")


def _alike(facts: list[dict[str, str]], *keys: str) -> bool:
    """Every warning has its facts, and they agree on ``keys`` (one cause, one advice)."""
    return all(facts) and len({tuple(x.get(k) for k in keys) for x in facts}) == 1


def _one_level_caution(ws: list[Raised]) -> str | None:
    fs = [_facts(w) for w in ws]
    if not _alike(fs, "figure", "limit", "advice_text"):
        return None
    gaps = [x["gap"] for x in fs]
    by = f"by {gaps[0]}" if len(set(gaps)) == 1 else "by " + _joined(gaps) + " respectively"
    return (f"{_joined([x['method'] for x in fs])} each differ from Bayesian on {fs[0]['figure']} {by} "
            f"(over {fs[0]['limit']}): {fs[0]['advice_text']}")


def _rises_caution(ws: list[Raised]) -> str | None:
    """Each SCr rise from one baseline, in one caution (the times are in the Patient section's SCr line)."""
    fs = [_facts(w) for w in ws]
    if not _alike(fs, "direction", "from", "source", "advice_text") or fs[0]["direction"] != "rose":
        return None
    rises = ", and ".join(f"to {x['to']} mg/dL ({x['change']}) in {x['span']}, {x['rule']}" for x in fs)
    source = "acute kidney injury, KDIGO" if fs[0]["source"] == "KDIGO acute kidney injury definition" else fs[0]["source"]
    return f"SCr rose from {fs[0]['from']} {rises} ({source}); {fs[0]['advice_text']}"


def _nephro_caution(ws: list[Raised]) -> str | None:
    fs = [_facts(w) for w in ws]
    if not _alike(fs, "drug", "advice_text"):
        return None
    return f"{_joined([x['comedication'] for x in fs])} with {fs[0]['drug']}: {fs[0]['advice_text']}"


def _exposure_caution(auc: Raised, trough: Raised) -> str | None:
    """``auc-toxic`` and ``trough-high`` give the same advice: both findings, the trough's advice once."""
    a, t = _facts(auc), _facts(trough)
    if a.get("advice") != "hold" or t.get("advice") != "hold":
        return None
    advice = t["advice_text"]
    if "measured" in t and "predicted" in t:
        return (f"AUC24 {a['auc24']} mg*h/L (above {a['limit']}: {a['why']}) and trough {t['predicted']} mg/L "
                f"predicted for the current regimen, and measured trough {t['measured']} mg/L ({t['level']}), above "
                f"the {t['limit']} mg/L limit: {advice}")
    found = [f"measured trough {t['measured']} mg/L ({t['level']})"] if "measured" in t else []
    found += [f"predicted steady-state trough {t['predicted']} mg/L"] if "predicted" in t else []
    a_head = str(auc.get("message", "")).removesuffix(": " + a["advice_text"])
    return f"{a_head}; {' and '.join(found)} above the {t['limit']} mg/L limit: {advice}"


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
    disagree = [k for k in by_code.get("methods-disagree-bayesian", [])
                if _facts(shown[k]).get("cause") == "curve-shape"]
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
