"""Privacy: no network connection, private file modes, nothing typed in a log.

Sockets are forbidden by replacing the connecting calls of the socket module
for the duration of a test: any attempt is recorded (from any thread) and
fails. Files are checked for mode 0600 with the process umask opened wide
(0o000), so the mode comes from the program and not from the umask.
"""

from __future__ import annotations

import json
import logging
import os
import socket
import stat
import subprocess
import sys
from pathlib import Path

import pytest

from relhelpers import ROOT, sample_raws
from tdmtui.core.input.case import load_case
from tdmtui.core.input.casefile import save_case, write_atomic
from tdmtui.core.compute import compute

MARK = "QZX-PRIVATE-7731"  # an invented marker typed into every free-text field


@pytest.fixture
def no_network(monkeypatch):
    """Forbid every outgoing connection and name lookup; yields the list of attempts."""
    attempts: list[str] = []

    def refuse(what):  # noqa: ANN001, ANN202
        def blocked(*args, **kwargs):  # noqa: ANN002, ANN003, ANN202
            attempts.append(f"{what}{args[1:] if what.startswith('socket.') else args}")
            raise OSError(f"network use is forbidden in this test ({what})")
        return blocked

    monkeypatch.setattr(socket.socket, "connect", refuse("socket.connect"))
    monkeypatch.setattr(socket.socket, "connect_ex", refuse("socket.connect_ex"))
    monkeypatch.setattr(socket.socket, "sendto", refuse("socket.sendto"))
    monkeypatch.setattr(socket, "create_connection", refuse("create_connection"))
    monkeypatch.setattr(socket, "getaddrinfo", refuse("getaddrinfo"))
    return attempts


@pytest.fixture
def open_umask():
    old = os.umask(0)
    yield
    os.umask(old)


def _marked_case() -> dict:
    raw = sample_raws()[0]
    raw["label"] = f"label {MARK}"
    raw["patient"]["comedications"] = [f"comed {MARK}"]
    raw.setdefault("target", {})["indication"] = f"indication {MARK}"
    raw["levels"].append({"time": raw["levels"][-1]["time"], "conc": "1 mg/L", "use": False, "reason": f"reason {MARK}"})
    return raw


def test_the_guard_really_blocks_a_connection(no_network):
    """The guard itself works: an attempt fails and is recorded (so a pass below means something)."""
    with pytest.raises(OSError):
        socket.create_connection(("127.0.0.1", 9))
    with pytest.raises(OSError):
        socket.socket().connect(("127.0.0.1", 9))
    assert len(no_network) == 2


def test_computing_every_sample_opens_no_connection(no_network):
    for path in sorted((ROOT / "sample_cases").glob("*.json")):
        compute(load_case(path))
    compute(load_case_from(_marked_case()))
    assert no_network == []


def load_case_from(raw: dict):  # noqa: ANN201
    from tdmtui.core.input.case import parse_case

    return parse_case(raw)


async def test_the_app_opens_no_connection_while_it_runs(no_network, tmp_path):
    from tdmtui.ui.app import TdmApp

    path = tmp_path / "case.json"
    save_case(path, _marked_case())
    app = TdmApp(str(path), None, state=tmp_path / "state")
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause(0.5)
        await app.workers.wait_for_complete()
        for key in ("f3", "f4", "f5", "f6", "f7", "f2"):
            await pilot.press(key)
            await pilot.pause(0.1)
        await app.workers.wait_for_complete()
        assert app.outcome is not None  # it really computed
    assert no_network == []


def test_saved_case_is_mode_0600_even_with_an_open_umask(tmp_path, open_umask):
    path = tmp_path / "case.json"
    save_case(path, sample_raws()[0])
    assert stat.S_IMODE(path.stat().st_mode) == 0o600
    write_atomic(tmp_path / "other.bin", b"x")
    assert stat.S_IMODE((tmp_path / "other.bin").stat().st_mode) == 0o600


def test_resaving_a_world_readable_file_makes_it_private(tmp_path, open_umask):
    path = tmp_path / "case.json"
    path.write_text(json.dumps(sample_raws()[0]))
    path.chmod(0o644)
    save_case(path, sample_raws()[0])
    assert stat.S_IMODE(path.stat().st_mode) == 0o600


