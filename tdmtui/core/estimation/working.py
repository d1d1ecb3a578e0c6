""""Show working": each equation with the numbers put into it.

A method returns a list of :class:`WorkingStep` so another clinician can
check the result by hand; the note and the app print them as they are.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class WorkingStep:
    """One step of a calculation.

    Attributes:
        title: what the step finds, e.g. "Elimination rate".
        equation: the symbolic form, e.g. "ke = ln(C1/C2) / (t2 - t1)".
        substituted: the same with numbers, e.g. "ln(6.0/2.2) / (7.5 - 1.0)".
        value: the result with its unit, e.g. "0.1544 /h".
        method: the method the step belongs to.
    """

    title: str
    equation: str
    substituted: str
    value: str
    method: str = ""

    def to_dict(self) -> dict[str, str]:
        return {"title": self.title, "equation": self.equation, "substituted": self.substituted,
                "value": self.value, "method": self.method}
