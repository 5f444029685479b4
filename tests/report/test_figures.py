"""Tests of plyrisk.report.figures.outputs: the plotted data must be the dataset's data, in the
display units.

Check values come from the dataset itself and from independent computations in the tests
(pint for unit conversions, numpy for the linear interpolation); the study behind the datasets
is invented (``invented_dataset`` in tests/conftest.py) and only supplies a dataset to draw.
"""

from __future__ import annotations

import re

import numpy as np
import pint
import pytest
import xarray as xr
from matplotlib.collections import PolyCollection
from matplotlib.figure import Figure

from plyrisk.report.figures import outputs as fg
from plyrisk.results.dataset import is_swept
from plyrisk.text.indices import layer_label

UREG = pint.UnitRegistry()

CASES = [("saltelli", False), ("pce", False), ("saltelli", True), ("pce", True)]


@pytest.fixture(params=CASES, ids=lambda c: f"{c[0]}-{'swept' if c[1] else 'unswept'}")
def case(request, invented_dataset) -> xr.Dataset:
    return invented_dataset(*request.param)


def scenarios(ds: xr.Dataset) -> list[int | None]:
    return list(range(ds.sizes["scenario"])) if is_swept(ds) else [None]


def one(ds: xr.Dataset, s: int | None) -> xr.Dataset:
    ds = fg.surrogate_view(ds)  # a pce study's sobol_* as the surrogate indices drawn
    return ds.isel(scenario=0 if s is None else s)  # an unswept study: its one scenario


def to_unit(kelvin, unit: str) -> np.ndarray:
    """K → display unit with pint directly (independent of plyrisk.study.units)."""
    return np.asarray(UREG.Quantity(np.asarray(kelvin, dtype=float), "K").to(unit).magnitude)


def pint_unit(udunits: str) -> str:
    """A dataset unit such as ``"W m-1 K-1"`` (or ``"1"``) as pint text."""
    if udunits == "1":
        return "dimensionless"
    return "*".join(re.sub(r"^([A-Za-z]+)(-?\d+)$", r"\1**\2", t) for t in udunits.split())


def axes(fig: Figure, label: str):
    return next(a for a in fig.axes if a.get_label() == label)


def by_gid(items, gid: str):
    found = [a for a in items if a.get_gid() == gid]
    assert len(found) == 1, f"expected one artist {gid!r}, found {len(found)}"
    return found[0]


