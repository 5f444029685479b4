"""Starting configs written by ``plyrisk init``: copies of the invented demo studies of
``configs/`` (a test keeps them identical).

Each template is an INVENTED study, labelled as such; the user replaces its values with the
data of their own assembly.
"""

from __future__ import annotations

from importlib.resources import files

TEMPLATES = {
    "garment": ("garment.toml", "reflective_garment.toml",
                "a steady study of a garment facing a radiant heat source, swept exposure, "
                "tolerance feedback"),
    "blanket": ("blanket.toml", "equipment_blanket.toml",
                "a steady study of an insulation blanket on hot equipment (touch temperature)"),
    "transient": ("transient.toml", "turnout_flash.toml",
                  "a transient study of a garment in a short flash exposure, skin burn injury"),
}
"""Template name → (file in this package, the demo in ``configs/`` it copies, what it is)."""


def template_text(name: str) -> str:
    """The text of a template.

    Parameters
    ----------
    name
        A key of :data:`TEMPLATES`.

    Returns
    -------
    str

    Raises
    ------
    ValueError
        An unknown template name.

    Examples
    --------
    >>> "INVENTED" in template_text("garment")
    True
    """
    if name not in TEMPLATES:
        raise ValueError(f"unknown template {name!r}; valid: {', '.join(TEMPLATES)}")
    return files(__name__).joinpath(TEMPLATES[name][0]).read_text(encoding="utf-8")


__all__ = ["TEMPLATES", "template_text"]
