"""The ``[correlations]`` section: Spearman rank correlations between uncertain parameters.

Manufacturing variability is rarely independent (a denser batt is thicker and conducts
differently; both air gaps widen together with a looser fit). The section gives rank
correlations between named uncertain parameters, as a list of pairs and/or a matrix over a
listed set::

    [correlations]
    pairs = [["outer gap.width", "skin gap.width", 0.6]]
    parameters = ["batt.thickness", "batt.conductivity"]
    matrix = [[1.0, -0.4], [-0.4, 1.0]]
    repair = "nearest"              # optional: project onto the nearest valid matrix
    lhs_reordering = "iman-conover" # optional: rank reordering of a Latin hypercube

The dependence is a Gaussian copula: the normal scores of the inputs have the linear
correlation ``rho = 2 sin(pi rho_s / 6)`` (eq. C.1), which gives the rank correlation
``rho_s`` exactly (Kruskal 1958, J. Am. Stat. Assoc. 53, 814-861, doi:10.2307/2281954;
Pearson 1907). That matrix must be positive definite. Nothing is repaired silently; with
``repair = "nearest"`` an invalid matrix is projected onto the nearest correlation matrix by
alternating projections (Higham 2002, IMA J. Numer. Anal. 22, 329-343,
doi:10.1093/imanum/22.3.329) with a floor on its eigenvalues, and the change is reported.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from plyrisk.methods import METHODS
from plyrisk.study import values as cv
from plyrisk.study.sections_analysis import check_dependence
from plyrisk.study.values import Context, join, show, suggest

__all__ = ["MIN_EIGENVALUE", "REORDERINGS", "REPAIRS", "Correlations", "linear_from_rank",
           "nearest_correlation", "parse_correlations", "rank_from_linear"]

MIN_EIGENVALUE = 1e-6
"""Smallest eigenvalue accepted for the linear (normal-score) correlation matrix [-]; below
it the conditional distributions of the copula are numerically singular."""
REPAIRS = ("none", "nearest")
REORDERINGS = ("copula", "iman-conover")
_KEYS = ("pairs", "parameters", "matrix", "repair", "lhs_reordering")


def linear_from_rank(rank: np.ndarray | float) -> np.ndarray:
    """Linear correlation of the normal scores giving a Spearman rank correlation.

    Parameters
    ----------
    rank
        Spearman rank correlation(s) rho_s in [-1, 1] [-].

    Returns
    -------
    numpy.ndarray
        ``rho = 2 sin(pi rho_s / 6)`` [-].

    Notes
    -----
    For a bivariate normal pair, rho_s = (6 / pi) arcsin(rho / 2) (eq. C.1; Kruskal 1958,
    doi:10.2307/2281954); the copula keeps rank correlations through any monotone marginal.

    Examples
    --------
    >>> from plyrisk.study.correlations import linear_from_rank
    >>> round(float(linear_from_rank(0.5)), 4)
    0.5176
    """
    return 2.0 * np.sin(np.pi * np.asarray(rank, dtype=float) / 6.0)


def rank_from_linear(linear: np.ndarray | float) -> np.ndarray:
    """Spearman rank correlation of a Gaussian pair of linear correlation ``linear`` [-]
    (the inverse of :func:`linear_from_rank`, eq. C.1)."""
    return 6.0 / np.pi * np.arcsin(np.asarray(linear, dtype=float) / 2.0)


def nearest_correlation(matrix: np.ndarray, *, floor: float = 10 * MIN_EIGENVALUE,
                        iterations: int = 200) -> np.ndarray:
    """The nearest correlation matrix with eigenvalues at least ``floor`` (Frobenius norm).

    Parameters
    ----------
    matrix
        A symmetric matrix with unit diagonal [-].
    floor
        Smallest eigenvalue of the result [-].
    iterations
        Alternating projections at most.

    Returns
    -------
    numpy.ndarray
        Symmetric, unit diagonal, positive definite [-].

    Notes
    -----
    Alternating projections with Dykstra's correction onto the matrices with eigenvalues at
    least ``floor`` and onto those with unit diagonal (Higham 2002, IMA J. Numer. Anal. 22,
    329-343, doi:10.1093/imanum/22.3.329, algorithm 3.3).

    Examples
    --------
    >>> import numpy as np
    >>> from plyrisk.study.correlations import nearest_correlation
    >>> bad = np.array([[1.0, 0.9, -0.9], [0.9, 1.0, 0.9], [-0.9, 0.9, 1.0]])
    >>> fixed = nearest_correlation(bad)
    >>> bool(np.linalg.eigvalsh(fixed).min() > 0), np.allclose(np.diag(fixed), 1.0)
    (True, True)
    """
    a = np.array(matrix, dtype=float)
    y = a.copy()
    ds = np.zeros_like(a)
    for _ in range(iterations):
        r = y - ds
        w, v = np.linalg.eigh((r + r.T) / 2.0)
        x = (v * np.maximum(w, floor)) @ v.T
        ds = x - r
        y = x.copy()
        np.fill_diagonal(y, 1.0)
        if np.linalg.norm(y - x) < 1e-12:
            break
    # the unit-diagonal step can leave an eigenvalue a hair under the floor: shrink toward I
    w_min = float(np.linalg.eigvalsh(y).min())
    if w_min < floor:
        t = (floor - w_min) / (1.0 - w_min)
        y = (1.0 - t) * y + t * np.eye(len(y))
    return (y + y.T) / 2.0


@dataclass(frozen=True, eq=False)
class Correlations:
    """Validated rank correlations of a study (the ``[correlations]`` section).

    Parameters
    ----------
    names
        The correlated parameters, in the study's parameter order.
    rank
        Spearman rank correlations among ``names`` (after a repair, the repaired ones) [-].
    linear
        Linear correlation of the normal scores, ``2 sin(pi rank / 6)``; positive definite [-].
    lhs_reordering
        ``"copula"`` (every design through the Gaussian copula) or ``"iman-conover"`` (a Latin
        hypercube reordered by ranks, Iman & Conover 1982, keeping its strata).
    repair_note
        What ``repair = "nearest"`` changed, ``""`` when nothing was repaired.
    """

    names: tuple[str, ...]
    rank: np.ndarray
    linear: np.ndarray
    lhs_reordering: str = "copula"
    repair_note: str = ""

    @property
    def is_independent(self) -> bool:
        """True when every correlation is zero [-]."""
        return not np.any(self.linear - np.eye(len(self.names)))

    def pairs(self) -> list[tuple[str, str, float]]:
        """Every nonzero pair ``(name, name, rank correlation)`` in order [-]."""
        k = len(self.names)
        return [(self.names[i], self.names[j], float(self.rank[i, j]))
                for i in range(k) for j in range(i + 1, k) if self.rank[i, j] != 0.0]

    def full_linear(self, parameter_names: tuple[str, ...] | list[str]) -> np.ndarray:
        """The linear normal-score correlation over all ``parameter_names`` (identity for the
        uncorrelated ones) [-]."""
        names = list(parameter_names)
        out = np.eye(len(names))
        idx = [names.index(n) for n in self.names]
        out[np.ix_(idx, idx)] = self.linear
        return out

    def full_rank(self, parameter_names: tuple[str, ...] | list[str]) -> np.ndarray:
        """The Spearman rank correlation over all ``parameter_names`` [-]."""
        names = list(parameter_names)
        out = np.eye(len(names))
        idx = [names.index(n) for n in self.names]
        out[np.ix_(idx, idx)] = self.rank
        return out


def _is_fixed_input(name: str, parsed: dict) -> bool:
    """Whether ``name`` is an input of the study given as a single value (no distribution)."""
    prefix, _, quantity = name.rpartition(".")
    owners = {getattr(layer, "name", None): layer for layer in parsed.get("layers") or ()}
    owners.update({side: parsed.get(side) for side in ("hot_side", "cold_side")})
    obj = owners.get(prefix)
    if obj is None or quantity.startswith("_") or quantity in ("name", "kind"):
        return False
    return hasattr(obj, quantity) or (quantity == "emissivity" and hasattr(obj, "emissivity_hot"))


def _parameter(ctx: Context, raw: Any, path: str, uncertain: dict, parsed: dict) -> str:
    """A known, uncertain parameter name."""
    if not isinstance(raw, str) or not raw.strip():
        raise ctx.error(path, f"expected a parameter name such as 'shell.thickness', got "
                        f"{show(raw)}")
    if raw in uncertain:
        if uncertain[raw].distribution.kind == "fixed":
            raise ctx.error(path, f"parameter {raw!r} is fixed (no spread); only uncertain "
                            "parameters can be correlated")
        return raw
    if _is_fixed_input(raw, parsed):
        raise ctx.error(path, f"parameter {raw!r} is fixed (a single value, no distribution); "
                        "only uncertain parameters can be correlated; give it a distribution "
                        "or remove it")
    valid = ", ".join(uncertain) or "none"
    raise ctx.error(path, f"unknown parameter {raw!r}; {suggest(raw, uncertain)}uncertain "
                    f"parameters: {valid}")


def _value(ctx: Context, raw: Any, path: str) -> float:
    """A rank correlation strictly between -1 and 1."""
    if isinstance(raw, bool) or not isinstance(raw, int | float):
        got = (f"the string {raw!r}; write the number without quotes"
               if isinstance(raw, str) else show(raw))
        raise ctx.error(path, f"expected a number (a rank correlation strictly between -1 and "
                        f"1), got {got}")
    if not -1.0 < raw < 1.0:
        raise ctx.error(path, f"expected a rank correlation strictly between -1 and 1, got "
                        f"{show(raw)}")
    return float(raw)


def _read_pairs(ctx: Context, raw: Any, uncertain: dict, parsed: dict
                ) -> list[tuple[str, str, float, str]]:
    path = "correlations.pairs"
    if not isinstance(raw, list):
        raise ctx.error(path, f"expected a list of [name, name, rank correlation], got "
                        f"{show(raw)}")
    out = []
    for i, item in enumerate(raw):
        where = join(path, i)
        if not isinstance(item, list) or len(item) != 3:
            raise ctx.error(where, f"expected [name, name, rank correlation], got {show(item)}")
        a = _parameter(ctx, item[0], join(where, 0), uncertain, parsed)
        b = _parameter(ctx, item[1], join(where, 1), uncertain, parsed)
        if a == b:
            raise ctx.error(where, f"pairs {a!r} with itself; a pair names two parameters")
        out.append((a, b, _value(ctx, item[2], join(where, 2)), where))
    return out


def _read_matrix(ctx: Context, t: dict, uncertain: dict, parsed: dict
                 ) -> list[tuple[str, str, float, str]]:
    if ("parameters" in t) != ("matrix" in t):
        missing = "matrix" if "parameters" in t else "parameters"
        raise ctx.error(f"correlations.{missing}", "parameters and matrix go together (the "
                        "matrix's rows and columns follow the parameters list); give both")
    raw_names, raw = t["parameters"], t["matrix"]
    if not isinstance(raw_names, list) or len(raw_names) < 2:
        raise ctx.error("correlations.parameters", f"expected a list of at least 2 parameter "
                        f"names, got {show(raw_names)}")
    names = [_parameter(ctx, n, join("correlations.parameters", i), uncertain, parsed)
             for i, n in enumerate(raw_names)]
    for i, n in enumerate(names):
        if n in names[:i]:
            raise ctx.error(join("correlations.parameters", i), f"duplicate parameter {n!r}")
    k = len(names)
    if (not isinstance(raw, list) or len(raw) != k
            or any(not isinstance(row, list) or len(row) != k for row in raw)):
        raise ctx.error("correlations.matrix", f"expected a {k} x {k} list of rows (one per "
                        f"listed parameter), got {show(raw)}")
    out = []
    for i in range(k):
        if isinstance(raw[i][i], bool) or raw[i][i] != 1:
            raise ctx.error(f"correlations.matrix[{i}][{i}]", f"the diagonal must be 1, got "
                            f"{show(raw[i][i])}")
        for j in range(i + 1, k):
            v = _value(ctx, raw[i][j], f"correlations.matrix[{i}][{j}]")
            w = _value(ctx, raw[j][i], f"correlations.matrix[{j}][{i}]")
            if v != w:
                raise ctx.error(f"correlations.matrix[{j}][{i}]", f"not symmetric: {w:g} "
                                f"here but {v:g} at [{i}][{j}] ({names[i]!r} with "
                                f"{names[j]!r}); give the same value")
            out.append((names[i], names[j], v, f"correlations.matrix[{i}][{j}]"))
    return out


def parse_correlations(ctx: Context, raw: Any, parsed: dict) -> dict:
    """The optional ``[correlations]`` section (see ``docs/config.md``).

    Returns ``{"correlations": Correlations | None}``; a section whose correlations are all
    zero still gives a :class:`Correlations` (its studies are analysed as correlated ones,
    which is what the user asked for).
    """
    if raw is None:
        return {"correlations": None}
    t = cv.table(ctx, raw, "correlations", "[correlations]")
    cv.check_keys(ctx, t, "correlations", _KEYS)
    if "pairs" not in t and "matrix" not in t and "parameters" not in t:
        raise ctx.error("correlations", "give pairs = [[name, name, rank correlation], ...] "
                        "and/or parameters = [...] with matrix = [[...], ...]")
    repair = (cv.choice(ctx, t["repair"], "correlations.repair", REPAIRS, "repair")
              if "repair" in t else "none")
    reorder = (cv.choice(ctx, t["lhs_reordering"], "correlations.lhs_reordering",
                         REORDERINGS, "lhs_reordering")
               if "lhs_reordering" in t else "copula")
    check_dependence(ctx, METHODS[parsed["analysis"].method])
    if reorder == "iman-conover" and parsed["analysis"].design != "lhs":
        raise ctx.error("correlations.lhs_reordering", f"'iman-conover' reorders a Latin "
                        f"hypercube; the study's design is {parsed['analysis'].design!r}; set "
                        "[study] design = \"lhs\" or remove lhs_reordering")
    uncertain = {p.name: p for p in parsed["parameters"]}
    entries = []
    if "pairs" in t:
        entries += _read_pairs(ctx, t["pairs"], uncertain, parsed)
    if "matrix" in t or "parameters" in t:
        entries += _read_matrix(ctx, t, uncertain, parsed)
    seen: dict[frozenset, str] = {}
    for a, b, _, where in entries:
        key = frozenset((a, b))
        if key in seen:
            raise ctx.error(where, f"duplicate pair {a!r} with {b!r} (also at {seen[key]}); "
                            "give each pair once")
        seen[key] = where
    order = [n for n in uncertain if any(n in (a, b) for a, b, _, _ in entries)]
    k = len(order)
    rank = np.eye(k)
    for a, b, v, _ in entries:
        i, j = order.index(a), order.index(b)
        rank[i, j] = rank[j, i] = v
    linear = linear_from_rank(rank)
    np.fill_diagonal(linear, 1.0)
    smallest = float(np.linalg.eigvalsh(linear).min())
    note = ""
    if smallest < MIN_EIGENVALUE:
        if repair == "none":
            raise ctx.error("correlations", f"the correlations are inconsistent: the linear "
                            f"(normal-score) correlation matrix 2 sin(pi rho_s / 6) has "
                            f"smallest eigenvalue {smallest:.3g}, expected above "
                            f"{MIN_EIGENVALUE:g} (positive definite); change the pairs or add "
                            f"repair = \"nearest\"")
        linear = nearest_correlation(linear)
        new_rank = rank_from_linear(linear)
        np.fill_diagonal(new_rank, 1.0)
        change = np.abs(new_rank - rank)
        ia, ib = (int(v) for v in np.unravel_index(int(np.argmax(change)), change.shape))
        note = (f"[correlations] repair = \"nearest\": the rank correlations were inconsistent "
                f"(smallest eigenvalue {smallest:.3g}) and were projected onto the nearest "
                f"valid matrix; largest change {float(change[ia, ib]):.3f}, {order[ia]} with "
                f"{order[ib]}: {rank[ia, ib]:+.3f} -> {new_rank[ia, ib]:+.3f}")
        rank = new_rank
    return {"correlations": Correlations(tuple(order), rank, linear, reorder, note)}
