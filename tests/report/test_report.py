"""Tests of plyrisk.report.html: a self-contained HTML report, the Markdown summary, figures and
CSVs.

Check values are the dataset's own numbers; the study that supplies the dataset is invented
(``invented_dataset`` in tests/conftest.py) and is never a check value.
"""

from __future__ import annotations

import base64
import csv
import html
import xml.etree.ElementTree as ET
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pytest
import xarray as xr

from plyrisk.cautions import CAUTIONS
from plyrisk.report.figures import outputs as fg
from plyrisk.report.html import ReportFiles, write_report
from plyrisk.results.dataset import is_swept, read_results, write_results

pytestmark = pytest.mark.slow  # every report renders a dozen figures or more (~10 s each)

CASES = [("saltelli", False), ("pce", False), ("saltelli", True), ("pce", True)]
PNG = b"\x89PNG\r\n\x1a\n"
VOID = {"area", "base", "br", "col", "embed", "hr", "img", "input", "link", "meta", "source",
        "track", "wbr"}


@pytest.fixture(scope="session")
def dataset(invented_dataset):
    """The invented study's dataset (tests/conftest.py); a sweep of two exposures keeps the
    reports small (each exposure adds a set of figures)."""
    def of(method: str, swept: bool) -> xr.Dataset:
        return invented_dataset(method, swept, 2)
    return of


@pytest.fixture(scope="module")
def reports(tmp_path_factory, dataset) -> dict[tuple[str, bool], tuple[xr.Dataset, ReportFiles]]:
    out = {}
    for method, swept in CASES:
        ds = dataset(method, swept)
        folder = tmp_path_factory.mktemp(f"{method}_{'swept' if swept else 'unswept'}")
        # SVG on request ([report] formats); one case asks for it
        formats = ("png", "svg") if (method, swept) == ("saltelli", True) else None
        out[(method, swept)] = ds, write_report(ds, folder, formats=formats)
    return out


@pytest.fixture(params=CASES, ids=lambda c: f"{c[0]}-{'swept' if c[1] else 'unswept'}")
def report(request, reports):
    return reports[request.param]


class Checker(HTMLParser):
    """Collects tags and attributes and checks that every element is closed in order."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.stack: list[str] = []
        self.errors: list[str] = []
        self.tags: list[tuple[str, dict]] = []
        self.doctype = ""
        self.text: list[str] = []

    def handle_decl(self, decl: str) -> None:
        self.doctype = decl

    def handle_starttag(self, tag, attrs) -> None:
        self.tags.append((tag, dict(attrs)))
        if tag not in VOID:
            self.stack.append(tag)

    def handle_startendtag(self, tag, attrs) -> None:
        self.tags.append((tag, dict(attrs)))

    def handle_endtag(self, tag) -> None:
        if not self.stack or self.stack[-1] != tag:
            self.errors.append(f"</{tag}> closes {self.stack[-1:] or 'nothing'}")
        else:
            self.stack.pop()

    def handle_data(self, data) -> None:
        self.text.append(data)


def parse(path: Path) -> Checker:
    c = Checker()
    c.feed(path.read_text(encoding="utf-8"))
    c.close()
    return c


def read_csv(path: Path) -> tuple[list[str], list[dict]]:
    """Header and rows of a CSV table; every row must have exactly the header's length."""
    with path.open(newline="", encoding="utf-8") as fh:
        header, *body = list(csv.reader(fh))
    assert all(len(row) == len(header) for row in body), f"ragged rows in {path.name}"
    return header, [dict(zip(header, row, strict=True)) for row in body]


def n_scenarios(ds: xr.Dataset) -> int:
    return ds.sizes.get("scenario", 1)


# ----------------------------------------------------------------------------------------------
# HTML
# ----------------------------------------------------------------------------------------------


def test_html_is_well_formed_and_self_contained(report):
    ds, files = report
    text = files.html.read_text(encoding="utf-8")
    c = parse(files.html)
    assert c.doctype.lower() == "doctype html"
    assert not c.errors and not c.stack, (c.errors, c.stack)
    assert "http://" not in text and "https://" not in text
    names = [t for t, _ in c.tags]
    assert "link" not in names and "script" not in names and "iframe" not in names
    for tag, attrs in c.tags:
        if "src" in attrs:
            assert attrs["src"].startswith("data:image/png;base64,"), (tag, attrs["src"][:40])
        if "href" in attrs:  # the table of contents links inside the page only
            assert attrs["href"].startswith("#"), (tag, attrs["href"][:40])
    assert "url(" not in text and "@import" not in text and "@font-face" not in text


