"""Crash safety: a killed writer never damages the previous file, two writers never
silently overwrite each other, and autosaved work survives the app being killed.

Every kill is a real SIGKILL of a separate process (no clean-up code runs).
"""

from __future__ import annotations

import json
import os
import random
import signal
import stat
import subprocess
import sys
import textwrap
import threading
import time
from pathlib import Path

import pytest

from relhelpers import ROOT, sample_raws
from tdmtui.core.input.case import load_case
from tdmtui.core.input.casefile import SaveLockTimeout, canonical_bytes, save_case
from tdmtui.ui.document import CaseDocument, ChangedOnDisk

PY = sys.executable


def _child(code: str, *args: str) -> subprocess.Popen:
    """Start ``python -c code args`` from the repository root, pipes on stdin and stdout."""
    return subprocess.Popen([PY, "-c", textwrap.dedent(code), *args], cwd=ROOT, stdin=subprocess.PIPE,
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)


def _wait_line(proc: subprocess.Popen, want: str, timeout: float = 60.0) -> str:
    """Read the child's stdout until a line starting with ``want`` (fails on exit or timeout)."""
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        line = proc.stdout.readline()
        if line.startswith(want):
            return line.strip()
        if not line and proc.poll() is not None:
            raise AssertionError(f"child ended ({proc.returncode}) before {want!r}: {proc.stderr.read()}")
    raise AssertionError(f"child did not say {want!r} in {timeout} s")


def _kill(proc: subprocess.Popen) -> None:
    os.kill(proc.pid, signal.SIGKILL)
    proc.wait(timeout=30)
    assert proc.returncode == -signal.SIGKILL


def _leftovers(folder: Path, name: str) -> list[Path]:
    return [p for p in folder.iterdir() if p.name.startswith(f".{name}.") and p.name.endswith(".tmp")]


# --------------------------------------------------------------------------- atomic saves

_SAVE_AND_HANG = """
    import json, os, sys, time
    import tdmtui.core.input.casefile as casefile
    real_fsync = os.fsync
    def fsync_then_hang(fd):
        real_fsync(fd)
        print("in-save", flush=True)   # the new bytes are written and synced, not yet renamed
        time.sleep(600)
    os.fsync = fsync_then_hang
    casefile.save_case(sys.argv[1], json.loads(sys.stdin.readline()))
"""


def test_writer_killed_mid_save_leaves_the_previous_file_intact(tmp_path):
    raws = sample_raws()
    path = tmp_path / "case.json"
    save_case(path, raws[0])
    before = path.read_bytes()
    newer = dict(raws[0], label="the edit that never landed")
    proc = _child(_SAVE_AND_HANG, str(path))
    proc.stdin.write(json.dumps(newer) + "\n")
    proc.stdin.flush()
    _wait_line(proc, "in-save")
    _kill(proc)
    assert path.read_bytes() == before
    assert load_case(path).label == raws[0]["label"]
    # the half-finished temporary file is private too
    for tmp in _leftovers(tmp_path, "case.json"):
        assert stat.S_IMODE(tmp.stat().st_mode) == 0o600


_SAVE_LOOP = """
    import json, sys
    from tdmtui.core.input.casefile import save_case
    raw = json.loads(sys.stdin.readline())
    who = sys.argv[2] if len(sys.argv) > 2 else "version"
    print("ready", flush=True)
    i = 0
    while True:
        i += 1
        raw["label"] = f"{who} {i}"
        save_case(sys.argv[1], raw)
"""


def test_writer_killed_at_random_moments_always_leaves_one_whole_version(tmp_path):
    """SIGKILL at random times while a process saves a 1.5 MB case in a loop: the file is always whole."""
    raw = sample_raws()[0]
    raw["patient"]["comedications"] = [f"drug {i:05d}" for i in range(60_000)]  # a large file widens the window
    path = tmp_path / "case.json"
    save_case(path, dict(raw, label="version 0"))
    rng = random.Random(7)
    for _ in range(6):
        proc = _child(_SAVE_LOOP, str(path))
        proc.stdin.write(json.dumps(raw) + "\n")
        proc.stdin.flush()
        _wait_line(proc, "ready")
        time.sleep(rng.uniform(0.05, 0.4))
        _kill(proc)
        got = json.loads(path.read_bytes().decode("utf-8"))
        assert got["label"].startswith("version ")
        assert path.read_bytes() == canonical_bytes(got)  # whole: byte for byte what one save wrote
        assert stat.S_IMODE(path.stat().st_mode) == 0o600
        for tmp in _leftovers(tmp_path, "case.json"):
            assert stat.S_IMODE(tmp.stat().st_mode) == 0o600
            tmp.unlink()


