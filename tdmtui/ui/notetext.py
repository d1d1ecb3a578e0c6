"""The chart note text: the core's note when it exists, else a plain summary."""

from __future__ import annotations

from typing import Any

from tdmtui.ui import formatting as fm
from tdmtui.core.textsafe import neutralise_block
from tdmtui.ui.safety import caution_line


def chosen_line(chosen: dict[str, Any] | None) -> str:
    """The regimen the user chose in the plan section, as one line."""
    if not chosen:
        return ""
    return (f"Regimen chosen in review: {fm.qty(chosen.get('dose_mg'), 'dose_mg')} every "
            f"{fm.qty(chosen.get('interval_h'), 'interval_h')}, infused over {fm.qty(chosen.get('infusion_h'), 'infusion_h')}"
            f" (predicted AUC24 {fm.qty((chosen.get('predicted') or {}).get('auc24_mg_h_per_l'), 'auc24_mg_h_per_l')}).")


def note_text(outcome: Any, chosen: dict[str, Any] | None = None) -> str:
    """The note for an Outcome, plus the chosen regimen when the user picked one."""
    text = ""
    try:
        from tdmtui.core.note import render_note  # type: ignore[import-not-found]

        text = render_note(outcome)
    except ImportError:
        try:
            from tdmtui.core.report import summary_text

            text = summary_text(outcome.result)
        except ImportError:
            text = plain_summary(outcome.result)
    extra = chosen_line(chosen)
    if extra:
        text = text.rstrip("\n") + "\n\n" + extra + "\n"
    if caution_line() not in text:
        text = text.rstrip("\n") + "\n\n" + caution_line() + "\n"
    return neutralise_block(text)


def plain_summary(result: dict[str, Any]) -> str:
    """A short summary from the result dict alone."""
    est = result.get("estimate") or {}
    lines = [f"{result.get('drug', '')} assessment at {result.get('as_of', '')}, method {result.get('method')}"]
    if est:
        lines.append(f"ke {fm.qty(est.get('ke_per_h'), 'ke_per_h')}, t1/2 {fm.qty(est.get('half_life_h'), 'half_life_h')}, "
                     f"Vd {fm.qty(est.get('vd_l'), 'vd_l')}, CL {fm.qty(est.get('cl_l_per_h'), 'cl_l_per_h')}")
    for w in result.get("warnings", []):
        lines.append(fm.alert_line(w))
    return "\n".join(lines) + "\n"
