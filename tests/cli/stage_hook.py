"""Run ``plyrisk`` in a real process that is stopped at a chosen stage (for the tests).

Usage::

    python stage_hook.py ACTION TARGET N [plyrisk arguments ...]

``TARGET`` is ``module:function`` or ``module:Class.method``; on its ``N``-th call the process

- ``kill``: kills itself with SIGKILL before the call (nothing of the call happens);
- ``kill-after``: makes the call, then kills itself with SIGKILL;
- ``pause``: prints ``paused <pid>`` to stdout and sleeps until it is signalled (a SIGINT
  there is a Ctrl-C at that stage).

Nothing here is part of plyrisk: the hook only wraps a function of the installed package.
"""

from __future__ import annotations

import functools
import importlib
import os
import signal
import sys
import time


def _hook(action: str, target: str, nth: int) -> None:
    module_name, _, attr = target.partition(":")
    owner = importlib.import_module(module_name)
    *path, name = attr.split(".")
    for part in path:
        owner = getattr(owner, part)
    real = getattr(owner, name)
    calls = [0]

    @functools.wraps(real)
    def wrapped(*args, **kwargs):
        calls[0] += 1
        if calls[0] == nth:
            if action == "kill":
                os.kill(os.getpid(), signal.SIGKILL)
            if action == "pause":
                print(f"paused {os.getpid()}", flush=True)
                while True:
                    time.sleep(0.1)
        out = real(*args, **kwargs)
        if calls[0] == nth and action == "kill-after":
            os.kill(os.getpid(), signal.SIGKILL)
        return out

    setattr(owner, name, wrapped)


if __name__ == "__main__":
    action, target, nth, *argv = sys.argv[1:]
    _hook(action, target, int(nth))
    from plyrisk.cli import main

    sys.exit(main(argv))
