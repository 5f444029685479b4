"""Designs of experiments in the open unit hypercube (0, 1)^d.

A :class:`Design` holds unit-cube coordinates; :meth:`plyrisk.study.distributions.Distribution.ppf`
maps each column to an input. Three methods:

``sobol``
    Saltelli's cross-sampled design for first- and total-order Sobol' indices. Matrices A and B
    come from one scrambled Sobol' sequence in 2d dimensions
    (``scipy.stats.qmc.Sobol(d=2*d, scramble=True, seed=seed)``, A = first d columns,
    B = last d), exactly as ``SALib.sample.sobol.sample`` builds them. Rows are interleaved per
    base row i: A_i, AB_1 ... AB_d (column j of A replaced by B's), AB_g for every group of two
    or more parameters (all of the group's columns replaced), B_i. Without groups the design
    is bit-identical to ``SALib.sample.sobol.sample(problem, N, calc_second_order=False,
    seed=seed)`` with bounds [0, 1]. ``base_samples`` must be a power of 2 (the balance
    properties of the Sobol' sequence need it); any other value raises ValueError naming the
    nearest powers. Groups of one parameter would duplicate that parameter's AB block and get
    no rows of their own.

    With ``replicates = R > 1`` the design is R independent randomizations of the same
    construction (replicated randomized quasi-Monte Carlo: Owen 1995, "Randomly permuted
    (t,m,s)-nets and (t,s)-sequences", Springer LNS 106, 299-317; L'Ecuyer &
    Lemieux 2002, "Recent advances in randomized quasi-Monte Carlo methods", in Modeling
    Uncertainty, Kluwer, 419-474): replicate r is its own scrambled Sobol' sequence in 2d
    dimensions, scrambled by ``numpy.random.default_rng(numpy.random.SeedSequence(seed,
    spawn_key=(r,)))``, each a complete Saltelli design of N / R base rows (N / R a power
    of 2). Base rows are interleaved: base row i belongs to replicate ``i % R`` and is point
    ``i // R`` of its sequence, so the design of 2N base rows is the design of N base rows
    followed by the continuation of every replicate's sequence (``--until-converged``), and any
    row range is drawn alone (every replicate's engine fast-forwarded).
``lhs``
    Latin hypercube, ``scipy.stats.qmc.LatinHypercube(rng=numpy.random.default_rng(seed))``,
    optionally optimized (``"random-cd"`` or ``"lloyd"``).
``random``
    Plain Monte Carlo in fixed blocks of ``RANDOM_BLOCK_ROWS`` rows: block k is drawn by
    ``numpy.random.default_rng(numpy.random.SeedSequence(seed, spawn_key=(k,))).random``, so
    any row range can be drawn on its own (by a worker, for one chunk) with the same values.

A :class:`DesignPlan` describes a design by its method, size and seed; :meth:`DesignPlan.rows`
draws any range of its rows alone (Sobol' rows through ``fast_forward``, random rows from their
block's spawned seed), bit-identical to the same rows of the whole design. Latin hypercubes
couple all rows (a permutation per column), so they are drawn whole.

All coordinates lie strictly inside (0, 1): the generators can return exactly 0.0 (and an
optimized Latin hypercube could return 1.0) with vanishing probability; such values are
replaced by half of the generator's grid step from the edge (2**-31 for Sobol', 2**-54 for
the others), which changes nothing else. The same seed gives bit-identical designs.
"""

from __future__ import annotations

import operator
import warnings
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy.stats import qmc

__all__ = ["METHODS", "RANDOM_BLOCK_ROWS", "Design", "DesignPlan", "latin_hypercube_design",
           "make_design", "random_design", "replicate_engine", "sobol_design"]

METHODS = ("sobol", "lhs", "random")
RANDOM_BLOCK_ROWS = 2**16
"""Rows per independently seeded block of a random design."""
PLAN_METHODS = (*METHODS, "sobol-sequence")
"""Designs a :class:`DesignPlan` describes."""
LHS_OPTIMIZATIONS = (None, "random-cd", "lloyd")
_SOBOL_EDGE = 2.0**-31   # half the grid step of scipy's 30-bit Sobol' points
_FLOAT_EDGE = 2.0**-54   # half the grid step of 53-bit uniform doubles


