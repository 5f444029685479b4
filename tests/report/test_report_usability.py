"""What makes the report usable: the tolerance section (human table, advice, kept by
``plyrisk report``), the table of contents and print stylesheet, index status in the CSV
tables, figure text size, and the new figures (P(exceed) against the exposure, convergence of
the indices, samples over the limit).

The study behind the datasets is invented (``invented_dataset`` in tests/conftest.py) and only
supplies data to draw; check values come from the dataset itself.
"""

from __future__ import annotations

import csv
import math
import shutil
import subprocess

import numpy as np
import pytest
import xarray as xr

from plyrisk.report.csv_tables import index_status, write_csv_tables
from plyrisk.report.figures import outputs as fg
from plyrisk.report.html import _CSS, with_contents
from plyrisk.report.tables import MANUFACTURING_COLUMNS, share_text, tolerance_tables
from plyrisk.text.indices import NOT_RESOLVED
from plyrisk.tolerances.output import (
    ManufacturingRow,
    manufacturing_rows,
    read_tolerance_csv,
    write_tolerance_csv,
)

ROWS = [  # invented rows in the columns of tolerances.csv
    ManufacturingRow("shell.thickness", "shell", "0.5 mm +/- 0.04 mm (normal, band = +/-3 sd)",
                     2.5075e-05, "held at nominal (CRN)", "P95", 45.309912, "degC",
                     "0.5 mm +/- 0.04 mm (normal, band = +/-3 sd) (unchanged)", 1.0,
                     "P95 <= limit (44 degC)"),
    ManufacturingRow("skin gap.width", "skin gap", "lognormal(median 3 mm, gsd 1.5)", 0.623789,
                     "held at nominal (CRN)", "P95", 44.667712, "degC",
                     "lognormal(median 3 mm, gsd 1.268)", 0.585897, "P95 <= limit (44 degC)"),
]
ADVICE = ["Independent verification -> MET: P95 = 43.86 degC [43.81 degC, 43.91 degC]",
          "Nominal shift of shell.thickness: the current nominal 0.5 mm meets the target"]


def records() -> list[dict]:
    from dataclasses import asdict

    return [asdict(r) for r in ROWS]


# ----------------------------------------------------------------------------------------------
# Tolerance section
# ----------------------------------------------------------------------------------------------


def test_share_text_is_a_percentage_with_two_digits():
    assert share_text(2.5075e-05) == "< 0.01 %"
    assert share_text(0.000241592) == "0.024 %"
    assert share_text(0.623789) == "62 %"
    assert share_text(float("nan")) == share_text("") == "n/a"


def test_manufacturing_table_is_split_with_human_headers_and_units():
    effect, spec = tolerance_tables(list(MANUFACTURING_COLUMNS), records())
    assert effect.header == ["Parameter", "Layer", "Share of the variance",
                             "P95 with this spread halved [°C]"]
    assert effect.rows[0] == ["shell.thickness", "shell", "< 0.01 %", "45.31"]
    assert spec.header == ["Parameter", "Current specification", "Recommended specification",
                           "Spread factor"]
    assert spec.rows[1][-1] == "0.59×"
    assert "P95 <= limit (44 degC)" in spec.caption
    assert not any("e-0" in c for t in (effect, spec) for r in t.rows for c in r)
    # every column but the specifications stays narrow (fits 800 px and print)
    assert max(len(c) for r in effect.rows for c in r) <= 32


def test_other_tables_are_rendered_as_they_come():
    (t,) = tolerance_tables(["parameter", "gain"], [{"parameter": "a", "gain": 0.25}])
    assert t.header == ["parameter", "gain"] and t.rows == [["a", "0.25"]]


def test_tolerance_csv_round_trip_keeps_the_advice_and_the_cautions(tmp_path):
    path = write_tolerance_csv(ROWS, tmp_path / "tolerances.csv", advice=ADVICE)
    text = path.read_text(encoding="utf-8")
    assert text.startswith("# CAUTIONS") and "# advice: Independent verification" in text
    rows, advice = read_tolerance_csv(path)
    assert advice == ADVICE
    back = manufacturing_rows(rows)
    assert back[1].recommended_factor == pytest.approx(ROWS[1].recommended_factor, rel=1e-5)
    assert [r.recommended_spec for r in back] == [r.recommended_spec for r in ROWS]
    with pytest.raises(ValueError, match="missing column"):
        manufacturing_rows([{"parameter": "x"}])


