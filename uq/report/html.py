"""The study report: one self-contained HTML file, a Markdown summary, figures and CSV tables.

:func:`write_report` turns a results dataset (:func:`plyrisk.results.dataset.to_dataset` or
:func:`plyrisk.results.dataset.read_results`) into, inside ``out_dir``:

* ``report.html`` — everything, figures embedded as base64 PNG; no external links, scripts,
  fonts or stylesheets, so that it opens from disk in any browser with no network;
* ``summary.md`` — the headline, ranking, convergence and cautions in Markdown;
* ``figures/*.png`` (and ``figures/*.svg`` with ``[report] formats = ["png", "svg"]``) —
  every figure of :mod:`plyrisk.report.figures.outputs`, each drawn once per format;
* ``quantiles.csv``, ``indices.csv``, ``group_indices.csv``, ``ranking.csv`` and, when a
  tolerance table is passed, ``tolerances.csv``.

The report re-reads the study from ``attrs["config_text"]``
(:func:`plyrisk.study.config.loads_study`) for
the stack and the input distributions in the user's units. What each section holds is
described in ``docs/report.md``. This module assembles the HTML and Markdown; the display tables
are built by :mod:`plyrisk.report.tables`, the CSV files written by
:mod:`plyrisk.report.csv_tables`.
"""

from __future__ import annotations

import base64
import html
import re
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from functools import partial
from pathlib import Path
from typing import Any

import xarray as xr

from plyrisk.cautions import CAUTIONS
from plyrisk.display import page_units
from plyrisk.report.csv_tables import write_csv, write_csv_tables
from plyrisk.report.figures import outputs as fg
from plyrisk.report.figures.common import save_figures
from plyrisk.report.shapley import (
    dependence_assumptions,
    has_shapley,
    shapley_paragraphs,
    shapley_tables,
    write_shapley_csv,
)
from plyrisk.report.tables import (
    Table,
    convergence_summary,
    exposure_text,
    headline_table,
    nonconverged_table,
    provenance_table,
    quantile_note,
    quantile_tables,
    ranking_tables,
    scenario_values,
    screening_table,
    stack_tables,
    tolerance_tables,
)
from plyrisk.report.verdict import limit_sentence, verdict_html, verdict_markdown
from plyrisk.results.dataset import is_swept
from plyrisk.study.config import loads_study
from plyrisk.study.settings import DEFAULT_REPORT_FORMATS, REPORT_FORMATS, report_formats_error

__all__ = ["ReportFigure", "ReportFiles", "Table", "figure_formats", "report_figures",
           "write_report"]

TOP_COUNT = 5
"""Parameters listed in the Markdown summary's ranking."""
_REQUIRED = ("inner_surface_temperature", "interface_temperature_quantile",
             "inner_surface_temperature_quantile", "exceedance_probability", "rank_correlation",
             "layer_nominal_thickness", "converged", "sample_block")


@dataclass(frozen=True)
class ReportFiles:
    """Paths of everything :func:`write_report` wrote.

    Attributes
    ----------
    html
        ``report.html``.
    markdown
        ``summary.md``.
    figures
        Every figure file, PNG and SVG.
    tables
        Every CSV table.
    """

    html: Path
    markdown: Path
    figures: list[Path] = field(default_factory=list)
    tables: list[Path] = field(default_factory=list)


@dataclass(frozen=True)
class ReportFigure:
    """One figure of the report: file stem, heading, caption and the matplotlib Figure, or a
    function of no arguments that builds it (built in the process that draws it)."""

    stem: str
    title: str
    caption: str
    figure: Any


# ----------------------------------------------------------------------------------------------
# Figures
# ----------------------------------------------------------------------------------------------


