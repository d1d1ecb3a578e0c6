"""The one place that rounds numbers for display and spells units.

Display rounding (the JSON keeps every digit): ke 3 decimals (1/h),
half-life 1 decimal (h), Vd 1 decimal (L) and 2 decimals (L/kg),
CL 2 decimals (L/h), AUC24 whole numbers (mg*h/L), concentrations
1 decimal (mg/L), CrCl and eGFR whole numbers (mL/min), weights 1 decimal
(kg), BMI 1 decimal (kg/m2), doses whole mg, infusion times 2 significant
decimals trimmed (h). Units are spelled "L", "mg/L", "mL/min" (never "l").
"""

from __future__ import annotations

from typing import Any

#: key -> (decimals, unit)
DISPLAY: dict[str, tuple[int, str]] = {
    "ke_per_h": (3, "/h"),
    "half_life_h": (1, "h"),
    "vd_l": (1, "L"),
    "vd_l_per_kg": (2, "L/kg"),
    "cl_l_per_h": (2, "L/h"),
    "auc24_mg_h_per_l": (0, "mg*h/L"),
    "peak_mg_per_l": (1, "mg/L"),
    "trough_mg_per_l": (1, "mg/L"),
    "conc": (1, "mg/L"),
    "crcl_ml_min": (0, "mL/min"),
    "egfr": (0, "mL/min/1.73m2"),
    "kg": (1, "kg"),
    "bmi": (1, "kg/m2"),
    "dose_mg": (0, "mg"),
    "interval_h": (0, "h"),
    "infusion_h": (2, "h"),
    "probability": (0, "%"),
}

SEVERITY_WORD = {"info": "INFO", "caution": "CAUTION", "stop": "STOP"}
SEVERITY_ORDER = {"stop": 0, "caution": 1, "info": 2}


def num(value: Any, key: str) -> str:
    """A number rounded for display, without its unit; "-" when absent."""
    if value is None or isinstance(value, bool) or not isinstance(value, (int, float)):
        return "-"
    decimals, _ = DISPLAY[key]
    if key == "infusion_h":
        return f"{value:.2f}".rstrip("0").rstrip(".")
    if key == "probability":
        return f"{100 * value:.0f}"
    return f"{value:.{decimals}f}"


def qty(value: Any, key: str) -> str:
    """A number rounded for display, with its unit ("14.2 mg/L"); "-" when absent."""
    text = num(value, key)
    if text == "-":
        return text
    unit = DISPLAY[key][1]
    return f"{text} %" if unit == "%" else f"{text} {unit}"


def interval(pair: Any, key: str) -> str:
    """A 90 % interval "[312-498]" (numbers only); "" when absent."""
    if not isinstance(pair, (list, tuple)) or len(pair) != 2:
        return ""
    return f"[{num(pair[0], key)}-{num(pair[1], key)}]"


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


def hours_text(h: float) -> str:
    """A duration in hours for tables: "1.5 h", "12 h"."""
    return f"{h:.2f}".rstrip("0").rstrip(".") + " h"
