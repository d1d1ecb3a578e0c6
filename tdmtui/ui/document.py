"""The open case as the app holds it: the raw case dict (contract strings) plus its history.

The raw dict is the single source of truth. Every edit goes through
:class:`CaseDocument`, which keeps an undo stack of whole-dict snapshots,
knows whether there are unsaved changes, and remembers the file's digest and
mtime at open so a save can refuse to overwrite someone else's change.
No Textual imports: tested as plain Python.
"""

from __future__ import annotations

import copy
import hashlib
import os
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from tdmtui.core.input.casefile import canonical_bytes, folder_lock, remove_stale_temps, save_case
from tdmtui.core.input.casetypes import FORMAT


def new_case_raw(drug: str = "vancomycin") -> dict[str, Any]:
    """An empty case: every required key present, every value still to type."""
    return {
        "format": FORMAT,
        "label": "",
        "drug": drug,
        "patient": {"age": "", "sex": "", "weight": "", "height": "", "scr": ""},
        "doses": [],
        "levels": [],
    }


class ChangedOnDisk(Exception):
    """The case file changed since it was opened (another session saved it)."""


class FileGone(ChangedOnDisk):
    """The case file opened or last saved no longer exists (deleted or moved)."""


@dataclass
class FileStamp:
    """What the case file looked like when opened or last saved."""

    sha256: str
    mtime_ns: int


def stamp(path: str | Path) -> FileStamp | None:
    """Digest and mtime of a file, or None when it does not exist."""
    p = Path(path)
    try:
        data = p.read_bytes()
        return FileStamp(hashlib.sha256(data).hexdigest(), p.stat().st_mtime_ns)
    except FileNotFoundError:
        return None


class CaseDocument:
    """One case being edited.

    Args:
        raw: the case dict (copied).
        path: the case file, or None for a new unsaved case.
        dirty: True when ``raw`` differs from the file (e.g. restored from recovery).
    """

    UNDO_DEPTH = 200

    def __init__(self, raw: dict[str, Any], path: str | None = None, dirty: bool = False) -> None:
        self.raw: dict[str, Any] = copy.deepcopy(raw)
        self.path = path
        self.opened = stamp(path) if path else None
        self.dirty = dirty
        self._undo: list[tuple[str, dict[str, Any]]] = []

    @classmethod
    def open(cls, path: str) -> CaseDocument:
        """Read a case file as JSON without judging its values (the engine does that).

        Raises:
            OSError: unreadable. ValueError: not JSON or not an object.
        """
        from tdmtui.core.bounds import decode_json, read_case_bytes
        from tdmtui.core.errors import InputError

        try:  # a regular file of bounded size, no key twice (a FIFO or device never blocks the app)
            raw = decode_json(read_case_bytes(path), str(path))
        except InputError as exc:
            raise ValueError(f"{exc.field}: {exc.message}" if exc.field != "(file)" else exc.message) from None
        if not isinstance(raw, dict):
            raise ValueError(f"{path} does not hold a case object")
        remove_stale_temps(path)  # this user's leftovers of an interrupted save of this case
        return cls(raw, path)

    # ---------------------------------------------------------------- edits
    def snapshot(self, what: str) -> None:
        """Remember the current dict so the next change can be undone."""
        self._undo.append((what, copy.deepcopy(self.raw)))
        del self._undo[: -self.UNDO_DEPTH]

    def set(self, path: tuple[Any, ...], value: Any, undoable: bool = False) -> None:
        """Set ``raw[path...] = value``; ``value`` None removes the key.

        Intermediate dicts are created as needed. Typing into a field is not
        undoable step by step (the field keeps its own text); row changes are.
        """
        if undoable:
            self.snapshot(f"edit {'.'.join(map(str, path))}")
        node: Any = self.raw
        for key in path[:-1]:
            if isinstance(node, dict) and (key not in node or not isinstance(node[key], (dict, list))):
                node[key] = {}
            node = node[key]
        last = path[-1]
        if value is None:
            if isinstance(node, dict):
                node.pop(last, None)
        else:
            node[last] = value
        self.dirty = True

    def get(self, path: tuple[Any, ...], default: Any = "") -> Any:
        """``raw[path...]`` or ``default`` when any step is missing."""
        node: Any = self.raw
        for key in path:
            try:
                node = node[key]
            except (KeyError, IndexError, TypeError):
                return default
        return node

    def rows(self, name: str) -> list[dict[str, Any]]:
        """The ``doses`` or ``levels`` list (created when missing)."""
        rows = self.raw.get(name)
        if not isinstance(rows, list):
            rows = self.raw[name] = []
        return rows

    def insert_rows(self, name: str, at: int, new: list[dict[str, Any]]) -> None:
        """Insert rows (undoable)."""
        self.snapshot(f"add {len(new)} {name} row(s)")
        rows = self.rows(name)
        rows[at:at] = [copy.deepcopy(r) for r in new]
        self.dirty = True

    def delete_row(self, name: str, index: int) -> dict[str, Any]:
        """Delete one row (undoable); returns it."""
        self.snapshot(f"delete {name} row {index + 1}")
        row = self.rows(name).pop(index)
        self.dirty = True
        return row

    def undo(self) -> str:
        """Go back one row change; returns what was undone ("" when nothing)."""
        if not self._undo:
            return ""
        what, raw = self._undo.pop()
        self.raw = raw
        self.dirty = True
        return what

    # ---------------------------------------------------------------- saving
    def changed_on_disk(self) -> bool:
        """True when the file is not what we opened or last saved (digest, or gone)."""
        if not self.path or self.opened is None:
            return bool(self.path and Path(self.path).exists())
        now = stamp(self.path)
        return now is None or now.sha256 != self.opened.sha256

    def save(self, path: str | None = None, force: bool = False, recreate: bool = False) -> str:
        """Write the case (atomic, mode 0600) and return its sha256.

        Args:
            path: save-as target; None saves to the current path.
            force: overwrite even when the file changed on disk.
            recreate: write our file again where it was deleted (still refused when, by the time of
                writing, a file is there again).

        Raises:
            FileGone: the target is our file and it no longer exists (``recreate`` writes it).
            ChangedOnDisk: the target is our file and someone else changed it.
            FileExistsError: save-as onto an existing different file without force.
            ValueError: no path at all.
        """
        target = path or self.path
        if not target:
            raise ValueError("no file name yet: use save as")
        same = self.path is not None and os.path.abspath(target) == os.path.abspath(self.path)
        # the check and the write happen under one folder lock, so another session's
        # save cannot land between them (both would otherwise be told they saved)
        with folder_lock(target):
            if not force:
                gone = same and self.opened is not None and not Path(target).exists()
                if gone and not recreate:
                    raise FileGone(target)
                if same and not gone and self.changed_on_disk():
                    raise ChangedOnDisk(target)
                if not same and Path(target).exists():
                    raise FileExistsError(target)
            digest = save_case(target, self.raw)
        self.path = target
        self.opened = stamp(target)
        self.dirty = False
        return digest

    def digest(self) -> str:
        """sha256 of the dict as it would be saved."""
        return hashlib.sha256(canonical_bytes(self.raw)).hexdigest()
