"""Analysis of a stored study too large to hold in memory, in passes over blocks of rows.

Used by :func:`plyrisk.pipeline.run.run_study` for stores of more than ``STREAM_ROWS`` rows (smaller
stores are loaded and analysed by :func:`plyrisk.analysis.study.analyse`); which path is used
depends only
on the study's size, never on how or where it was solved. Memory is bounded by the block size.

* Quantiles are exact order statistics, found without sorting everything: pass 1 takes each
  column's range, pass 2 a histogram of ``HISTOGRAM_BINS`` bins, pass 3 keeps only the values in
  the bins that hold a wanted rank and sorts those. The estimate is numpy's linear
  interpolation between order statistics (eq. S.1, ``h = (n - 1) p``), the interval the same
  order-statistic ranks as :func:`plyrisk.analysis.statistics.quantiles`.
* Exceedance and the onset / air-range / non-convergence counts are sums.
* Sobol' indices use SALib's estimators (output normalized by its mean and standard deviation
  over the kept rows; S_j = mean(f_B (f_ABj - f_A)) / V, S_Tj = mean((f_A - f_ABj)^2) / (2 V),
  V = var([f_A, f_B])), accumulated over base rows. Their intervals come from a delete-one-batch
  jackknife over ``JACKKNIFE_BATCHES`` fixed batches of base rows (the bootstrap of the
  in-memory path would need N x resamples indices): half-width = z sqrt((B-1)/B sum_b
  (theta_(b) - mean theta)^2).
* Rank correlations and (for lhs/random designs) the polynomial-chaos indices use the first
  ``SUBSAMPLE_ROWS`` independent rows; a note says so.
"""

from __future__ import annotations

from dataclasses import replace
from typing import TYPE_CHECKING

import numpy as np
from scipy import stats

from plyrisk.analysis.outputs import output_column
from plyrisk.analysis.sobol import (
    INTERVAL_JACKKNIFE,
    INTERVAL_REPLICATES,
    SobolIndices,
    replicate_interval,
)
from plyrisk.analysis.statistics import (
    INTERVAL_ORDER_STATISTICS,
    INTERVAL_WOODRUFF,
    QuantileEstimate,
    _order_statistic_ranks,
    exceedance_from_counts,
    replicate_exceedance_from_counts,
    woodruff_levels,
)
from plyrisk.analysis.study import (
    AnalysisError,
    ScenarioAnalysis,
    StudyAnalysis,
    analysed_outputs,
    analysis_probabilities,
    rank_correlation,
    scenario_text,
)
from plyrisk.propagate.evaluate import parameter_groups, study_plan

if TYPE_CHECKING:  # pragma: no cover
    from plyrisk.methods.base import Method
    from plyrisk.propagate.store import StoreReader
    from plyrisk.study.definition import Study

STREAM_ROWS = 2**21
"""Stores with more rows than this are analysed in passes rather than loaded [-]."""

BLOCK_ROWS = 2**20
"""Rows read per block (rounded down to whole base rows) [-]."""

HISTOGRAM_BINS = 2**16
"""Bins of the histogram that locates each wanted order statistic [-]."""

JACKKNIFE_BATCHES = 64
"""Batches of base rows for the jackknife intervals of streamed Sobol' indices [-]."""

SUBSAMPLE_ROWS = 2**16
"""Leading independent rows used for rank correlations and the PCE surrogate [-]."""


def _blocks(n_rows: int, step: int, block_rows: int):
    size = max(block_rows - block_rows % step, step)
    for start in range(0, n_rows, size):
        yield start, min(start + size, n_rows)


