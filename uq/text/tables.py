"""Plain-text building blocks shared by the terminal outputs (check, run, tolerances).

Terminal lines are at most :data:`WIDTH` characters: :func:`text_table` wraps its widest
columns to fit, :func:`fit_width` wraps the remaining long prose lines.
"""

from __future__ import annotations

import re
import textwrap
from collections.abc import Sequence

WIDTH = 100
"""Longest terminal line written by the command line [characters]."""

_MIN_COLUMN = 10
"""Narrowest a wrapped column gets [characters]."""


def _fit(widths: list[int], floors: list[int], width: int) -> list[int]:
    """Column widths within ``width``: the widest columns shrink first, each down to its
    floor (its longest word: words are not broken), the first column (the names) last; only
    when every column is at its floor are words broken, down to :data:`_MIN_COLUMN`."""
    widths = list(widths)

    def total() -> int:
        return 2 + sum(widths) + 2 * (len(widths) - 1)

    for floor in (floors, [_MIN_COLUMN] * len(widths)):
        while total() > width:
            wide = [k for k in range(1, len(widths)) if widths[k] > floor[k]]
            if not wide and widths[0] > floor[0]:
                wide = [0]
            if not wide:
                break
            j = max(wide, key=lambda k: widths[k])
            second = max([widths[k] for k in wide if k != j] + [floor[j]])
            widths[j] -= max(min(total() - width, widths[j] - second), 1)
    return widths


def text_table(header: Sequence[str], rows: Sequence[Sequence[str]], *,
               width: int = WIDTH) -> list[str]:
    """Rows of left-aligned columns, two spaces apart, indented by two, under a rule.

    A table wider than ``width`` has its widest columns wrapped onto continuation lines.

    Parameters
    ----------
    header
        Column headings.
    rows
        One sequence of cells per row, as many as the headings.
    width
        Longest line wanted [characters].

    Returns
    -------
    list of str
        The lines of the table.

    Examples
    --------
    >>> for line in text_table(["a", "b"], [["1", "x"]]):
    ...     print(line)
      a  b
      -  -
      1  x
    """
    cols = list(zip(header, *rows, strict=True))
    natural = [max(len(str(c)) for c in col) for col in cols]
    floors = [min(n, max(max((len(w) for c in col for w in str(c).split()), default=0), 4))
              for n, col in zip(natural, cols, strict=True)]
    widths = _fit(natural, floors, width)

    def lines(cells) -> list[str]:
        parts = [textwrap.wrap(str(c), w, break_on_hyphens=False) or [""] if len(str(c)) > w
                 else [str(c)] for c, w in zip(cells, widths, strict=True)]
        out = []
        for k in range(max(len(p) for p in parts)):
            out.append(("  " + "  ".join((p[k] if k < len(p) else "").ljust(w)
                                         for p, w in zip(parts, widths, strict=True))).rstrip())
        return out

    out = lines(header) + [("  " + "  ".join("-" * w for w in widths)).rstrip()]
    for r in rows:
        out += lines(r)
    return out


_BULLET = re.compile(r"^(\s*(?:[-*]|\d+\.)?\s*)")


def fit_width(text: str, width: int = WIDTH) -> str:
    """Wrap every line of ``text`` longer than ``width`` onto continuation lines indented two
    more than the line (after its bullet); shorter lines are kept as they are.

    Parameters
    ----------
    text
        Terminal text.
    width
        Longest line wanted [characters].

    Returns
    -------
    str

    Examples
    --------
    >>> print(fit_width("note: " + "word " * 5, width=20))
    note: word word word
      word word
    """
    out = []
    for line in text.split("\n"):
        if len(line) <= width:
            out.append(line)
            continue
        lead = _BULLET.match(line).group(1)  # type: ignore[union-attr]
        indent = " " * (len(line) - len(line.lstrip()))
        hang = " " * min(len(lead), width // 2) if lead.strip() else indent + "  "
        out += textwrap.wrap(line, width, initial_indent="", subsequent_indent=hang,
                             break_on_hyphens=False, drop_whitespace=True) or [line]
    return "\n".join(out)
