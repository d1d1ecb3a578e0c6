"""Helpers for the app tests (imported by name: tests/ui is on sys.path)."""

from __future__ import annotations

import contextlib
from pathlib import Path

SAMPLES = Path(__file__).resolve().parents[2] / "sample_cases"


async def settle(pilot, limit_s: float = 30.0) -> None:
    """Let debounced edits start their compute, and wait for every worker.

    Waits on the app's own state (a pending debounced compute, a running
    worker), not on a fixed pause, so a busy machine cannot make it return early.
    """
    app = pilot.app
    waited = 0.0
    await pilot.pause(0.6)
    while waited < limit_s:
        await app.workers.wait_for_complete()
        await pilot.pause()
        if not getattr(app, "compute_pending", False) and not app.workers:
            break
        await pilot.pause(0.1)
        waited += 0.1
    await pilot.pause()


def screen_lines(app) -> list[str]:  # noqa: ANN001
    """The characters on the top screen, one string per terminal line (no styles)."""
    return [strip.text for strip in app.screen._compositor.render_strips()]


@contextlib.asynccontextmanager
async def opened(state, sample_copy, name: str, key: str | None = None):  # noqa: ANN001, ANN201
    """A copy of sample case ``name`` open in the app at 80x24, computed (and ``key`` pressed): the pilot."""
    from tdmtui.ui.app import TdmApp

    app = TdmApp(str(sample_copy(name)), None, state=state)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        if key:
            await pilot.press(key)
            await pilot.pause()
        yield pilot
