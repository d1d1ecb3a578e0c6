"""Writing a case file: its canonical bytes, an atomic 0600 write, the folder's save lock.

``save_case`` writes atomically (temporary file, fsync, rename; mode 0600); a
crash leaves the old file or the new one, whole. Temporary files of an
interrupted write are removed later (:func:`remove_stale_temps`), and two
sessions saving into one folder take turns (:func:`folder_lock`).
"""

from __future__ import annotations

import contextlib
import hashlib
import json
import os
import stat
import tempfile
from pathlib import Path
from typing import Any, Iterator


def canonical_bytes(raw: dict[str, Any]) -> bytes:
    """The canonical serialisation used for digests of unsaved cases and for saving."""
    return (json.dumps(raw, ensure_ascii=False, indent=2) + "\n").encode("utf-8")


def write_atomic(path: str | Path, data: bytes, mode: int = 0o600) -> None:
    """Write bytes atomically: temporary file in the same folder, fsync, rename.

    The file is created with ``mode`` (0600: only the owner may read it).
    A crash at any point leaves either the old file or the new one, whole.
    """
    p = Path(path)
    fd, tmp = tempfile.mkstemp(prefix=f".{p.name}.", suffix=".tmp", dir=str(p.parent or "."))
    try:
        os.fchmod(fd, mode)
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, p)
        remove_stale_temps(p)
        try:
            dfd = os.open(str(p.parent or "."), os.O_RDONLY)
            try:
                os.fsync(dfd)
            finally:
                os.close(dfd)
        except OSError:
            pass
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise


#: A temporary file of an atomic write older than this was left by an interrupted save.
STALE_TEMP_S = 120.0


def remove_stale_temps(path: str | Path) -> int:
    """Remove this user's temporary files of interrupted writes of ``path`` (``.NAME.*.tmp``); count them.

    Only regular files owned by this user and older than :data:`STALE_TEMP_S`
    (a write in progress takes milliseconds) are removed; links are never followed.
    """
    p = Path(path)
    folder, prefix, removed = p.parent or Path("."), f".{p.name}.", 0
    try:
        names = [n for n in os.listdir(folder) if n.startswith(prefix) and n.endswith(".tmp")]
    except OSError:
        return 0
    import time

    now = time.time()
    for name in names:
        try:
            info = os.lstat(folder / name)
            if (stat.S_ISREG(info.st_mode) and info.st_uid == os.getuid()
                    and now - info.st_mtime > STALE_TEMP_S):
                os.unlink(folder / name)
                removed += 1
        except OSError:
            continue
    return removed


def save_case(path: str | Path, raw: dict[str, Any]) -> str:
    """Save a raw case object atomically with mode 0600; return the sha256 of what was written."""
    data = canonical_bytes(raw)
    write_atomic(path, data)
    return hashlib.sha256(data).hexdigest()


class SaveLockTimeout(Exception):
    """Another session (perhaps another user's) held the folder's save lock too long."""


#: How long a save waits for another session's save lock before giving up with a message.
LOCK_WAIT_S = 5.0


@contextlib.contextmanager
def folder_lock(path: str | Path, wait_s: float | None = None) -> Iterator[None]:
    """Hold an exclusive advisory lock on the folder of ``path`` (POSIX flock).

    Two sessions saving into the same folder take turns, so a check of the
    file's digest and the rename that follows it cannot be interleaved with
    another session's save (where flock is not available it is a no-op).
    A lock held longer than ``wait_s`` (another user may hold one on a shared
    folder for ever) raises :class:`SaveLockTimeout` instead of freezing.
    """
    try:
        import fcntl
    except ImportError:  # pragma: no cover - not POSIX
        yield
        return
    import time

    folder = str(Path(path).resolve().parent)
    fd = os.open(folder, os.O_RDONLY)
    try:
        deadline = time.monotonic() + (LOCK_WAIT_S if wait_s is None else wait_s)
        while True:
            try:
                fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
                break
            except BlockingIOError:
                if time.monotonic() >= deadline:
                    raise SaveLockTimeout(
                        f"another session is holding the save lock of {folder} (waited "
                        f"{LOCK_WAIT_S if wait_s is None else wait_s:g} s); nothing was written: try again, "
                        "or save under another folder") from None
                time.sleep(0.05)
        yield
    finally:
        try:
            fcntl.flock(fd, fcntl.LOCK_UN)
        finally:
            os.close(fd)
