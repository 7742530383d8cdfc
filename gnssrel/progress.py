"""Progress on long work: a bar on a terminal, nothing when output is not one.

The command line calls :func:`configure` once (``-q`` turns it off); stages wrap
their long loops in :func:`bar` and announce long single steps with :func:`step`.
Output goes to stderr, so ``--json`` on stdout stays clean; when stderr is not a
terminal (a pipe, a log file, CI) nothing is drawn at all.
"""

from __future__ import annotations

import sys
import time
from contextlib import contextmanager

_state = {"enabled": None}  # None: decide by whether stderr is a terminal
BAR_WIDTH = 28


def configure(enabled: bool | None = None) -> None:
    """Force progress on (True) or off (False); None: only when stderr is a terminal."""
    _state["enabled"] = enabled


def active(stream=None) -> bool:
    stream = stream or sys.stderr
    if _state["enabled"] is not None:
        return _state["enabled"]
    return bool(getattr(stream, "isatty", lambda: False)())


def bar(items, label: str, total: int | None = None, stream=None):
    """Iterate over ``items`` drawing ``label [=====     ] 12/40`` on a terminal."""
    stream = stream or sys.stderr
    if not active(stream):
        yield from items
        return
    total = len(items) if total is None else total
    start = time.perf_counter()
    last = 0.0
    done = 0
    for item in items:
        yield item
        done += 1
        now = time.perf_counter()
        if now - last > 0.1 or done == total:
            last = now
            filled = int(BAR_WIDTH * done / max(total, 1))
            stream.write(f"\r{label} [{'=' * filled}{' ' * (BAR_WIDTH - filled)}] {done}/{total}")
            stream.flush()
    stream.write(f"\r{label} done: {done} in {time.perf_counter() - start:.1f} s"
                 f"{' ' * (BAR_WIDTH + 8)}\n")
    stream.flush()


@contextmanager
def step(label: str, stream=None):
    """Announce one long step (``reading NYA1... 1.3 s``) on a terminal."""
    stream = stream or sys.stderr
    if not active(stream):
        yield
        return
    stream.write(f"{label} ...")
    stream.flush()
    start = time.perf_counter()
    try:
        yield
    finally:
        stream.write(f" {time.perf_counter() - start:.1f} s\n")
        stream.flush()
