"""Gain variance of the modulated Poisson model (Goris, Movshon & Simoncelli 2014, Nat Neurosci
17:858): counts are Poisson given a trial gain G with mean 1 and variance σ²_G, so across
windows of one condition the count variance is ``Var = μ + σ²_G μ²``.
"""

from __future__ import annotations

import numpy as np

#: fewer windows with spikes than this: σ²_G is not estimated
MIN_WINDOWS = 3
#: highest / lowest window mean below this: without a range of rates σ²_G cannot be told from a
#: constant Fano factor (Var = F μ), so it is not reported (common practice: a 1.5-fold range)
MIN_RATE_RANGE = 1.5

NOTE_FEW_WINDOWS = f"fewer than {MIN_WINDOWS} windows with spikes"
NOTE_NO_RANGE = (f"no rate range (highest / lowest window mean under {MIN_RATE_RANGE}): "
                 "gain not separable from a constant Fano factor")
NOTE_FEW_TRIALS = "fewer than 2 trials"


def gain_variance(mean: np.ndarray, var: np.ndarray) -> tuple[np.ndarray, np.ndarray,
                                                               np.ndarray]:
    """σ²_G per unit by least squares of ``Var - μ`` on ``μ²`` through the origin.

    ``mean`` and ``var`` are units x windows (NaN where undefined). Returns ``(sigma2,
    n_windows, note)``: the estimate (may be negative: counts less variable than Poisson),
    the windows used and a note ('' when estimated, else why it is NaN).
    """
    mean = np.asarray(mean, float)
    var = np.asarray(var, float)
    use = np.isfinite(mean) & np.isfinite(var) & (mean > 0)
    m = np.where(use, mean, 0.0)
    excess = np.where(use, var - mean, 0.0)
    n_windows = use.sum(axis=1)
    with np.errstate(invalid="ignore", divide="ignore"):
        sigma2 = np.sum(excess * m**2, axis=1) / np.sum(m**4, axis=1)
        hi = np.where(use, mean, -np.inf).max(axis=1) if mean.shape[1] else np.zeros(0)
        lo = np.where(use, mean, np.inf).min(axis=1) if mean.shape[1] else np.zeros(0)
        spread = hi / lo
    note = np.where(n_windows < MIN_WINDOWS, NOTE_FEW_WINDOWS,
                    np.where(~(spread >= MIN_RATE_RANGE), NOTE_NO_RANGE, "")).astype(object)
    sigma2 = np.where(note == "", sigma2, np.nan)
    return sigma2, n_windows.astype(np.int64), note
