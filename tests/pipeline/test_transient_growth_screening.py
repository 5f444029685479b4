"""--until-converged and [screening] on transient studies: what they judge, runs reused,
bit-identical results whatever the chunking, the store and its resume, the report's figure."""

from types import SimpleNamespace

import numpy as np
import pytest
import xarray as xr

import plyrisk.pipeline.sequential as sequential
from plyrisk.cli import main
from plyrisk.pipeline.run import run_study
from plyrisk.pipeline.screening import screen_study
from plyrisk.results.dataset import read_results
from plyrisk.study.config import loads_study
from tests.pipeline.counting import grow_counted
from tests.study_texts import flash

# Invented inputs: the flux spread makes about half the samples burn within the 12 s horizon,
# so both judged outputs vary; a loose target keeps the growth to a few hundred runs.
GROW = flash(16, study="index_ci_threshold = 0.2")
JUDGED = ("capped_time_to_second_degree_burn", "second_degree_burn")

# The fabric's specific heat spread of ±0.08 % cannot move a time to burn: screening fixes it.
SCREEN = flash(16, specific_heat='{ uniform = ["1299 J/kg/K", "1301 J/kg/K"] }',
               tail="\n[screening]\ntrajectories = 8\n")


@pytest.fixture(scope="module")
def grown():
    """A transient growth with every model evaluation counted (rows handed to evaluate)."""
    return grow_counted(GROW, max_runs=4000)


def test_growth_is_judged_on_the_capped_time_and_the_burn_indicator(grown):
    growth, _ = grown
    assert growth.outputs == JUDGED and growth.path_output == JUDGED[0]
    assert growth.converged and len(growth.steps) >= 2
    last = growth.analysis.scenarios[0]
    for o in JUDGED:  # every judged interval within the target at the last step
        per, grouped = last.indices[o]
        for ind in (per, grouped):
            assert np.all(np.asarray(ind.first_ci) <= 0.2)
            assert np.all(np.asarray(ind.total_ci) <= 0.2)
    assert all(s.unconverged > 0 for s in growth.steps[:-1])  # it did not stop early


def test_transient_growth_reuses_every_earlier_run(grown):
    growth, calls = grown
    # Source: closed form: a Saltelli design of N base rows has N (d + G + 2) rows (Saltelli
    # et al. 2010, doi:10.1016/j.cpc.2009.09.018): d = 3 inputs, G = 1 layer of two inputs
    # (the exposure's flux and duration); every doubling evaluates only the new half.
    assert calls == [16 * 6 * 2 ** max(k - 1, 0) for k in range(len(calls))]
    assert sum(calls) == growth.propagation.design.n_rows == growth.steps[-1].runs


def test_grown_transient_study_equals_a_direct_run_whatever_the_chunking(grown):
    growth, _ = grown
    n = growth.steps[-1].base_samples
    direct = run_study(loads_study(GROW, source="grow.toml"), samples=n, chunk_size=7,
                       workers=2, quiet=True)
    np.testing.assert_array_equal(direct.propagation.design.unit,
                                  growth.propagation.design.unit)
    for name in ("time_to_second_degree_burn", "damage_at_end", "converged"):
        np.testing.assert_array_equal(direct.propagation.outputs[name],
                                      growth.propagation.outputs[name])
    for o in JUDGED:
        a = direct.analysis.scenarios[0].indices[o][0]
        b = growth.analysis.scenarios[0].indices[o][0]
        np.testing.assert_array_equal(a.total, b.total)
        np.testing.assert_array_equal(a.total_ci, b.total_ci)


def _scenario(ci, constant=()):
    ind = SimpleNamespace(first_ci=np.asarray(ci, float), total_ci=np.asarray(ci, float))
    return SimpleNamespace(indices={"a": (ind, None), "b": (ind, None)},
                           constant_outputs=constant)


def test_an_index_without_an_estimate_is_too_wide_unless_the_output_is_constant():
    # Source: the rule of sequential.interval_widths (NaN: a replicate with no spread of a 0/1
    # outcome; a constant output has no indices at all)
    analysis = SimpleNamespace(scenarios=[_scenario([0.01, np.nan])])
    assert sequential.interval_widths(analysis, 0.05, outputs=("a",)) == (0.01, 2)
    analysis = SimpleNamespace(scenarios=[_scenario([np.nan, np.nan])])
    widest, wide = sequential.interval_widths(analysis, 0.05, outputs=("a",))
    assert np.isnan(widest) and wide == 4  # nothing estimated yet: no widest to show
    analysis = SimpleNamespace(scenarios=[_scenario([np.nan, np.nan], constant=("a",))])
    assert sequential.interval_widths(analysis, 0.05, outputs=("a",)) == (0.0, 0)
    # a steady study (every output): NaN half-widths are left out, as before
    analysis = SimpleNamespace(scenarios=[_scenario([0.01, np.nan])])
    assert sequential.interval_widths(analysis, 0.05) == (0.01, 0)


def test_negligible_input_is_fixed_on_the_judged_outputs():
    study = loads_study(SCREEN, source="screen.toml")
    s = screen_study(study)
    names = [p.name for p in study.parameters]
    assert s.analysis.outputs == JUDGED
    assert [n for n, f in zip(names, s.fixed, strict=True) if f] == ["fabric.specific_heat"]
    assert s.reduced.parameter_names == ("exposure.incident_flux", "exposure.duration",
                                         "fabric.density")
    # Source: closed form: r trajectories of d + 1 runs (Morris 1991,
    # doi:10.1080/00401706.1991.10484804)
    assert s.runs == 8 * (4 + 1)
    why = s.reasons[names.index("fabric.specific_heat")]
    assert why.startswith("fixed at nominal: capped_time_to_second_degree_burn: mu* upper")
    again = screen_study(study, chunk_size=5, workers=2)  # chunking changes nothing
    for here, there in zip(s.analysis.indices, again.analysis.indices, strict=True):
        for o in JUDGED:
            np.testing.assert_array_equal(here[o].mu_star, there[o].mu_star)
            np.testing.assert_array_equal(here[o].mu_star_ci, there[o].mu_star_ci)