def test_html_embeds_every_figure(report):
    ds, files = report
    c = parse(files.html)
    imgs = [a["src"] for t, a in c.tags if t == "img"]
    pngs = [p for p in files.figures if p.suffix == ".png"]
    assert len(imgs) == len(pngs) > 0
    embedded = sorted(base64.b64decode(s.split(",", 1)[1]) for s in imgs)
    assert embedded == sorted(p.read_bytes() for p in pngs)
    assert all(b.startswith(PNG) for b in embedded)


def test_html_carries_the_cautions_at_the_top_and_the_end(report):
    ds, files = report
    text = files.html.read_text(encoding="utf-8")
    for item in CAUTIONS:  # in full at the end; in short right below the verdict at the top
        assert text.count(html.escape(item)) == 1
    assert text.index("Verdict:") < text.index("not a substitute for certification testing by "
                                               "accredited laboratories") < text.index(
        '<h2 id="headline">Headline</h2>')
    assert text.rindex(html.escape(CAUTIONS[0])) > text.index('<h2 id="assumptions')
    # the verdict, its short caution and the headline come first; the contents follow them,
    # before "What was studied"
    assert text.index("Verdict:") < text.index('<h2 id="headline">Headline</h2>') < text.index(
        '<nav class="toc"') < text.index('<h2 id="what-was-studied"')


def test_html_contents(report):
    ds, files = report
    text = " ".join(parse(files.html).text)
    assert ds.attrs["title"] in text
    for heading in ("Headline", "What was studied", "Ranking", "Figures", "Convergence",
                    "did not converge", "Assumptions and limits", "Provenance"):
        assert heading in text
    for layer in ds["layer"].values:
        if not str(layer).endswith(" contact"):
            assert str(layer) in text
    assert "0.8 mm +/- 0.08 mm" in text  # a distribution as the user gave it
    p95 = fg.to_display_temperature(ds, ds["inner_surface_temperature_quantile"]
                                    .sel(quantile=0.95).values)
    for v in np.atleast_1d(p95):
        assert f"{v:.1f} °C" in text
    assert f"seed{ds.attrs['seed']}" in text.replace(" ", "")
    assert ds.attrs["version_numpy"] in text
    if is_swept(ds):
        assert fg.limit_crossing(ds).text in text
    if ds.attrs["method"] != "saltelli":
        assert "Screening only" in text


# ----------------------------------------------------------------------------------------------
# figures and Markdown
# ----------------------------------------------------------------------------------------------


def test_figure_files_exist_as_png_and_svg_on_request(report):
    ds, files = report
    stems = {p.stem for p in files.figures}
    n = n_scenarios(ds)
    per = 5 if ds.attrs["method"] == "saltelli" else 6  # lhs: screening + 2 surrogate figures
    assert len(stems) == n * per + (2 if is_swept(ds) else 0)  # the two sweep figures
    with_svg = ds.attrs["method"] == "saltelli" and is_swept(ds)
    assert len(files.figures) == len(stems) * (2 if with_svg else 1)
    for stem in stems:
        png = files.html.parent / "figures" / f"{stem}.png"
        svg = png.with_suffix(".svg")
        assert png in files.figures and (svg in files.figures) == with_svg
        assert png.stat().st_size > 0 and png.read_bytes().startswith(PNG)
        assert svg.is_file() == with_svg
        if with_svg:
            assert ET.parse(svg).getroot().tag.endswith("svg")
            # drawn with the layout the PNG was drawn with: same size
            assert ET.parse(svg).getroot().get("width") == "576pt"


def test_bad_figure_formats_are_one_line_errors(dataset, tmp_path):
    with pytest.raises(ValueError, match="formats: expected a list of figure formats"):
        write_report(dataset("saltelli", False), tmp_path, formats=("svg",))


def test_markdown_summary(report):
    ds, files = report
    text = files.markdown.read_text(encoding="utf-8")
    assert text.startswith(f"# {ds.attrs['title']}")
    for item in CAUTIONS:  # in full at the end; in short right below the verdict at the top
        assert text.count(item) == 1
    assert text.index("## Verdict") < text.index("**Caution:**") < text.index("## Headline")
    assert "## Headline" in text and "## Ranking" in text and "## Convergence" in text
    if is_swept(ds):
        assert fg.limit_crossing(ds).text in text


# ----------------------------------------------------------------------------------------------
# CSV tables
# ----------------------------------------------------------------------------------------------