# ----------------------------------------------------------------------------------------------
# Page structure
# ----------------------------------------------------------------------------------------------


def test_contents_link_every_section_once():
    lines = ["<h1>t</h1>", '<div class="cautions"><h2>Cautions</h2></div>', "<h2>Headline</h2>",
             "<h2>Figures</h2>", '<h2 id="tolerances">Tolerance recommendations</h2>',
             '<div class="cautions"><h2>Cautions</h2></div>', "<h2>Figures</h2>"]
    out = with_contents(lines)
    nav = next(line for line in out if line.startswith('<nav class="toc"'))
    assert out.index(nav) == 2  # right after the first cautions box
    for anchor in ("cautions", "headline", "figures", "tolerances"):
        assert f'href="#{anchor}"' in nav
        assert sum(f'id="{anchor}"' in line for line in out) == 1
    assert nav.count("<li>") == 4 and 'id="figures-2"' in out[-1]
    # with a "What was studied" section, the contents come just before it (after the answer)
    out = with_contents(lines[:3] + ["<h2>What was studied</h2>"] + lines[3:])
    nav = next(line for line in out if line.startswith('<nav class="toc"'))
    assert out.index(nav) == 3 and out[4].startswith('<h2 id="what-was-studied"')


def test_print_stylesheet_keeps_headings_with_their_content():
    css = _CSS.split("@media print{", 1)[1]
    for rule in ("break-after:avoid", "break-inside:avoid", "max-width:100%",
                 "pre{white-space:pre-wrap", "thead{display:table-header-group}"):
        assert rule in css


# ----------------------------------------------------------------------------------------------
# Index status in the CSV tables
# ----------------------------------------------------------------------------------------------


def test_index_status():
    values = {"first": np.array([0.2, 1.4, 0.5]), "first_ci": np.array([0.01, 0.1, 0.01]),
              "total": np.array([0.3, 1.5, 0.6]), "total_ci": np.array([0.01, 0.1, 0.2])}
    conv = np.array([True, True, False])
    assert [index_status(values, j, conv) for j in range(3)] == [
        "converged", NOT_RESOLVED, "unconverged"]
    assert index_status(values, 0, None) == ""


def test_indices_csv_flags_an_index_outside_the_unit_interval(tmp_path, invented_dataset):
    ds = invented_dataset("saltelli").copy(deep=True)
    ds["sobol_total"].values[0, 0, 0] = 1.6  # far outside [0, 1] beyond its interval
    ds["sobol_total_ci"].values[0, 0, 0] = 0.05
    write_csv_tables(ds, tmp_path)
    with (tmp_path / "indices.csv").open(encoding="utf-8") as f:
        rows = list(csv.DictReader(f))
    flagged = [r for r in rows if r["status"] == NOT_RESOLVED]
    assert len(flagged) == 1 and float(flagged[0]["total"]) == pytest.approx(1.6)
    assert {r["status"] for r in rows} <= {NOT_RESOLVED, "converged", "unconverged"}


# ----------------------------------------------------------------------------------------------
# Figures
# ----------------------------------------------------------------------------------------------

SMALLEST_PX = 10.5
"""Smallest text height wanted in an 800 px window (content about 768 px wide) [px]."""


def smallest_text_px(fig) -> float:
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    FigureCanvasAgg(fig).draw()  # realise every text
    sizes = [t.get_fontsize() for t in fig.findobj(lambda a: hasattr(a, "get_fontsize"))
             if getattr(a := t, "get_text", lambda: "")() and a.get_visible()]
    width_px = fig.get_figwidth() * 150  # saved at 150 dpi
    return min(sizes) / 72 * 150 * min(1.0, 768 / width_px)