def report_figures(ds: xr.Dataset) -> list[ReportFigure]:
    """Every figure of the report, in order, each with the function that builds it (called
    where the figure is drawn: :func:`plyrisk.report.figures.common.save_figures`).

    Parameters
    ----------
    ds
        A results dataset.

    Returns
    -------
    list of ReportFigure
    """
    ds = fg.surrogate_view(ds)
    sobol = "sobol_total" in ds
    out: list[ReportFigure] = []
    for i, label, _ in scenario_values(ds):
        sfx = "" if i is None else f"_{i + 1}"
        at = f" — {exposure_text(ds, label)}" if label else ""
        out.append(ReportFigure(
            f"temperature_profile{sfx}", f"Temperature through the assembly{at}",
            "Median and 5–95 % / 1–99 % bands of each face temperature, from the exposed face "
            "to the innermost face; layers and gaps are drawn in their nominal widths, contact "
            "resistances (no width) as dotted lines. Straight lines join the faces: the profile "
            "inside a layer is not resolved, and the bands are percentiles of each face taken "
            "separately, not the profile of any one sample.",
            partial(fg.profile_figure, ds, scenario=i)))
        if sobol:
            out.append(ReportFigure(
                f"sobol_indices{sfx}", f"Sobol indices per parameter{at}",
                "First-order (variance share of the input alone) and total (including its "
                "interactions) Sobol indices of the inner-surface temperature, with bootstrap "
                "confidence intervals, sorted by the total index. Hatched bars: the interval is "
                "wider than the convergence threshold; the ranking of those is not settled.",
                partial(fg.indices_figure, ds, scenario=i)))
            out.append(ReportFigure(
                f"layer_indices{sfx}", f"Sobol indices per layer{at}",
                "Indices of each layer's (or boundary's) parameters varied together: which "
                "layer dominates the spread of the inner-surface temperature. Layers without "
                "an uncertain input are not shown.",
                partial(fg.group_indices_figure, ds, scenario=i)))
        else:
            out.append(ReportFigure(
                f"rank_correlation{sfx}", f"Screening: rank correlation per parameter{at}",
                "Spearman rank correlation of each input with the inner-surface temperature. A "
                "screening measure only: it does not apportion the variance and misses "
                "interactions.", partial(fg.indices_figure, ds, scenario=i)))
            if "pce_total" in ds:
                for groups, stem, what in ((False, "surrogate_indices", "parameter"),
                                           (True, "surrogate_layer_indices", "layer")):
                    out.append(ReportFigure(
                        f"{stem}{sfx}", f"Sobol indices from the surrogate, per {what}{at}",
                        "First-order and total Sobol indices of the inner-surface temperature "
                        "computed from a polynomial-chaos surrogate fitted to the samples, with "
                        "bootstrap intervals. They are only as good as the surrogate: check its "
                        "leave-one-out Q2 (in the title) is close to 1.",
                        partial(fg.surrogate_indices_figure, ds, scenario=i, groups=groups)))
        out.append(ReportFigure(
            f"inner_temperature_distribution{sfx}",
            f"Distribution of the inner-surface temperature{at}",
            "Histogram and empirical cumulative distribution of the inner-surface temperature "
            "over the independent, converged samples, with the limit, P95 and its confidence "
            "interval (shaded) and the exceedance probability.",
            partial(fg.distribution_figure, ds, scenario=i)))
        out.append(ReportFigure(
            f"inner_temperature_scatter{sfx}", f"Response to the most influential inputs{at}",
            "The inner-surface temperature of each independent, converged sample against the "
            "three most influential inputs (by total Sobol index; for method = pce by the "
            "surrogate's total index, or by |rank correlation| without a surrogate), in the "
            "units they were given in. Samples over the limit are marked as orange triangles.",
            partial(fg.scatter_figure, ds, scenario=i)))
    if is_swept(ds):
        out.append(ReportFigure(
            "exposure_sweep", "Inner-surface temperature against the exposure",
            "Median and 5–95 % band of the inner-surface temperature at each swept level, the "
            "upper confidence bound of P95 and the limit. The read-off interpolates linearly "
            "between swept levels; run a finer sweep around it before relying on it.",
            partial(fg.sweep_figure, ds)))
        target = _exceedance_target(ds)
        out.append(ReportFigure(
            "exceedance_sweep", "Probability of exceeding the limit against the exposure",
            "The probability that the inner-surface temperature exceeds the limit at each "
            "swept level, with its confidence band"
            + (" and the target of [tolerances]" if target is not None else "")
            + ". Nothing is computed between the swept levels.",
            partial(fg.exceedance_sweep_figure, ds, target=target)))
    if "growth_sobol_total" in ds:
        out.append(ReportFigure(
            "index_convergence", "Convergence of the indices as the study grew",
            "The total Sobol indices of the most influential inputs (inner-surface "
            "temperature) at each doubling of the base samples (--until-converged), with "
            "their confidence half-widths. Rankings that still cross at the last step are not "
            "settled.", partial(fg.growth_figure, ds)))
    return out


