"""The dominant layer of a transient study is a layer, never the exposure or the wearer."""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np

from plyrisk.text.transient import dominant


def test_morris_dominant_layer_skips_the_exposure():
    # invented mu* values (display only): the exposure moves the output most, a layer next
    study = SimpleNamespace(parameters=[SimpleNamespace(group="exposure"),
                                        SimpleNamespace(group="fabric")])
    m = SimpleNamespace(mu_star=np.array([5.0, 1.0]),
                        names=("exposure.duration", "fabric.thickness"))
    sc = SimpleNamespace(group_ranking={}, screening={"out": m})
    assert dominant(study, sc, "out") == ("fabric", "largest Morris mu*: fabric.thickness")
    only = SimpleNamespace(parameters=[SimpleNamespace(group="exposure")])
    sc = SimpleNamespace(group_ranking={}, screening={"out": SimpleNamespace(
        mu_star=np.array([5.0]), names=("exposure.duration",))})
    assert dominant(only, sc, "out") == ("", "")
