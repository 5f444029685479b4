"""Probability distributions of uncertain inputs, limited to physical bounds.

Every value is SI. :func:`make_distribution` validates a parameter set and returns a frozen
:class:`Distribution` that maps unit-cube coordinates to input values through
:meth:`~Distribution.ppf`.

Kinds and parameter sets (after the config layer has converted units)
-----------------------------------------------------------------------
==============  =======================================================================
``normal``      ``{mean, sd}``
``truncnormal`` ``{mean, sd, low?, high?}``: normal(mean, sd) restricted to [low, high]
                (defaults -inf, inf), intersected with the physical bounds
``lognormal``   ``{median, gsd}`` (geometric standard deviation, > 1) or ``{mean, cv}``
                (arithmetic mean and coefficient of variation); ln X ~ normal(ln median,
                ln gsd), and with mean/cv: ln gsd = sqrt(ln(1 + cv^2)),
                median = mean / sqrt(1 + cv^2)
``uniform``     ``{low, high}``
``triangular``  ``{low, mode, high}``
``beta``        ``{mean, sd, low?, high?}`` or ``{a, b, low?, high?}`` on [low, high]
                (defaults 0, 1); mean/sd are on the physical scale
``tolerance``   ``{nominal, tolerance, coverage?}`` or ``{nominal, upper, lower, coverage?}``
``fixed``       ``{value}``
==============  =======================================================================

Tolerance convention
--------------------
A manufacturing tolerance is read as a normal distribution whose band spans ``coverage``
standard deviations on each side (default ``coverage = 3``, i.e. about 99.7 % of parts inside
the band). Symmetric ``nominal ± tolerance``: mean = nominal, sd = tolerance / coverage.
Asymmetric ``nominal +upper/-lower`` (both positive deviations): the band
[nominal - lower, nominal + upper] is mean ± coverage·sd, so mean = band midpoint =
nominal + (upper - lower)/2 and sd = (upper + lower) / (2·coverage). The mean then differs
from the nominal; :attr:`Distribution.nominal` stays the user's nominal.

Physical bounds and truncation
------------------------------
:class:`Bounds` carries the physical range of the quantity (e.g. thickness (0, inf),
emissivity (0, 1]). The unbounded kinds (normal, truncnormal, tolerance, lognormal) are
truncated to the bounds, and the cut probability is reported in
:attr:`Distribution.truncated_mass`. The bounded kinds (uniform, triangular, beta) must have
their support inside the bounds (touching is allowed); crossing is a user error and raises.
:meth:`Distribution.ppf` never returns a value on an open bound (a rounding guard moves values
that round onto or past a bound to the nearest representable value inside; in exact
arithmetic no value lies there).

Spread (:attr:`Distribution.spread`) and :meth:`Distribution.with_spread`
----------------------------------------------------------------------------
normal, truncnormal: sd [SI]; tolerance: the tolerance, or (upper + lower)/2 [SI];
uniform, triangular: half-width (high - low)/2 [SI]; lognormal: ln(gsd) [-] (dimensionless
log-scale spread); beta: sd [SI]; fixed: 0. ``with_spread(f)`` keeps the nominal and scales the
spread by f: triangular low/high move about the mode, asymmetric tolerance bands scale both
sides, beta keeps its support [low, high] and mean, lognormal keeps its median and returns a
``{median, gsd}`` parameter set. ``f = 0`` gives a ``fixed`` distribution at the nominal.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import ArrayLike
from scipy import stats

__all__ = ["KINDS", "Bounds", "Distribution", "make_distribution"]

KINDS = ("normal", "truncnormal", "lognormal", "uniform", "triangular", "beta", "tolerance",
         "fixed")

FORMS: dict[str, tuple[tuple[tuple[str, ...], tuple[str, ...]], ...]] = {
    "normal": ((("mean", "sd"), ()),),
    "truncnormal": ((("mean", "sd"), ("low", "high")),),
    "lognormal": ((("median", "gsd"), ()), (("mean", "cv"), ())),
    "uniform": ((("low", "high"), ()),),
    "triangular": ((("low", "mode", "high"), ()),),
    "beta": ((("mean", "sd"), ("low", "high")), (("a", "b"), ("low", "high"))),
    "tolerance": ((("nominal", "tolerance"), ("coverage",)),
                  (("nominal", "upper", "lower"), ("coverage",))),
    "fixed": ((("value",), ()),),
}
"""Accepted parameter sets per kind: alternatives of (required names, optional names)."""
_MAY_BE_INFINITE = {("truncnormal", "low"), ("truncnormal", "high")}


def _fmt(x: float) -> str:
    return f"{x:.6g}"


@dataclass(frozen=True)
class Bounds:
    """Physical bounds of a quantity.

    Parameters
    ----------
    lower : float
        Lower bound [SI]; ``-inf`` for none.
    upper : float
        Upper bound [SI]; ``inf`` for none.
    lower_closed, upper_closed : bool
        Whether the bound value itself is physically allowed (e.g. emissivity 1 with
        ``upper_closed=True``). Open by default: sampled values stay strictly inside.
        Infinite bounds are always open (a closed flag on them is dropped).
    """

    lower: float = -math.inf
    upper: float = math.inf
    lower_closed: bool = False
    upper_closed: bool = False

    def __post_init__(self) -> None:
        lower, upper = float(self.lower), float(self.upper)
        if math.isnan(lower) or math.isnan(upper) or not lower < upper:
            raise ValueError(f"bounds need lower < upper, got lower={lower} upper={upper}")
        object.__setattr__(self, "lower", lower)
        object.__setattr__(self, "upper", upper)
        # An infinite bound is never attained: it is always open.
        object.__setattr__(self, "lower_closed", bool(self.lower_closed) and math.isfinite(lower))
        object.__setattr__(self, "upper_closed", bool(self.upper_closed) and math.isfinite(upper))

    def __str__(self) -> str:
        left = "[" if self.lower_closed else "("
        right = "]" if self.upper_closed else ")"
        return f"{left}{_fmt(self.lower)}, {_fmt(self.upper)}{right}"

    def contains(self, x: float) -> bool:
        """Whether the scalar ``x`` [SI] is an allowed value (closed ends inclusive)."""
        above = x >= self.lower if self.lower_closed else x > self.lower
        below = x <= self.upper if self.upper_closed else x < self.upper
        return bool(above and below)

    def _guard(self, x: np.ndarray) -> np.ndarray:
        lo = self.lower if self.lower_closed else np.nextafter(self.lower, np.inf)
        hi = self.upper if self.upper_closed else np.nextafter(self.upper, -np.inf)
        return np.clip(x, lo, hi)


def _norm_mass(lo: float, hi: float) -> float:
    """P(lo < Z < hi) for a standard normal Z, accurate in both tails."""
    if not lo < hi:
        return 0.0
    if lo > 0.0:
        return float(stats.norm.sf(lo) - stats.norm.sf(hi))
    return float(stats.norm.cdf(hi) - stats.norm.cdf(lo))


def _check_params(kind: str, params: Mapping[str, Any]) -> dict[str, float]:
    if kind not in FORMS:
        raise ValueError(f"unknown distribution {kind!r}; valid: {', '.join(KINDS)}")
    given = set(params)
    for required, optional in FORMS[kind]:
        if set(required) <= given <= set(required) | set(optional):
            break
    else:
        forms = " or ".join(
            "{" + ", ".join(list(req) + [f"{o}?" for o in opt]) + "}"
            for req, opt in FORMS[kind])
        raise ValueError(f"{kind} takes {forms}; got {{{', '.join(sorted(given))}}}")
    out: dict[str, float] = {}
    for name, raw in params.items():
        try:
            value = float(raw)
        except (TypeError, ValueError):
            raise ValueError(f"{kind} parameter {name!r} must be a number, got {raw!r}") from None
        if math.isnan(value) or (math.isinf(value) and (kind, name) not in _MAY_BE_INFINITE):
            raise ValueError(f"{kind} parameter {name!r} must be finite, got {value}")
        out[name] = value
    return out


def _positive(kind: str, name: str, value: float) -> None:
    if not value > 0.0:
        raise ValueError(f"{kind} {name} must be positive, got {_fmt(value)}")


def _ordered(kind: str, low: float, high: float) -> None:
    if not low < high:
        raise ValueError(f"{kind} low must be below high, got low={_fmt(low)} high={_fmt(high)}")


@dataclass(frozen=True)
class Distribution:
    """A validated input distribution (construct with :func:`make_distribution`).

    Parameters
    ----------
    kind : str
        One of :data:`KINDS`.
    params : dict of str to float
        Parameter set as given by the user [SI]; see the module docstring.
    bounds : Bounds
        Physical bounds of the quantity [SI].

    Attributes
    ----------
    nominal : float
        The centre the user means [SI]: normal/truncnormal mean, tolerance nominal, lognormal
        median, uniform midpoint, triangular mode, beta mean, fixed value.
    spread : float
        Spread measure per kind (module docstring) [SI], for lognormal ln(gsd) [-].
    truncated_mass : float
        Probability of the untruncated distribution cut off by the physical bounds; for
        truncnormal, of the normal already restricted to the user's [low, high]. 0 for the
        bounded kinds and ``fixed``.
    mean, std, median : float
        Moments and median of the distribution actually sampled (after truncation) [SI].
    """

    kind: str
    params: dict[str, float]
    bounds: Bounds = field(default_factory=Bounds)
    # Derived state, set in __post_init__.
    nominal: float = field(init=False, compare=False)
    spread: float = field(init=False, compare=False)
    truncated_mass: float = field(init=False, compare=False)
    _family: str = field(init=False, repr=False, compare=False)   # affine | log | bounded | fixed
    _loc: float = field(init=False, repr=False, compare=False)    # affine loc / log median
    _scale: float = field(init=False, repr=False, compare=False)  # affine sd / log sigma
    _alpha: float = field(init=False, repr=False, compare=False)  # latent truncation points
    _beta: float = field(init=False, repr=False, compare=False)
    _frozen: Any = field(init=False, repr=False, compare=False)   # scipy frozen distribution

    def __post_init__(self) -> None:
        if not isinstance(self.bounds, Bounds):
            raise ValueError(f"bounds must be a Bounds instance, got {self.bounds!r}")
        p = _check_params(self.kind, self.params)
        object.__setattr__(self, "params", p)
        getattr(self, f"_init_{self.kind}")(p)

    # -- setters ---------------------------------------------------------------------------
    def _set(self, **values: Any) -> None:
        for key, value in values.items():
            object.__setattr__(self, key, value)

    def _check_nominal(self, nominal: float, what: str) -> None:
        if not self.bounds.contains(nominal):
            raise ValueError(f"{self.kind} {what}={_fmt(nominal)} lies outside the physical "
                             f"bounds {self.bounds}")

    def _init_normal_family(self, mean: float, sd: float, low: float, high: float,
                            nominal: float, spread: float) -> None:
        _positive(self.kind, "sd", sd)
        lo, hi = max(low, self.bounds.lower), min(high, self.bounds.upper)
        alpha_ref, beta_ref = (low - mean) / sd, (high - mean) / sd
        alpha, beta = (lo - mean) / sd, (hi - mean) / sd
        self._finish_latent("affine", mean, sd, alpha, beta, alpha_ref, beta_ref, nominal, spread)

    def _finish_latent(self, family: str, loc: float, scale: float, alpha: float, beta: float,
                       alpha_ref: float, beta_ref: float, nominal: float, spread: float) -> None:
        kept = _norm_mass(alpha, beta)
        if not kept > 0.0:
            raise ValueError(f"{self.kind} {self.params} lies entirely outside the physical "
                             f"bounds {self.bounds}")
        ref = _norm_mass(alpha_ref, beta_ref)
        cut = _norm_mass(alpha_ref, alpha) + _norm_mass(beta, beta_ref)
        latent = (stats.norm() if math.isinf(alpha) and math.isinf(beta)
                  else stats.truncnorm(alpha, beta))
        self._set(_family=family, _loc=loc, _scale=scale, _alpha=alpha, _beta=beta,
                  _frozen=latent, nominal=nominal, spread=spread,
                  truncated_mass=min(max(cut / ref, 0.0), 1.0))

    def _init_normal(self, p: dict[str, float]) -> None:
        self._check_nominal(p["mean"], "mean")
        self._init_normal_family(p["mean"], p["sd"], -math.inf, math.inf, p["mean"], p["sd"])

    def _init_truncnormal(self, p: dict[str, float]) -> None:
        low, high = p.get("low", -math.inf), p.get("high", math.inf)
        _ordered(self.kind, low, high)
        self._check_nominal(p["mean"], "mean")
        if not (max(low, self.bounds.lower) < min(high, self.bounds.upper)):
            raise ValueError(f"truncnormal [low, high]=[{_fmt(low)}, {_fmt(high)}] lies "
                             f"entirely outside the physical bounds {self.bounds}")
        self._init_normal_family(p["mean"], p["sd"], low, high, p["mean"], p["sd"])

    def _init_tolerance(self, p: dict[str, float]) -> None:
        nominal = p["nominal"]
        coverage = p.get("coverage", 3.0)
        _positive(self.kind, "coverage", coverage)
        if "tolerance" in p:
            _positive(self.kind, "tolerance", p["tolerance"])
            upper = lower = p["tolerance"]
        else:
            _positive(self.kind, "upper", p["upper"])
            _positive(self.kind, "lower", p["lower"])
            upper, lower = p["upper"], p["lower"]
        self._check_nominal(nominal, "nominal")
        if self.bounds.lower == 0.0 and lower >= abs(nominal):
            raise ValueError(f"tolerance larger than the nominal: nominal={_fmt(nominal)}, lower "
                             f"deviation {_fmt(lower)}; the band must stay above the bound 0")
        mean = nominal + 0.5 * (upper - lower)
        sd = 0.5 * (upper + lower) / coverage
        self._init_normal_family(mean, sd, -math.inf, math.inf, nominal, 0.5 * (upper + lower))

    def _init_lognormal(self, p: dict[str, float]) -> None:
        if "median" in p:
            _positive(self.kind, "median", p["median"])
            if not p["gsd"] > 1.0:
                raise ValueError(f"lognormal gsd must be greater than 1, got {_fmt(p['gsd'])}")
            median, sigma = p["median"], math.log(p["gsd"])
        else:
            _positive(self.kind, "mean", p["mean"])
            _positive(self.kind, "cv", p["cv"])
            median = p["mean"] / math.sqrt(1.0 + p["cv"] ** 2)
            sigma = math.sqrt(math.log1p(p["cv"] ** 2))
        self._check_nominal(median, "median")
        lo, hi = self.bounds.lower, self.bounds.upper
        alpha = math.log(lo / median) / sigma if lo > 0.0 else -math.inf
        beta = math.log(hi / median) / sigma if hi < math.inf else math.inf
        self._finish_latent("log", median, sigma, alpha, beta, -math.inf, math.inf, median, sigma)

    def _init_bounded(self, low: float, high: float, frozen: Any, nominal: float,
                      spread: float) -> None:
        if low < self.bounds.lower or high > self.bounds.upper:
            raise ValueError(f"{self.kind} support [{_fmt(low)}, {_fmt(high)}] crosses the "
                             f"physical bounds {self.bounds}; bounded kinds are not truncated")
        self._set(_family="bounded", _loc=low, _scale=high - low, _alpha=low, _beta=high,
                  _frozen=frozen, nominal=nominal, spread=spread, truncated_mass=0.0)

    def _init_uniform(self, p: dict[str, float]) -> None:
        low, high = p["low"], p["high"]
        _ordered(self.kind, low, high)
        self._init_bounded(low, high, stats.uniform(loc=low, scale=high - low),
                           0.5 * (low + high), 0.5 * (high - low))

    def _init_triangular(self, p: dict[str, float]) -> None:
        low, mode, high = p["low"], p["mode"], p["high"]
        _ordered(self.kind, low, high)
        if not low <= mode <= high:
            raise ValueError(f"triangular mode must lie in [low, high]=[{_fmt(low)}, "
                             f"{_fmt(high)}], got mode={_fmt(mode)}")
        frozen = stats.triang(c=(mode - low) / (high - low), loc=low, scale=high - low)
        self._init_bounded(low, high, frozen, mode, 0.5 * (high - low))

    def _init_beta(self, p: dict[str, float]) -> None:
        low, high = p.get("low", 0.0), p.get("high", 1.0)
        _ordered(self.kind, low, high)
        width = high - low
        if "a" in p:
            _positive(self.kind, "a", p["a"])
            _positive(self.kind, "b", p["b"])
            a, b = p["a"], p["b"]
            mean = low + width * a / (a + b)
            sd = width * math.sqrt(a * b / ((a + b) ** 2 * (a + b + 1.0)))
        else:
            mean, sd = p["mean"], p["sd"]
            _positive(self.kind, "sd", sd)
            m, s = (mean - low) / width, sd / width
            if not 0.0 < m < 1.0:
                raise ValueError(f"beta mean must lie strictly between low and high, got "
                                 f"mean={_fmt(mean)} on [{_fmt(low)}, {_fmt(high)}]")
            if not s * s < m * (1.0 - m):
                limit = width * math.sqrt(m * (1.0 - m))
                raise ValueError(f"beta mean={_fmt(mean)}, sd={_fmt(sd)} is impossible: sd must "
                                 f"be below sqrt((mean-low)(high-mean))={_fmt(limit)}")
            nu = m * (1.0 - m) / (s * s) - 1.0
            a, b = m * nu, (1.0 - m) * nu
        self._init_bounded(low, high, stats.beta(a, b, loc=low, scale=width), mean, sd)

    def _init_fixed(self, p: dict[str, float]) -> None:
        self._check_nominal(p["value"], "value")
        self._set(_family="fixed", _loc=p["value"], _scale=0.0, _alpha=p["value"],
                  _beta=p["value"], _frozen=None, nominal=p["value"], spread=0.0,
                  truncated_mass=0.0)

    # -- evaluation ------------------------------------------------------------------------
    def _from_latent(self, z: np.ndarray) -> np.ndarray:
        if self._family == "affine":
            return self._loc + self._scale * z
        return self._loc * np.exp(self._scale * z)

    def ppf(self, u: ArrayLike) -> np.ndarray:
        """Quantile function of the (truncated) distribution.

        Parameters
        ----------
        u : array_like
            Probabilities in the open interval (0, 1).

        Returns
        -------
        numpy.ndarray
            Values [SI], same shape as ``u``, inside the physical bounds (never on an open one).
        """
        u = np.asarray(u, dtype=float)
        if not np.all((u > 0.0) & (u < 1.0)):
            raise ValueError("ppf needs u in the open interval (0, 1); got values outside")
        if self._family == "fixed":
            x = np.full_like(u, self._loc)
        elif self._family == "bounded":
            x = self._frozen.ppf(u)
        else:
            x = self._from_latent(self._frozen.ppf(u))
        return self.bounds._guard(x)

    def cdf(self, x: np.ndarray) -> np.ndarray:
        """Cumulative distribution function of the (truncated) distribution.

        Parameters
        ----------
        x : array_like
            Values [SI].

        Returns
        -------
        numpy.ndarray
            P(X <= x), same shape as ``x``.
        """
        x = np.asarray(x, dtype=float)
        if self._family == "fixed":
            return (x >= self._loc).astype(float)
        if self._family == "bounded":
            return np.asarray(self._frozen.cdf(x), dtype=float)
        if self._family == "affine":
            z = (x - self._loc) / self._scale
        else:
            with np.errstate(divide="ignore", invalid="ignore"):
                z = np.where(x > 0.0, np.log(np.where(x > 0.0, x, 1.0) / self._loc)
                             / self._scale, -np.inf)
        return np.clip(np.asarray(self._frozen.cdf(z), dtype=float), 0.0, 1.0)

    def _log_moment(self, k: int) -> float:
        """E[X^k] of the truncated lognormal."""
        s = k * self._scale
        ratio = _norm_mass(self._alpha - s, self._beta - s) / _norm_mass(self._alpha, self._beta)
        return self._loc**k * math.exp(0.5 * s * s) * ratio

    @property
    def mean(self) -> float:
        """Mean of the distribution actually sampled [SI]."""
        if self._family == "fixed":
            return self._loc
        if self._family == "bounded":
            return float(self._frozen.mean())
        if self._family == "affine":
            return float(self._loc + self._scale * self._frozen.mean())
        if self.truncated_mass == 0.0:
            return float(stats.lognorm(s=self._scale, scale=self._loc).mean())
        return self._log_moment(1)

    @property
    def std(self) -> float:
        """Standard deviation of the distribution actually sampled [SI]."""
        if self._family == "fixed":
            return 0.0
        if self._family == "bounded":
            return float(self._frozen.std())
        if self._family == "affine":
            return float(self._scale * self._frozen.std())
        if self.truncated_mass == 0.0:
            return float(stats.lognorm(s=self._scale, scale=self._loc).std())
        return math.sqrt(max(self._log_moment(2) - self._log_moment(1) ** 2, 0.0))

    @property
    def median(self) -> float:
        """Median of the distribution actually sampled [SI]."""
        return float(self.ppf(0.5))

    def interval(self, coverage: float = 0.90) -> tuple[float, float]:
        """Central interval holding ``coverage`` of the probability.

        Parameters
        ----------
        coverage : float
            Probability inside the interval, in (0, 1); 0.90 gives the 5-95 % range.

        Returns
        -------
        tuple of float
            (lower, upper) [SI].
        """
        if not 0.0 < coverage < 1.0:
            raise ValueError(f"coverage must lie in (0, 1), got {coverage}")
        lo, hi = self.ppf(np.array([0.5 - 0.5 * coverage, 0.5 + 0.5 * coverage]))
        return float(lo), float(hi)

    def with_spread(self, factor: float) -> Distribution:
        """The same distribution with its spread scaled about the nominal.

        Parameters
        ----------
        factor : float
            Spread multiplier, >= 0; 0 gives a ``fixed`` distribution at the nominal.

        Returns
        -------
        Distribution
            New distribution with the same kind (or ``fixed``) and bounds; raises ValueError
            when the scaled parameters are invalid (e.g. a uniform then crossing the bounds).
        """
        factor = float(factor)
        if not (math.isfinite(factor) and factor >= 0.0):
            raise ValueError(f"spread factor must be finite and >= 0, got {factor}")
        if factor == 0.0:
            return Distribution("fixed", {"value": self.nominal}, self.bounds)
        if factor == 1.0 or self.kind == "fixed":
            return self
        p = self.params
        new: dict[str, float]
        if self.kind in ("normal", "truncnormal"):
            new = {**p, "sd": p["sd"] * factor}
        elif self.kind == "tolerance":
            new = {k: (v * factor if k in ("tolerance", "upper", "lower") else v)
                   for k, v in p.items()}
        elif self.kind == "lognormal":
            new = {"median": self._loc, "gsd": math.exp(self._scale * factor)}
        elif self.kind == "uniform":
            half = self.spread * factor
            new = {"low": self.nominal - half, "high": self.nominal + half}
        elif self.kind == "triangular":
            mode = p["mode"]
            new = {"low": mode - (mode - p["low"]) * factor, "mode": mode,
                   "high": mode + (p["high"] - mode) * factor}
        else:  # beta
            new = {"mean": self.nominal, "sd": self.spread * factor,
                   "low": p.get("low", 0.0), "high": p.get("high", 1.0)}
        return Distribution(self.kind, new, self.bounds)


_UNBOUNDED = Bounds()


def make_distribution(kind: str, params: Mapping[str, float], *,
                      bounds: Bounds = _UNBOUNDED) -> Distribution:
    """Validate a parameter set and build a :class:`Distribution`.

    Parameters
    ----------
    kind : str
        Distribution kind, one of :data:`KINDS`.
    params : mapping of str to float
        Parameter set [SI], see the module docstring.
    bounds : Bounds
        Physical bounds of the quantity [SI]; unbounded by default.

    Returns
    -------
    Distribution

    Raises
    ------
    ValueError
        Unknown kind, missing or extra parameter names, or invalid values; the message names
        the parameter, the bad value and what is valid.

    Examples
    --------
    A gap width with a median of 2 mm and a geometric standard deviation of 1.4, which cannot be
    negative:

    >>> import numpy as np
    >>> from plyrisk.study.distributions import Bounds, make_distribution
    >>> width = make_distribution("lognormal", {"median": 2e-3, "gsd": 1.4},
    ...                           bounds=Bounds(lower=0.0))
    >>> round(width.nominal, 9)
    0.002
    >>> (width.ppf(np.array([0.05, 0.5, 0.95])) * 1e3).round(3)  # mm
    array([1.15 , 2.   , 3.478])

    An emissivity of 0.9 +- 0.1 (normal) is truncated at its physical bound 1, never clipped; the
    mass cut off is ``1 - Phi(1)``:

    >>> emissivity = make_distribution("normal", {"mean": 0.9, "sd": 0.1},
    ...                                bounds=Bounds(lower=0.0, upper=1.0))
    >>> round(emissivity.truncated_mass, 4)
    0.1587
    >>> make_distribution("uniform", {"low": 2.0, "high": 1.0})
    Traceback (most recent call last):
    ...
    ValueError: uniform low must be below high, got low=2 high=1
    """
    if not isinstance(params, Mapping):
        raise ValueError(f"{kind} parameters must be a mapping of name to value, got {params!r}")
    return Distribution(kind, dict(params), bounds)