# --------------------------------------------------------------------------- concurrent writers

def test_two_processes_saving_in_a_loop_never_interleave_their_bytes(tmp_path):
    """Two writers hammer one file, then both are killed: it holds one writer's whole version."""
    raw = sample_raws()[0]
    raw["patient"]["comedications"] = [f"drug {i:05d}" for i in range(20_000)]
    path = tmp_path / "case.json"
    save_case(path, dict(raw, label="start 0"))
    procs = [_child(_SAVE_LOOP, str(path), who) for who in ("A", "B")]
    for proc in procs:
        proc.stdin.write(json.dumps(raw) + "\n")
        proc.stdin.flush()
        _wait_line(proc, "ready")
    time.sleep(1.0)
    for proc in procs:
        _kill(proc)
    got = json.loads(path.read_bytes().decode("utf-8"))
    assert got["label"].split()[0] in ("A", "B", "start")
    assert path.read_bytes() == canonical_bytes(got)


def test_second_writer_is_refused_when_the_first_saved_since_it_opened(tmp_path):
    path = tmp_path / "case.json"
    save_case(path, sample_raws()[0])
    a, b = CaseDocument.open(str(path)), CaseDocument.open(str(path))
    a.set(("label",), "session A")
    b.set(("label",), "session B")
    a.save()
    with pytest.raises(ChangedOnDisk):
        b.save()
    assert json.loads(path.read_text())["label"] == "session A"
    assert b.dirty  # B's work is still held, to be saved elsewhere


_CHECK_THEN_WAIT = """
    import sys
    import tdmtui.ui.document as document
    real = document.save_case
    def paused(path, raw):
        print("checked", flush=True)      # B has checked the file and is about to write
        sys.stdin.readline()
        return real(path, raw)
    document.save_case = paused
    doc = document.CaseDocument.open(sys.argv[1])
    doc.set(("label",), "session B")
    try:
        doc.save()
        print("B saved", flush=True)
    except document.ChangedOnDisk:
        print("B refused", flush=True)
"""


def test_two_processes_saving_at_the_same_moment_never_both_succeed(tmp_path):
    path = tmp_path / "case.json"
    save_case(path, sample_raws()[0])
    a = CaseDocument.open(str(path))
    a.set(("label",), "session A")
    proc = _child(_CHECK_THEN_WAIT, str(path))
    _wait_line(proc, "checked")
    outcome: dict[str, str] = {}

    def save_a() -> None:
        try:
            a.save()
            outcome["A"] = "saved"
        except ChangedOnDisk:
            outcome["A"] = "refused"
        except SaveLockTimeout:  # B held the lock longer than a save waits (a slow machine): not saved, said so
            outcome["A"] = "timed out"

    t = threading.Thread(target=save_a)
    t.start()
    t.join(5)  # a locking save may wait here for B
    proc.stdin.write("go\n")
    proc.stdin.flush()
    b_said = _wait_line(proc, "B ")
    t.join(30)
    proc.wait(timeout=30)
    saved = [who for who, said in (("A", outcome.get("A")), ("B", b_said)) if said and said.endswith("saved")]
    assert len(saved) <= 1, f"both sessions were told their save succeeded; the file holds {json.loads(path.read_text())['label']!r}"
    if saved:
        assert json.loads(path.read_text())["label"] == f"session {saved[0]}"


# --------------------------------------------------------------------------- autosave recovery


