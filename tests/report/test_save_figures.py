"""Tests of plyrisk.report.figures.common.save_figures: each figure drawn once per format, the
same files from one process or two, nothing dropped when the second process fails."""

from __future__ import annotations

import pytest
from matplotlib.figure import Figure

from plyrisk.report.figures import common
from plyrisk.report.figures.common import save_figures, styled

pytestmark = pytest.mark.slow  # draws figures (a few seconds on a busy machine)


def _figures(count: int) -> list[tuple[str, Figure]]:
    out = []
    for i in range(count):
        fig = Figure(figsize=(3.0, 2.0), layout="constrained")
        ax = fig.subplots()
        ax.plot([0, 1, 2], [0, i, 2 * i])
        ax.set_title(f"figure {i}")
        ax.set_ylabel("a long label that the layout must make room for")
        out.append((f"f{i}", fig))
    return out


@pytest.mark.parametrize("formats", [("png",), ("png", "svg")])
def test_one_process_and_two_write_the_same_files(tmp_path, formats):
    with styled():
        one = save_figures(_figures(5), tmp_path / "one", formats=formats, processes=1)
        two = save_figures(_figures(5), tmp_path / "two", formats=formats, processes=2)
    assert [p.name for p in one] == [p.name for p in two]
    assert len(one) == 5 * len(formats)
    for a, b in zip(one, two, strict=True):
        assert a.read_bytes() == b.read_bytes()


def test_the_layout_is_computed_once_and_kept_for_the_other_formats(tmp_path):
    fig = _figures(1)[0][1]
    calls = []
    engine = fig.get_layout_engine()
    execute = engine.execute
    engine.execute = lambda f: (calls.append(1), execute(f))[1]
    with styled():
        save_figures([("f", fig)], tmp_path, formats=("png", "svg"), processes=1)
    assert len(calls) == 1
    assert (tmp_path / "f.png").is_file() and (tmp_path / "f.svg").is_file()


def test_figures_a_failed_process_did_not_write_are_drawn_here(tmp_path, monkeypatch):
    def fail(*args):
        raise SystemExit(3)

    monkeypatch.setattr(common, "_render_all", fail)
    with styled():
        paths = save_figures(_figures(4), tmp_path, processes=2)
    assert all(p.is_file() and p.stat().st_size > 0 for p in paths)


def test_unknown_format_is_a_one_line_error(tmp_path):
    with pytest.raises(ValueError, match=r"formats must be one or more of png, svg, got \['pdf'\]"):
        save_figures(_figures(1), tmp_path, formats=("pdf",))
