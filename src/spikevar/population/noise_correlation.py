"""Spike-count (noise) correlations r_sc of every unit pair, by one matrix product.

r_sc is the Pearson correlation of two units' trial counts within one condition (Cohen & Kohn
2011, Nat Neurosci 14:811). The counts are standardised once per unit and the correlation matrix
is ``Zᵀ Z / (n - 1)``: no loop over pairs and never a pairs x trials array.
"""

from __future__ import annotations

import numpy as np

REASON_NO_VARIANCE = "a unit's counts do not vary"
REASON_FEW_TRIALS = "fewer than 3 trials"


def count_correlations(counts: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Correlation matrix of the columns of ``counts`` (trials x units) and which units vary.

    Returns ``(r, varies)``: ``r`` is units x units with NaN in every row and column of a unit
    whose counts are constant; ``varies`` is a boolean per unit.
    """
    x = np.asarray(counts, dtype=float)
    n = x.shape[0]
    centred = x - x.mean(axis=0)
    sd = np.sqrt(np.einsum("ij,ij->j", centred, centred) / max(n - 1, 1))
    varies = sd > 1e-12 * np.maximum(1.0, np.abs(x).max(axis=0) if n else 1.0)
    z = np.divide(centred, sd, out=np.zeros_like(centred), where=varies)
    r = (z.T @ z) / max(n - 1, 1)
    r[~varies, :] = np.nan
    r[:, ~varies] = np.nan
    np.clip(r, -1.0, 1.0, out=r)
    return r, varies


def upper_pairs(n_units: int) -> tuple[np.ndarray, np.ndarray]:
    """Index arrays (a, b) of every unit pair with a < b, in a fixed order."""
    return np.triu_indices(n_units, k=1)


def mean_pair_correlation(r: np.ndarray) -> float:
    """Mean of the defined r_sc over all pairs (NaN when none is defined)."""
    a, b = upper_pairs(r.shape[0])
    values = r[a, b]
    values = values[np.isfinite(values)]
    return float(values.mean()) if len(values) else float("nan")
