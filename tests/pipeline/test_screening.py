"""Screening first ([screening]): Morris on every input, then the study on those kept."""

import numpy as np
import pytest
import xarray as xr

from plyrisk.pipeline.run import run_study, summary_text
from plyrisk.results.dataset import read_results
from plyrisk.study.config import loads_study
from tests.study_texts import panel

# An input that cannot matter: the shell's conductivity spread is tiny next to the gap's.
TEXT = panel(samples=32, gap_width='{ lognormal = { median = "3 mm", gsd = 1.4 } }',
             shell_conductivity='{ uniform = ["0.0599 W/m/K", "0.0601 W/m/K"] }',
             liner_conductivity='{ uniform = ["0.03 W/m/K", "0.05 W/m/K"] }')


@pytest.fixture(scope="module")
def screened(tmp_path_factory):
    text = TEXT + "\n[screening]\ntrajectories = 10\n"
    return run_study(loads_study(text), out_dir=tmp_path_factory.mktemp("screened"),
                     quiet=True)


def test_negligible_input_is_fixed_and_the_rest_analysed(screened):
    s = screened.screening
    names = [p.name for p in s.study.parameters]
    fixed = [n for n, f in zip(names, s.fixed, strict=True) if f]
    assert fixed == ["shell.conductivity"]
    assert screened.study.parameter_names == ("gap.width", "liner.conductivity")
    assert screened.propagation.inputs.shape[1] == 2
    assert s.runs == 10 * (3 + 1)
    assert "fixed at nominal" in s.reasons[names.index("shell.conductivity")]


def test_summary_and_dataset_say_what_was_fixed_and_why(screened):
    text = summary_text(screened)
    assert "screening (Morris, 10 trajectories" in text
    assert "fixed: shell.conductivity = 0.06 W/m/K (fixed at nominal: mu* upper bound" in text
    ds = screened.dataset
    assert list(ds["screened_parameter"].values) == ["shell.conductivity", "gap.width",
                                                     "liner.conductivity"]
    np.testing.assert_array_equal(ds["screening_fixed"].values, [True, False, False])
    assert ds.attrs["screening_fixed"] == "shell.conductivity"
    assert ds["screening_mu_star"].attrs["method"] == "morris"
    xr.testing.assert_identical(read_results(screened.path), ds)


def test_keep_overrides_the_screening():
    text = TEXT + '\n[screening]\ntrajectories = 10\nkeep = ["shell.conductivity"]\n'
    result = run_study(loads_study(text), quiet=True, samples=16)
    assert not result.screening.fixed.any()
    assert "kept: listed in screening.keep" in result.screening.reasons[0]


def test_report_lists_the_screening_decisions(screened, tmp_path):
    from plyrisk.report.html import write_report

    files = write_report(read_results(screened.path), tmp_path)
    html = files.html.read_text(encoding="utf-8")
    assert ">Screening before the study</h2>" in html
    assert "<td>shell.conductivity</td><td>fixed at its nominal</td>" in html
    md = files.markdown.read_text(encoding="utf-8")
    assert "| shell.conductivity | fixed at its nominal |" in md
    assert "| gap.width | kept |" in md
