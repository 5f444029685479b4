"""User-facing errors of plyrisk: one line naming the file, the config key and what was expected."""

from __future__ import annotations


class PlyriskError(Exception):
    """Base class of every error plyrisk reports to a user.

    ``str(err)`` is one line that says what was wrong and what was expected. The command line
    prints it after ``plyrisk: error:`` and exits with code 2; a Python caller can catch every
    user-facing error with ``except plyrisk.PlyriskError``.
    """


class ConfigError(PlyriskError, ValueError):
    """A mistake in a study config or its file.

    ``str(err)`` is one line, ``"<file>: <key path>: <message>"``, e.g.
    ``"configs/x.toml: layer[2].thickness: must be positive, got -0.5 mm"``; the key path is
    left out for a problem with the file as a whole (``"configs/x.toml: cannot read: ..."``).

    Parameters
    ----------
    source
        The config file name, or ``"<string>"``.
    key_path
        Where in the config, e.g. ``"layer[2].thickness"``; ``""`` for the whole file.
    message
        What was wrong and what was expected.
    """

    def __init__(self, source: str, key_path: str, message: str) -> None:
        self.source = str(source)
        self.key_path = key_path
        self.message = " ".join(str(message).split())
        parts = [self.source, key_path, self.message] if key_path else [self.source, self.message]
        super().__init__(": ".join(parts))
