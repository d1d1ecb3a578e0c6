"""Recovery files and saves on a shared machine: no other user can plant, block or destroy them.

Threats (a careless colleague or an attacker on the same server): a recovery
file planted beside a case in a shared folder, one with a forged owner or
open mode, a symlink in its place, a save lock held for ever, a recovery file
that cannot be removed after a save, temporary files left by killed saves.
The two-user tests need a second uid: as root (CI) a forked child drops to
uid/gid 65534 with os.setuid; elsewhere they are skipped with the reason.
POSIX semantics (O_NOFOLLOW, flock, sticky folders) as in the Linux man
pages (from memory).
"""

from __future__ import annotations

import fcntl
import json
import os
import shutil
import stat
import tempfile
import time
from pathlib import Path

import pytest

from casedata import base_case
from tdmtui.core.input import casefile
from tdmtui.core.input.casefile import SaveLockTimeout, remove_stale_temps, save_case
from tdmtui.ui.document import CaseDocument
from tdmtui.ui.recovery import (RecoveryRefused, find_recovery, read_recovery, recovery_path, remove_recovery,
                                write_recovery)

OTHER = 65534  # the conventional "nobody" uid and gid
need_two_uids = pytest.mark.skipif(os.getuid() != 0,
                                   reason="needs root to run a child as a second uid (CI runs as root)")


def edited(label: str) -> dict:
    raw = base_case()
    raw["label"] = label
    return raw


@pytest.fixture
def shared(tmp_path):
    """A world-writable sticky folder, like /tmp or a ward's shared folder, with a case in it."""
    folder = Path(tempfile.mkdtemp(prefix="tdm-shared-", dir="/tmp"))
    os.chmod(folder, 0o1777)
    case = folder / "case.json"
    save_case(case, base_case())
    os.chmod(case, 0o666)
    yield folder, case
    shutil.rmtree(folder, ignore_errors=True)


def as_other_user(fn) -> int:  # noqa: ANN001
    """Run ``fn()`` in a forked child as uid/gid 65534; its exit status (0 when fn returned True)."""
    pid = os.fork()
    if pid == 0:  # pragma: no cover - the child
        code = 1
        try:
            os.setgroups([])
            os.setgid(OTHER)
            os.setuid(OTHER)
            code = 0 if fn() else 3
        except BaseException:  # noqa: BLE001 - any failure is the status
            code = 2
        finally:
            os._exit(code)
    return os.waitstatus_to_exitcode(os.waitpid(pid, 0)[1])


# --------------------------------------------------------------------------- one user


def test_recovery_lives_in_the_private_state_folder_keyed_by_the_real_path(tmp_path):
    state = tmp_path / "state" / "tdmtui"
    case = tmp_path / "case.json"
    save_case(case, base_case())
    link = tmp_path / "same-case.json"
    link.symlink_to(case)
    assert recovery_path(str(case), state) == recovery_path(str(link), state)  # one case, one file
    assert recovery_path(str(case), state) != recovery_path(str(tmp_path / "other.json"), state)
    write_recovery(recovery_path(str(link), state), str(link), edited("mine"))
    assert stat.S_IMODE(state.stat().st_mode) == 0o700
    rec = find_recovery(str(case), state, base_case())
    assert rec.raw["label"] == "mine" and rec.case_path == str(case.resolve())
    words = rec.describe()
    assert str(case.resolve()) in words and (rec.user in words) and rec.user


def test_a_file_planted_beside_the_case_is_never_read(tmp_path):
    state = tmp_path / "state" / "tdmtui"
    case = tmp_path / "case.json"
    save_case(case, base_case())
    planted = {"format": "tdmtui.recovery/1", "case_path": str(case), "saved_at": "x", "raw": edited("FORGED")}
    (tmp_path / ".case.json.recovery").write_text(json.dumps(planted))
    assert find_recovery(str(case), state, base_case()) is None


def test_open_mode_symlink_foreign_case_and_open_folder_are_refused_with_the_reason(tmp_path):
    state = tmp_path / "state" / "tdmtui"
    case = tmp_path / "case.json"
    save_case(case, base_case())
    rp = recovery_path(str(case), state)
    write_recovery(rp, str(case), edited("mine"))
    os.chmod(rp, 0o644)
    with pytest.raises(RecoveryRefused, match="open to other users"):
        find_recovery(str(case), state, base_case())
    os.chmod(rp, 0o600)
    other = tmp_path / "elsewhere.recovery"
    rp.rename(other)
    rp.symlink_to(other)
    with pytest.raises(RecoveryRefused, match="link"):
        find_recovery(str(case), state, base_case())
    rp.unlink()
    write_recovery(rp, str(tmp_path / "another.json"), edited("other case"))  # right name, wrong case inside
    with pytest.raises(RecoveryRefused, match="another.json"):
        find_recovery(str(case), state, base_case())
    os.chmod(state, 0o777)
    with pytest.raises(RecoveryRefused, match="open to other users"):
        find_recovery(str(case), state, base_case())
    assert read_recovery(rp) is None


def test_a_removal_that_fails_is_reported_not_raised(tmp_path, monkeypatch):
    rp = tmp_path / "x.recovery"
    rp.write_text("{}")

    def refuse(self, missing_ok=False):  # noqa: ANN001, ANN202 - as EPERM on a folder one cannot write
        raise PermissionError(1, "Operation not permitted")

    monkeypatch.setattr(Path, "unlink", refuse)
    assert "Operation not permitted" in remove_recovery(rp)
    monkeypatch.undo()
    assert remove_recovery(tmp_path / "absent.recovery") == ""