def _exceedance_target(ds: xr.Dataset) -> float | None:
    """The bound of a ``[tolerances]`` target on P(exceed) in the stored config, if any."""
    study, _ = _study(ds)
    settings = getattr(study, "tolerances", None)
    target = getattr(settings, "target", None)
    if getattr(target, "kind", None) == "exceedance":
        return float(target.threshold)  # type: ignore[union-attr]
    return None


def _save(figs: list[ReportFigure], folder: Path, formats: Sequence[str] = ("png",)
          ) -> tuple[list[Path], dict[str, str]]:
    """Write the figures (each drawn once per format) and embed their PNG files."""
    with fg.styled():
        paths = save_figures([(f.stem, f.figure) for f in figs], folder, formats=formats)
    embedded = {f.stem: base64.b64encode((folder / f"{f.stem}.png").read_bytes()).decode("ascii")
                for f in figs}
    return paths, embedded


def figure_formats(ds: xr.Dataset) -> tuple[str, ...]:
    """The figure formats of the study behind ``ds`` (``[report] formats`` of its stored config
    text; PNG only when it has none or an unreadable one) [-]."""
    import tomllib

    try:
        raw = tomllib.loads(str(ds.attrs.get("config_text", ""))).get("report", {})
    except tomllib.TOMLDecodeError:
        return DEFAULT_REPORT_FORMATS
    formats = raw.get("formats") if isinstance(raw, dict) else None
    if formats is None or report_formats_error(formats) is not None:
        return DEFAULT_REPORT_FORMATS
    return tuple(f for f in REPORT_FORMATS if f in formats)


# ----------------------------------------------------------------------------------------------
# Inputs: the stored study and the tolerance table
# ----------------------------------------------------------------------------------------------


def _study(ds: xr.Dataset):
    """The study re-read from the stored config text, or ``(None, reason)``."""
    text = ds.attrs.get("config_text")
    if not text:
        return None, "the dataset holds no config text"
    source = str(ds.attrs.get("config_source", "<results>"))
    try:
        return loads_study(str(text), source=source), ""
    except Exception as err:  # a newer or older config schema: report it, never fail the report
        upgraded = upgrade_config_text(str(text))
        if upgraded != text:
            try:
                return loads_study(upgraded, source=source), ""
            except Exception:
                pass
        return None, f"{type(err).__name__}: {err}"


def upgrade_config_text(text: str) -> str:
    r"""A stored config text with the former spellings the reader now refuses replaced by
    the current ones (``[tolerances] method`` → ``design``), so that the report of an older
    results file still shows its study. Only for re-reading stored texts.

    Examples
    --------
    >>> upgrade_config_text('[tolerances]\nmethod = "lhs"\n[study]\nmethod = "pce"\n')
    '[tolerances]\ndesign = "lhs"\n[study]\nmethod = "pce"\n'
    """
    out, section = [], ""
    for line in text.splitlines(keepends=True):
        head = re.match(r"\s*\[+\s*([^\]\s]+)", line)
        if head:
            section = head.group(1)
        elif section == "tolerances":
            line = re.sub(r"^(\s*)method(\s*=)", r"\1design\2", line)
        out.append(line)
    return "".join(out)


def _tolerance_table(table) -> tuple[list[str], list[dict]]:
    if hasattr(table, "to_dict") and hasattr(table, "columns"):
        if getattr(table.index, "name", None) is not None:
            table = table.reset_index()
        records = table.to_dict(orient="records")
        return [str(c) for c in table.columns], [{str(k): v for k, v in r.items()}
                                                  for r in records]
    if isinstance(table, Sequence) and not isinstance(table, str | bytes):
        records = list(table)
        for i, r in enumerate(records):
            if not isinstance(r, Mapping):
                raise ValueError(f"tolerance_table[{i}] must be a mapping (one record), got "
                                 f"{type(r).__name__}")
        columns = list(dict.fromkeys(str(k) for r in records for k in r))
        return columns, [{str(k): v for k, v in r.items()} for r in records]
    raise ValueError(f"tolerance_table must be a pandas DataFrame, a list of dicts or None, got "
                     f"{type(table).__name__}")


NO_SOBOL = ("Without a Saltelli design (method = \"saltelli\") the Sobol indices, where shown, "
            "come from a polynomial-chaos surrogate fitted to the samples: trust them only when "
            "its leave-one-out Q2 is close to 1. The rank correlation is a screening measure of "
            "monotone influence only and misses interactions.")
