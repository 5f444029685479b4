"""Compiled inner loops of the transient model (numba), with numpy fall-backs.

Two kernels carry almost all the arithmetic of a time step, over arrays ``(nodes, k)``:

* :func:`assemble` — conduction through every slice (the law of
  :func:`plyrisk.models.elements.conduction_law`, compiled, not copied), the perfusion and
  in-depth absorption terms, summed into the right-hand side of (T.1) and its tridiagonal
  Jacobian;
* :func:`implicit_solve` — the Newton residual ``H(T) - base - th F`` (or a given right-hand
  side), the matrix ``C(T) - th dF/dT`` (or ``-dF/dT`` for the steady state) with fixed rows,
  and the Thomas sweep.

Loops run node by node with the samples innermost, in the same order as the numpy path, and
never mix samples, so a sample's result does not depend on its batch. Without numba the numpy
path (:func:`plyrisk.models.network.tridiagonal_solve` and array expressions) is used; the two
paths agree to rounding, not bit for bit.
"""

from __future__ import annotations

from types import ModuleType

import numpy as np
from numpy.typing import ArrayLike, NDArray

from plyrisk.models.elements import conduction_law
from plyrisk.models.network import tridiagonal_solve

numba: ModuleType | None
try:  # pragma: no cover - exercised by whichever path is installed
    import numba
except ImportError:  # pragma: no cover
    numba = None

_F = NDArray[np.float64]
_B = NDArray[np.bool_]

COMPILED = numba is not None
"""Whether the compiled kernels are in use [-]."""


def _assemble_py(T: _F, L: _F, k0: _F, ks: _F, tref: _F, perf: _F, art: _F, share: _F,
                 absorbed: _F, q: _F, rhs: _F, sub: _F, diag: _F, sup: _F, psum: _F) -> None:
    qq, qa, qb = conduction_law(T[:-1], T[1:], L, k0, ks, tref)
    q[...] = qq
    rhs[...] = 0.0
    diag[...] = 0.0
    sub[...] = 0.0
    sup[...] = 0.0
    rhs[:-1] -= qq
    rhs[1:] += qq
    diag[:-1] -= qa
    diag[1:] += qb
    sub[1:] = qa
    sup[:-1] = -qb
    source = perf * (art - T)
    rhs += source + share * absorbed
    diag -= perf
    psum[...] = source[0]
    for row in source[1:]:
        psum += row


def _solve_py(T: _F, c0: _F, c1: _F, th: _F, sub: _F, diag: _F, sup: _F, fixed: _B, rhs: _F,
              base: _F, mode: int, out: _F) -> None:
    if mode == 0:  # Newton: -(H(T) - base - th F)
        d = -(T * (c0 + 0.5 * c1 * T) - base - th * rhs)
    else:
        d = rhs.copy()
    if mode == 2:  # steady: -dF/dT
        a, b, c = -sub, -diag, -sup
    else:
        a, b, c = -th * sub, c0 + c1 * T - th * diag, -th * sup
    a[fixed], c[fixed], b[fixed], d[fixed] = 0.0, 0.0, 1.0, 0.0
    out[...] = tridiagonal_solve(a, b, c, d)