async def _restored(case: Path, state: Path) -> tuple[dict, bool]:
    """Open the case in the app, accept the recovery offer; return the case the app then holds and its dirty flag."""
    from tdmtui.ui.app import TdmApp
    from tdmtui.ui.dialogs import AskDialog

    app = TdmApp(str(case), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause(0.3)
        assert isinstance(app.screen, AskDialog)
        await pilot.press("r")
        await pilot.pause(0.4)
        await app.workers.wait_for_complete()
        await pilot.pause()
        return app.doc.raw, app.doc.dirty


_APP_EDIT_THEN_HANG = """
    import asyncio, sys
    from pathlib import Path
    from tdmtui.ui.app import TdmApp
    from tdmtui.ui.recovery import read_recovery, recovery_path

    async def main():
        app = TdmApp(sys.argv[1], None, state=Path(sys.argv[2]))
        async with app.run_test(size=(80, 24)) as pilot:
            await pilot.pause(0.3)
            field = app.screen.query_one("#pt-weight-input")
            field.focus()
            field.value = ""
            await pilot.press(*"81 kg")
            rec = recovery_path(sys.argv[1], Path(sys.argv[2]))
            for _ in range(200):  # the autosave follows each edit; wait for the last one to land
                await pilot.pause(0.1)
                saved = read_recovery(rec)
                if saved and saved.raw["patient"]["weight"] == "81 kg":
                    break
            print("edited", flush=True)   # typed, autosaved, never saved
            await asyncio.sleep(600)

    asyncio.run(main())
"""


async def test_autosaved_edit_is_offered_back_after_the_app_is_killed(tmp_path):
    from tdmtui.ui.recovery import recovery_path

    path = tmp_path / "case.json"
    path.write_bytes((ROOT / "sample_cases" / "vanc-steady-state.json").read_bytes())
    before = path.read_bytes()
    state = tmp_path / "state"
    proc = _child(_APP_EDIT_THEN_HANG, str(path), str(state))
    _wait_line(proc, "edited", timeout=120)
    _kill(proc)
    assert path.read_bytes() == before  # the case file itself was never touched
    rec = recovery_path(str(path), state)
    assert rec.exists()
    assert stat.S_IMODE(rec.stat().st_mode) == 0o600
    assert json.loads(rec.read_text())["raw"]["patient"]["weight"] == "81 kg"
    raw, dirty = await _restored(path, state)
    assert raw["patient"]["weight"] == "81 kg"
    assert dirty


def _pty_app(case: Path, state: Path):  # noqa: ANN202
    """Start the real ``tdmtui CASE`` on a pseudo-terminal of 80x24; returns (pid, fd)."""
    import fcntl
    import pty
    import struct
    import termios

    pid, fd = pty.fork()
    if pid == 0:  # the child: the real command, as a user starts it
        os.environ.update(TERM="xterm-256color", XDG_STATE_HOME=str(state))
        os.chdir(ROOT)
        os.execv(PY, [PY, "-m", "tdmtui", str(case)])
    fcntl.ioctl(fd, termios.TIOCSWINSZ, struct.pack("HHHH", 24, 80, 0, 0))
    return pid, fd


def _read_for(fd: int, seconds: float) -> bytes:
    import select

    out, end = b"", time.monotonic() + seconds
    while time.monotonic() < end:
        ready, _, _ = select.select([fd], [], [], 0.1)
        if ready:
            try:
                out += os.read(fd, 65536)
            except OSError:
                break
    return out


async def test_real_terminal_app_killed_after_typing_keeps_the_edit(tmp_path):
    """``tdmtui CASE`` on a pseudo-terminal: Tab to the label, type, SIGKILL; the edit comes back on reopening."""
    from tdmtui.ui.recovery import read_recovery, recovery_path

    case = tmp_path / "case.json"
    case.write_bytes((ROOT / "sample_cases" / "vanc-steady-state.json").read_bytes())
    before = case.read_bytes()
    state = tmp_path / "state" / "tdmtui"  # the app's state folder under XDG_STATE_HOME
    pid, fd = _pty_app(case, state.parent)
    try:
        screen = b""
        deadline = time.monotonic() + 60
        while b"Patient" not in screen and time.monotonic() < deadline:
            screen += _read_for(fd, 0.5)
        assert b"Patient" in screen, screen[-500:]
        screen += _read_for(fd, 1.5)  # let the first compute and the initial focus settle
        if b"Before you start" in screen:  # a first run: the safety notice is closed with Enter first
            os.write(fd, b"\r")
            _read_for(fd, 1.0)
        rec = recovery_path(str(case), state)
        for _ in range(4):  # Tab to the next field (the label first) and type a digit, until an edit lands
            os.write(fd, b"\t")
            _read_for(fd, 0.5)
            os.write(fd, b"9")
            deadline = time.monotonic() + 5
            while not rec.exists() and time.monotonic() < deadline:
                _read_for(fd, 0.2)
            if rec.exists():
                break
    finally:
        os.kill(pid, signal.SIGKILL)
        os.waitpid(pid, 0)
        os.close(fd)
    assert case.read_bytes() == before
    saved = read_recovery(rec)
    assert saved is not None and saved.raw != json.loads(before)
    assert stat.S_IMODE(rec.stat().st_mode) == 0o600
    raw, _ = await _restored(case, state)
    assert raw == saved.raw
