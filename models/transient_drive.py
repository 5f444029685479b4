"""The exposed face's conditions over time for a working set of samples (used by the stepper).

Phase 0 is before the exposure (the initial steady state), 1 the exposure, 2 the cool-down.
For each sample and time the drive gives the face-exchange keywords of
:func:`plyrisk.models.boundary.hot_environment_flux` (without its source term), the flux the
assembly absorbs (radiant, or prescribed in mode ``"absorbed_flux"``), and the *exposure flux*
``G + h (T_g - T_ambient)`` (mode ``"environment"``; ``G`` in mode ``"absorbed_flux"``): the heat
flux a cold sensor at the ambient temperature would receive (common practice for rating an
exposure by flux × time).
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

from plyrisk.models.exposure import Table, TransientExposure

FaceConditions = dict[str, np.ndarray]
"""Keywords of :func:`plyrisk.models.boundary.hot_environment_flux` for the exposed face:
``gas_temperature`` [K], ``convection_coefficient`` [W m-2 K-1], ``surroundings_temperature``
[K], ``emissivity`` [-], each ``(k,)``."""


def _row(value: ArrayLike, n: int) -> NDArray[np.float64]:
    return np.broadcast_to(np.asarray(value, dtype=float), (n,)).copy()


class Drive:
    """Exposure values per sample (scalars as ``(k,)`` rows, tables shared).

    Parameters
    ----------
    exposure
        The exposure [-].
    emissivity
        Emissivity of the exposed face, ``(k,)`` [-].
    n
        Samples [-].
    """

    def __init__(self, exposure: TransientExposure, emissivity: np.ndarray, n: int) -> None:
        e = exposure
        self.mode = e.mode
        self.values: dict[str, Table | NDArray[np.float64] | None] = {}
        for name in ("incident_flux", "gas_temperature", "convection_coefficient"):
            v = getattr(e, name)
            self.values[name] = v if isinstance(v, Table) else _row(v, n)
        ts = e.surroundings_temperature
        self.values["surroundings_temperature"] = (
            None if ts is None else ts if isinstance(ts, Table) else _row(ts, n)
        )
        amb = _row(e.ambient_temperature, n)
        h_amb = _row(e.ambient_convection_coefficient, n)
        cool = amb if e.cooldown_temperature is None else _row(e.cooldown_temperature, n)
        h_cool = (h_amb if e.cooldown_convection_coefficient is None
                  else _row(e.cooldown_convection_coefficient, n))
        s_cool = (cool if e.cooldown_surroundings_temperature is None
                  else _row(e.cooldown_surroundings_temperature, n))
        self.rows = {
            "ambient": amb, "ambient_h": h_amb, "cool": cool, "cool_h": h_cool,
            "cool_s": s_cool, "duration": _row(e.exposure_duration, n),
            "emissivity": np.asarray(emissivity, dtype=float),
        }
        kinks = [t for t in e.jump_times() if t > 0.0]
        self.kinks = np.asarray(kinks, dtype=float)
        self.horizon = float(e.horizon)

    def take(self, idx: np.ndarray) -> Drive:
        """The drive restricted to samples ``idx``."""
        new = object.__new__(Drive)
        new.mode, new.kinks, new.horizon = self.mode, self.kinks, self.horizon
        new.values = {k: (v[idx] if isinstance(v, np.ndarray) else v)
                      for k, v in self.values.items()}
        new.rows = {k: v[idx] for k, v in self.rows.items()}
        return new

    def _value(self, name: str, t: np.ndarray) -> np.ndarray:
        v = self.values[name]
        if isinstance(v, Table):
            return v(t)
        assert v is not None  # only surroundings_temperature may be None; not read then
        return v

    def next_jump(self, t: np.ndarray) -> np.ndarray:
        """The next jump time after ``t`` (table kink, end of exposure, horizon) [s]."""
        nxt = np.full(t.shape, self.horizon)
        d = self.rows["duration"]
        nxt = np.where(d > t, np.minimum(nxt, d), nxt)
        for kink in self.kinks:
            nxt = np.where(kink > t, np.minimum(nxt, kink), nxt)
        return nxt

    def phase(self, t: np.ndarray) -> np.ndarray:
        """1 during the exposure (``t < duration``), else 2 [-]."""
        return np.where(t < self.rows["duration"], 1, 2)

    def conditions(self, t: np.ndarray, phase: np.ndarray
                   ) -> tuple[FaceConditions, np.ndarray, np.ndarray]:
        """Face keywords, absorbed flux [W m-2] and exposure flux [W m-2] at ``t`` in ``phase``."""
        r = self.rows
        eps = r["emissivity"]
        amb, h_amb = r["ambient"], r["ambient_h"]
        on = phase == 1
        pre = phase == 0
        G = self._value("incident_flux", t)
        Tg = self._value("gas_temperature", t)
        h = self._value("convection_coefficient", t)
        Ts = Tg if self.values["surroundings_temperature"] is None else self._value(
            "surroundings_temperature", t)
        if self.mode == "environment":
            gas = np.where(on, Tg, np.where(pre, amb, r["cool"]))
            hc = np.where(on, h, np.where(pre, h_amb, r["cool_h"]))
            sur = np.where(on, Ts, np.where(pre, amb, r["cool_s"]))
            e = eps
            absorbed = np.where(on, eps * G, 0.0)
            exposure_flux = np.where(on, G + h * (Tg - amb), 0.0)
        else:
            gas = amb
            hc = np.where(pre, h_amb, 0.0)
            sur = amb
            e = np.where(pre, eps, 0.0)
            absorbed = np.where(on, G, 0.0)
            exposure_flux = absorbed
        face = {"gas_temperature": gas, "convection_coefficient": hc,
                "surroundings_temperature": sur, "emissivity": e}
        return face, absorbed, exposure_flux