@pytest.mark.slow
def test_figure_text_is_readable_at_800_px(invented_dataset):
    ds = invented_dataset("saltelli", True)
    figs = [fg.profile_figure(ds, scenario=0), fg.indices_figure(ds, scenario=0),
            fg.group_indices_figure(ds, scenario=0), fg.distribution_figure(ds, scenario=0),
            fg.indices_figure(invented_dataset("pce"), scenario=None),
            fg.scatter_figure(ds, scenario=0), fg.sweep_figure(ds),
            fg.exceedance_sweep_figure(ds, target=0.01)]
    for fig in figs:
        assert smallest_text_px(fig) >= SMALLEST_PX
        from matplotlib.backends.backend_agg import FigureCanvasAgg

        renderer = FigureCanvasAgg(fig).get_renderer()
        fig.draw(renderer)
        right = fig.get_figwidth() * fig.dpi
        texts = list(fig.texts) + [x for lg in fig.legends for x in lg.get_texts()]
        for ax in fig.axes:
            texts += [ax.title, ax._left_title, ax._right_title, ax.xaxis.label,
                      ax.yaxis.label, *ax.texts]
        for t in texts:
            if t.get_text() and t.get_visible():  # no title or label cut at the edge
                box = t.get_window_extent(renderer)
                assert -2.0 <= box.x0 and box.x1 <= right + 2.0, t.get_text()


def test_distribution_numbers_sit_above_the_histogram(invented_dataset):
    fig = fg.distribution_figure(invented_dataset("pce"))
    fig.canvas.draw()
    ax = next(a for a in fig.axes if a.get_label() == "histogram")
    box = ax.get_window_extent()
    texts = [t for t in ax.texts if t.get_text()]
    assert any("P(T >" in t.get_text() for t in texts)
    for t in texts:  # nothing written over the bars
        assert t.get_window_extent().y0 >= box.y1 - 1.0


def test_scatter_marks_the_samples_over_the_limit(invented_dataset):
    ds = invented_dataset("pce").copy(deep=True)
    t = ds["inner_surface_temperature"].values
    ds.attrs["limit"] = float(np.nanpercentile(t, 80))  # a fifth of the samples over it
    fig = fg.scatter_figure(ds)
    over = t > ds.attrs["limit"]
    for ax in (a for a in fig.axes if a.get_label().startswith("scatter:")):
        name = ax.get_label().split(":", 1)[1]
        marked = next(c for c in ax.collections if c.get_gid() == f"over:{name}")
        assert len(marked.get_offsets()) == int(over.sum())
    legend = [x.get_text() for lg in fig.legends for x in lg.get_texts()]
    assert any(f"over the limit ({int(over.sum())} of {t.size}" in x for x in legend)


def test_exceedance_sweep_is_the_dataset_probability_with_band_and_target(invented_dataset):
    ds = invented_dataset("saltelli", True)
    fig = fg.exceedance_sweep_figure(ds, target=0.05)
    ax = next(a for a in fig.axes if a.get_label() == "exceedance sweep")
    line = next(ln for ln in ax.lines if ln.get_gid() == "exceedance")
    order = np.argsort(ds["scenario"].values)
    np.testing.assert_allclose(line.get_ydata(),
                               100 * ds["exceedance_probability"].values[order], rtol=1e-12)
    target = next(ln for ln in ax.lines if ln.get_gid() == "target")
    assert target.get_ydata()[0] == pytest.approx(5.0)
    assert any(c.get_gid() == "exceedance_band" for c in ax.collections)
    with pytest.raises(ValueError):
        fg.exceedance_sweep_figure(invented_dataset("saltelli"))


def _grown(ds: xr.Dataset) -> xr.Dataset:
    steps = 3
    rng = np.random.default_rng(1)
    total = np.abs(rng.normal(0.3, 0.1, (steps, ds.sizes["parameter"])))
    half = np.array([[0.2], [0.1], [0.05]]) * np.ones_like(total)
    return ds.assign(
        growth_base_samples=("growth_step", np.array([64, 128, 256])),
        growth_sobol_total=(("growth_step", "parameter"), total),
        growth_sobol_total_ci=(("growth_step", "parameter"), half)).assign_attrs(
        growth_target=0.05)


