"""``tdmtui batch PATH... [--out FILE]``: many cases at once, one row each, and a summary.

PATH is a case file, a folder (every ``*.json`` in it and its subfolders, in
name order, except ``*.result.json`` audit records), or ``-``: a JSON-lines
stream on stdin, one case object per line (blank lines skipped). The cases go
through one worker process per core (``--jobs``); each is computed alone, as
``tdmtui compute CASE --json`` would compute it (:mod:`tdmtui.batchrow`), so a
damaged file, an input error or an internal error is that case's row with its
error, never the end of the batch.

Output: progress on stderr (a bar on a terminal, a plain line every tenth
otherwise); the summary on stdout (counts by status and by method, the share
of cases whose current regimen is on target); with ``--out``, a file of one
row per case (``.csv``, or ``.jsonl`` whose lines also carry the whole result
object, equal to ``compute --json``), written atomically with mode 0600.
Case text (file names, errors) passes :func:`tdmtui.core.input.textsafe.neutralise`
before the terminal or the CSV; a CSV cell that a spreadsheet would read as a
formula (``=``, ``+``, ``-``, ``@`` first) starts with ``'``.
Exit 0 when the batch ran (whatever the cases' statuses); 2 for a usage error.
"""

from __future__ import annotations

import argparse
import os
import sys
import time
from pathlib import Path
from typing import Any, Iterator

from tdmtui.batchrow import Item, Row, run

#: progress redraws on a terminal at most this often, s
_REDRAW_S = 0.1


def parser() -> argparse.ArgumentParser:
    from tdmtui.core import registry

    ap = argparse.ArgumentParser(prog="tdmtui batch", description="Compute many cases: one row each and a summary.")
    ap.add_argument("paths", nargs="+", metavar="PATH",
                    help="case file, folder of cases (searched below too), or - for JSON lines on stdin")
    ap.add_argument("--out", metavar="FILE", help="write one row per case to FILE (.csv or .jsonl; mode 0600)")
    ap.add_argument("--protocol", metavar="FILE", help="local protocol TOML for every case")
    ap.add_argument("--method", choices=registry.CHOICES, help="override every case's method")
    ap.add_argument("--jobs", type=int, metavar="N", help="worker processes (default: one per core)")
    return ap


def cores() -> int:
    """Cores this process may run on."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # not on Linux
        return max(1, os.cpu_count() or 1)


def collect(paths: list[str], stdin: Any = None) -> list[Item]:
    """The cases named by PATHs, in order (``-`` reads the stream once)."""
    items: list[Item] = []
    for p in paths:
        if p == "-":
            stream = stdin if stdin is not None else sys.stdin.buffer
            for n, line in enumerate(stream, 1):
                body = line.rstrip(b"\r\n") if isinstance(line, bytes) else line.rstrip("\r\n").encode("utf-8")
                if body.strip():
                    items.append(Item(f"stdin:{n}", line=body))
        elif Path(p).is_dir():
            found = sorted(f for f in Path(p).rglob("*.json") if not f.name.endswith(".result.json"))
            items += [Item(str(f), path=str(f)) for f in found]
        else:
            items.append(Item(p, path=p))
    return items


def _one(job: tuple[Item, str | None, str | None, bool]) -> Row:
    return run(*job)


def compute_all(items: list[Item], protocol: str | None, method: str | None, jobs: int,
                text: bool = True) -> Iterator[Row]:
    """Rows in the order of ``items``, as they are done (``jobs`` > 1: a pool of worker processes); ``text``:
    each row keeps its result's JSON text (batchrow.run)."""
    work = [(it, protocol, method, text) for it in items]
    jobs = max(1, min(jobs, len(work)))
    if jobs == 1:
        yield from map(_one, work)
        return
    import multiprocessing as mp

    import tdmtui.core.compute  # noqa: F401 - loaded once before the workers fork

    ctx = mp.get_context("fork" if "fork" in mp.get_all_start_methods() else "spawn")
    chunk = max(1, min(16, len(work) // (jobs * 8)))
    with ctx.Pool(jobs) as pool:
        yield from pool.imap(_one, work, chunksize=chunk)


class Progress:
    """A bar on a terminal; otherwise a plain line at every tenth of the cases (and the last)."""

    def __init__(self, total: int, stream: Any) -> None:
        self.total, self.stream, self.start = total, stream, time.monotonic()
        self.tty = bool(getattr(stream, "isatty", lambda: False)())
        self.done, self.drawn, self.next_line = 0, 0.0, 1

    def step(self) -> None:
        self.done += 1
        now = time.monotonic()
        took = now - self.start
        if self.tty:
            if now - self.drawn >= _REDRAW_S or self.done == self.total:
                fill = int(30 * self.done / self.total)
                self.stream.write(f"\r[{'#' * fill}{'.' * (30 - fill)}] {self.done}/{self.total} cases  {took:.1f} s")
                self.stream.flush()
                self.drawn = now
            if self.done == self.total:
                self.stream.write("\n")
        elif self.done * 10 >= self.next_line * self.total or self.done == self.total:
            self.stream.write(f"batch: {self.done}/{self.total} cases ({100 * self.done // self.total} %), {took:.1f} s\n")
            self.stream.flush()
            self.next_line = 10 * self.done // self.total + 1


def main(argv: list[str]) -> int:
    """Run the batch (InputError for a usage problem propagates to the command line: exit 2)."""
    from tdmtui.core.errors import InputError

    args = parser().parse_args(argv)
    if args.out and not args.out.lower().endswith((".csv", ".jsonl")):
        raise InputError("--out", f"{args.out}: the file name must end in .csv or .jsonl")
    if args.jobs is not None and args.jobs < 1:
        raise InputError("--jobs", "at least 1")
    if args.protocol:
        from tdmtui.core.library import protocol_or_default

        protocol_or_default(args.protocol)  # a bad protocol is one error for the batch, not one per case
    items = collect(args.paths)
    if not items:
        raise InputError("PATH", "no case found (a folder is searched for *.json files)")
    start = time.monotonic()
    progress = Progress(len(items), sys.stderr)
    rows: list[Row] = []
    jsonl = bool(args.out) and args.out.lower().endswith(".jsonl")  # the only writer of each result's text
    for row in compute_all(items, args.protocol, args.method, args.jobs or cores(), text=jsonl):
        rows.append(row)
        progress.step()
    took = time.monotonic() - start
    if args.out:
        from tdmtui.batchout import write_rows

        write_rows(args.out, rows)
    from tdmtui.batchout import summary

    sys.stdout.write(summary(rows, took, min(args.jobs or cores(), len(items)), args.out))
    return 0

