"""The verdict block at the top of ``report.html`` and ``summary.md``: the criterion, its
verdict per exposure and overall (colour *and* word), and the cautions right below it.

The verdict comes from the dataset (:func:`plyrisk.results.verdict.verdict_of`), so a report
written later from ``results.nc`` shows the same answer as the run.
"""

from __future__ import annotations

import html

import xarray as xr

from plyrisk.cautions import COMPACT_CAUTION, COMPACT_TRANSIENT
from plyrisk.display import page_units
from plyrisk.results.verdict import MET, NOT_MET, VERDICT_MEANING, Verdict, verdict_of

COLOURS = {MET: ("#1a6b2a", "#e6f4e9"), NOT_MET: ("#a31515", "#fbe9e9"),
           "UNDECIDED": ("#8a5a00", "#fff4db")}
"""Ink and background of each verdict (the word is always shown beside the colour)."""

SYMBOLS = {MET: "✔", NOT_MET: "✘", "UNDECIDED": "?"}
"""A symbol beside the word, for readers who cannot tell the colours apart."""


def _esc(text: object) -> str:
    return html.escape(str(text), quote=True)


def _caution(ds: xr.Dataset) -> str:
    transient = ds.attrs.get("study_kind") == "transient"
    return COMPACT_CAUTION + (COMPACT_TRANSIENT if transient else "")


def _rows(v: Verdict) -> list[tuple[str, str, str, str]]:
    return [(page_units(s.label) or "all", s.verdict, page_units(
        f"{v.show(s.value)} [{v.show(s.lower)}, {v.show(s.upper)}]"), page_units(s.reason))
        for s in v.scenarios]


def verdict_html(ds: xr.Dataset) -> str:
    """The verdict section of ``report.html``, with the compact cautions below it.

    Parameters
    ----------
    ds
        A results dataset.

    Returns
    -------
    str
        One HTML fragment.
    """
    v = verdict_of(ds)
    ink, bg = COLOURS[v.overall]
    conf = f"{100 * v.confidence:g} %"

    def badge(word: str) -> str:
        i, b = COLOURS[word]
        return (f'<strong class="verdict-word" style="color:{i};background:{b};'
                f'border:1px solid {i};padding:0 .35em;border-radius:3px">'
                f"{SYMBOLS[word]} {_esc(word)}</strong>")

    rows = "".join(f"<tr><td>{_esc(a)}</td><td>{badge(b)}</td><td>{_esc(c)}</td>"
                   f"<td>{_esc(d)}</td></tr>" for a, b, c, d in _rows(v))
    return (f'<section class="verdict" id="verdict" style="border:3px solid {ink};'
            f'background:{bg};padding:.6em 1em;margin:1em 0">'
            f'<h2 style="margin-top:0">Verdict: {badge(v.overall)}</h2>'
            f"<p>Criterion: {_esc(page_units(v.criterion_text))}. "
            f"{_esc(v.overall)}: {_esc(VERDICT_MEANING[v.overall])} ({conf} confidence).</p>"
            f"<table><thead><tr><th>exposure</th><th>verdict</th><th>{_esc(v.metric)} "
            f"[{conf} interval]</th><th>note</th></tr></thead><tbody>{rows}</tbody></table>"
            "</section>"
            '<div class="cautions compact" style="border:1px solid #555;padding:.4em .8em;'
            f'margin:0 0 1em 0;font-size:.95em"><strong>Caution:</strong> {_esc(_caution(ds))}'
            " Full cautions below.</div>")


def verdict_markdown(ds: xr.Dataset) -> list[str]:
    """The verdict lines of ``summary.md``, with the compact cautions below them.

    Parameters
    ----------
    ds
        A results dataset.

    Returns
    -------
    list of str
    """
    v = verdict_of(ds)
    conf = f"{100 * v.confidence:g} %"
    m = [f"## Verdict: **{SYMBOLS[v.overall]} {v.overall}**", "",
         f"Criterion: {page_units(v.criterion_text)}. {v.overall}: "
         f"{VERDICT_MEANING[v.overall]} ({conf} confidence).", "",
         f"| exposure | verdict | {v.metric} [{conf} interval] | note |", "|---|---|---|---|"]
    m += [f"| {a} | **{SYMBOLS[b]} {b}** | {c} | {d} |" for a, b, c, d in _rows(v)]
    m += ["", f"> **Caution:** {_caution(ds)} Full cautions below.", ""]
    return m


def limit_sentence(ds: xr.Dataset) -> str:
    """One sentence naming the limit and the output it protects (steady report)."""
    v = verdict_of(ds)
    words = str(ds.attrs.get("limit_output_long_name", "inner-surface temperature"))
    return page_units(f"The limit applies to the {words} (limit output "
                      f"{ds.attrs.get('limit_output', 'inner_surface_temperature')}): "
                      f"{v.limit_shown or ds.attrs.get('limit')}; criterion {v.criterion}.")