"""Said wherever a ranking is shown for a pce study."""

INDEPENDENT_INPUTS = (
    "The uncertain inputs are sampled independently of each other from the distributions "
    "given; the results are only as good as those distributions.")
"""The assumption on the inputs' dependence (replaced for correlated inputs:
:func:`plyrisk.report.shapley.dependence_assumptions`)."""

ASSUMPTIONS = (
    "Steady state: the temperatures are those reached after a long, constant exposure; no "
    "transient heating, no heat stored in the layers.",
    "One-dimensional heat flow through the thickness; no edge or seam effects.",
    "Dry fabrics: no moisture, sweat or evaporation.",
    "No compression of the layers or gaps beyond the widths given; no degradation, charring "
    "or melting.",
    "Grey, diffuse surfaces for radiation across gaps.",
    "Air gaps conduct through still air unless gap convection is enabled; air properties are "
    "those of dry air at 1 atm, valid for gap temperatures of 250–1500 K.",
    INDEPENDENT_INPUTS,
    "Percentiles and the exceedance probability come from the independent samples (for a "
    "Sobol design its A and B blocks, which are quasi-random: the confidence intervals, "
    "derived for independent draws, are then approximate).",
)
"""The model's assumptions and limits, listed in every report."""


# ----------------------------------------------------------------------------------------------
# Rendering
# ----------------------------------------------------------------------------------------------

_CSS = """
body{font-family:system-ui,-apple-system,"Segoe UI",Roboto,Helvetica,Arial,sans-serif;
 color:#222;max-width:62rem;margin:2rem auto;padding:0 1rem;line-height:1.45}
h1{font-size:1.6rem;margin-bottom:.2rem}h2{border-bottom:2px solid #1f4e79;padding-bottom:.2rem;
 margin-top:2.2rem}h3{margin-top:1.6rem}
table{border-collapse:collapse;margin:.6rem 0 1.2rem;font-size:.9rem}
caption{text-align:left;font-weight:600;padding:.3rem 0}
th,td{border:1px solid #c8c8c8;padding:.25rem .5rem;text-align:left;vertical-align:top}
th{background:#eef2f7}
.cautions{border:3px solid #b35900;background:#fff6ea;padding:.6rem 1.2rem;margin:1rem 0}
.cautions h2{border:none;margin-top:.4rem;color:#7a3d00}
.headline{font-size:1.05rem}
figure{margin:1.2rem 0}figure img{max-width:100%;height:auto;border:1px solid #ddd}
figcaption{font-size:.9rem;color:#444}
pre{background:#f6f6f6;padding:.8rem;overflow-x:auto;font-size:.8rem}
.sub{color:#555}
table{max-width:100%}td{overflow-wrap:break-word}
nav.toc{border:1px solid #d8dee8;background:#f8fafc;padding:.4rem 1.2rem;margin:1rem 0}
nav.toc h2{border:none;margin:.3rem 0;font-size:1.05rem}
nav.toc ol{margin:.2rem 0;padding-left:1.8rem;columns:2 18rem;column-gap:3.5rem}
nav.toc li{break-inside:avoid}
nav.toc a{color:#1f4e79;text-decoration:none}nav.toc a:hover{text-decoration:underline}
ul.advice{padding-left:1.2rem}
@media (max-width:900px){body{margin:1rem auto;padding:0 .6rem}
 table{font-size:.82rem}th,td{padding:.2rem .35rem;overflow-wrap:anywhere}}
@media print{
 @page{margin:15mm 14mm}
 body{max-width:none;margin:0;padding:0;font-size:10pt;line-height:1.35}
 h1,h2,h3,caption{break-after:avoid;page-break-after:avoid}
 h2,h3{break-inside:avoid}
 figure,tr,.cautions,nav.toc,ul.advice{break-inside:avoid;page-break-inside:avoid}
 figure img{max-width:100%;max-height:22cm;object-fit:contain;border:none}
 table{width:100%;font-size:8.5pt;break-inside:auto}
 thead{display:table-header-group}
 th,td{overflow-wrap:anywhere;padding:.15rem .3rem}
 pre{white-space:pre-wrap;overflow:visible;font-size:7.5pt}
 nav.toc a{color:inherit}
 nav.toc ol{columns:2}
}
"""