def test_quantiles_csv(report):
    ds, files = report
    cols, rows = read_csv(files.html.parent / "quantiles.csv")
    assert cols == ["scenario", "quantity", "interface", "probability", "estimate", "lower",
                    "upper", "unit", "warning", "limit_applies"]
    n_q, n_f = ds.sizes["quantile"], ds.sizes["interface"]
    assert len(rows) == n_scenarios(ds) * (1 + n_f) * n_q
    inner = [r for r in rows if r["quantity"] == "inner_surface_temperature"]
    got = np.array([float(r["estimate"]) for r in inner])
    expect = fg.to_display_temperature(ds, ds["inner_surface_temperature_quantile"].values)
    assert np.allclose(got, np.ravel(expect), rtol=1e-9)
    assert {r["unit"] for r in rows} == {ds.attrs["limit_display_unit"]}


def test_percentile_tables_show_the_requested_percentiles_only(dataset):
    # [study] percentiles (docs/config.md); the quantile axis also holds the band levels 1 and
    # 99 %, which only quantiles.csv lists
    from plyrisk.report.tables import quantile_tables

    ds = dataset("saltelli", False)
    assert {0.01, 0.99} <= {round(float(p), 6) for p in ds["quantile"].values}
    wanted = [f"P{100 * p:g}" for p in ds.attrs["percentiles"]]
    assert [[r[0] for r in t.rows] for t in quantile_tables(ds)] == [wanted]
    fewer = ds.copy()
    fewer.attrs["percentiles"] = [0.95]
    assert [[r[0] for r in t.rows] for t in quantile_tables(fewer)] == [["P95"]]


@pytest.mark.parametrize("method", ["saltelli", "pce"])
def test_layer_rankings_mark_the_hot_side_as_not_a_layer(dataset, method):
    # the invented study's hot-side convection coefficient is uncertain: its group is ranked
    # with the layers, marked as conditions, as in a transient report
    from plyrisk.report.tables import ranking_tables

    ds = dataset(method, False)
    assert "hot_side" in [str(g) for g in ds["group"].values]
    layers = [t for t in ranking_tables(ds) if t.caption.startswith("Layers")]
    assert len(layers) == 1
    names = [r[1] for r in layers[0].rows]
    assert "hot side (not a layer)" in names and "hot side" not in names
    figure = (fg.group_indices_figure(ds) if method == "saltelli" else
              fg.surrogate_indices_figure(ds, groups=True))
    ticks = [t.get_text() for t in figure.axes[0].get_yticklabels()]
    assert "hot side (not a layer)" in ticks


def test_indices_group_and_ranking_csv(report):
    ds, files = report
    folder = files.html.parent
    n_s, n_p, n_g = n_scenarios(ds), ds.sizes["parameter"], ds.sizes["group"]
    sobol = ds.attrs["method"] == "saltelli"
    n_o = ds.sizes["output"] if sobol else 1
    cols, rows = read_csv(folder / "indices.csv")
    assert cols == ["scenario", "output", "parameter", "group", "unit", "first", "first_ci",
                    "total", "total_ci", "rank", "converged", "rank_correlation", "estimator",
                    "status"]
    assert len(rows) == n_s * n_o * n_p
    gcols, grows = read_csv(folder / "group_indices.csv")
    assert gcols == ["scenario", "output", "group", "first", "first_ci", "total", "total_ci",
                     "rank", "converged", "estimator", "status"]
    assert len(grows) == n_s * n_o * n_g
    rcols, rrows = read_csv(folder / "ranking.csv")
    assert rcols == ["scenario", "output", "kind", "rank", "name", "measure", "value", "ci",
                     "converged"]
    assert len(rrows) == n_s * n_o * (n_p + n_g) + (0 if sobol else n_s * n_p)
    primary = [r for r in rows if r["output"] == "inner_surface_temperature"]
    rho = np.array([float(r["rank_correlation"]) for r in primary])
    assert np.allclose(rho, np.ravel(ds["rank_correlation"].values), rtol=1e-9)
    total = np.array([float(r["total"]) for r in primary])
    expect = (ds["sobol_total"].sel(output="inner_surface_temperature")).values
    assert np.allclose(total, np.ravel(expect), rtol=1e-9)
    assert {r["estimator"] for r in rows} == {"saltelli" if sobol else "pce_surrogate"}
    for kind in ("parameter", "layer"):  # one rank 1 per exposure, output, kind and measure
        top = [r for r in rrows if r["kind"] == kind and r["rank"] == "1"]
        assert len(top) == n_s * n_o + (n_s if kind == "parameter" and not sobol else 0)
    if not sobol:
        rho_rows = [r for r in rrows if r["measure"] == "spearman_rank_correlation"]
        assert len(rho_rows) == n_s * n_p
    assert not (folder / "tolerances.csv").exists()


