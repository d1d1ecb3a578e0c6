"""Warnings raised by validation and computation.

The result contract calls them ``warnings``; the class is ``Alert`` to keep
clear of the standard library's module of that name. Codes are stable ids that
tests, the note and the app rely on: never rename one.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

SEVERITIES = ("info", "caution", "stop")


@dataclass(frozen=True)
class Alert:
    """One warning.

    Attributes:
        code: stable short id, e.g. ``level-in-infusion``.
        severity: ``info``, ``caution`` or ``stop``.
        field: path into the case file it concerns ("" when general).
        message: plain words, no colour or markup.
        facts: the figures and advice the message words, by name, each as the message writes it
            (``{"auc24": "712", "limit": "650", "advice": "hold"}``), for readers that word them
            otherwise (the note merges cautions of one cause from them; the regimen reads ``advice``);
            empty for most alerts. In the result JSON as ``facts`` when not empty.
    """

    code: str
    severity: str
    field: str
    message: str
    facts: dict[str, str] = dataclasses.field(default_factory=dict, compare=False)  # (a field is named field)

    def __post_init__(self) -> None:
        if self.severity not in SEVERITIES:
            raise ValueError(f"unknown severity {self.severity!r}")

    def to_dict(self) -> dict[str, object]:
        """The contract's JSON shape (with ``facts`` when it has any)."""
        out: dict[str, object] = {"code": self.code, "severity": self.severity, "field": self.field,
                                  "message": self.message}
        if self.facts:
            out["facts"] = dict(self.facts)
        return out


def has_stop(alerts: list[Alert]) -> bool:
    """True when any alert is stop-severity."""
    return any(a.severity == "stop" for a in alerts)
