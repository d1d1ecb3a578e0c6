"""The model-average view of the estimate section (key m): each population model on its own row.

One row per model the library offers for the drug: its weight in the averaged Bayesian
estimate, its own MAP ke, Vss, CL and AUC24 on the current regimen, and, for a model with no
weight or no fit, the reason (numbered under the table so the rows fit 80 columns). The last
row is the averaged estimate itself. Text only; the core's result dict is the sole input.
"""

from __future__ import annotations

import textwrap
from typing import Any

from tdmtui.ui import formatting as fm

WIDTH = 78  # the section's text width at 80 columns (border and padding)

HEADER = f"{'model':<16}{'weight':>7}{'ke /h':>9}{'Vss L':>8}{'CL L/h':>8}{'AUC24':>7}  note"


def _short(name: str) -> str:
    return name.split(" (")[0][:15]


def _name(mid: str, est: dict[str, Any]) -> str:
    """The model's short name, from its estimate or, for a model not fitted, from the library."""
    name = (est.get("model") or {}).get("name")
    if not name:
        from tdmtui.core.estimation.popmodels import get_model

        try:
            name = get_model(mid).name
        except (KeyError, ValueError, OSError):
            name = mid
    return _short(name)


def _row(label: str, weight: str, est: dict[str, Any], note: str) -> str:
    auc = (est.get("current") or {}).get("auc24_mg_h_per_l")
    return (f"{label:<16}{weight:>7}{fm.num(est.get('ke_per_h'), 'ke_per_h'):>9}"
            f"{fm.num(est.get('vd_l'), 'vd_l'):>8}{fm.num(est.get('cl_l_per_h'), 'cl_l_per_h'):>8}"
            f"{fm.num(auc, 'auc24_mg_h_per_l'):>7}  {note}").rstrip()


def _average(result: dict[str, Any]) -> dict[str, Any] | None:
    """The averaged Bayesian estimate, whether or not it is the one used."""
    est = result.get("estimate") or {}
    if (est.get("model") or {}).get("id") == "model-average":
        return est
    other = (result.get("methods") or {}).get("bayesian") or {}
    return other if (other.get("model") or {}).get("id") == "model-average" else None


def _model_ids(result: dict[str, Any]) -> list[str]:
    """Every model id the result names (fitted or not), in the result's order."""
    ids: list[str] = []
    for key in list(result.get("methods") or {}) + list(result.get("methods_unavailable") or {}):
        if key.startswith(("bayesian:", "population:")) and key.split(":", 1)[1] not in ids:
            ids.append(key.split(":", 1)[1])
    return ids


def weights_text(result: dict[str, Any]) -> str:
    """The view's text: one line per model, the average, and the numbered reasons."""
    methods, missing = result.get("methods") or {}, result.get("methods_unavailable") or {}
    ids = _model_ids(result)
    if not ids:
        return ("No population model for this drug in the library: no model average. The one-level and "
                "two-level methods use the levels with the library's population values.")
    avg = _average(result)
    weights = ((avg or {}).get("model") or {}).get("weights") or {}
    lines = ["Model average: each model weighted by how well it explains these levels.", "", HEADER]
    reasons: list[str] = []
    for mid in ids:
        fit = methods.get(f"bayesian:{mid}")
        name = _name(mid, fit or methods.get(f"population:{mid}") or {})
        why = (fit or {}).get("weight_note") or missing.get(f"bayesian:{mid}", "")
        note = ""
        if mid not in weights and why:
            reasons.append(why)
            note = f"({len(reasons)}) " + ("no fit" if fit is None else "no weight")
        weight = f"{100 * weights[mid]:.0f} %" if mid in weights else ("0 %" if fit else "-")
        lines.append(_row(name, weight, fit or {}, note))
    if avg is not None:
        used = " (used)" if (result.get("estimate") or {}) is avg else ""
        iv = fm.interval((avg.get("interval90") or {}).get("auc24_mg_h_per_l"), "auc24_mg_h_per_l")
        lines.append(_row("average" + used, "100 %", avg, f"AUC24 90 % {iv}" if iv else ""))
    else:
        lines.append("No average: no model could be fitted to a usable level (see the notes).")
    lines.append("")
    lines += [f"({i}) {text}" for i, text in enumerate(reasons, 1)]
    if avg is not None:
        lines.append("Intervals of the average: the weighted mixture of the models' posteriors (w: working).")
    return "\n".join(w for line in lines for w in (textwrap.wrap(line, WIDTH, subsequent_indent="    ") or [""]))