class _Quantiles:
    """Exact order statistics of several columns from three passes over blocks."""

    def __init__(self, n_columns: int) -> None:
        self.lo = np.full(n_columns, np.inf)
        self.hi = np.full(n_columns, -np.inf)
        self.n = np.zeros(n_columns, dtype=np.int64)
        self.hist: np.ndarray | None = None
        self.kept: list[list[np.ndarray]] = [[] for _ in range(n_columns)]

    def range_pass(self, x: np.ndarray) -> None:
        for j in range(x.shape[1]):
            v = x[:, j][np.isfinite(x[:, j])]
            if v.size:
                self.lo[j] = min(self.lo[j], v.min())
                self.hi[j] = max(self.hi[j], v.max())
            self.n[j] += v.size

    def _bins(self, v: np.ndarray, j: int) -> np.ndarray:
        width = (self.hi[j] - self.lo[j]) / HISTOGRAM_BINS
        if width <= 0:
            return np.zeros(v.size, dtype=np.int64)
        return np.clip(((v - self.lo[j]) / width).astype(np.int64), 0, HISTOGRAM_BINS - 1)

    def histogram_pass(self, x: np.ndarray) -> None:
        if self.hist is None:
            self.hist = np.zeros((x.shape[1], HISTOGRAM_BINS), dtype=np.int64)
        for j in range(x.shape[1]):
            v = x[:, j][np.isfinite(x[:, j])]
            self.hist[j] += np.bincount(self._bins(v, j), minlength=HISTOGRAM_BINS)

    def wanted(self, probabilities: np.ndarray, confidence: float | None,
               levels: list[np.ndarray] | None = None) -> None:
        """Fix the 1-based ranks needed per column and the bins that hold them: those of the
        quantiles at ``probabilities`` and their order-statistic bounds, or (``levels``) those
        of the quantiles at other levels per column (Woodruff bounds)."""
        self.ranks, self.keep_bins = [], []
        self.kept = [[] for _ in range(len(self.n))]
        for j in range(len(self.n)):
            n = int(self.n[j])
            ranks: set[int] = set()
            for p in (probabilities if levels is None else levels[j]):
                h = (n - 1) * p
                ranks.update({int(np.floor(h)) + 1, min(int(np.floor(h)) + 2, n)})
                if confidence is not None:
                    lo, hi = _order_statistic_ranks(n, float(p), 1.0 - confidence)
                    ranks.update(r for r in (lo, hi) if 1 <= r <= n)
            cum = np.cumsum(self.hist[j])
            bins = {int(np.searchsorted(cum, r)) for r in ranks}
            self.ranks.append(sorted(ranks))
            self.keep_bins.append(np.array(sorted(bins)))

    def collect_pass(self, x: np.ndarray) -> None:
        for j in range(x.shape[1]):
            v = x[:, j][np.isfinite(x[:, j])]
            self.kept[j].append(v[np.isin(self._bins(v, j), self.keep_bins[j])])

    def at_levels(self, j: int, levels: np.ndarray) -> np.ndarray:
        """Quantiles of column j at ``levels`` (collected with ``wanted(levels=...)``)."""
        order = self._order(j)
        n = int(self.n[j])
        out = np.empty(len(levels))
        for i, p in enumerate(levels):
            h = (n - 1) * p                       # (S.1)
            f = int(np.floor(h))
            a, b = order(f + 1), order(min(f + 2, n))
            g = h - f
            out[i] = a + (b - a) * g if g < 0.5 else b - (b - a) * (1 - g)
        return out

    def _order(self, j: int):
        """The function rank -> order statistic of column j, from the kept values."""
        cum = np.concatenate([[0], np.cumsum(self.hist[j])])
        values = np.sort(np.concatenate(self.kept[j]))
        # rank r lies in bin b = searchsorted(cum[1:], r); the kept values are the bins in
        # keep_bins, in order, so rank r is at offset (r - 1 - cum[b]) within its bin's run
        starts, offset = {}, 0
        for b in self.keep_bins[j]:
            starts[int(b)] = offset
            offset += int(self.hist[j][b])

        def order(r: int) -> float:
            b = int(np.searchsorted(cum[1:], r))
            return float(values[starts[b] + r - 1 - int(cum[b])])

        return order

    def result(self, j: int, probabilities: np.ndarray, confidence: float) -> QuantileEstimate:
        n = int(self.n[j])
        order = self._order(j)

        est = np.empty(probabilities.size)
        lower = np.full(probabilities.size, np.nan)
        upper = np.full(probabilities.size, np.nan)
        for i, p in enumerate(probabilities):
            h = (n - 1) * p                       # (S.1)
            f = int(np.floor(h))
            a, b = order(f + 1), order(min(f + 2, n))
            g = h - f
            est[i] = a + (b - a) * g if g < 0.5 else b - (b - a) * (1 - g)
            lo, hi = _order_statistic_ranks(n, float(p), 1.0 - confidence)
            if lo >= 1:
                lower[i] = order(lo)
            if hi <= n:
                upper[i] = order(hi)
        for arr in (est, lower, upper):
            arr.setflags(write=False)
        return QuantileEstimate(probabilities, est, lower, upper, confidence, n)


