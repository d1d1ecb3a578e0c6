"""A one-line choice: left/right or space cycle, a letter jumps to the first match."""

from __future__ import annotations

from textual.binding import Binding
from textual.events import Key
from textual.message import Message
from textual.reactive import reactive
from textual.widget import Widget


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

    def on_key(self, event: Key) -> None:
        """A letter chooses the first option starting with it."""
        if event.character and event.character.isalpha():
            for option in self.options:
                if option.startswith(event.character.lower()):
                    self.value = option
                    event.stop()
                    return

    def check_consume_key(self, key: str, character: str | None) -> bool:
        """Letters choose options, so they are not bindings here."""
        return bool(character and character.isalpha())