def _esc(text: Any) -> str:
    return html.escape(str(text), quote=True)


_HEADING = re.compile(r"<h2(?P<attrs>[^>]*)>(?P<text>.*?)</h2>")


def with_contents(lines: list[str]) -> list[str]:
    """The HTML lines with an id on every ``<h2>`` and a table of contents of them, placed
    after the answer: before the "What was studied" section (else after the first cautions box,
    the compact one below the verdict; else before the first section heading), so that the
    verdict and the answer come first on the screen.

    Parameters
    ----------
    lines
        Lines of a report page.

    Returns
    -------
    list of str
    """
    seen: dict[str, int] = {}
    entries: list[tuple[str, str]] = []

    def tag(m: re.Match) -> str:
        text = re.sub(r"<[^>]+>", "", m.group("text"))
        found = re.search(r'id="([^"]+)"', m.group("attrs"))
        if found:
            anchor = found.group(1)
        else:
            base = re.sub(r"[^a-z0-9]+", "-", html.unescape(text).lower()).strip("-") or "s"
            seen[base] = seen.get(base, 0) + 1
            anchor = base if seen[base] == 1 else f"{base}-{seen[base]}"
        if text not in {t for _, t in entries}:
            entries.append((anchor, text))
        return f'<h2 id="{anchor}"{m.group("attrs")}>{m.group("text")}</h2>' if not found \
            else m.group(0)

    out = [_HEADING.sub(tag, line) for line in lines]
    if not entries:
        return out
    nav = ('<nav class="toc" aria-label="Contents"><h2 class="toc-title">Contents</h2><ol>'
           + "".join(f'<li><a href="#{a}">{t}</a></li>' for a, t in entries) + "</ol></nav>")
    studied = next((i for i, line in enumerate(out) if 'id="what-was-studied"' in line), None)
    if studied is not None:  # the answer stays on the first screen, the contents follow it
        return out[:studied] + [nav] + out[studied:]
    box = next((i for i, line in enumerate(out) if '<div class="cautions' in line), None)
    if box is None:
        box = next(i for i, line in enumerate(out) if _HEADING.search(line)) - 1
    return out[:box + 1] + [nav] + out[box + 1:]


def _html_table(t: Table) -> str:
    out = ["<table>"]
    if t.caption:
        out.append(f"<caption>{_esc(page_units(t.caption))}</caption>")
    out.append("<thead><tr>" + "".join(f"<th>{_esc(page_units(h))}</th>" for h in t.header)
               + "</tr></thead>")
    out.append("<tbody>")
    for r in t.rows:
        out.append("<tr>" + "".join(f"<td>{_esc(page_units(str(c)))}</td>" for c in r)
                   + "</tr>")
    out.append("</tbody></table>")
    return "\n".join(out)


def _md_table(t: Table) -> str:
    def cell(c: str) -> str:
        return page_units(str(c)).replace("|", "\\|").replace("\n", " ")

    out = [f"**{cell(t.caption)}**", ""] if t.caption else []
    out.append("| " + " | ".join(cell(h) for h in t.header) + " |")
    out.append("|" + "---|" * len(t.header))
    out += ["| " + " | ".join(cell(c) for c in r) + " |" for r in t.rows]
    return "\n".join(out)


def screening_html(ds: xr.Dataset) -> list[str]:
    """The section on a ``[screening]`` pre-study (none without one), steady or transient."""
    screen = screening_table(ds)
    if screen is None:
        return []
    return ["<h2>Screening before the study</h2>",
            "<p>Inputs whose Morris measures stayed below the threshold were fixed at their "
            "nominal values for the main study; the study's indices and percentiles cover the "
            "kept inputs only.</p>", _html_table(screen)]


def screening_markdown(ds: xr.Dataset) -> list[str]:
    """:func:`screening_html` for ``summary.md``."""
    screen = screening_table(ds)
    return [] if screen is None else ["## Screening before the study", "", _md_table(screen),
                                      ""]


def _cautions_html() -> str:
    items = "".join(f"<li>{_esc(c)}</li>" for c in CAUTIONS)
    return f'<div class="cautions"><h2>Cautions</h2><ul>{items}</ul></div>'


def _cautions_md() -> str:
    return "## Cautions\n\n" + "\n".join(f"- **{c}**" for c in CAUTIONS)