def sobol_jackknife(rows, output: str, scenario: int, study: Study, *, confidence: float):
    """Sobol' indices of one output with batch-jackknife intervals, in blocks of rows.

    Parameters
    ----------
    rows
        A :class:`plyrisk.propagate.store.StoreReader` or :class:`MemoryRows` [-].
    output
        Output name [-].
    scenario
        Scenario index [-].
    study
        The parsed study [-].
    confidence
        Level of the intervals [-].

    Returns
    -------
    tuple of SobolIndices
        Per parameter, per group (``None`` without groups).
    """
    plan = study_plan(study)
    names = [p.name for p in study.parameters]
    return _sobol_streamed(rows, output, scenario, study, plan, names,
                           parameter_groups(study)[0], confidence, plan.rows_per_base)


def _sobol_streamed(reader, output, s, study: Study, plan, names, group_names, confidence, step):
    """Streamed Sobol' indices of one output of one scenario (per parameter, per group)."""

    d = plan.n_params
    n_base = plan.samples
    codes = plan.rows(0, step)[1]
    col = {int(c): k for k, c in enumerate(codes)}
    ab = [col[2 + j] for j in range(d)]
    grp = [ab[g[0]] if len(g) == 1 else col[2 + d + k] for k, g in enumerate(plan.groups)]
    cols = ab + grp
    reps = int(getattr(plan, "replicates", 1))
    batches = reps if reps > 1 else JACKKNIFE_BATCHES

    def label(start: int, stop: int) -> np.ndarray:
        base = np.arange(start // step, stop // step)
        return base % reps if reps > 1 else (base * batches) // n_base

    # pass 1: per-batch column sums over the kept rows (base rows whose every value is finite)
    colsum = np.zeros((batches, step))
    counts = np.zeros(batches)
    for start, stop in _blocks(plan.n_rows, step, BLOCK_ROWS):
        t = output_column(reader, output, s, start, stop).reshape(-1, step)
        keep = np.isfinite(t).all(axis=1)
        np.add.at(colsum, label(start, stop)[keep], t[keep])
        counts += np.bincount(label(start, stop)[keep], minlength=batches)
    used = int(counts.sum())
    if used < 2 or (reps > 1 and counts.min() < 2):
        raise AnalysisError(f"only {used} of {n_base} base rows have finite outputs"
                            + (" (or a replicate has fewer than 2)" if reps > 1 else ""))
    # SALib centres the output on the mean of the columns it is given: A, the AB columns
    # (per parameter, or one per group) and B; centring only moves f_B in S_j's numerator.
    # One analysis per replicate (each centred on its own rows), or one for the whole design.
    sums, n_rows = (colsum, counts[:, None]) if reps > 1 else (colsum.sum(0, keepdims=True),
                                                               np.array([[used]]))
    shift = sums.sum(axis=1, keepdims=True) / (n_rows * step)
    centre = np.column_stack([sums[:, [col[0], *ab, col[1]]].sum(1) / (n_rows[:, 0] * (d + 2)),
                              sums[:, [col[0], *grp, col[1]]].sum(1)
                              / (n_rows[:, 0] * (len(grp) + 2))]) - shift
    shift = np.broadcast_to(shift[:, 0], (batches,))
    k = len(cols)
    # per batch: rows, sum fA, fA^2, fB, fB^2; then per column sum fB (fAB - fA),
    # (fA - fAB)^2 and (fAB - fA)
    acc = np.zeros((batches, 5 + 3 * k))
    for start, stop in _blocks(plan.n_rows, step, BLOCK_ROWS):
        t = output_column(reader, output, s, start, stop).reshape(-1, step)
        batch = label(start, stop)
        keep = np.isfinite(t).all(axis=1)
        batch = batch[keep]
        t = t[keep] - shift[batch][:, None]
        fa, fb = t[:, col[0]], t[:, col[1]]
        diff = t[:, cols] - fa[:, None]
        parts = np.column_stack([np.ones_like(fa), fa, fa**2, fb, fb**2,
                                 fb[:, None] * diff, diff**2, diff])
        np.add.at(acc, batch, parts)
    offset = np.concatenate([np.repeat(centre[:, :1], d, axis=1),
                             np.repeat(centre[:, 1:], k - d, axis=1)], axis=1)

    def indices(sums: np.ndarray, off: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        m = sums[0]
        pooled = (sums[1] + sums[3]) / (2 * m)
        var = (sums[2] + sums[4]) / (2 * m) - pooled**2
        first = (sums[5:5 + k] - off * sums[5 + 2 * k:]) / m / var
        return first, 0.5 * sums[5 + k:5 + 2 * k] / m / var

    if reps > 1:   # Student t over the replicates (one SALib analysis per replicate)
        per = [indices(acc[r], offset[r]) for r in range(reps)]
        (s1, s1c), (st, stc) = (replicate_interval(np.array([x[w] for x in per]), confidence)
                                for w in (0, 1))
        interval = INTERVAL_REPLICATES
    else:          # delete-one-batch jackknife
        s1, st = indices(acc.sum(axis=0), offset[0])
        leave = [indices(acc.sum(axis=0) - acc[b], offset[0]) for b in range(batches)]
        z = float(stats.norm.ppf(0.5 + confidence / 2))

        def half(which: int) -> np.ndarray:
            th = np.array([x[which] for x in leave])
            return z * np.sqrt((batches - 1) / batches * np.sum((th - th.mean(0)) ** 2,
                                                                 axis=0))

        s1c, stc = half(0), half(1)
        interval = INTERVAL_JACKKNIFE
    dropped = n_base - used
    out = []
    for sl, labels in ((slice(0, d), names), (slice(d, k), group_names)):
        vals = tuple(np.array(v[sl]) for v in (s1, s1c, st, stc))
        for v in vals:
            v.setflags(write=False)
        out.append(SobolIndices(tuple(labels), *vals, confidence, used, dropped,
                                interval=interval, replicates=reps))
    return out[0], (out[1] if plan.groups else None)


def _woodruff(q: _Quantiles, quant: list[QuantileEstimate], blocks, columns, replicate,
              reps: int, confidence: float) -> list[QuantileEstimate]:
    """Woodruff intervals of streamed quantiles over replicates, in two more passes: counts per
    replicate at or below each estimate, then the order statistics at the interval levels
    (the same numbers as :func:`plyrisk.analysis.statistics.replicate_quantiles`)."""
    n_col, k = len(quant), quant[0].probabilities.size
    below = np.zeros((n_col, k, reps), dtype=np.int64)
    sizes = np.zeros((n_col, reps), dtype=np.int64)
    for start, stop in blocks:
        x, lab = columns(start, stop), replicate(start, stop)
        for j in range(n_col):
            ok = np.isfinite(x[:, j])
            sizes[j] += np.bincount(lab[ok], minlength=reps)
            for i, est in enumerate(quant[j].estimate):
                below[j, i] += np.bincount(lab[ok & (x[:, j] <= est)], minlength=reps)
    found = [woodruff_levels(quant[j].probabilities, below[j], sizes[j], confidence)
             for j in range(n_col)]
    levels = [lv[ok].ravel() for lv, ok in found]
    wanted = [lv[(lv > 0.0) & (lv < 1.0)] for lv in levels]
    q.wanted(quant[0].probabilities, None, levels=wanted)
    for start, stop in blocks:
        q.collect_pass(columns(start, stop))
    out = []
    for j, (lv, ok) in enumerate(found):
        lower, upper = quant[j].lower.copy(), quant[j].upper.copy()
        for m in np.flatnonzero(ok):
            lo, hi = lv[m]
            lower[m] = q.at_levels(j, [lo])[0] if lo > 0.0 else np.nan
            upper[m] = q.at_levels(j, [hi])[0] if hi < 1.0 else np.nan
        for arr in (lower, upper):
            arr.setflags(write=False)
        out.append(replace(quant[j], lower=lower, upper=upper,
                           interval=tuple(INTERVAL_WOODRUFF if w else INTERVAL_ORDER_STATISTICS
                                          for w in ok)))
    return out


def stream_analyse(study: Study, reader: StoreReader, *,
                   method: Method | None = None) -> StudyAnalysis:
    """Percentiles, exceedance, Sobol' indices and rankings of a stored study, in passes.

    Parameters
    ----------
    study
        The parsed study [-].
    reader
        The filled store (:class:`plyrisk.propagate.store.StoreReader`) [-].
    method
        The analysis method, which computes the indices; default: the study's.

    Returns
    -------
    StudyAnalysis
        As :func:`plyrisk.analysis.study.analyse` gives, with intervals of the indices from the
        batch
        jackknife.
    """
    from plyrisk.methods import get_method

    method = method or get_method(study.analysis.method)
    a = study.analysis
    plan = study_plan(study)
    step = plan.rows_per_base
    probabilities = analysis_probabilities(study)
    independent = plan.independent_in_base()
    n_s = 1 if study.scenarios is None else len(study.scenarios.values)
    reps = int(getattr(plan, "replicates", 1))
    n_independent = plan.n_rows // step * int(independent.sum())
    fit = " and the polynomial-chaos fit" if method.fits_surrogate else ""
    how = (f"intervals from the spread of the {reps} replicates" if reps > 1 else
           f"Sobol index intervals from a {JACKKNIFE_BATCHES}-batch jackknife")
    notes = [f"{plan.n_rows} evaluations were analysed from the store in passes: exact "
             f"percentiles; {how}; "
             f"rank correlations{fit} "
             f"from the first {min(SUBSAMPLE_ROWS, n_independent)} independent samples"]
    result = []
    for s in range(n_s):
        faces = reader.group["interface_temperature"].shape[-1]
        # the limit output's column: 0 (inner surface), a face's, or one more (heat flux)
        face_names = list(reader.interface_names)
        extra = a.limit_output not in ("inner_surface_temperature", *face_names)
        lim = (0 if a.limit_output == "inner_surface_temperature" else
               1 + faces if extra else 1 + face_names.index(a.limit_output))
        q = _Quantiles(1 + faces + int(extra))
        counts = np.zeros(5, dtype=np.int64)  # above limit, nonconverged, onset, air range, n

        reps_above = np.zeros(reps, dtype=np.int64)   # per replicate: above the limit, finite
        reps_n = np.zeros(reps, dtype=np.int64)

        def columns(start, stop, s=s, extra=extra):
            rows = np.tile(independent, (stop - start) // independent.size)
            inner = output_column(reader, "inner_surface_temperature", s, start, stop)[rows]
            face = reader.read("interface_temperature", start, stop)[s][rows]
            if extra:
                flux = output_column(reader, a.limit_output, s, start, stop)[rows]
                return np.column_stack([inner, face, flux])
            return np.column_stack([inner, face])

        def replicate(start, stop):
            base = np.arange(start // step, stop // step) % reps
            return np.repeat(base, int(independent.sum()))

        blocks = list(_blocks(plan.n_rows, step, BLOCK_ROWS))
        for start, stop in blocks:
            x = columns(start, stop)
            q.range_pass(x)
            ok = np.isfinite(x[:, lim])
            counts += [int(np.sum(x[ok, lim] > a.limit)), 0, 0, 0, int(ok.sum())]
            if reps > 1:
                lab = replicate(start, stop)[ok]
                reps_above += np.bincount(lab, weights=x[ok, lim] > a.limit,
                                          minlength=reps).astype(np.int64)
                reps_n += np.bincount(lab, minlength=reps)
            counts[1] += int(np.sum(~reader.read("converged", start, stop)[s]))
            counts[2] += int(np.sum(reader.read("convection_onset", start, stop)[s].any(axis=1)))
            counts[3] += int(np.sum(reader.read("air_range_exceeded", start, stop)[s]))
        if counts[4] == 0:
            raise AnalysisError(f"no sample converged{scenario_text(study, s)}")
        for start, stop in blocks:
            q.histogram_pass(columns(start, stop))
        q.wanted(probabilities, a.confidence)
        for start, stop in blocks:
            q.collect_pass(columns(start, stop))
        quant = [q.result(j, probabilities, a.confidence) for j in range(1 + faces + extra)]
        if reps > 1:
            quant = _woodruff(q, quant, blocks, columns, replicate, reps, a.confidence)
        sub = min(plan.n_rows, SUBSAMPLE_ROWS // max(int(independent.sum()), 1) * step)
        rows = np.tile(independent, sub // independent.size)
        y_sub = output_column(reader, "inner_surface_temperature", s, 0, sub)[rows]
        x_sub = reader.read("input", 0, sub)[rows]
        unit = plan.rows(0, sub)[0][rows] if method.fits_surrogate else None
        ix = method.scenario_indices(study, s, source=reader, design=plan, unit=unit, y=y_sub,
                                     probabilities=probabilities, streamed=True)
        result.append(ScenarioAnalysis(
            inner_quantiles=quant[0], interface_quantiles=quant[1:1 + faces],
            limit_quantiles=None if lim == 0 else quant[lim],
            exceedance=(exceedance_from_counts(int(counts[0]), int(counts[4]), a.limit,
                                               confidence=a.confidence) if reps == 1 else
                        replicate_exceedance_from_counts(reps_above, reps_n, a.limit,
                                                         confidence=a.confidence)),
            indices=ix.indices, ranking=ix.ranking, group_ranking=ix.group_ranking,
            rank_correlation=rank_correlation(x_sub, y_sub), nonconverged=int(counts[1]),
            surrogate=ix.surrogate, surrogate_groups=ix.surrogate_groups,
            surrogate_quantiles=ix.surrogate_quantiles,
            surrogate_quantile_status=ix.surrogate_quantile_status,
            onset_samples=int(counts[2]), air_range_samples=int(counts[3]),
        ))
    return StudyAnalysis(result, probabilities, analysed_outputs(study),
                         tuple(parameter_groups(study)[0]), notes)