def test_recovery_file_is_0600_in_a_0700_folder(tmp_path, open_umask):
    from tdmtui.ui.recovery import recovery_path, write_recovery

    state = tmp_path / "state" / "tdmtui"
    unsaved = recovery_path(None, state)
    write_recovery(unsaved, None, _marked_case())
    assert stat.S_IMODE(unsaved.stat().st_mode) == 0o600
    assert stat.S_IMODE(state.stat().st_mode) == 0o700
    of_case = recovery_path(str(tmp_path / "case.json"), state)
    write_recovery(of_case, str(tmp_path / "case.json"), _marked_case())
    assert stat.S_IMODE(of_case.stat().st_mode) == 0o600 and of_case.parent == state


def test_note_file_from_the_app_is_0600(tmp_path, open_umask):
    from tdmtui.ui.clipboard import write_note

    where = write_note(str(tmp_path / "case.note.txt"), f"note {MARK}\n")
    assert stat.S_IMODE(where.stat().st_mode) == 0o600


def _cli(*args: str, cwd: Path) -> subprocess.CompletedProcess:
    env = dict(os.environ, HOME=str(cwd), XDG_STATE_HOME=str(cwd / "state"), XDG_CONFIG_HOME=str(cwd / "config"))
    return subprocess.run([sys.executable, "-c", "import os, sys; os.umask(0); from tdmtui.cli import main; "
                           "sys.exit(main(sys.argv[1:]))", *args], capture_output=True, text=True, cwd=cwd,
                          env=env, timeout=180)


def test_command_line_record_and_note_files_are_0600_and_nothing_typed_reaches_stderr(tmp_path):
    case = tmp_path / "case.json"
    save_case(case, _marked_case())
    run = _cli("compute", str(case), "--record", cwd=tmp_path)
    assert run.returncode == 0, run.stderr
    record = tmp_path / "case.result.json"
    assert stat.S_IMODE(record.stat().st_mode) == 0o600
    assert MARK not in run.stderr
    note = tmp_path / "case.note.txt"
    run = _cli("note", str(case), "--out", str(note), cwd=tmp_path)
    assert run.returncode == 0, run.stderr
    assert stat.S_IMODE(note.stat().st_mode) == 0o600
    assert MARK not in run.stderr
    # nothing else was written anywhere under the private HOME used for the run
    written = {p.relative_to(tmp_path).as_posix() for p in tmp_path.rglob("*") if p.is_file()}
    assert written == {"case.json", "case.result.json", "case.note.txt"}


def test_nothing_typed_goes_to_a_log(caplog):
    """Every logger at DEBUG while a case with a marker in each free-text field computes: no record carries it."""
    caplog.set_level(logging.DEBUG)
    outcome = compute(load_case_from(_marked_case()))
    assert outcome.result["status"] in ("ok", "stop")
    leaked = [r.getMessage() for r in caplog.records if MARK in r.getMessage()]
    assert leaked == []


async def test_the_app_writes_nothing_typed_outside_the_case_and_recovery_files(tmp_path, monkeypatch):
    """Run the app with HOME and the XDG folders private, type into fields, quit: look for the marker on disk."""
    from tdmtui.ui.app import TdmApp

    home = tmp_path / "home"
    home.mkdir()
    for var, sub in (("HOME", ""), ("XDG_STATE_HOME", "state"), ("XDG_CONFIG_HOME", "config"),
                     ("XDG_CACHE_HOME", "cache"), ("XDG_DATA_HOME", "data")):
        monkeypatch.setenv(var, str(home / sub))
    monkeypatch.delenv("TEXTUAL_LOG", raising=False)
    work = tmp_path / "work"
    work.mkdir()
    path = work / "case.json"
    save_case(path, _marked_case())
    app = TdmApp(str(path), None)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause(0.3)
        field = app.screen.query_one("#pt-weight-input")
        field.focus()
        field.value = ""
        await pilot.press(*"81 kg")
        await pilot.pause(0.5)
        await app.workers.wait_for_complete()
    from tdmtui.ui.recovery import recovery_path, state_dir

    allowed = {path, recovery_path(str(path), state_dir())}  # the recovery file lives in the user's state folder
    carriers = [p for p in tmp_path.rglob("*") if p.is_file() and p not in allowed
                and MARK.encode() in p.read_bytes()]
    assert carriers == []
