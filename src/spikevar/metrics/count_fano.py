"""Spike-count Fano factors over non-overlapping counting windows, all units at once."""

from __future__ import annotations

import numpy as np
import pandas as pd

from spikevar.base.spike_arrays import SpikeArrays
from spikevar.metrics.segments import unit_blocks

REASON_FEW_WINDOWS = "fewer than 2 windows fit in the recording"
REASON_ZERO_MEAN = "no spikes in any window"


def poisson_fano_bounds(n_windows, *, level: float = 0.95):
    """Central interval of the Fano factor of ``n`` Poisson counts: ``(N-1) FF ~ chi2(N-1)``.

    Eden & Kramer 2010, J Neurosci Methods 190:149. NaN for ``n < 2``. The chi-square
    quantile is ``2 P^-1(dof / 2, q)`` (scipy.special's inverse incomplete gamma, what
    ``scipy.stats.chi2.ppf`` computes, without importing scipy.stats).
    """
    from scipy.special import gammaincinv  # here, not at import: rules start faster

    n = np.asarray(n_windows, dtype=float)
    dof = np.where(n >= 2, n - 1, np.nan)
    alpha = 1 - level
    return (2 * gammaincinv(dof / 2, alpha / 2) / dof,
            2 * gammaincinv(dof / 2, 1 - alpha / 2) / dof)


def window_index(times: np.ndarray, *, start_s: float, window_s: float) -> np.ndarray:
    """Index k of the window ``[start + k w, start + (k + 1) w)`` holding each time.

    Computed by floor division, then corrected by one step where rounding put a time that lies
    exactly on an edge on the wrong side, so the result matches comparisons against the edges
    ``start + w * k`` exactly (a spike on an edge belongs to the later window).
    """
    k = np.floor((times - start_s) / window_s)
    low_edge = start_s + window_s * k
    k = np.where(times < low_edge, k - 1, k)
    k = np.where(times >= start_s + window_s * (k + 1), k + 1, k)
    return k.astype(np.int64)


def window_count_moments(spikes: SpikeArrays, *, start_s: float, window_s: float,
                         n_windows: int, block_spikes: int = 2_000_000):
    """Sum and sum of squares of per-window counts for every unit (zeros never materialised).

    Only nonzero bins are formed: spikes are sorted by unit then time, so within a unit the
    window index is non-decreasing and run lengths give the counts. Units are processed in
    blocks of about ``block_spikes`` spikes to bound memory.
    """
    n_units = spikes.n_units
    s1, s2 = np.zeros(n_units), np.zeros(n_units)
    if n_windows < 1 or len(spikes.times) == 0:
        return s1, s2
    offsets = spikes.bounds()
    for first, stop in unit_blocks(offsets, max_items=block_spikes):
        lo, hi = offsets[first], offsets[stop]
        window = window_index(spikes.times[lo:hi], start_s=start_s, window_s=window_s)
        inside = (window >= 0) & (window < n_windows)
        key = spikes.codes[lo:hi][inside] * np.int64(n_windows) + window[inside]
        if len(key) == 0:
            continue
        starts = np.flatnonzero(np.concatenate([[True], key[1:] != key[:-1]]))
        counts = np.diff(np.concatenate([starts, [len(key)]])).astype(float)
        unit_of_run = key[starts] // n_windows
        s1 += np.bincount(unit_of_run, weights=counts, minlength=n_units)
        s2 += np.bincount(unit_of_run, weights=counts**2, minlength=n_units)
    return s1, s2


def count_fano_table(spikes: SpikeArrays, *, windows_s, start_s: float,
                     stop_s: float) -> pd.DataFrame:
    """Count statistics per unit and counting window over the recording ``[start_s, stop_s)``.

    Returns
    -------
    DataFrame
        ``unit, window_s, n_windows, mean_count, var_count, fano, fano_lo, fano_hi,
        fano_reason``. ``var_count`` uses ddof = 1. ``fano_lo``/``fano_hi`` bound the 95%
        range of the Fano factor of ``n_windows`` Poisson counts (Eden & Kramer 2010): a value
        outside it rejects Poisson firing at the 5% level.

    Notes
    -----
    The last, partial window is dropped. Windows longer than half the recording give
    ``n_windows < 2``: NaN with ``fano_reason``. A unit with no spike in any window has
    ``mean_count = 0`` and NaN Fano factor ("no spikes in any window"), never 0.
    """
    frames = []
    duration = max(stop_s - start_s, 0.0)
    for window in np.asarray(windows_s, dtype=float):
        n_win = int(np.floor(duration / window + 1e-9)) if window > 0 else 0
        s1, s2 = window_count_moments(spikes, start_s=start_s, window_s=window,
                                      n_windows=n_win)
        with np.errstate(invalid="ignore", divide="ignore"):
            mean = s1 / n_win if n_win > 0 else np.full(spikes.n_units, np.nan)
            var = (s2 - s1**2 / n_win) / (n_win - 1) if n_win > 1 else \
                np.full(spikes.n_units, np.nan)
            var = np.maximum(var, 0.0)
            fano = np.where(mean > 0, var / mean, np.nan)
        lo, hi = poisson_fano_bounds(n_win)
        reason = np.where(n_win < 2, REASON_FEW_WINDOWS, np.where(~(mean > 0),
                                                                   REASON_ZERO_MEAN, ""))
        frames.append(pd.DataFrame({
            "unit": spikes.labels.astype(object), "window_s": window,
            "n_windows": np.int64(n_win), "mean_count": mean, "var_count": var, "fano": fano,
            "fano_lo": float(lo), "fano_hi": float(hi), "fano_reason": reason.astype(object)}))
    if not frames:
        return empty_count_fano()
    return pd.concat(frames, ignore_index=True).sort_values(
        ["unit", "window_s"], kind="stable").reset_index(drop=True)


def empty_count_fano() -> pd.DataFrame:
    return pd.DataFrame({"unit": pd.Series(dtype=object), "window_s": pd.Series(dtype=float),
                         "n_windows": pd.Series(dtype=np.int64),
                         **{c: pd.Series(dtype=float) for c in
                            ("mean_count", "var_count", "fano", "fano_lo", "fano_hi")},
                         "fano_reason": pd.Series(dtype=object)})