def _pending_tolerances(function: Callable[[], Any], advice: Sequence[str] | None
                        ) -> tuple[Any, Sequence[str] | None]:
    """Call a tolerance table computed meanwhile: it returns the table or a ``(table, advice)``
    pair; the advice given to the report applies when it returns a table alone."""
    got = function()
    if isinstance(got, tuple):
        return got[0], got[1]
    return got, advice


@dataclass(frozen=True)
class _Tolerances:
    """The tolerance section: the table's columns and records and the advice lines."""

    columns: list[str]
    records: list[dict]
    advice: tuple[str, ...] = ()

    @classmethod
    def of(cls, table: Any, advice: Sequence[str] | None) -> _Tolerances | None:
        if table is None and not advice:
            return None
        columns, records = _tolerance_table(table) if table is not None else ([], [])
        return cls(columns, records, tuple(str(a) for a in (advice or ())))

    def write_csv(self, out: Path) -> Path:
        path = write_csv(out / "tolerances.csv", self.columns,
                         [[r.get(c) for c in self.columns] for r in self.records])
        if self.advice:
            from plyrisk.tolerances.output import ADVICE_PREFIX

            text = path.read_text(encoding="utf-8")
            path.write_text("".join(f"{ADVICE_PREFIX}{' '.join(a.split())}\n"
                                    for a in self.advice) + text, encoding="utf-8")
        return path

    def html(self) -> list[str]:
        h = ['<h2 id="tolerances">Tolerance recommendations</h2>']
        if self.advice:
            h.append('<ul class="advice">' + "".join(f"<li><strong>{_esc(a)}</strong></li>"
                                                    for a in self.advice) + "</ul>")
        if self.records:
            h += [_html_table(t) for t in tolerance_tables(self.columns, self.records)]
        else:
            h.append("<p>The tolerance table has no rows.</p>")
        return h

    def markdown(self) -> list[str]:
        m = ["## Tolerance recommendations", ""]
        m += [f"- **{a}**" for a in self.advice] + ([""] if self.advice else [])
        for t in tolerance_tables(self.columns, self.records) if self.records else []:
            m += [_md_table(t), ""]
        return m


def write_report(
    ds: xr.Dataset,
    out_dir: str | Path,
    *,
    tolerance_table: Any = None,
    tolerance_advice: Sequence[str] | None = None,
    formats: Sequence[str] | None = None,
    progress: Callable[[str], None] | None = None,
) -> ReportFiles:
    """Write the report of a results dataset: HTML, Markdown summary, figures and CSV tables.

    Parameters
    ----------
    ds
        A results dataset (:func:`plyrisk.results.dataset.to_dataset` or
        :func:`plyrisk.results.dataset.read_results`)
       .
    out_dir
        Folder to write into (created if missing).
    tolerance_table
        Tolerance recommendations to include: a pandas DataFrame or a list of dicts (one per
        row), or ``None``. The columns of ``tolerances.csv``
        (:class:`plyrisk.tolerances.output.ManufacturingRow`) are shown with human headers and
        units; any other columns as they come. It may also be a function of no arguments
        returning the table, or a ``(table, advice)`` pair, called once the figures are drawn
        (so that it can be computed meanwhile, e.g. in another process).
    tolerance_advice
        Lines to act on shown above the tolerance table and written as ``# advice:`` lines
        of ``tolerances.csv``: the independent verification's verdict and the nominal-shift
        advice (:func:`plyrisk.tolerances.output.tolerance_advice`).
    formats
        Figure file formats (``"png"`` and optionally ``"svg"``); default: the study's
        ``[report] formats`` (:func:`figure_formats`), PNG only without one.
    progress
        Called with a short text as each stage begins (figures, tables and HTML).

    Returns
    -------
    ReportFiles
        The paths written.

    Raises
    ------
    ValueError
        When ``ds`` is not a results dataset, or ``tolerance_table`` has a wrong type.

    Notes
    -----
    A transient study's dataset (``attrs["study_kind"] == "transient"``) gets the report of
    :func:`plyrisk.report.transient.write_transient_report`.
    """
    if ds.attrs.get("study_kind") == "transient":
        from plyrisk.report.transient import write_transient_report

        return write_transient_report(ds, out_dir, tolerance_table=tolerance_table,
                                      tolerance_advice=tolerance_advice,
                                      formats=formats, progress=progress)
    ds = fg.surrogate_view(ds)  # a pce study's indices as the report draws them
    missing = [v for v in _REQUIRED if v not in ds.variables]
    if missing or "limit" not in ds.attrs:
        raise ValueError("not a plyrisk results dataset: missing "
                         + ", ".join(missing + ([] if "limit" in ds.attrs else ["attrs.limit"])))
    later = callable(tolerance_table)
    tol = None if later else _Tolerances.of(tolerance_table, tolerance_advice)
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    kinds = _formats(ds, formats)
    if progress is not None:
        progress(f"report: figures ({', '.join(kinds)})")
    figs = report_figures(ds)
    fig_paths, embedded = _save(figs, out / "figures", kinds)
    if later:
        tol = _Tolerances.of(*_pending_tolerances(tolerance_table, tolerance_advice))
    if progress is not None:
        progress("report: CSV tables, report.html, summary.md")
    tables = write_csv_tables(ds, out) + write_shapley_csv(ds, out)
    if tol is not None:
        tables.append(tol.write_csv(out))
    content = _Content.of(ds, figs, embedded, tol)
    html_path = out / "report.html"
    html_path.write_text("\n".join(with_contents(_html_lines(ds, content))) + "\n",
                         encoding="utf-8")
    md_path = out / "summary.md"
    md_path.write_text("\n".join(_markdown_lines(ds, content, out, fig_paths + tables)),
                       encoding="utf-8")
    return ReportFiles(html_path, md_path, fig_paths, tables)


