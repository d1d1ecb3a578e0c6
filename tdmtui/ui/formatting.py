"""Display helpers of the app: numbers through the core's one formatter, severities and times.

Every number is rounded by :mod:`tdmtui.core.text.numfmt` (its docstring holds the
rounding table), so a value reads the same in the app, the chart note and
``tdmtui compute``. Keys are the result object's (``ke_per_h``) or the
table's quantity names (``weight``, ``bmi``, ``egfr``).
"""

from __future__ import annotations

from typing import Any

from tdmtui.core.text import numfmt

SEVERITY_WORD = {"info": "INFO", "caution": "CAUTION", "stop": "STOP"}
SEVERITY_ORDER = {"stop": 0, "caution": 1, "info": 2}


num = numfmt.num            # a number rounded for display, without its unit; "-" when absent
qty = numfmt.qty            # ... with its unit ("14.2 mg/L")
interval = numfmt.interval  # a 90 % interval "[312-498]" (numbers only); "" when absent


def severity_word(severity: str) -> str:
    """INFO / CAUTION / STOP: severity in words, never colour alone."""
    return SEVERITY_WORD.get(severity, severity.upper())


def alert_line(alert: dict[str, str]) -> str:
    """One warning as a line, rows counted as the tables show them: "CAUTION level 2 time: message"."""
    from tdmtui.ui.fieldmap import rows_in_words

    where = f"{alert['field']}: " if alert.get("field") and alert["field"] != "levels" else ""
    return rows_in_words(f"{severity_word(alert.get('severity', 'info'))} {where}{alert.get('message', '')}")


def sort_alerts(alerts: list[dict[str, str]]) -> list[dict[str, str]]:
    """Stops first, then cautions, then information."""
    return sorted(alerts, key=lambda a: SEVERITY_ORDER.get(a.get("severity", "info"), 3))


def short_time(iso: Any) -> str:
    """"2026-03-03T08:00" -> "03-03 08:00" for narrow tables; "-" when absent."""
    if not isinstance(iso, str) or len(iso) < 16:
        return "-" if not iso else str(iso)
    return f"{iso[5:10]} {iso[11:16]}"
