"""Recovery files: every edit is written atomically so a crash or a dropped SSH
session loses nothing, and no other user can read, plant or destroy them.

Where: only in the user's own state folder (``$XDG_STATE_HOME/tdmtui/``,
default ``~/.local/state/tdmtui/``, mode 0700), never beside the case (a
shared folder would let another user plant one, block it or overwrite it).
A case's file is named from its real path (symlinks resolved), so two names
for one case share one recovery file and two cases never do; an unsaved new
case uses ``unsaved-case.recovery``. Files are mode 0600 and record whose
they are (user name and uid) and which case (its real path).

Before a recovery file is offered, the folder and the file are checked: a
symlink is never followed, and a file or folder not owned by this user, or
open to others, is refused with the reason (:class:`RecoveryRefused`). A
successful save removes the recovery file; a removal that fails is reported,
never raised. Pure file logic; no Textual imports.
"""

from __future__ import annotations

import errno
import hashlib
import json
import os
import re
import stat
from dataclasses import dataclass
from datetime import datetime, timezone
from pathlib import Path
from typing import Any

from tdmtui.core.input.casefile import write_atomic

FORMAT = "tdmtui.recovery/1"
UNSAVED_NAME = "unsaved-case.recovery"
#: A recovery file larger than this is not read (a case file is at most 2 MiB).
MAX_BYTES = 4 * 1024 * 1024


class RecoveryRefused(Exception):
    """A recovery file or folder that is not safely this user's own (the message says why)."""


def state_dir(environ: dict[str, str] | None = None) -> Path:
    """The per-user state folder for recovery files."""
    env = os.environ if environ is None else environ
    base = env.get("XDG_STATE_HOME") or os.path.join(env.get("HOME", "~"), ".local", "state")
    return Path(os.path.expanduser(base)) / "tdmtui"


def user_name(uid: int | None = None) -> str:
    """The login name of ``uid`` (this user by default), or ``uid N`` when it has none."""
    uid = os.getuid() if uid is None else uid
    try:
        import pwd

        return pwd.getpwuid(uid).pw_name
    except (ImportError, KeyError):
        return f"uid {uid}"


def case_key(case_path: str) -> str:
    """The case's real path (symlinks and ``..`` resolved): what a recovery file is keyed by."""
    return os.path.realpath(os.path.expanduser(case_path))


def recovery_path(case_path: str | None, state: Path) -> Path:
    """Where the recovery file of this case lives (always in the state folder).

    Args:
        case_path: the case file, or None for an unsaved case.
        state: the state folder (see :func:`state_dir`).
    """
    if not case_path:
        return state / UNSAVED_NAME
    real = case_key(case_path)
    name = re.sub(r"[^A-Za-z0-9._-]", "_", os.path.basename(real))[:60]
    return state / f"{name}.{hashlib.sha256(real.encode('utf-8', 'surrogatepass')).hexdigest()[:16]}.recovery"


def _private_folder(folder: Path, create: bool) -> None:
    """The state folder exists (when ``create``), is a real folder, ours, and closed to others."""
    if create:
        try:
            folder.mkdir(mode=0o700, parents=True, exist_ok=True)
        except FileExistsError:
            pass
    try:
        info = os.lstat(folder)
    except FileNotFoundError:
        if create:
            raise
        return
    if stat.S_ISLNK(info.st_mode) or not stat.S_ISDIR(info.st_mode):
        raise RecoveryRefused(f"{folder} is not a folder of its own (a link or a file): recovery files are not used")
    if info.st_uid != os.getuid():
        raise RecoveryRefused(f"{folder} belongs to {user_name(info.st_uid)}, not to you: recovery files are not used")
    if info.st_mode & 0o077:
        if create:
            os.chmod(folder, 0o700)  # ours: close it (mkdir may have met a wider umask earlier)
        else:
            raise RecoveryRefused(f"{folder} is open to other users (mode {stat.S_IMODE(info.st_mode):o}): "
                                  "recovery files there are not offered")


@dataclass
class Recovery:
    """A recovery file read back: whose it is, which case, when."""

    path: Path
    case_path: str | None
    saved_at: str
    raw: dict[str, Any]
    user: str = ""

    def describe(self) -> str:
        """Whose and which case, in words for the restore question."""
        which = self.case_path or "a new case (never saved)"
        return f"unsaved work of {self.user or 'unknown user'} from {self.saved_at} for {which}"


