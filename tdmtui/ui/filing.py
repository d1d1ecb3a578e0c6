"""Saving, recovery, quitting and the note's copy/write: the workspace's file side.

A mixin of :class:`tdmtui.ui.app.TdmApp` (kept apart so the app module holds
wiring only). Save refuses to overwrite a file someone else changed since it
was opened and offers save-as; a successful save removes the recovery file;
quitting with unsaved changes asks first.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from tdmtui.core.input.casefile import SaveLockTimeout
from tdmtui.ui.dialogs import AskDialog, TextDialog
from tdmtui.ui.document import ChangedOnDisk, FileGone, new_case_raw
from tdmtui.ui.recovery import RecoveryRefused, find_recovery, recovery_path, remove_recovery


def local_time(stamp: str) -> str:
    """A UTC stamp (``2026-03-03T08:00:00Z``) in this machine's local time, said so."""
    from datetime import datetime

    try:
        moment = datetime.fromisoformat(stamp.replace("Z", "+00:00")).astimezone()
    except ValueError:
        return stamp
    return moment.strftime("%Y-%m-%d %H:%M") + " local time"


def changed_parts(before: dict[str, Any], after: dict[str, Any]) -> str:
    """Which parts of the case differ, in words: ``patient (weight), doses (3 -> 4 rows)``."""
    out = []
    for key in sorted(set(before) | set(after)):
        a, b = before.get(key), after.get(key)
        if a == b:
            continue
        if isinstance(a, list) and isinstance(b, list) and len(a) != len(b):
            out.append(f"{key} ({len(a)} -> {len(b)} rows)")
        elif isinstance(a, dict) and isinstance(b, dict):
            inner = [k for k in sorted(set(a) | set(b)) if a.get(k) != b.get(k)]
            out.append(f"{key} ({', '.join(inner)})")
        else:
            out.append(key)
    return ", ".join(out) or "nothing"


