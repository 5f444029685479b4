"""Plain-text building blocks shared by the terminal outputs (check, run, tolerances)."""

from __future__ import annotations

from collections.abc import Sequence


def text_table(header: Sequence[str], rows: Sequence[Sequence[str]]) -> list[str]:
    """Rows of left-aligned columns, two spaces apart, indented by two, under a rule.

    Parameters
    ----------
    header
        Column headings.
    rows
        One sequence of cells per row, as many as the headings.

    Returns
    -------
    list of str
        The lines of the table.
    """
    cols = list(zip(header, *rows, strict=True))
    widths = [max(len(str(c)) for c in col) for col in cols]

    def line(cells) -> str:
        return "  " + "  ".join(str(c).ljust(w) for c, w in zip(cells, widths, strict=True))

    return [line(header).rstrip(), line("-" * w for w in widths).rstrip()] + [
        line(r).rstrip() for r in rows
    ]