def test_nothing_is_fixed_when_no_screening_run_burns():
    # invented: a weak exposure, far from a burn in 12 s; both judged outputs are constant
    text = flash(16, flux='["3 kW/m^2", "4 kW/m^2"]', tail="\n[screening]\ntrajectories = 8\n")
    s = screen_study(loads_study(text, source="weak.toml"))
    assert not s.fixed.any()
    assert all("did not vary in any screening run" in r for r in s.reasons)


@pytest.mark.slow
def test_screened_and_grown_run_writes_the_path_the_figure_and_the_decisions(tmp_path, capsys):
    config = tmp_path / "screen.toml"
    config.write_text(SCREEN.replace("seed = 5\n", "seed = 5\nindex_ci_threshold = 0.2\n"),
                      encoding="utf-8")
    out = tmp_path / "out"
    code = main(["run", str(config), "--out", str(out), "--quiet", "--until-converged",
                 "--max-runs", "4000"])
    text = capsys.readouterr().out
    assert code in (0, 3), text
    assert "fixed: fabric.specific_heat = 1300 J/kg/K" in text
    assert "judged on the indices of capped_time_to_second_degree_burn and " \
           "second_degree_burn" in text
    ds = read_results(out / "results.nc")
    assert ds.attrs["growth_output"] == JUDGED[0]
    assert ds.attrs["growth_judged_outputs"] == ", ".join(JUDGED)
    assert ds["growth_sobol_total"].dims == ("growth_step", "scenario", "parameter")
    assert list(ds["screening_output"].values) == list(JUDGED)
    assert ds["screening_mu_star"].dims == ("scenario", "screening_output",
                                            "screened_parameter")
    assert ds.attrs["screening_fixed"] == "fabric.specific_heat"
    assert (out / "figures" / "index_convergence.png").exists()
    html = (out / "report.html").read_text(encoding="utf-8")
    assert "Convergence of the indices as the study grew" in html
    assert ">Screening before the study</h2>" in html
    assert "<td>fabric.specific_heat</td><td>fixed at its nominal</td>" in html


@pytest.mark.slow
def test_screened_transient_store_resumes_to_the_same_results(tmp_path, capsys):
    config = tmp_path / "screen.toml"
    config.write_text(SCREEN, encoding="utf-8")
    store = tmp_path / "runs.zarr"
    first = main(["run", str(config), "--out", str(tmp_path / "a"), "--quiet", "--no-report",
                  "--store", str(store), "--chunk-size", "16"])
    again = main(["run", str(config), "--out", str(tmp_path / "b"), "--quiet", "--no-report",
                  "--store", str(store), "--resume", "--chunk-size", "16"])
    capsys.readouterr()
    assert first == again and first in (0, 3)
    a, b = read_results(tmp_path / "a" / "results.nc"), read_results(tmp_path / "b" /
                                                                     "results.nc")
    for name in a.data_vars:
        xr.testing.assert_equal(a[name], b[name])
    assert list(a["screening_fixed"].values) == [False, False, False, True]


@pytest.mark.parametrize(("extra", "message"), [
    (["--until-converged", "--method", "pce"], "--until-converged needs method = saltelli"),
    (["--until-converged", "--store", "x.zarr"], "--store holds one fixed design"),
])
def test_unsupported_combinations_are_one_line_and_exit_2(tmp_path, capsys, extra, message):
    config = tmp_path / "grow.toml"
    config.write_text(GROW, encoding="utf-8")
    code = main(["run", str(config), "--out", str(tmp_path / "out"), "--quiet", *extra])
    err = capsys.readouterr().err
    assert code == 2
    assert message in err and len(err.strip().splitlines()) == 1
    assert not (tmp_path / "x.zarr").exists()


def test_screening_keep_naming_no_input_is_one_line(tmp_path, capsys):
    config = tmp_path / "screen.toml"
    config.write_text(SCREEN.replace("trajectories = 8", 'trajectories = 8\nkeep = ["nope"]'),
                      encoding="utf-8")
    code = main(["check", str(config)])
    err = capsys.readouterr().err
    assert code == 2 and "screening.keep" in err and len(err.strip().splitlines()) == 1


def test_growth_stops_before_a_step_that_does_not_fit_in_memory(monkeypatch):
    import plyrisk.pipeline.options as options

    def small_machine(study, samples=None):  # pretend only N <= 32 fits
        if samples is not None and samples > 32:
            raise options.OptionError(f"{samples} samples need more memory")

    monkeypatch.setattr(sequential, "check_memory", small_machine)
    growth = sequential.grow_until_converged(
        loads_study(flash(16, study="index_ci_threshold = 0.01"), source="grow.toml"))
    assert [s.base_samples for s in growth.steps] == [16, 32]
    assert not growth.converged and growth.reason.startswith("memory reached: doubling to N = 64")


def test_until_converged_checks_the_memory_of_the_first_transient_step(monkeypatch):
    import plyrisk.pipeline.options as options

    checked = []
    monkeypatch.setattr(options, "check_memory",
                        lambda study, samples=None: checked.append(samples))
    options.RunOptions(until_converged=True).validate(loads_study(GROW, source="grow.toml"))
    assert checked == [None]  # the config's samples, not the largest step the budget allows