def test_temporary_files_of_interrupted_saves_are_cleaned_up(tmp_path):
    case = tmp_path / "case.json"
    old = [tmp_path / f".case.json.k{i}.tmp" for i in range(3)]
    for p in old:
        p.write_text("half a case")
        os.utime(p, (time.time() - 3600, time.time() - 3600))
    fresh = tmp_path / ".case.json.now.tmp"  # another save of this very moment: left alone
    fresh.write_text("in progress")
    unrelated = tmp_path / ".other.json.k.tmp"
    unrelated.write_text("x")
    os.utime(unrelated, (time.time() - 3600, time.time() - 3600))
    save_case(case, base_case())
    assert not any(p.exists() for p in old) and fresh.exists() and unrelated.exists()
    assert remove_stale_temps(case) == 0


def test_a_save_lock_held_elsewhere_times_out_with_a_message(tmp_path, monkeypatch):
    case = tmp_path / "case.json"
    save_case(case, base_case())
    doc = CaseDocument.open(str(case))
    doc.set(("label",), "mine")
    monkeypatch.setattr(casefile, "LOCK_WAIT_S", 0.5)
    fd = os.open(tmp_path, os.O_RDONLY)
    pid = os.fork()
    if pid == 0:  # pragma: no cover - the other session holds the folder's lock
        fcntl.flock(fd, fcntl.LOCK_EX)
        time.sleep(5)
        os._exit(0)
    try:
        time.sleep(0.3)
        started = time.monotonic()
        with pytest.raises(SaveLockTimeout, match="another session is holding the save lock"):
            doc.save()
        assert time.monotonic() - started < 4  # gave up, did not wait for the other session
        assert json.loads(case.read_text())["label"] == "test case" and doc.dirty
    finally:
        os.kill(pid, 9)
        os.waitpid(pid, 0)
        os.close(fd)


# --------------------------------------------------------------------------- two users


@need_two_uids
def test_another_users_autosave_neither_reaches_nor_overwrites_mine(shared, tmp_path):
    folder, case = shared
    mine = tmp_path / "state" / "tdmtui"
    write_recovery(recovery_path(str(case), mine), str(case), edited("mine"))
    theirs = folder / "their-state" / "tdmtui"  # the other user's own state folder

    def other() -> bool:
        write_recovery(recovery_path(str(case), theirs), str(case), edited("THEIRS"))
        try:  # and an attempt to plant one in my state folder
            write_recovery(recovery_path(str(case), mine), str(case), edited("PLANTED"))
            return False
        except OSError:
            return True

    assert as_other_user(other) == 0
    rec = find_recovery(str(case), mine, base_case())
    assert rec.raw["label"] == "mine"
    assert os.stat(recovery_path(str(case), theirs)).st_uid == OTHER


@need_two_uids
def test_a_recovery_file_owned_by_another_user_is_not_offered_and_says_whose(shared, tmp_path):
    folder, case = shared
    state = tmp_path / "state" / "tdmtui"
    rp = recovery_path(str(case), state)
    write_recovery(rp, str(case), edited("FORGED"))
    os.chown(rp, OTHER, OTHER)  # as if another user had written it there
    with pytest.raises(RecoveryRefused, match="not by you"):
        find_recovery(str(case), state, base_case())
    os.chown(state, OTHER, OTHER)
    with pytest.raises(RecoveryRefused, match="not to you"):
        find_recovery(str(case), state, base_case())


@need_two_uids
def test_a_lock_held_by_another_user_in_a_shared_folder_times_out(shared, monkeypatch):
    folder, case = shared
    doc = CaseDocument.open(str(case))
    doc.set(("label",), "mine")
    monkeypatch.setattr(casefile, "LOCK_WAIT_S", 0.5)
    r, w = os.pipe()

    def hold() -> bool:
        fd = os.open(folder, os.O_RDONLY)
        fcntl.flock(fd, fcntl.LOCK_EX)
        os.write(w, b"x")
        time.sleep(3)
        return True

    pid = os.fork()
    if pid == 0:  # pragma: no cover
        os._exit(as_other_user(hold))
    try:
        os.read(r, 1)
        with pytest.raises(SaveLockTimeout):
            doc.save()
    finally:
        os.waitpid(pid, 0)
    doc.save()  # once the other user lets go, the save goes through
    assert json.loads(case.read_text())["label"] == "mine"


async def test_the_app_says_so_when_the_recovery_file_cannot_be_removed_after_a_save(tmp_path, monkeypatch):
    from tdmtui.ui.app import TdmApp

    state = tmp_path / "state" / "tdmtui"
    case = tmp_path / "case.json"
    save_case(case, base_case())
    real_unlink = Path.unlink

    def refuse(self, missing_ok=False):  # noqa: ANN001, ANN202 - EPERM on the recovery file only
        if self.name.endswith(".recovery"):
            raise PermissionError(1, "Operation not permitted")
        return real_unlink(self, missing_ok=missing_ok)

    app = TdmApp(str(case), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause(0.3)
        app.doc.set(("label",), "edited")
        app.autosave()
        monkeypatch.setattr(Path, "unlink", refuse)
        await pilot.press("ctrl+s")
        await pilot.pause(0.3)
        assert not app.doc.dirty and json.loads(case.read_text())["label"] == "edited"
        assert any("could not remove the recovery file" in str(n.message) for n in app._notifications)
        assert app.is_running
