"""Units in display text, one spelling per medium.

The terminal and the plain-text files (``summary.txt``, the cautions block) spell temperature
units in ASCII as configs write them (``degC``); the pages (``report.html``, ``summary.md``)
show the symbol (``°C``). Every piece of text bound for one medium passes through its function
here, so a verdict line, a headline and a caution never mix the two spellings.
"""

from __future__ import annotations

import re

_PAGE = re.compile(r"\b(?:delta_)?deg([CF])\b")
_TEXT = re.compile("°([CF])")


def page_units(text: str) -> str:
    """Text for a page (HTML, Markdown): ``degC`` → ``°C`` (``degF``, ``delta_degC`` alike).

    Examples
    --------
    >>> page_units("P95 = 60.6 degC [59.8 degC, 62.0 degC] vs 44 degC")
    'P95 = 60.6 °C [59.8 °C, 62.0 °C] vs 44 °C'
    >>> page_units("a rise of 5 delta_degC; degCx stays")
    'a rise of 5 °C; degCx stays'
    """
    return _PAGE.sub(r"°\1", text)


def text_units(text: str) -> str:
    """Text for the terminal and plain-text files: ``°C`` → ``degC`` (ASCII, as configs
    write it).

    Examples
    --------
    >>> text_units("a basal temperature of 50 °C")
    'a basal temperature of 50 degC'
    """
    return _TEXT.sub(r"deg\1", text)
