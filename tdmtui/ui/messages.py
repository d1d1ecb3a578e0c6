"""App-wide messages: past-tense facts posted by workers and sections."""

from __future__ import annotations

from typing import Any

from textual.message import Message


class CaseEdited(Message):
    """A section changed the raw case (the app autosaves and recomputes)."""

    def __init__(self, what: str = "") -> None:
        super().__init__()
        self.what = what


class EstimateReady(Message):
    """The engine computed the case.

    Attributes:
        generation: which edit it belongs to (stale ones are dropped).
        outcome: the engine's Outcome.
        seconds: how long it took.
    """

    def __init__(self, generation: int, outcome: Any, seconds: float) -> None:
        super().__init__()
        self.generation = generation
        self.outcome = outcome
        self.seconds = seconds


class EstimateFailed(Message):
    """The engine could not compute the case.

    Attributes:
        kind: ``input`` (a field is wrong or missing), ``no-estimate`` or ``error``.
        field: the case path named by the engine ("" when none).
        message: what is wrong, in words.
    """

    def __init__(self, generation: int, kind: str, field: str, message: str) -> None:
        super().__init__()
        self.generation = generation
        self.kind = kind
        self.field = field
        self.message = message