def _formats(ds: xr.Dataset, formats: Sequence[str] | None) -> tuple[str, ...]:
    if formats is None:
        return figure_formats(ds)
    problem = report_formats_error(list(formats))
    if problem is not None:
        raise ValueError(f"formats: {problem}")
    return tuple(f for f in REPORT_FORMATS if f in formats)


@dataclass(frozen=True)
class _Content:
    """What both the HTML report and the Markdown summary are made of."""

    study: Any
    why: str
    headline: Any
    verdicts: list[str]
    crossing: Any
    conv_text: list[str]
    conv_table: Any
    ranking: list[Any]
    title: str
    notes: list[str]
    figs: list[Any]
    embedded: dict[str, str]
    tol: Any

    @classmethod
    def of(cls, ds: xr.Dataset, figs: list[Any], embedded: dict[str, str],
           tol: Any) -> _Content:
        study, why = _study(ds)
        headline, verdicts = headline_table(ds)
        crossing = fg.limit_crossing(ds) if is_swept(ds) else None
        conv_text, conv_table = convergence_summary(ds)
        ranking = ranking_tables(ds)
        title = str(ds.attrs.get("title", "plyrisk study"))
        notes = [n for n in str(ds.attrs.get("notes", "")).split("\n") if n.strip()]
        return cls(study, why, headline, verdicts, crossing, conv_text, conv_table, ranking,
                   title, notes, figs, embedded, tol)