def write_recovery(path: Path, case_path: str | None, raw: dict[str, Any], now: datetime | None = None) -> None:
    """Write the recovery file atomically, mode 0600, in a private (0700) folder of this user.

    Raises:
        RecoveryRefused: the folder is not this user's own. OSError: it cannot be written.
    """
    _private_folder(path.parent, create=True)
    if path.is_symlink():
        raise RecoveryRefused(f"{path} is a link: recovery files are not used")
    moment = (now or datetime.now(timezone.utc)).strftime("%Y-%m-%dT%H:%M:%SZ")
    body = {"format": FORMAT, "case_path": case_key(case_path) if case_path else None, "saved_at": moment,
            "user": user_name(), "uid": os.getuid(), "raw": raw}
    write_atomic(path, (json.dumps(body, ensure_ascii=False, indent=1) + "\n").encode("utf-8"))


def _read_own(path: Path) -> bytes:
    """The bytes of a regular file owned by this user and closed to others, opened without following a link."""
    flags = os.O_RDONLY | getattr(os, "O_NOFOLLOW", 0) | getattr(os, "O_NONBLOCK", 0)
    try:
        fd = os.open(path, flags)
    except OSError as exc:
        if exc.errno == errno.ELOOP:
            raise RecoveryRefused(f"{path} is a link: not followed, not offered") from None
        raise
    try:
        info = os.fstat(fd)
        if not stat.S_ISREG(info.st_mode):
            raise RecoveryRefused(f"{path} is not a regular file: not offered")
        if info.st_uid != os.getuid():
            raise RecoveryRefused(f"{path} was written by {user_name(info.st_uid)}, not by you: not offered")
        if info.st_mode & 0o077:
            raise RecoveryRefused(f"{path} is open to other users (mode {stat.S_IMODE(info.st_mode):o}): not offered")
        if info.st_size > MAX_BYTES:
            raise RecoveryRefused(f"{path} is too large to be a recovery file: not offered")
        with os.fdopen(fd, "rb", closefd=False) as fh:
            return fh.read(MAX_BYTES + 1)
    finally:
        os.close(fd)


def check_recovery(path: Path) -> Recovery | None:
    """The recovery file at ``path`` when it is safely this user's; None when absent or unreadable.

    Raises:
        RecoveryRefused: present but not safely this user's (a link, another owner, open mode, a folder
            that is not private); the message says whose and why.
    """
    _private_folder(path.parent, create=False)
    try:
        data = _read_own(path)
        body = json.loads(data.decode("utf-8"))
    except (OSError, ValueError):
        return None
    if not isinstance(body, dict) or body.get("format") != FORMAT or not isinstance(body.get("raw"), dict):
        return None
    uid = body.get("uid", os.getuid())
    if uid != os.getuid():
        raise RecoveryRefused(f"{path} records another user ({body.get('user') or uid}): not offered")
    case = body.get("case_path")
    return Recovery(path, case if isinstance(case, str) else None, str(body.get("saved_at", "")), body["raw"],
                    str(body.get("user") or user_name()))


def read_recovery(path: Path) -> Recovery | None:
    """The recovery file at ``path``, or None when absent, unreadable or not safely this user's."""
    try:
        return check_recovery(path)
    except RecoveryRefused:
        return None


def find_recovery(case_path: str | None, state: Path, current: dict[str, Any] | None) -> Recovery | None:
    """A recovery file worth offering: this user's, for this very case, and different from it as opened.

    Raises:
        RecoveryRefused: one is there but may not be offered (the app says why).
    """
    rec = check_recovery(recovery_path(case_path, state))
    if rec is None:
        return None
    if case_path and rec.case_path != case_key(case_path):
        raise RecoveryRefused(f"{rec.path} is for {rec.case_path}, not for {case_key(case_path)}: not offered")
    if current is not None and rec.raw == current:
        return None
    return rec


def remove_recovery(path: Path) -> str:
    """Delete the recovery file (after a save, or when the user discards it).

    Returns:
        "" when removed or absent, else why it could not be (never raises).
    """
    try:
        path.unlink()
    except FileNotFoundError:
        return ""
    except OSError as exc:
        return f"could not remove the recovery file {path}: {exc.strerror or exc}"
    return ""
