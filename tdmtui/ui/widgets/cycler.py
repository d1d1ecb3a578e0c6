"""A one-line choice: left/right or space cycle; typing the start of an option chooses it.

Letters typed within :data:`TYPE_AHEAD_S` of each other make one prefix ("gen" chooses gentamicin, then
"gent" keeps it); a prefix no option starts with changes nothing and says so (a bell and a notice), and
so do the letters after it until a pause, so a word typed into the wrong field never lands on another
option letter by letter.
"""

from __future__ import annotations

import time

from textual.binding import Binding
from textual.events import Key
from textual.message import Message
from textual.reactive import reactive
from textual.widget import Widget


#: seconds between two letters of one typed prefix (a longer pause starts a new one)
TYPE_AHEAD_S = 1.0


class Cycler(Widget, can_focus=True):
    """Pick one of a few words without a drop-down (keyboard only, one line).

    Args:
        options: the words offered.
        value: the current word ("" = none chosen yet).
    """

    DEFAULT_CSS = """
    Cycler { height: 1; width: 16; }
    Cycler:focus { text-style: reverse; }
    """
    BINDINGS = [
        Binding("right,space", "step(1)", "Next", show=False, id="choice.next"),
        Binding("left", "step(-1)", "Previous", show=False, id="choice.previous"),
    ]

    value: reactive[str] = reactive("")
    """The chosen word."""

    class Changed(Message):
        """The choice changed."""

        def __init__(self, cycler: Cycler, value: str) -> None:
            super().__init__()
            self.cycler = cycler
            self.value = value

        @property
        def control(self) -> Cycler:
            return self.cycler

    def __init__(self, options: tuple[str, ...], value: str = "", *, id: str | None = None) -> None:  # noqa: A002
        super().__init__(id=id)
        self.options = options
        self.set_reactive(Cycler.value, value)

    def render(self) -> str:
        return f"< {self.value or '(choose)'} >"

    def action_step(self, step: int) -> None:
        """Move to the next or previous option."""
        i = self.options.index(self.value) if self.value in self.options else -1
        self.value = self.options[(i + step) % len(self.options)]

    def watch_value(self, value: str) -> None:
        """Post Changed when the choice changes."""
        self.post_message(self.Changed(self, value))

    _typed = ""
    _typed_at = 0.0

    def on_key(self, event: Key) -> None:
        """Letters (and a hyphen after one) make a prefix; the first option it starts is chosen."""
        char = event.character
        if not self._takes(char):
            return
        event.stop()
        now = time.monotonic()
        typed = (self._typed if now - self._typed_at <= TYPE_AHEAD_S else "") + str(char).lower()
        self._typed_at = now
        match = [o for o in self.options if o.lower().startswith(typed)]
        first_miss = any(o.lower().startswith(typed[:-1]) for o in self.options) if len(typed) > 1 else True
        self._typed = typed  # a prefix that missed keeps missing until a pause: the rest of a word changes nothing
        if not match:
            self.app.bell()
            if first_miss:
                self.notify(f"No choice starts with '{typed}': it stays {self.value or 'unchosen'}.",
                            severity="warning", timeout=4, markup=False)
            return
        exact = [o for o in match if o.lower() == typed]
        if exact or self.value not in match:
            self.value = (exact or match)[0]

    def _takes(self, char: str | None) -> bool:
        return bool(char) and (str(char).isalpha() or (char == "-" and bool(self._typed)))

    def check_consume_key(self, key: str, character: str | None) -> bool:
        """Letters choose options, so they are not bindings here."""
        return self._takes(character)