def _html_lines(ds: xr.Dataset, c: _Content) -> list[str]:
    """The lines of the self-contained HTML report."""
    study, why, headline, verdicts, crossing = c.study, c.why, c.headline, c.verdicts, c.crossing
    conv_text, conv_table, ranking, title, notes = (c.conv_text, c.conv_table, c.ranking,
                                                    c.title, c.notes)
    figs, embedded, tol = c.figs, c.embedded, c.tol
    h: list[str] = ["<!DOCTYPE html>", '<html lang="en">', "<head>", '<meta charset="utf-8">',
                    f"<title>{_esc(title)} — plyrisk report</title>", f"<style>{_CSS}</style>",
                    "</head>", "<body>", f"<h1>{_esc(title)}</h1>",
                    '<p class="sub">plyrisk study report · config '
                    f"{_esc(ds.attrs.get('config_source', ''))}"
                    f" · method {_esc(ds.attrs.get('method', ''))} · seed "
                    f"{_esc(ds.attrs.get('seed', ''))}</p>", verdict_html(ds),
                    "<h2>Headline</h2>", _html_table(headline)]
    h += [f'<p class="headline">{_esc(v)}</p>' for v in verdicts]
    if crossing is not None:
        h.append(f'<p class="headline"><strong>{_esc(crossing.text)}</strong> (linear '
                 "interpolation between swept levels)</p>")
    h.append("<h2>What was studied</h2>")
    if study is not None:
        h += [_html_table(t) for t in stack_tables(study, ds)]
    else:
        h.append(f"<p>The stored config could not be re-read by this version of plyrisk "
                 f"({_esc(why)}); the stack table is left out. The config text is under "
                 "Provenance.</p>")
    h.append(f"<p>{_esc(limit_sentence(ds))}</p>")
    h.append("<h2>Percentiles of the inner-surface temperature</h2>")
    h += [_html_table(t) for t in quantile_tables(ds)]
    h.append(f"<p>{_esc(quantile_note(ds))}</p>")
    h.append("<h2>Ranking: which inputs and layers matter</h2>")
    if has_shapley(ds):
        h += [f"<p>{_esc(t)}</p>" for t in shapley_paragraphs(ds)]
        h += [_html_table(t) for t in shapley_tables(ds)]
    elif "sobol_total" not in ds:
        h.append(f"<p>{_esc(NO_SOBOL)}</p>")
    h += [_html_table(t) for t in ranking]
    h.append("<h2>Figures</h2>")
    for f in figs:
        h.append(f"<figure><h3>{_esc(f.title)}</h3>"
                 f'<img src="data:image/png;base64,{embedded[f.stem]}" alt="{_esc(f.title)}">'
                 f"<figcaption>{_esc(f.caption)}</figcaption></figure>")
    if tol is not None:
        h += tol.html()
    h += screening_html(ds)
    h.append("<h2>Convergence of the indices</h2>")
    h += [f"<p>{_esc(t)}</p>" for t in conv_text]
    if conv_table is not None:
        h.append(_html_table(conv_table))
    h += ["<h2>Samples that did not converge</h2>",
          "<p>Samples whose solve did not converge to a physically valid solution are excluded "
          "from every statistic and counted here; nothing is clipped.</p>",
          _html_table(nonconverged_table(ds))]
    h.append("<h2>Assumptions and limits of the model</h2><ul>"
             + "".join(f"<li>{_esc(a)}</li>" for a in dependence_assumptions(ds, ASSUMPTIONS))
             + "".join(f"<li>{_esc(n)}</li>" for n in notes) + "</ul>")
    h.append(_cautions_html())
    h += ["<h2>Provenance</h2>", _html_table(provenance_table(ds)),
          "<h3>Config text</h3>", f"<pre>{_esc(ds.attrs.get('config_text', ''))}</pre>",
          "</body>", "</html>"]
    return h


def _markdown_lines(ds: xr.Dataset, c: _Content, out: Path, files: list[Path]) -> list[str]:
    """The lines of ``summary.md``."""
    headline, verdicts, crossing = c.headline, c.verdicts, c.crossing
    conv_text, conv_table, ranking, title, notes = (c.conv_text, c.conv_table, c.ranking,
                                                    c.title, c.notes)
    m = [f"# {title}", "", "plyrisk study summary; the full report is `report.html`.", "",
         *verdict_markdown(ds), "## Headline", "", _md_table(headline), ""]
    m += [f"- {v}" for v in verdicts]
    if crossing is not None:
        m += ["", f"**{crossing.text}** (linear interpolation between swept levels)"]
    m += ["", "## Ranking", ""]
    if has_shapley(ds):
        m += [x for t in shapley_paragraphs(ds) for x in (t, "")]
        m += [x for t in shapley_tables(ds) for x in (_md_table(t), "")]
    elif "sobol_total" not in ds:
        m += [NO_SOBOL, ""]
    for t in ranking:
        m += [_md_table(Table(t.header, t.rows[:TOP_COUNT], t.caption
                              + (f" (top {TOP_COUNT})" if len(t.rows) > TOP_COUNT else ""))), ""]
    if c.tol is not None:
        m += c.tol.markdown()
    m += screening_markdown(ds)
    m += ["## Convergence", "", *conv_text, ""]
    if conv_table is not None:
        m += [_md_table(conv_table), ""]
    m += ["## Samples that did not converge", "", _md_table(nonconverged_table(ds)), ""]
    if notes:
        m += ["## Notes", "", *[f"- {n}" for n in notes], ""]
    m += ["## Files", "", *[f"- `{p.relative_to(out).as_posix()}`" for p in files],
          "", "## Provenance", "", _md_table(provenance_table(ds)), "", _cautions_md(), ""]
    return m