def test_lhs_results_without_surrogate_indices(tmp_path, dataset):
    ds = dataset("pce", False)
    old = ds.drop_vars([v for v in ds.data_vars if str(v).startswith(("pce_", "sobol_"))])
    files = write_report(old, tmp_path)
    assert len([p for p in files.figures if p.suffix == ".png"]) == 4
    cols, rows = read_csv(tmp_path / "indices.csv")
    assert len(rows) == ds.sizes["parameter"] and all(r["total"] == "" for r in rows)
    assert np.allclose([float(r["rank_correlation"]) for r in rows],
                       ds["rank_correlation"].values, rtol=1e-9)
    assert read_csv(tmp_path / "group_indices.csv")[1] == []
    _, rrows = read_csv(tmp_path / "ranking.csv")
    assert {r["measure"] for r in rrows} == {"spearman_rank_correlation"}


# ----------------------------------------------------------------------------------------------
# tolerance table, inputs, robustness
# ----------------------------------------------------------------------------------------------

TOLERANCES = [  # placeholder records in whatever columns the tolerance engine produces
    {"parameter": "skin gap.width", "current": "2 mm", "recommended": "1.5 mm", "gain": 0.25},
    {"parameter": "outer fabric.thickness", "current": "0.08 mm", "recommended": "0.05 mm"},
]


def test_tolerance_records_are_rendered_and_written(tmp_path, dataset):
    ds = dataset("pce", False).copy()
    ds.attrs["config_text"] = "[study\n"  # and an unreadable config: reported, not fatal
    files = write_report(ds, tmp_path, tolerance_table=TOLERANCES)
    cols, rows = read_csv(tmp_path / "tolerances.csv")
    assert cols == ["parameter", "current", "recommended", "gain"]
    assert [r["recommended"] for r in rows] == ["1.5 mm", "0.05 mm"]
    assert rows[1]["gain"] == ""
    assert tmp_path / "tolerances.csv" in files.tables
    text = " ".join(parse(files.html).text)
    assert "Tolerance recommendations" in text and "recommended" in text and "1.5 mm" in text
    assert "could not be re-read" in text


def test_tolerance_dataframe(tmp_path, dataset):
    pd = pytest.importorskip("pandas")
    frame = pd.DataFrame(TOLERANCES)
    write_report(dataset("pce", False), tmp_path, tolerance_table=frame)
    cols, rows = read_csv(tmp_path / "tolerances.csv")
    assert cols == list(frame.columns) and len(rows) == 2


def test_bad_tolerance_table_is_rejected(tmp_path, dataset):
    with pytest.raises(ValueError, match="tolerance_table must be a pandas DataFrame, a list"):
        write_report(dataset("pce", False), tmp_path, tolerance_table=42)
    with pytest.raises(ValueError, match=r"tolerance_table\[0\] must be a mapping"):
        write_report(dataset("pce", False), tmp_path, tolerance_table=[("a", 1)])


def test_not_a_results_dataset_is_rejected(tmp_path):
    with pytest.raises(ValueError, match="not a plyrisk results dataset: missing"):
        write_report(xr.Dataset(), tmp_path)


def test_report_of_a_results_file_read_back(tmp_path, dataset):
    ds = dataset("pce", False)
    back = read_results(write_results(ds, tmp_path / "results.nc"))
    files = write_report(back, tmp_path / "report")
    assert files.html.exists() and not parse(files.html).errors
    swept = dataset("saltelli", True)
    back = read_results(write_results(swept, tmp_path / "swept.nc"))
    assert fg.limit_crossing(back) == fg.limit_crossing(swept)
    assert list(back["scenario_label"].values) == list(swept["scenario_label"].values)


def test_percentiles_from_a_reduced_subset_warn_in_every_output(tmp_path, dataset):
    ds = dataset("saltelli", False).copy()
    n = 2 * int(ds.attrs["base_samples"])
    ds["samples_used"] = ds["samples_used"].copy(data=np.asarray([int(0.9 * n)]))
    files = write_report(ds, tmp_path)
    needle = f"the percentiles and P(exceed) come from {int(0.9 * n)} of {n} samples"
    assert needle in " ".join(html.unescape(files.html.read_text()).split())
    assert needle in " ".join(files.markdown.read_text().split())
    _, rows = read_csv(tmp_path / "quantiles.csv")
    assert all(needle in r["warning"] for r in rows)
    ds["samples_used"] = ds["samples_used"].copy(data=np.asarray([n]))
    write_report(ds, tmp_path / "full")
    _, rows = read_csv(tmp_path / "full" / "quantiles.csv")
    assert {r["warning"] for r in rows} == {""}