class FilingMixin:
    """Save, save-as, recovery offer, quit prompt, note copy and write."""

    doc: Any
    state: Path
    note: str


    def offer_recovery(self) -> None:
        """At start: offer to restore unsaved work left by a crash or a dropped session."""
        current = None if not self.doc.path or not Path(self.doc.path).exists() else self.doc.raw
        try:
            rec = find_recovery(self.doc.path, self.state, current if current is not None else new_case_raw())
        except RecoveryRefused as exc:
            self.notify(f"A recovery file was found but not offered: {exc}", severity="warning", timeout=10,
                        markup=False)
            return
        if rec is None:
            return

        def answer(word: str | None) -> None:
            if word == "restore":
                self.doc.raw = rec.raw
                self.doc.dirty = True
                self.reload_sections()
                self.update_header()
                self.request_compute(now=True)
                self.notify("Restored the unsaved work. Save with ctrl+s.", timeout=5)
            elif word == "discard":
                self.drop_recovery(rec.path)

        self.push_screen(AskDialog(
            f"Unsaved work of {rec.user} from {local_time(rec.saved_at)} was found for "
            f"{rec.case_path or 'a new case (never saved)'} (the app stopped before saving).\n"
            f"What differs from the file: {changed_parts(current or new_case_raw(), rec.raw)}.\n"
            "Restore it? (discard deletes it; Esc keeps it for next time and opens the file as saved)",
            [("r", "restore"), ("d", "discard")], escape="later"), answer)


    def action_save(self, recreate: bool = False, then_quit: bool = False) -> None:
        """Save to the case file, refusing one changed by someone else (save-as offered); a file deleted
        since is said so, and written again only when asked. The case on screen is kept whatever the answer."""
        if not self.doc.path:
            self.save_as(then_quit)
            return
        try:
            self.doc.save(recreate=recreate)
        except FileGone:
            self.push_screen(AskDialog(
                f"{self.doc.path} no longer exists (deleted or moved since you opened it).\n"
                "Your case is still here, unsaved. Write it there again, or save it under another name?",
                [("w", "write it again"), ("a", "save as")]), lambda w: self.after_gone(w, then_quit))
            return
        except ChangedOnDisk:
            self.push_screen(AskDialog(
                f"{self.doc.path} was changed by someone else since you opened it (another session?).\n"
                "It is NOT overwritten. Save your version under another name?",
                [("a", "save as")]), lambda w: self.save_as(then_quit) if w == "save as" else None)
            return
        except (OSError, SaveLockTimeout) as exc:
            self.notify(f"Not saved: {exc}", severity="error", markup=False)
            return
        self.saved()
        if then_quit and self.matches_file():
            self.exit(0)

    def after_gone(self, word: str | None, then_quit: bool) -> None:
        """The answer to "the file no longer exists": write it again, save as, or keep editing (Esc)."""
        if word == "write it again":
            self.action_save(recreate=True, then_quit=then_quit)
        elif word == "save as":
            self.save_as(then_quit)
        else:
            self.notify("Not saved: the case stays on screen, unsaved (its recovery file is kept).",
                        severity="warning", timeout=5)

    def save_as(self, then_quit: bool = False) -> None:
        """Ask for a new file name and save there (never over an existing file)."""
        def check(text: str) -> str:
            if text and Path(text).expanduser().exists():
                return "that file exists: choose another name"
            if text and not Path(text).expanduser().parent.exists():
                return "that folder does not exist"
            return ""

        def done(text: str | None) -> None:
            if not text:
                return
            old = recovery_path(self.doc.path, self.state)
            try:  # typed back to the case's own deleted file: written there again
                self.doc.save(str(Path(text).expanduser()), recreate=True)
            except (ChangedOnDisk, FileExistsError):
                self.notify(f"Not saved: {text} appeared meanwhile and is not overwritten; choose another name.",
                            severity="error", markup=False)
                return
            except (OSError, SaveLockTimeout) as exc:
                self.notify(f"Not saved: {exc}", severity="error", markup=False)
                return
            self.drop_recovery(old)
            self.saved()
            if then_quit:
                self.exit(0)

        suggestion = str(Path(self.doc.path).with_name(Path(self.doc.path).stem + "-mine.json")) if self.doc.path else "case.json"
        self.push_screen(TextDialog("Save the case as (a new file; mode 0600):", suggestion, check), done)

    def saved(self) -> None:
        """After a save: remove the recovery file and say so."""
        self.update_header()
        self.refresh_note()  # the note's record now names the saved file
        if not self.matches_file():
            self.notify(f"NOT saved: {self.doc.path} does not hold the case after writing it.", severity="error",
                        markup=False, timeout=10)
            return
        status = str(self.query_one("#status").content)
        if self.outcome is None and status.startswith(("INPUT", "ERROR")):
            self.notify(f"Saved {self.doc.path}, with the input as typed; it does not compute yet: {status}",
                        severity="warning", timeout=8, markup=False)
            return
        self.notify(f"Saved {self.doc.path}", timeout=3, markup=False)
        self.drop_recovery(recovery_path(self.doc.path, self.state))

    def drop_recovery(self, path: Path) -> None:
        """Remove a recovery file; a failure is said, never raised (the work itself is saved)."""
        why = remove_recovery(path)
        if why:
            self.notify(why, severity="warning", timeout=8, markup=False)

    def action_quit_app(self) -> None:
        """Quit, asking first when there are unsaved changes."""
        if not self.doc.dirty:
            self.exit(0)
            return

        def answer(word: str | None) -> None:
            if word == "save":
                self.action_save(then_quit=True)
            elif word == "keep for later":
                self.exit(0)
            elif word == "discard":
                remove_recovery(recovery_path(self.doc.path, self.state))  # quitting: nothing to report to
                self.exit(0)

        self.push_screen(AskDialog(
            "There are unsaved changes. Save before quitting?\n"
            "(keep for later: quit now, the next start offers to restore them; discard: quit and drop them)",
            [("s", "save"), ("k", "keep for later"), ("d", "discard")]), answer)

    # ---------------------------------------------------------------- note
    def action_copy_note(self) -> None:
        """Copy the note by OSC 52, saying plainly it may be blocked."""
        from tdmtui.ui.clipboard import COPY_CAVEAT, clipboard_text

        if not self.note:
            self.notify("No note yet: the case does not compute.", severity="warning")
            return
        self.copy_to_clipboard(clipboard_text(self.note))
        self.notify(COPY_CAVEAT, timeout=8, markup=False)

    def action_write_note(self) -> None:
        """Write the note to a file (0600)."""
        from tdmtui.ui.clipboard import default_note_path, write_note

        if not self.note:
            self.notify("No note yet: the case does not compute.", severity="warning")
            return

        def done(text: str | None) -> None:
            if text:
                try:
                    where = write_note(text, self.note)
                except OSError as exc:
                    self.notify(f"Not written: {exc}", severity="error", markup=False)
                    return
                self.notify(f"Note written to {where} (mode 0600).", timeout=5, markup=False)

        self.push_screen(TextDialog("Write the note to this file:", default_note_path(self.doc.path)), done)
