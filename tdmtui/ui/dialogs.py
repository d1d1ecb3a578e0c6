"""Modal dialogs: questions with lettered answers, a path, a repeat, help."""

from __future__ import annotations

from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Vertical, VerticalScroll
from textual.screen import ModalScreen, ScreenResultType


class OnceModal(ModalScreen[ScreenResultType]):
    """A modal that answers once: keys arriving before it has closed are ignored, not a crash."""

    answered = False

    def finish(self, result: ScreenResultType) -> None:
        """Dismiss with ``result`` unless already dismissed."""
        if self.answered:
            return
        self.answered = True
        self.dismiss(result)
from textual.widgets import Input, Label, Static


class AskDialog(OnceModal[str]):
    """A question answered by one key per answer: ``[("s", "save"), ("d", "discard")]``.

    Escape answers ``""`` (cancel).
    """

    DEFAULT_CSS = """
    AskDialog { align: center middle; }
    AskDialog > Vertical { width: 64; height: auto; border: heavy $accent; padding: 0 1; background: $surface; }
    AskDialog .ask-keys { text-style: bold; margin-top: 1; }
    """
    BINDINGS = [Binding("escape", "answer('')", "Cancel", id="ask.cancel")]

    def __init__(self, question: str, answers: list[tuple[str, str]], escape: str = "cancel") -> None:
        super().__init__()
        self.question = question
        self.answers = answers
        self.escape = escape

    def compose(self) -> ComposeResult:
        with Vertical():
            yield Static(self.question, markup=False)
            keys = "   ".join(f"[{k}] {word}" for k, word in self.answers) + f"   [Esc] {self.escape}"
            yield Label(keys, classes="ask-keys", markup=False)

    def on_key(self, event) -> None:  # noqa: ANN001
        """An answer's key dismisses with that answer."""
        for key, word in self.answers:
            if event.key == key:
                event.stop()
                self.finish(word)

    def action_answer(self, word: str) -> None:
        """Dismiss with an answer."""
        self.finish(word)


class TextDialog(OnceModal[str]):
    """Ask for one line of text (a file name, a repeat); Enter accepts, Escape cancels ("")."""

    DEFAULT_CSS = """
    TextDialog { align: center middle; }
    TextDialog > Vertical { width: 70; height: auto; border: heavy $accent; padding: 0 1; background: $surface; }
    TextDialog .dlg-error { color: $text-error; text-style: bold; }
    """
    BINDINGS = [Binding("escape", "cancel", "Cancel", id="text.cancel")]

    def __init__(self, prompt: str, value: str = "", check=None) -> None:  # noqa: ANN001
        super().__init__()
        self.prompt = prompt
        self.value = value
        self.check = check

    def compose(self) -> ComposeResult:
        with Vertical():
            yield Static(self.prompt, markup=False)
            yield Input(self.value, id="dlg-input")
            yield Label("", classes="dlg-error", id="dlg-error", markup=False)
            yield Label("[Enter] accept   [Esc] cancel", markup=False)

    def on_input_submitted(self, event: Input.Submitted) -> None:
        """Enter: accept when the check passes, else show why."""
        event.stop()
        text = event.value.strip()
        why = self.check(text) if self.check else ""
        if why:
            self.query_one("#dlg-error", Label).update(f"! {why}")
            return
        self.finish(text)

    def action_cancel(self) -> None:
        """Escape: dismiss with ""."""
        self.finish("")


class HelpScreen(OnceModal[None]):
    """Every key of the app and the short safety text."""

    DEFAULT_CSS = """
    HelpScreen { align: center middle; }
    HelpScreen > Vertical { width: 78; height: 22; border: heavy $accent; padding: 0 1; background: $surface; }
    HelpScreen VerticalScroll { height: 1fr; }
    HelpScreen .help-keys { height: 1; text-style: bold; }
    """
    KEYS = "[Esc] close   (arrows, PgUp/PgDn scroll)"
    BINDINGS = [Binding("escape,f1,question_mark,q", "close", "Close", id="help.close")]
    """Any of these closes the help."""

    def __init__(self, text: str) -> None:
        super().__init__()
        self.text = text

    def compose(self) -> ComposeResult:
        with Vertical():
            with VerticalScroll():
                yield Static(self.text, markup=False)
            yield Label(self.KEYS, classes="help-keys", markup=False)

    def action_close(self) -> None:
        """Close the help."""
        self.finish(None)


class NoticeDialog(OnceModal[None]):
    """A notice read before work starts (the first-run safety text): Enter, Esc or Space closes it.

    It sits over the form until closed, so no toast hides a field's error afterwards.
    """

    DEFAULT_CSS = """
    NoticeDialog { align: center middle; }
    NoticeDialog > Vertical { width: 66; height: auto; border: heavy $accent; padding: 0 1; background: $surface; }
    NoticeDialog .notice-title, NoticeDialog .notice-keys { text-style: bold; }
    NoticeDialog .notice-keys { margin-top: 1; }
    """
    BINDINGS = [Binding("escape,enter,space", "close", "Continue", id="notice.close")]

    def __init__(self, title: str, text: str, keys: str) -> None:
        super().__init__()
        self.title_text, self.text, self.keys = title, text, keys

    def compose(self) -> ComposeResult:
        with Vertical():
            yield Label(self.title_text, classes="notice-title", markup=False)
            yield Static(self.text, markup=False)
            yield Label(self.keys, classes="notice-keys", markup=False)

    def action_close(self) -> None:
        """Close the notice."""
        self.finish(None)