@dataclass(frozen=True, eq=False)
class Design:
    """A design of experiments in the open unit hypercube.

    Attributes
    ----------
    unit : numpy.ndarray
        Coordinates, shape (n_rows, d), strictly inside (0, 1). Read-only.
    block : numpy.ndarray
        Integer block code per row, shape (n_rows,): 0 = A, 1 = B, 2 + j = AB_j,
        2 + d + g = AB for group g (index into ``groups``). Non-Sobol' designs are all 0.
    method : str
        ``"sobol"`` (Saltelli), ``"lhs"``, ``"random"``, ``"sobol-sequence"`` or ``"morris"``.
    base_samples : int
        N: base rows of a Sobol' design; number of rows otherwise.
    groups : tuple of tuple of int
        Parameter indices per group, as given (empty for lhs/random).
    replicates : int
        Independently scrambled replicates R of a Sobol' design (1 otherwise); base row i
        belongs to replicate ``i % R``.
    """

    unit: np.ndarray
    block: np.ndarray
    method: str
    base_samples: int
    groups: tuple[tuple[int, ...], ...] = ()
    replicates: int = 1

    @property
    def n_rows(self) -> int:
        """Number of rows (model evaluations)."""
        return int(self.unit.shape[0])

    @property
    def n_params(self) -> int:
        """Number of parameters d (columns)."""
        return int(self.unit.shape[1])

    def independent_rows(self) -> np.ndarray:
        """Indices of rows drawn from the joint input distribution, for percentiles.

        Returns
        -------
        numpy.ndarray
            For a Sobol' design the A and B rows (2N rows; quasi-random, not i.i.d.); all rows
            otherwise.
        """
        if self.method in ("sobol", "shapley"):  # shapley: the joint draws (block 0)
            return np.flatnonzero(self.block <= 1)
        return np.arange(self.n_rows)

    def replicate_of_rows(self) -> np.ndarray:
        """Replicate (independent scrambling) of every row, shape (n_rows,).

        Returns
        -------
        numpy.ndarray
            ``(row // rows_per_base) % replicates`` for a replicated Sobol' design; zeros
            otherwise.
        """
        if self.replicates == 1:
            return np.zeros(self.n_rows, dtype=np.int64)
        step = self.n_rows // self.base_samples
        return (np.arange(self.n_rows) // step) % self.replicates


def _count(name: str, value: int, minimum: int = 1) -> int:
    try:
        n = operator.index(value)
    except TypeError:
        raise ValueError(f"{name} must be an integer, got {value!r}") from None
    if n < minimum:
        raise ValueError(f"{name} must be at least {minimum}, got {n}")
    return n


def _seed(seed: int) -> int:
    return _count("seed", seed, minimum=0)


def _open(x: np.ndarray, edge: float) -> np.ndarray:
    x = np.where(x <= 0.0, edge, x)
    x = np.where(x >= 1.0, 1.0 - edge, x)
    x.setflags(write=False)
    return x


def _check_groups(groups: Sequence[Sequence[int]], n_params: int) -> tuple[tuple[int, ...], ...]:
    out: list[tuple[int, ...]] = []
    seen: set[int] = set()
    for g, members in enumerate(groups):
        idx = tuple(_count(f"groups[{g}] member", m, minimum=0) for m in members)
        if not idx:
            raise ValueError(f"groups[{g}] is empty; every group needs at least one parameter")
        bad = [i for i in idx if i >= n_params]
        if bad:
            raise ValueError(f"groups[{g}] holds parameter index {bad[0]}; valid: 0 to "
                             f"{n_params - 1}")
        twice = seen.intersection(idx) or ({i for i in idx if idx.count(i) > 1})
        if twice:
            raise ValueError(f"parameter index {min(twice)} appears in more than one group "
                             f"(groups must be disjoint)")
        seen.update(idx)
        out.append(idx)
    return tuple(out)


def _replicates(replicates: int, base_samples: int | None = None) -> int:
    """Check the replicate count R and that ``base_samples`` is R times a power of 2."""
    r = _count("replicates", replicates)
    if base_samples is not None and r > 1:
        n = base_samples
        per, rest = divmod(n, r)
        if rest or per & (per - 1) or per < 1:
            low = r << (max(per, 1).bit_length() - 1)
            near = f"{low} or {2 * low}" if low < n else f"{low}"
            raise ValueError(f"base_samples must be replicates ({r}) x a power of 2 for a "
                             f"replicated Sobol' design, got {n}; nearest: {near}")
    return r


def sobol_design(base_samples: int, n_params: int, *, seed: int,
                 groups: Sequence[Sequence[int]] = (), start: int = 0,
                 replicates: int = 1) -> Design:
    """Saltelli cross-sampled design from a scrambled Sobol' sequence.

    Parameters
    ----------
    base_samples : int
        N, number of base rows; a power of 2.
    n_params : int
        Number of parameters d.
    seed : int
        Seed of the scrambling (non-negative).
    groups : sequence of sequence of int
        Disjoint parameter index groups (e.g. layers) whose joint indices are wanted.
    start : int
        First base row: the design of base rows ``[start, start + base_samples)`` of the same
        scrambled sequence (``fast_forward``), e.g. to double a design while reusing the runs
        of its first half; a multiple of ``base_samples`` keeps the balance of the points.
        The designs for [0, N) and [N, 2N) stacked are the design of 2N base rows. With
        replicates, a multiple of R (every replicate's sequence continued by ``start / R``
        points).
    replicates : int
        R independently scrambled replicates (see the module docstring); N must be R times a
        power of 2. 1 (default): one scrambled sequence, bit-identical to SALib's sampler.

    Returns
    -------
    Design
        N * (d + 2 + G2) rows, G2 = number of groups with two or more members.

    Examples
    --------
    Eight base rows for three parameters: blocks A (code 0), B (1) and one AB block per parameter
    (2, 3, 4), eight rows each, every coordinate strictly inside (0, 1):

    >>> import numpy as np
    >>> from plyrisk.design.sampling import sobol_design
    >>> design = sobol_design(8, 3, seed=1)
    >>> design.unit.shape
    (40, 3)
    >>> np.bincount(design.block)
    array([8, 8, 8, 8, 8])
    >>> bool(np.all((design.unit > 0.0) & (design.unit < 1.0)))
    True

    A group of two parameters (a layer) adds one block for its joint indices:

    >>> sobol_design(8, 3, seed=1, groups=[[0, 1]]).unit.shape
    (48, 3)
    """
    n = _count("base_samples", base_samples)
    d = _count("n_params", n_params)
    seed = _seed(seed)
    r = _replicates(replicates, n)
    if r == 1 and n & (n - 1):
        low = 1 << (n.bit_length() - 1)
        raise ValueError(f"base_samples must be a power of 2 for a Sobol' design, got {n}; "
                         f"nearest: {low} or {2 * low}")
    start = _count("start", start, minimum=0)
    if start % r:
        raise ValueError(f"start must be a multiple of replicates ({r}), got {start}")
    grp = _check_groups(groups, d)
    unit, codes = _saltelli_rows(start, n, d, seed, grp, r)
    return Design(unit, codes, "sobol", n, grp, r)


def _saltelli_blocks(d: int, grp: tuple[tuple[int, ...], ...]) -> list[tuple[int, tuple]]:
    """(block code, columns taken from B) for the rows of one base row, in design order."""
    crossed = [(g, m) for g, m in enumerate(grp) if len(m) > 1]
    blocks = [(0, ())] + [(2 + j, (j,)) for j in range(d)]
    return blocks + [(2 + d + g, m) for g, m in crossed] + [(1, tuple(range(d)))]


def replicate_engine(dimensions: int, seed: int, replicate: int) -> qmc.Sobol:
    """The scrambled Sobol' engine of one replicate of a replicated design.

    Parameters
    ----------
    dimensions : int
        Dimension of the sequence (2d for a Saltelli design).
    seed : int
        Study seed (non-negative).
    replicate : int
        Replicate number r, from 0.

    Returns
    -------
    scipy.stats.qmc.Sobol
        Scrambled by ``numpy.random.default_rng(numpy.random.SeedSequence(seed,
        spawn_key=(r,)))``: replicates are independent randomizations.
    """
    sequence = np.random.SeedSequence(_seed(seed), spawn_key=(int(replicate),))
    return qmc.Sobol(d=dimensions, scramble=True, rng=np.random.default_rng(sequence))


def _sequence_points(start: int, n: int, dimensions: int, seed: int,
                     replicates: int) -> np.ndarray:
    """Points ``[start, start + n)`` of the interleaved sequence(s) of a Saltelli design."""
    with warnings.catch_warnings():  # a piece of the sequence need not be a power of 2 long
        warnings.filterwarnings("ignore", message=".*balance properties.*")
        if replicates == 1:
            engine = qmc.Sobol(d=dimensions, scramble=True, seed=seed)
            if start:
                engine.fast_forward(start)
            return engine.random(n)
        first, last = start // replicates, -(-(start + n) // replicates)
        points = np.empty((last - first, replicates, dimensions))
        for r in range(replicates):
            engine = replicate_engine(dimensions, seed, r)
            if first:
                engine.fast_forward(first)
            points[:, r] = engine.random(last - first)
    cut = start - first * replicates
    return points.reshape(-1, dimensions)[cut:cut + n]


def _saltelli_rows(start: int, n: int, d: int, seed: int, grp: tuple[tuple[int, ...], ...],
                   replicates: int = 1) -> tuple[np.ndarray, np.ndarray]:
    """Unit rows and block codes of base rows ``[start, start + n)`` of a Saltelli design."""
    base = _sequence_points(start, n, 2 * d, seed, replicates)
    a, b = base[:, :d], base[:, d:]
    blocks = _saltelli_blocks(d, grp)
    step = len(blocks)
    unit = np.empty((n, step, d))
    for k, (_, cols) in enumerate(blocks):
        unit[:, k, :] = a
        unit[:, k, list(cols)] = b[:, list(cols)]
    codes = np.tile(np.array([c for c, _ in blocks], dtype=np.int64), n)
    codes.setflags(write=False)
    return _open(unit.reshape(n * step, d), _SOBOL_EDGE), codes


def latin_hypercube_design(n: int, n_params: int, *, seed: int,
                           optimization: str | None = None) -> Design:
    """Latin hypercube design.

    Parameters
    ----------
    n : int
        Number of rows.
    n_params : int
        Number of parameters d.
    seed : int
        Seed of ``numpy.random.default_rng`` (non-negative).
    optimization : {None, "random-cd", "lloyd"}
        Optional scipy optimization of the point set; ``"lloyd"`` needs d >= 2.

    Returns
    -------
    Design
    """
    n = _count("samples", n)
    d = _count("n_params", n_params)
    seed = _seed(seed)
    if optimization not in LHS_OPTIMIZATIONS:
        raise ValueError(f"unknown Latin hypercube optimization {optimization!r}; valid: "
                         f"None, 'random-cd', 'lloyd'")
    if optimization == "lloyd" and d < 2:
        raise ValueError(f"optimization 'lloyd' needs at least 2 parameters, got {d}")
    engine = qmc.LatinHypercube(d, optimization=optimization, rng=np.random.default_rng(seed))
    return _plain(engine.random(n), "lhs")


def random_design(n: int, n_params: int, *, seed: int) -> Design:
    """Plain Monte Carlo design.

    Parameters
    ----------
    n : int
        Number of rows.
    n_params : int
        Number of parameters d.
    seed : int
        Seed of ``numpy.random.default_rng`` (non-negative).

    Returns
    -------
    Design
    """
    n = _count("samples", n)
    d = _count("n_params", n_params)
    return _plain(_random_rows(0, n, d, _seed(seed)), "random")


def _random_rows(start: int, stop: int, d: int, seed: int) -> np.ndarray:
    """Rows ``[start, stop)`` of a random design: each block of ``RANDOM_BLOCK_ROWS`` rows from
    its own spawned seed, so a piece is drawn without drawing what comes before it."""
    out = np.empty((stop - start, d))
    k = start // RANDOM_BLOCK_ROWS
    while k * RANDOM_BLOCK_ROWS < stop:
        lo = max(start - k * RANDOM_BLOCK_ROWS, 0)
        hi = min(stop - k * RANDOM_BLOCK_ROWS, RANDOM_BLOCK_ROWS)
        rng = np.random.default_rng(np.random.SeedSequence(seed, spawn_key=(k,)))
        out[k * RANDOM_BLOCK_ROWS + lo - start:k * RANDOM_BLOCK_ROWS + hi - start] = \
            rng.random((hi, d))[lo:]
        k += 1
    return out


def _plain(x: np.ndarray, method: str) -> Design:
    codes = np.zeros(x.shape[0], dtype=np.int64)
    codes.setflags(write=False)
    return Design(_open(x, _FLOAT_EDGE), codes, method, int(x.shape[0]), ())


def make_design(method: str, samples: int, n_params: int, *, seed: int,
                groups: Sequence[Sequence[int]] = (),
                optimization: str | None = None, replicates: int = 1) -> Design:
    """Build a design by method name.

    Parameters
    ----------
    method : {"sobol", "lhs", "random"}
        Design method.
    samples : int
        Base rows N for ``sobol`` (a power of 2), number of rows otherwise.
    n_params : int
        Number of parameters d.
    seed : int
        Non-negative seed.
    groups : sequence of sequence of int
        Parameter groups, ``sobol`` only.
    optimization : {None, "random-cd", "lloyd"}
        Latin hypercube optimization, ``lhs`` only.
    replicates : int
        Independently scrambled replicates, ``sobol`` only.

    Returns
    -------
    Design
    """
    if method not in METHODS:
        raise ValueError(f"unknown design method {method!r}; valid: {', '.join(METHODS)}")
    if groups and method != "sobol":
        raise ValueError(f"groups apply to the 'sobol' method only, got method {method!r}")
    if optimization is not None and method != "lhs":
        raise ValueError(f"optimization applies to the 'lhs' method only, got method {method!r}")
    if replicates != 1 and method != "sobol":
        raise ValueError(f"replicates apply to the 'sobol' method only, got method {method!r}")
    if method == "sobol":
        return sobol_design(samples, n_params, seed=seed, groups=groups, replicates=replicates)
    if method == "lhs":
        return latin_hypercube_design(samples, n_params, seed=seed, optimization=optimization)
    return random_design(samples, n_params, seed=seed)


@dataclass(frozen=True)
class DesignPlan:
    """A design described by its method, size and seed, drawn whole or a row range at a time.

    Attributes
    ----------
    method : {"sobol", "lhs", "random", "sobol-sequence"}
        Design method.
    samples : int
        Base rows N for ``sobol``, number of rows otherwise.
    n_params : int
        Number of parameters d.
    seed : int
        Non-negative seed.
    groups : tuple of tuple of int
        Parameter groups, ``sobol`` only.
    optimization : {None, "random-cd", "lloyd"}
        Latin hypercube optimization, ``lhs`` only.
    replicates : int
        Independently scrambled replicates R, ``sobol`` only; ``samples`` is then R times a
        power of 2.
    """

    method: str
    samples: int
    n_params: int
    seed: int
    groups: tuple[tuple[int, ...], ...] = ()
    optimization: str | None = None
    replicates: int = 1

    def __post_init__(self) -> None:
        if self.method not in PLAN_METHODS:
            raise ValueError(f"unknown design method {self.method!r}; valid: "
                             f"{', '.join(PLAN_METHODS)}")
        object.__setattr__(self, "groups", _check_groups(self.groups, self.n_params))
        if self.replicates != 1 and self.method != "sobol":
            raise ValueError(f"replicates apply to the 'sobol' method only, got method "
                             f"{self.method!r}")
        _replicates(self.replicates, int(self.samples) if self.method == "sobol" else None)

    @property
    def rows_per_base(self) -> int:
        """Design rows per base row: d + 2 + G2 for ``sobol``, 1 otherwise."""
        if self.method != "sobol":
            return 1
        return len(_saltelli_blocks(self.n_params, self.groups))

    @property
    def n_rows(self) -> int:
        """Number of rows (model evaluations) of the whole design."""
        return int(self.samples) * self.rows_per_base

    def independent_in_base(self) -> np.ndarray:
        """Which rows of each base row are draws from the joint distribution (A and B).

        Returns
        -------
        numpy.ndarray
            Boolean mask of length :attr:`rows_per_base`: for ``sobol`` the A row (first) and
            the B row (last); for other designs the one row.
        """
        step = self.rows_per_base
        if self.method != "sobol":
            return np.ones(1, dtype=bool)
        return (np.arange(step) == 0) | (np.arange(step) == step - 1)

    @property
    def drawn_in_pieces(self) -> bool:
        """Whether :meth:`rows` draws a range without drawing the whole design."""
        return self.method in ("sobol", "random", "sobol-sequence")

    def design(self) -> Design:
        """The whole design (see :func:`make_design`)."""
        if self.method == "sobol-sequence":
            return sobol_sequence_design(self.samples, self.n_params, seed=self.seed)
        return make_design(self.method, self.samples, self.n_params, seed=self.seed,
                           groups=self.groups, optimization=self.optimization,
                           replicates=self.replicates)

    def rows(self, start: int, stop: int) -> tuple[np.ndarray, np.ndarray]:
        """Unit coordinates and block codes of rows ``[start, stop)``.

        Parameters
        ----------
        start, stop : int
            Row range, ``0 <= start <= stop <= n_rows``.

        Returns
        -------
        unit, block : numpy.ndarray
            Shapes ``(stop - start, d)`` and ``(stop - start,)``; bit-identical to the same rows
            of :meth:`design`.
        """
        if not 0 <= start <= stop <= self.n_rows:
            raise ValueError(f"row range [{start}, {stop}) is outside the design's "
                             f"{self.n_rows} rows")
        d = self.n_params
        if self.method == "sobol":
            step = self.rows_per_base
            first, last = start // step, -(-stop // step)
            unit, codes = _saltelli_rows(first, last - first, d, _seed(self.seed), self.groups,
                                         self.replicates)
            cut = slice(start - first * step, stop - first * step)
            return unit[cut], codes[cut]
        codes = np.zeros(stop - start, dtype=np.int64)
        if self.method == "sobol-sequence":
            engine = qmc.Sobol(d=d, scramble=True, seed=_seed(self.seed))
            engine.fast_forward(start)
            with warnings.catch_warnings():
                warnings.filterwarnings("ignore", message=".*balance properties.*")
                return _open(engine.random(stop - start), _SOBOL_EDGE), codes
        if self.method == "random":
            return _open(_random_rows(start, stop, d, _seed(self.seed)), _FLOAT_EDGE), codes
        return self.design().unit[start:stop], codes


def sobol_sequence_design(n: int, n_params: int, *, seed: int) -> Design:
    """The first ``n`` points of a scrambled Sobol' sequence (no Saltelli structure).

    Parameters
    ----------
    n : int
        Number of rows; a power of 2.
    n_params : int
        Number of parameters d.
    seed : int
        Seed of the scrambling (non-negative).

    Returns
    -------
    Design
        ``method = "sobol-sequence"``; blocks are all 0.
    """
    n = _count("samples", n)
    d = _count("n_params", n_params)
    if n & (n - 1):
        low = 1 << (n.bit_length() - 1)
        raise ValueError(f"samples must be a power of 2 for a Sobol' sequence, got {n}; "
                         f"nearest: {low} or {2 * low}")
    x = qmc.Sobol(d=d, scramble=True, seed=_seed(seed)).random(n)
    codes = np.zeros(n, dtype=np.int64)
    codes.setflags(write=False)
    return Design(_open(x, _SOBOL_EDGE), codes, "sobol-sequence", n, ())