def band_edges(poly: PolyCollection, n: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """x, lower and upper edges of a fill_between polygon over n points."""
    v = poly.get_paths()[0].vertices
    lower, upper = v[1:n + 1], v[n + 2:2 * n + 2][::-1]
    np.testing.assert_array_equal(lower[:, 0], upper[:, 0])
    return lower[:, 0], lower[:, 1], upper[:, 1]


# ----------------------------------------------------------------------------------------------
# profile
# ----------------------------------------------------------------------------------------------


def test_profile_bands_are_the_dataset_quantiles_in_the_display_unit(case):
    ds = case
    unit = ds.attrs["limit_display_unit"]
    for s in scenarios(ds):
        d = one(ds, s)
        fig = fg.profile_figure(ds, scenario=s)
        ax = axes(fig, "profile")
        q = d["interface_temperature_quantile"]
        expect = {p: to_unit(q.sel(quantile=p).values, unit) for p in (0.01, 0.05, 0.5, 0.95, 0.99)}
        x_expect = 1e3 * np.concatenate([[0.0], np.cumsum(d["layer_nominal_thickness"].values)])
        median = by_gid(ax.lines, "median")
        assert np.allclose(median.get_xdata(), x_expect)
        assert np.allclose(median.get_ydata(), expect[0.5])
        n = x_expect.size
        for gid, lo, hi in (("band_5_95", 0.05, 0.95), ("band_1_99", 0.01, 0.99)):
            x, lower, upper = band_edges(by_gid(ax.collections, gid), n)
            assert np.allclose(x, x_expect)
            assert np.allclose(lower, expect[lo])
            assert np.allclose(upper, expect[hi])
        limit = by_gid(ax.lines, "limit")
        assert np.allclose(limit.get_ydata(), to_unit(ds.attrs["limit"], unit))


def test_profile_layout_contact_is_a_line_and_the_last_gap_ends_at_the_skin(invented_dataset):
    ds = invented_dataset("saltelli")
    kinds = list(ds["layer_kind"].values)
    assert "contact" in kinds and kinds[-1] == "gap"
    assert str(ds["interface"].values[-1]) == "skin surface"
    fig = fg.profile_figure(ds)
    ax = axes(fig, "profile")
    thick = ds["layer_nominal_thickness"].values
    x_contact = 1e3 * thick[: kinds.index("contact")].sum()
    dotted = [ln for ln in ax.lines if ln.get_linestyle() == ":"
              and np.allclose(ln.get_xdata(), x_contact)]
    assert dotted, "the contact resistance is not drawn as a dotted line at its position"
    assert ax.get_xlim()[1] == pytest.approx(1e3 * thick.sum())
    names = {t.get_text() for t in axes(fig, "layer labels").texts}
    assert set(ds["layer"].values) <= names


# ----------------------------------------------------------------------------------------------
# indices
# ----------------------------------------------------------------------------------------------


def _bars(ax, prefix: str) -> dict[str, float]:
    return {p.get_gid().split(":", 1)[1]: p.get_width() for p in ax.patches
            if (p.get_gid() or "").startswith(prefix + ":")}


def test_sobol_bars_are_the_indices_sorted_by_total_and_unconverged_ones_are_marked(
        invented_dataset):
    ds = invented_dataset("saltelli").copy(deep=True)
    conv = ds["index_converged"].values
    conv[0, 0, :] = True
    conv[0, 0, 0] = False  # one unconverged parameter, whatever the sampling gave
    fig = fg.indices_figure(ds)
    ax = axes(fig, "indices")
    s = one(ds, None).sel(output="inner_surface_temperature")
    total, first = _bars(ax, "total"), _bars(ax, "first")
    for j, name in enumerate(s["parameter"].values):
        assert total[name] == pytest.approx(float(s["sobol_total"].values[j]))
        assert first[name] == pytest.approx(float(s["sobol_first"].values[j]))
    ticks = sorted(zip(ax.get_yticks(), ax.get_yticklabels(), strict=True),
                   key=lambda t: -t[0])
    labels = [t.get_text() for _, t in ticks]  # top to bottom
    expect = list(s["parameter"].values[np.argsort(-s["sobol_total"].values, kind="stable")])
    assert labels == expect
    bad = str(s["parameter"].values[0])
    for p in ax.patches:
        if (p.get_gid() or "").endswith(":" + bad):
            assert p.get_hatch()
        elif p.get_gid():
            assert not p.get_hatch()
    legend = [t.get_text() for lg in fig.legends for t in lg.get_texts()]
    assert any("unconverged" in t for t in legend)
    assert any(t.get_text() == "unconverged" for t in ax.texts)


def test_screening_chart_for_lhs_shows_rank_correlation_titled_as_screening(invented_dataset):
    ds = invented_dataset("pce")
    fig = fg.indices_figure(ds)
    ds = one(ds, None)
    ax = axes(fig, "indices")
    assert "screening" in ax.get_title(loc="left").lower()
    rho = _bars(ax, "rho")
    for j, name in enumerate(ds["parameter"].values):
        assert rho[name] == pytest.approx(float(ds["rank_correlation"].values[j]))


def test_group_bars_are_the_group_indices(invented_dataset):
    ds = invented_dataset("saltelli", True)
    for s in scenarios(ds):
        fig = fg.group_indices_figure(ds, scenario=s)
        d = one(ds, s).sel(output="inner_surface_temperature")
        total = _bars(axes(fig, "group indices"), "total")
        for j, g in enumerate(d["group"].values):
            assert total[layer_label(str(g), spaced=True)] == pytest.approx(
                float(d["sobol_group_total"].values[j]))


def test_group_figure_needs_sobol(invented_dataset):
    with pytest.raises(ValueError, match="method = 'saltelli'"):
        fg.group_indices_figure(invented_dataset("pce"))


def without_surrogate(ds: xr.Dataset) -> xr.Dataset:
    """An lhs dataset as written before surrogate indices existed."""
    return ds.drop_vars([v for v in ds.data_vars if str(v).startswith(("pce_", "sobol_"))])


@pytest.mark.parametrize("groups", [False, True])
def test_surrogate_bars_are_the_surrogate_indices(groups, invented_dataset):
    ds = invented_dataset("pce", True)
    prefix, dim = ("pce_group", "group") if groups else ("pce", "parameter")
    for s in scenarios(ds):
        d = one(ds, s)
        fig = fg.surrogate_indices_figure(ds, scenario=s, groups=groups)
        ax = axes(fig, "surrogate group indices" if groups else "surrogate indices")
        total, first = _bars(ax, "total"), _bars(ax, "first")
        for j, name in enumerate(d[dim].values):
            key = layer_label(str(name), spaced=True) if groups else str(name)
            assert total[key] == pytest.approx(float(d[f"{prefix}_total"].values[j]))
            assert first[key] == pytest.approx(float(d[f"{prefix}_first"].values[j]))
        assert f"Q2 = {float(d['pce_q2'].item()):.3f}" in " ".join(t.get_text()
                                                                    for t in ax.texts)


def test_surrogate_figure_needs_surrogate_indices(invented_dataset):
    with pytest.raises(ValueError, match="no surrogate indices"):
        fg.surrogate_indices_figure(invented_dataset("saltelli"))
    with pytest.raises(ValueError, match="no surrogate indices"):
        fg.surrogate_indices_figure(without_surrogate(invented_dataset("pce")))


def test_scatter_without_surrogate_ranks_by_rank_correlation(invented_dataset):
    ds = without_surrogate(invented_dataset("pce"))
    rho = one(ds, None)["rank_correlation"].values
    expect = list(ds["parameter"].values[np.argsort(-np.abs(rho),
                                                    kind="stable")][:3])
    assert fg.top_parameters(ds) == expect


# ----------------------------------------------------------------------------------------------
# distribution and scatter
# ----------------------------------------------------------------------------------------------


def test_distribution_uses_independent_converged_samples_only(case):
    ds = case
    for s in scenarios(ds):
        d = one(ds, s)
        fig = fg.distribution_figure(ds, scenario=s)
        ecdf = by_gid(axes(fig, "ecdf").lines, "ecdf")
        assert len(ecdf.get_xdata()) == int(d["samples_used"].item())
        rows = d["sample_block"].values <= 1 if ds.attrs["method"] == "saltelli" else slice(None)
        expect = np.sort(to_unit(d["inner_surface_temperature"].values[rows],
                                 ds.attrs["limit_display_unit"]))
        assert np.allclose(ecdf.get_xdata(), expect)
        p95 = by_gid(axes(fig, "histogram").lines, "p95")
        assert np.allclose(p95.get_xdata(), to_unit(
            d["inner_surface_temperature_quantile"].sel(quantile=0.95).item(),
            ds.attrs["limit_display_unit"]))


def test_distribution_leaves_out_nonconverged_samples(invented_dataset):
    ds = invented_dataset("pce").copy(deep=True)
    ds["converged"].values[0, :10] = False
    ds["inner_surface_temperature"].values[0, :10] = np.nan
    fig = fg.distribution_figure(ds)
    assert len(by_gid(axes(fig, "ecdf").lines, "ecdf").get_xdata()) == ds.sizes["sample"] - 10


def test_scatter_shows_the_top_three_inputs_in_the_users_units(case):
    ds = case
    for s in scenarios(ds):
        d = one(ds, s)
        if ds.attrs["method"] == "saltelli":
            rank = d["parameter_rank"].sel(output="inner_surface_temperature").values
            expect = list(d["parameter"].values[np.argsort(rank)][:3])
            rows = d["sample_block"].values <= 1
        else:
            measure = (d["pce_total"].values if "pce_total" in d
                       else np.abs(d["rank_correlation"].values))
            expect = list(d["parameter"].values[np.argsort(-measure, kind="stable")][:3])
            rows = np.ones(d.sizes["sample"], dtype=bool)
        fig = fg.scatter_figure(ds, scenario=s)
        shown = [a.get_label().split(":", 1)[1] for a in fig.axes
                 if a.get_label().startswith("scatter:")]
        assert shown == expect
        for name in shown:
            ax = axes(fig, f"scatter:{name}")
            pts = by_gid(ax.collections, f"points:{name}").get_offsets()
            p = d.sel(parameter=name)
            unit = str(p["parameter_unit"].item()) or "dimensionless"
            si = pint_unit(str(p["parameter_si_unit"].item()))
            x = UREG.Quantity(p["input"].values[rows], si).to(unit).magnitude
            assert np.allclose(pts[:, 0], x)
            assert np.allclose(pts[:, 1], to_unit(d["inner_surface_temperature"].values[rows],
                                                  ds.attrs["limit_display_unit"]))


# ----------------------------------------------------------------------------------------------
# sweep
# ----------------------------------------------------------------------------------------------


def _p95(ds: xr.Dataset) -> tuple[np.ndarray, np.ndarray]:
    x = UREG.Quantity(ds["scenario"].values, "W/m^2").to(ds.attrs["scenario_display_unit"])
    return x.magnitude, ds["inner_surface_temperature_quantile"].sel(quantile=0.95).values


@pytest.mark.parametrize("method", ["saltelli", "pce"])
def test_sweep_read_off_is_the_linear_interpolation_of_p95(method, invented_dataset):
    ds = invented_dataset(method, True).copy()
    x, p95 = _p95(ds)
    assert np.all(np.diff(p95) > 0)
    for i in (1, 2):
        ds.attrs["limit"] = float(0.3 * p95[i - 1] + 0.7 * p95[i])
        expect = np.interp(ds.attrs["limit"], p95[i - 1:i + 1], x[i - 1:i + 1])
        c = fg.limit_crossing(ds)
        assert c.status == "crosses"
        assert c.exposure == pytest.approx(expect, rel=1e-12)
        assert f"≈ {expect:.3g} kW/m²" in c.text
        fig = fg.sweep_figure(ds)
        marker = by_gid(axes(fig, "sweep").lines, "crossing")
        assert marker.get_xdata()[0] == pytest.approx(expect, rel=1e-12)
        assert any(c.text in t.get_text().replace("\n", " ") for t in axes(fig, "sweep").texts)


def test_sweep_states_below_and_above(invented_dataset):
    ds = invented_dataset("saltelli", True).copy()
    _, p95 = _p95(ds)
    ds.attrs["limit"] = float(p95.max() + 50.0)
    c = fg.limit_crossing(ds)
    assert c.status == "below" and "stays below the limit over the swept range" in c.text
    assert np.isnan(c.exposure)
    ds.attrs["limit"] = float(p95.min() - 1.0)
    c = fg.limit_crossing(ds)
    assert c.status == "above" and "exceeds the limit at every swept level" in c.text


def test_sweep_band_is_the_dataset_quantiles(invented_dataset):
    ds = invented_dataset("pce", True)
    x, _ = _p95(ds)
    unit = ds.attrs["limit_display_unit"]
    q = ds["inner_surface_temperature_quantile"]
    ax = axes(fg.sweep_figure(ds), "sweep")
    bx, lower, upper = band_edges(by_gid(ax.collections, "band_5_95"), x.size)
    assert np.allclose(bx, x)
    assert np.allclose(lower, to_unit(q.sel(quantile=0.05).values, unit))
    assert np.allclose(upper, to_unit(q.sel(quantile=0.95).values, unit))
    assert np.allclose(by_gid(ax.lines, "median").get_ydata(),
                       to_unit(q.sel(quantile=0.5).values, unit))


def test_sweep_figure_needs_a_sweep(invented_dataset):
    with pytest.raises(ValueError, match="sweeps no exposure"):
        fg.sweep_figure(invented_dataset("saltelli"))


# ----------------------------------------------------------------------------------------------
# options and helpers
# ----------------------------------------------------------------------------------------------


def test_scenario_index_is_validated(invented_dataset):
    with pytest.raises(ValueError, match=r"scenario must be an index 0\.\.2"):
        fg.profile_figure(invented_dataset("saltelli", True))
    with pytest.raises(ValueError, match=r"scenario must be an index 0\.\.2"):
        fg.distribution_figure(invented_dataset("saltelli", True), scenario=3)
    with pytest.raises(ValueError, match="unswept dataset"):
        fg.profile_figure(invented_dataset("saltelli"), scenario=1)


def test_unknown_output_is_rejected(invented_dataset):
    with pytest.raises(ValueError, match="unknown output 'heat'; valid: inner_surface"):
        fg.indices_figure(invented_dataset("saltelli"), output="heat")


def test_pretty_unit():
    assert fg.pretty_unit("degC") == "°C"
    assert fg.pretty_unit("kW/m^2") == "kW/m²"
    assert fg.pretty_unit("m^2*K/W") == "m²·K/W"
    assert fg.pretty_unit("") == "-"


def test_every_figure_is_a_matplotlib_figure(case):
    ds = case
    s = scenarios(ds)[-1]
    built = [fg.profile_figure(ds, scenario=s), fg.indices_figure(ds, scenario=s),
             fg.distribution_figure(ds, scenario=s), fg.scatter_figure(ds, scenario=s)]
    if is_swept(ds):
        built.append(fg.sweep_figure(ds))
    assert all(isinstance(f, Figure) for f in built)


def all_failed(ds: xr.Dataset) -> xr.Dataset:
    """The dataset as if no sample had converged: every float output NaN."""
    bad = ds.copy(deep=True)
    for v in bad.data_vars:
        if bad[v].dtype.kind == "f" and v != "input":
            bad[v].values[...] = np.nan
    bad["converged"].values[...] = False
    bad["samples_used"].values[...] = 0
    return bad


@pytest.mark.filterwarnings("error")
def test_figures_of_a_study_in_which_no_sample_converged(invented_dataset):
    ds = all_failed(invented_dataset("saltelli", True))
    for s in scenarios(ds):
        fg.profile_figure(ds, scenario=s)
        fg.indices_figure(ds, scenario=s)
        fig = fg.distribution_figure(ds, scenario=s)
        assert not [ln for ln in axes(fig, "ecdf").lines if ln.get_gid() == "ecdf"]
        fg.scatter_figure(ds, scenario=s)
    c = fg.limit_crossing(ds)
    assert c.status == "unavailable" and "not available" in c.text
    fg.sweep_figure(ds)
