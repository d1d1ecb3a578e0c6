"""Warnings raised by validation and computation.

The result contract calls them ``warnings``; the class is ``Alert`` to keep
clear of the standard library's module of that name. Codes are stable ids that
tests, the note and the app rely on: never rename one.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass

SEVERITIES = ("info", "caution", "stop")


@dataclass(frozen=True)
class Alert:
    """One warning.

    Attributes:
        code: stable short id, e.g. ``level-in-infusion``.
        severity: ``info``, ``caution`` or ``stop``.
        field: path into the case file it concerns ("" when general).
        message: plain words, no colour or markup.
    """

    code: str
    severity: str
    field: str
    message: str

    def __post_init__(self) -> None:
        if self.severity not in SEVERITIES:
            raise ValueError(f"unknown severity {self.severity!r}")

    def to_dict(self) -> dict[str, str]:
        """The contract's JSON shape."""
        return asdict(self)


def has_stop(alerts: list[Alert]) -> bool:
    """True when any alert is stop-severity."""
    return any(a.severity == "stop" for a in alerts)
