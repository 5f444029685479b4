"""Analysis methods as objects, and the one registry of them.

:data:`METHODS` maps each ``[study] method`` value to its :class:`~plyrisk.methods.base.Method`
object (one module each: :mod:`~plyrisk.methods.saltelli`, :mod:`~plyrisk.methods.pce`,
:mod:`~plyrisk.methods.morris`, :mod:`~plyrisk.methods.shapley`). The config reader,
``--method`` and ``--help`` read their choices from it. To add a method, write a module with a
:class:`Method` subclass and a ``METHOD`` instance, and list it here (DEVELOPERS.md, "Adding a
method").

Examples
--------
>>> sorted(METHODS)
['morris', 'pce', 'saltelli', 'shapley']
>>> get_method("pce").designs
('lhs', 'sobol', 'random')
"""

from __future__ import annotations

from plyrisk.methods import morris, pce, saltelli, shapley
from plyrisk.methods.base import Method

METHODS: dict[str, Method] = {m.METHOD.name: m.METHOD for m in (saltelli, pce, morris,
                                                                      shapley)}
"""Every analysis method, by its ``[study] method`` name (the first is the default)."""

RENAMED_METHODS = {
    "sobol": 'is now "saltelli"',
    "lhs": 'is now method = "pce" with design = "lhs"',
    "random": 'is now method = "pce" with design = "random"',
}
"""Former ``[study] method`` values and their new spelling."""


def get_method(name: str) -> Method:
    """The method object of a ``[study] method`` value.

    Parameters
    ----------
    name
        ``"saltelli"``, ``"pce"`` or ``"morris"``.

    Returns
    -------
    Method

    Raises
    ------
    ValueError
        One line naming the bad value and the valid choices (and the new spelling of a former
        method name).
    """
    if name in RENAMED_METHODS:
        raise ValueError(f'"{name}" {RENAMED_METHODS[name]}')
    try:
        return METHODS[name]
    except (KeyError, TypeError):
        raise ValueError(f"unknown method {name!r}; valid: {', '.join(METHODS)}") from None


__all__ = ["METHODS", "RENAMED_METHODS", "Method", "get_method"]
