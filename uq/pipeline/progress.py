"""Progress lines of a run (one line on stderr as each phase begins), light to import: the
command line starts its clock before the heavy modules are loaded."""

from __future__ import annotations

import sys
import time

__all__ = ["phase", "set_progress_clock"]

_CLOCK: list[float] = []
"""Start time of the progress clock (``plyrisk -v``); empty when off."""


def set_progress_clock(on: bool) -> None:
    """Stamp the lines of :func:`phase` with the seconds since this call (``on``), or not."""
    _CLOCK[:] = [time.perf_counter()] if on else []


def phase(text: str, quiet: bool) -> None:
    """One line on stderr as a phase of a run begins (unless ``quiet``): on a terminal and off
    it, so that a long run shows where it is [-]."""
    if not quiet:
        stamp = f"[{time.perf_counter() - _CLOCK[0]:7.1f} s] " if _CLOCK else ""
        print(f"plyrisk: {stamp}{text} ...", file=sys.stderr, flush=True)