if numba is not None:
    _law = numba.njit(conduction_law, cache=True)

    @numba.njit(cache=True)
    def _assemble_nb(T: _F, L: _F, k0: _F, ks: _F, tref: _F, perf: _F, art: _F, share: _F,
                     absorbed: _F, q: _F, rhs: _F, sub: _F, diag: _F, sup: _F,
                     psum: _F) -> None:  # pragma: no cover - compiled
        N, k = T.shape
        for s in range(k):
            rhs[0, s] = share[0, s] * absorbed[s]
            diag[0, s] = 0.0
            sub[0, s] = 0.0
            psum[s] = 0.0
        for j in range(N - 1):
            for s in range(k):
                qq, qa, qb = _law(T[j, s], T[j + 1, s], L[j, s], k0[j, s], ks[j, s], tref[j, s])
                q[j, s] = qq
                source = perf[j, s] * (art[s] - T[j, s])
                rhs[j, s] += source - qq
                diag[j, s] += -perf[j, s] - qa
                sup[j, s] = -qb
                psum[s] += source
                rhs[j + 1, s] = qq + share[j + 1, s] * absorbed[s]
                diag[j + 1, s] = qb
                sub[j + 1, s] = qa
        for s in range(k):
            source = perf[N - 1, s] * (art[s] - T[N - 1, s])
            rhs[N - 1, s] += source
            diag[N - 1, s] -= perf[N - 1, s]
            sup[N - 1, s] = 0.0
            psum[s] += source

    @numba.njit(cache=True)
    def _solve_nb(T: _F, c0: _F, c1: _F, th: _F, sub: _F, diag: _F, sup: _F, fixed: _B,
                  rhs: _F, base: _F, mode: int, out: _F) -> None:  # pragma: no cover - compiled
        N, k = T.shape
        cp = np.empty((N, k))
        for j in range(N):
            for s in range(k):
                t = T[j, s]
                if fixed[j]:
                    a, b, c, d = 0.0, 1.0, 0.0, 0.0
                elif mode == 2:
                    a, b, c, d = -sub[j, s], -diag[j, s], -sup[j, s], rhs[j, s]
                else:
                    h = th[s]
                    a = -h * sub[j, s]
                    b = c0[j, s] + c1[j, s] * t - h * diag[j, s]
                    c = -h * sup[j, s]
                    if mode == 0:
                        d = -(t * (c0[j, s] + 0.5 * c1[j, s] * t) - base[j, s] - h * rhs[j, s])
                    else:
                        d = rhs[j, s]
                if j == 0:
                    cp[0, s] = c / b
                    out[0, s] = d / b
                else:
                    den = b - a * cp[j - 1, s]
                    cp[j, s] = c / den
                    out[j, s] = (d - a * out[j - 1, s]) / den
        for j in range(N - 2, -1, -1):
            for s in range(k):
                out[j, s] -= cp[j, s] * out[j + 1, s]


def assemble(T: _F, L: _F, k0: _F, ks: _F, tref: _F, perf: _F, art: _F, share: _F,
             absorbed: _F, q: _F, rhs: _F, sub: _F, diag: _F, sup: _F, psum: _F) -> None:
    """Conduction, perfusion and absorption terms of (T.1) into preallocated arrays.

    ``T (N, k)`` [K]; per-link ``L, k0, ks, tref (N-1, k)`` as for
    :func:`plyrisk.models.elements.conduction_law`; ``perf, share (N, k)``; ``art, absorbed
    (k,)``. Outputs: ``q (N-1, k)`` link fluxes [W m-2], ``rhs, sub, diag, sup (N, k)``, and
    ``psum (k,)`` the perfusion heat [W m-2].
    """
    f = _assemble_nb if COMPILED else _assemble_py
    f(T, L, k0, ks, tref, perf, art, share, absorbed, q, rhs, sub, diag, sup, psum)


def implicit_solve(T: _F, c0: _F, c1: _F, th: ArrayLike, sub: _F, diag: _F, sup: _F, fixed: _B,
                   rhs: _F, base: _F | None, mode: int) -> _F:
    """One tridiagonal solve: Newton step (``mode`` 0), ``(C - th J)^-1 rhs`` (1), or the
    steady Newton step ``(-J)^-1 rhs`` (2). ``th (k,)``, ``fixed (N,)`` bool."""
    out = np.empty_like(T)
    f = _solve_nb if COMPILED else _solve_py
    f(T, c0, c1, np.ascontiguousarray(th, dtype=float), sub, diag, sup, fixed, rhs,
      base if base is not None else T, int(mode), out)
    return out
