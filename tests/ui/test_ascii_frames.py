"""Under a locale that is not UTF-8 (or with --ascii) every character the app draws is ASCII:
borders, the rule over a form, scrollbars, notices and the plot, at 80x24 (pilot)."""

from __future__ import annotations

import pytest

from tdmtui.cli import _app_parser
from tdmtui.ui.app import TdmApp
from tdmtui.ui.charset import ascii_frames, utf8_locale
from textual.scrollbar import ScrollBar, ScrollBarRender
from uihelpers import screen_lines, settle


def non_ascii(lines: list[str]) -> list[str]:
    return [line for line in lines if any(ord(ch) > 0x7F for ch in line)]


@pytest.fixture
def c_locale(monkeypatch):
    for name in ("LC_ALL", "LANG", "LC_CTYPE", "TDMTUI_PLOT"):
        monkeypatch.delenv(name, raising=False)
    monkeypatch.setenv("LC_ALL", "C")
    monkeypatch.setenv("LANG", "C")


async def test_a_c_locale_draws_every_screen_in_ascii(state, sample_copy, c_locale):
    app = TdmApp(str(sample_copy("vanc-obese.json")), None, state=state)
    assert app.ascii_only
    async with app.run_test(size=(80, 24), notifications=True) as pilot:
        await settle(pilot)
        seen = {}
        for name, keys in (("patient", []), ("doses", ["f3"]), ("levels", ["f4"]), ("estimate", ["f5"]),
                           ("plot", ["g"]), ("plan", ["f6"]), ("note", ["f7"]), ("help", ["f1"]),
                           ("warnings", ["escape", "f8"])):
            await pilot.press(*keys)
            await pilot.pause()
            seen[name] = screen_lines(app)
            assert non_ascii(seen[name]) == [], name
        await pilot.press("escape")
        app.notify("Saved somewhere", timeout=30)
        await pilot.pause(0.3)
        seen["notice"] = screen_lines(app)
        assert non_ascii(seen["notice"]) == []
    # the frames are there, drawn in ASCII
    assert any(set(line.rstrip("#")) == {"-"} and len(line) > 60 for line in seen["doses"])  # the rule over the form
    assert any(line.rstrip().endswith("##") for line in seen["patient"])  # the form's scrollbar thumb
    assert any(line.lstrip().startswith("+---") and line.rstrip().endswith("+") for line in seen["help"])
    assert any("* fitted" in line for line in seen["plot"]) and any("*" in line for line in seen["plot"][3:12])
    assert any(line.rstrip().endswith("| Saved somewhere") for line in seen["notice"])  # the notice's edge
    assert ScrollBar.renderer is ScrollBarRender  # put back when the app stopped


async def test_a_utf8_locale_keeps_the_unicode_frames(state, sample_copy, monkeypatch):
    monkeypatch.delenv("LC_ALL", raising=False)
    monkeypatch.setenv("LANG", "en_GB.UTF-8")
    app = TdmApp(str(sample_copy("vanc-obese.json")), None, state=state)
    assert not app.ascii_only
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await pilot.press("f3")
        await pilot.pause()
        assert any(set(line) == {"\u2500"} for line in screen_lines(app))  # the rule in box-drawing lines
        await pilot.press("f1")
        await pilot.pause()
        assert any("\u250f" in line for line in screen_lines(app))  # the help's heavy frame


async def test_ascii_asked_for_in_a_utf8_locale(state, sample_copy, monkeypatch):
    monkeypatch.setenv("LC_ALL", "en_GB.UTF-8")
    monkeypatch.delenv("TDMTUI_PLOT", raising=False)
    assert _app_parser().parse_args(["--ascii", "case.json"]).ascii is True
    app = TdmApp(str(sample_copy("vanc-obese.json")), None, state=state, ascii_only=ascii_frames(True))
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        for keys in (["f3"], ["f5", "g"], ["f1"]):
            await pilot.press(*keys)
            await pilot.pause()
            assert non_ascii(screen_lines(app)) == [], keys


@pytest.mark.parametrize("env, expected", [
    ({"LANG": "en_GB.UTF-8"}, True),
    ({"LANG": "C"}, False),
    ({"LC_ALL": "C", "LANG": "en_GB.UTF-8"}, False),
    ({"LANG": "de_DE.ISO-8859-1"}, False),
    ({"LC_CTYPE": "C.UTF-8", "LANG": "C"}, False),  # Python's coercion of the C locale (PEP 538)
    ({"LANG": "C.UTF-8"}, True),
])
def test_the_frames_follow_the_locale_as_the_plot_does(env, expected):
    assert utf8_locale(env) is expected
    assert ascii_frames(False, env) is (not expected)
    assert ascii_frames(True, env) is True
