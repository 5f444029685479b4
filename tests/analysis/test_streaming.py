"""Analysis of a store in passes against the in-memory analysis of the same samples.

The reference is the in-memory path: numpy's sort/quantile (order statistics) and SALib's
Sobol' estimators (Source: SALib.analyze.sobol, Saltelli et al. 2010, Comput. Phys. Commun.
181, 259-270). Quantiles must agree exactly (the same order statistics), indices to rounding.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest
from scipy import stats

from plyrisk.analysis import streaming
from plyrisk.analysis.statistics import _order_statistic_ranks
from plyrisk.analysis.study import analyse
from plyrisk.pipeline import run as pipeline
from plyrisk.propagate.store import load_propagation, solve_to_store


@pytest.fixture(scope="module")
def stored(tmp_path_factory, reflective_garment):
    study = replace(reflective_garment, analysis=replace(reflective_garment.analysis,
                                                         samples=256))
    path = tmp_path_factory.mktemp("stream") / "s.zarr"
    reader = solve_to_store(study, path, chunk_size=3000, quiet=True)
    return study, reader


@pytest.mark.slow
def test_streamed_analysis_matches_the_in_memory_one(stored, monkeypatch):
    study, reader = stored
    memory = analyse(study, load_propagation(study, reader))
    monkeypatch.setattr(streaming, "BLOCK_ROWS", 2500)   # many blocks, not whole base rows
    passes = streaming.stream_analyse(study, reader)
    for m, p in zip(memory.scenarios, passes.scenarios, strict=True):
        for part in ("estimate", "lower", "upper"):
            np.testing.assert_array_equal(getattr(p.inner_quantiles, part),
                                          getattr(m.inner_quantiles, part))
            for qm, qp in zip(m.interface_quantiles, p.interface_quantiles, strict=True):
                np.testing.assert_array_equal(getattr(qp, part), getattr(qm, part))
        assert p.exceedance == m.exceedance
        assert p.inner_quantiles.interval == m.inner_quantiles.interval
        assert "replicates-woodruff" in m.inner_quantiles.interval
        assert (p.nonconverged, p.onset_samples, p.air_range_samples) == (
            m.nonconverged, m.onset_samples, m.air_range_samples)
        (im, gm), (ip, gp) = m.indices["inner_surface_temperature"], \
            p.indices["inner_surface_temperature"]
        for a, b in ((im, ip), (gm, gp)):
            np.testing.assert_allclose(b.first, a.first, rtol=0, atol=1e-12)
            np.testing.assert_allclose(b.total, a.total, rtol=0, atol=1e-12)
            # the same replicate intervals in passes and in memory
            assert a.interval == b.interval == "replicates" and b.replicates == 8
            np.testing.assert_allclose(b.total_ci, a.total_ci, rtol=0, atol=1e-12)
            np.testing.assert_allclose(b.first_ci, a.first_ci, rtol=0, atol=1e-12)


@pytest.mark.slow
def test_run_study_analyses_a_large_store_in_passes(tmp_path, monkeypatch, small_demo):
    study = small_demo
    monkeypatch.setattr(streaming, "STREAM_ROWS", 1000)
    monkeypatch.setattr(pipeline, "FILE_SAMPLE_ROWS", 700)
    result = pipeline.run_study(study, store=tmp_path / "s.zarr", out_dir=tmp_path, quiet=True)
    ds = result.dataset
    steps = len(study.parameters) + 2 + 1    # A, B, one AB per parameter, one layer group
    assert ds.attrs["evaluations"] == study.analysis.samples * steps
    assert ds.sizes["sample"] == ds.attrs["sample_rows_in_file"] == 700 - 700 % steps
    assert "in passes" in ds.attrs["notes"]
    text = pipeline.summary_text(result)
    assert f"{study.analysis.samples * steps} model evaluations" in text


@pytest.mark.parametrize("n", [1, 2, 7, 40, 333, 5000, 123457])
@pytest.mark.parametrize("p", [0.01, 0.05, 0.5, 0.95, 0.99])
def test_order_statistic_ranks_match_the_full_binomial_search(n, p):
    # Source: the definition in uq/statistics.py (module docstring), evaluated over every k
    k = np.arange(n + 1)
    for alpha in (0.1, 0.05):
        lower = int(np.count_nonzero(stats.binom.cdf(k, n, p) <= 0.5 * alpha))
        upper = int(np.argmax(stats.binom.sf(k, n, p) <= 0.5 * alpha)) + 1
        assert _order_statistic_ranks(n, p, alpha) == (lower, upper)


def test_replicated_designs_keep_replicate_intervals_however_large(stored, monkeypatch):
    from plyrisk.methods import saltelli

    study, reader = stored
    monkeypatch.setattr(saltelli, "SALIB_BOOTSTRAP_ROWS", 64)
    memory = analyse(study, load_propagation(study, reader))
    assert not any("jackknife" in n for n in memory.notes)
    assert any("8 independently scrambled replicates" in n for n in memory.notes)
    ind, grp = memory.scenarios[0].indices["inner_surface_temperature"]
    assert ind.interval == grp.interval == "replicates"


@pytest.mark.slow
def test_large_single_sequence_designs_use_the_jackknife(tmp_path, monkeypatch,
                                                         reflective_garment):
    from plyrisk.methods import saltelli

    study = reflective_garment   # one scrambled sequence: only through the Python API
    study = replace(study, analysis=replace(study.analysis, samples=128, replicates=1))
    reader = solve_to_store(study, tmp_path / "s.zarr", chunk_size=3000, quiet=True)
    prop = load_propagation(study, reader)
    monkeypatch.setattr(streaming, "BLOCK_ROWS", 3000)
    passes = streaming.stream_analyse(study, reader)
    monkeypatch.setattr(saltelli, "SALIB_BOOTSTRAP_ROWS", 64)
    memory = analyse(study, prop)
    assert any("batch jackknife" in n for n in memory.notes)
    for m, p in zip(memory.scenarios, passes.scenarios, strict=True):
        assert p.exceedance.method == "wilson" and p.inner_quantiles.interval == ()
        for (a, b), (c, d) in zip(m.indices.values(), p.indices.values(), strict=True):
            np.testing.assert_allclose(a.total, c.total, atol=1e-12)
            np.testing.assert_allclose(a.total_ci, c.total_ci, rtol=1e-9, atol=1e-15)
            np.testing.assert_allclose(b.first_ci, d.first_ci, rtol=1e-9, atol=1e-15)


@pytest.mark.slow
def test_pce_store_analysed_in_passes_fits_the_same_surrogate(tmp_path, monkeypatch, small_demo):
    study = replace(small_demo, analysis=replace(small_demo.analysis, method="pce",
                                                 design="random", samples=600))
    reader = solve_to_store(study, tmp_path / "s.zarr", chunk_size=250, quiet=True)
    memory = analyse(study, load_propagation(study, reader))
    passes = streaming.stream_analyse(study, reader)   # 600 rows < SUBSAMPLE_ROWS: all rows
    for m, p in zip(memory.scenarios, passes.scenarios, strict=True):
        np.testing.assert_array_equal(p.surrogate.total, m.surrogate.total)
        np.testing.assert_array_equal(p.surrogate_groups.total, m.surrogate_groups.total)
        assert p.surrogate_quantile_status == m.surrogate_quantile_status
        assert [r.name for r in p.ranking["inner_surface_temperature"]] == \
            [r.name for r in m.ranking["inner_surface_temperature"]]
