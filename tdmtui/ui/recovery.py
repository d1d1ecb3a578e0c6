"""Recovery files: every edit is written atomically so a crash or a dropped SSH
session loses nothing.

Where: next to the case file (``.NAME.recovery``) when that folder is
writable, else in the state folder (``$XDG_STATE_HOME/tdmtui/``, default
``~/.local/state/tdmtui/``); an unsaved new case always goes to the state
folder as ``unsaved-case.recovery``. Files are mode 0600. A successful save
removes the recovery file. Pure file logic; no Textual imports.
"""

from __future__ import annotations

import hashlib
import json
import os
from dataclasses import dataclass
from datetime import datetime, timezone
from pathlib import Path
from typing import Any

from tdmtui.core.case import write_atomic

FORMAT = "tdmtui.recovery/1"
UNSAVED_NAME = "unsaved-case.recovery"


def state_dir(environ: dict[str, str] | None = None) -> Path:
    """The per-user state folder for recovery files of unsaved cases."""
    env = os.environ if environ is None else environ
    base = env.get("XDG_STATE_HOME") or os.path.join(env.get("HOME", "~"), ".local", "state")
    return Path(os.path.expanduser(base)) / "tdmtui"


def recovery_path(case_path: str | None, state: Path) -> Path:
    """Where the recovery file of this case lives.

    Args:
        case_path: the case file, or None for an unsaved case.
        state: the state folder (see :func:`state_dir`).
    """
    if not case_path:
        return state / UNSAVED_NAME
    p = Path(case_path).resolve()
    if os.access(p.parent, os.W_OK):
        return p.parent / f".{p.name}.recovery"
    key = hashlib.sha256(str(p).encode()).hexdigest()[:12]
    return state / f"{p.name}.{key}.recovery"


@dataclass
class Recovery:
    """A recovery file read back."""

    path: Path
    case_path: str | None
    saved_at: str
    raw: dict[str, Any]


def write_recovery(path: Path, case_path: str | None, raw: dict[str, Any], now: datetime | None = None) -> None:
    """Write the recovery file atomically, mode 0600 (creating the folder 0700)."""
    path.parent.mkdir(mode=0o700, parents=True, exist_ok=True)
    moment = (now or datetime.now(timezone.utc)).strftime("%Y-%m-%dT%H:%M:%SZ")
    body = {"format": FORMAT, "case_path": case_path, "saved_at": moment, "raw": raw}
    write_atomic(path, (json.dumps(body, ensure_ascii=False, indent=1) + "\n").encode("utf-8"))


def read_recovery(path: Path) -> Recovery | None:
    """The recovery file at ``path``, or None when absent or unreadable."""
    try:
        body = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    if not isinstance(body, dict) or body.get("format") != FORMAT or not isinstance(body.get("raw"), dict):
        return None
    return Recovery(path, body.get("case_path"), str(body.get("saved_at", "")), body["raw"])


def find_recovery(case_path: str | None, state: Path, current: dict[str, Any] | None) -> Recovery | None:
    """A recovery file worth offering: present and different from the case as opened."""
    rec = read_recovery(recovery_path(case_path, state))
    if rec is None:
        return None
    if current is not None and rec.raw == current:
        return None
    return rec


def remove_recovery(path: Path) -> None:
    """Delete the recovery file (after a save, or when the user discards it)."""
    try:
        path.unlink()
    except FileNotFoundError:
        pass
