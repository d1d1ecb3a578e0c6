"""Helpers for the app tests (imported by name: tests/ui is on sys.path)."""

from __future__ import annotations

from pathlib import Path

SAMPLES = Path(__file__).resolve().parents[2] / "sample_cases"


async def settle(pilot) -> None:
    """Let debounced edits start their compute, and wait for every worker."""
    await pilot.pause(0.6)
    await pilot.app.workers.wait_for_complete()
    await pilot.pause()
