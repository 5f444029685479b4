"""One spelling of temperature units per medium: ASCII ``degC`` on the terminal and in plain
text, ``°C`` on pages (HTML, Markdown); checked on real output folders of both study kinds."""

from __future__ import annotations

import re

import pytest

from plyrisk.display import page_units, text_units


def test_page_and_text_spellings():
    # common practice: "degC" is the ASCII spelling of UDUNITS/pint, "°C" the SI symbol
    assert page_units("44 degC, 5 delta_degC, 100 degF") == "44 °C, 5 °C, 100 °F"
    assert text_units("50 °C and 120 °F") == "50 degC and 120 degF"
    assert page_units("degCx ideg") == "degCx ideg"  # only whole unit words
    assert text_units(page_units("P95 = 60.6 degC")) == "P95 = 60.6 degC"


def _page_text(path) -> str:
    """A page's visible text without the verbatim config (shown as the user wrote it) and
    the embedded figures."""
    text = path.read_text(encoding="utf-8")
    text = re.sub(r"<pre.*?</pre>", "", text, flags=re.S)
    text = re.sub(r"```.*?```", "", text, flags=re.S)
    return re.sub(r'data:image[^"]*', "", text)


@pytest.mark.slow
@pytest.mark.parametrize("which", ["steady_run", "transient_run"])
def test_each_medium_spells_temperatures_one_way(which, request):
    run = request.getfixturevalue(which)
    assert run.code in (0, 3), run.stderr
    for name in ("summary.txt",):
        text = (run.out / name).read_text(encoding="utf-8")
        assert "°C" not in text and "degC" in text, name
    assert "°C" not in run.stdout
    for name in ("summary.md", "report.html"):
        text = _page_text(run.out / name)
        assert "degC" not in text and "°C" in text, name
        # no table cell gives a temperature's unit as K (the derived outputs' units column)
        assert not re.search(r"(\|\s*K\s*\|)|(<td>K</td>)", text), name
    # the verdict block of the page shows the bound in the page's spelling
    md = (run.out / "summary.md").read_text(encoding="utf-8")
    verdict = md[md.index("## Verdict"):md.index("**Caution:**")]
    if "°C" not in verdict:  # a transient verdict is a probability: no temperature in it
        assert "%" in verdict