def test_growth_figure_draws_the_top_indices_at_every_step(invented_dataset):
    ds = _grown(invented_dataset("saltelli"))
    fig = fg.growth_figure(ds, count=2)
    (ax,) = fig.axes
    drawn = [c for c in ax.containers]
    assert len(drawn) == 2
    last = ds["growth_sobol_total"].values[-1]
    top = [str(ds["parameter"].values[j]) for j in np.argsort(-last)[:2]]
    assert [t.get_text() for t in ax.get_legend().get_texts()] == top
    with pytest.raises(ValueError, match="no growth path"):
        fg.growth_figure(invented_dataset("saltelli"))


# ----------------------------------------------------------------------------------------------
# The page in a browser, and plyrisk report keeping the tolerance section
# ----------------------------------------------------------------------------------------------

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")


@pytest.fixture(scope="module")
def written_report(tmp_path_factory, invented_dataset):
    from dataclasses import asdict

    from plyrisk.report.html import write_report

    out = tmp_path_factory.mktemp("usable")
    files = write_report(invented_dataset("saltelli"), out,
                         tolerance_table=[asdict(r) for r in ROWS], tolerance_advice=ADVICE)
    return files


@pytest.mark.slow
def test_report_carries_contents_advice_and_the_split_tolerance_table(written_report):
    page = written_report.html.read_text(encoding="utf-8")
    assert '<nav class="toc"' in page and 'href="#tolerances"' in page
    assert "Independent verification -&gt; MET" in page
    assert "Share of the variance" in page and "2.5075e-05" not in page
    md = written_report.markdown.read_text(encoding="utf-8")
    assert "## Tolerance recommendations" in md and "Nominal shift of shell.thickness" in md
    _, advice = read_tolerance_csv(written_report.html.parent / "tolerances.csv")
    assert advice == ADVICE


@pytest.mark.slow
@pytest.mark.skipif(CHROMIUM is None, reason="no Chromium on this machine to load the page")
def test_page_loads_in_chromium_without_console_errors(written_report, tmp_path):
    url = written_report.html.resolve().as_uri()
    run = subprocess.run(
        [CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu", "--no-first-run",
         f"--user-data-dir={tmp_path / 'profile'}", "--enable-logging=stderr", "--v=0",
         "--window-size=800,1200", "--dump-dom", url],
        capture_output=True, text=True, timeout=120)
    assert run.returncode == 0, run.stderr[-2000:]
    assert "Tolerance recommendations" in run.stdout
    console = [line for line in run.stderr.splitlines() if "CONSOLE" in line
               or "Uncaught" in line]
    assert not console, console
    pdf = tmp_path / "report.pdf"
    run = subprocess.run(
        [CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu", "--no-first-run",
         f"--user-data-dir={tmp_path / 'profile'}", "--no-pdf-header-footer",
         f"--print-to-pdf={pdf}", url], capture_output=True, text=True, timeout=120)
    assert run.returncode == 0 and pdf.stat().st_size > 10_000


@pytest.mark.slow
def test_plyrisk_report_keeps_the_tolerance_section(tmp_path, small_demo_64_dataset):
    from plyrisk.cli import main
    from plyrisk.results.dataset import write_results

    src, out = tmp_path / "run", tmp_path / "shared"
    src.mkdir()
    write_results(small_demo_64_dataset, src / "results.nc")
    write_tolerance_csv(ROWS, src / "tolerances.csv", advice=ADVICE)  # as plyrisk wrote it
    assert main(["report", str(src / "results.nc"), "--out", str(out)]) == 0
    page = (out / "report.html").read_text(encoding="utf-8")
    assert "Tolerance recommendations" in page and "Nominal shift of shell.thickness" in page
    rows, advice = read_tolerance_csv(out / "tolerances.csv")
    assert advice == ADVICE and len(rows) == 2
    assert (out / "tolerances.csv").read_text(encoding="utf-8").startswith("# CAUTIONS")
    assert math.isclose(float(rows[0]["variance_share"]), 2.5075e-05, rel_tol=1e-5)
